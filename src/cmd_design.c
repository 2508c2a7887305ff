/* cmd_design: the 'size', 'sweep' and 'load' commands: option checks,
 * the run, and the output. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/cli.h"
#include "loopwise/design.h"
#include "loopwise/figures.h"
#include "loopwise/outfile.h"
#include "loopwise/report_design.h"

int cli_number(const char *opt, const char *text, expr_unit unit, double *v, lw_error *err)
{
    expr_pool *p = expr_pool_new();
    int h, rc = p ? expr_compile(p, text, unit, NULL, 1, 1, text, &h, err) : LW_ENOMEM;
    if (!rc)
        rc = expr_eval(p, h, NULL, v, err);
    expr_pool_free(p);
    if (!rc && !isfinite(*v))
        rc = lw_error_set(err, LW_EINPUT, "%s '%s': the value must be finite", opt, text);
    else if (rc) {
        char msg[LW_MSG_MAX];
        snprintf(msg, sizeof msg, "%.600s", err->msg);
        rc = lw_error_set(err, LW_EINPUT, "%s '%s': %s", opt, text, msg);
    }
    return rc;
}

/* range -> VALUE '..' VALUE, with LO < HI and, when positive, LO > 0 */
int cli_range(const char *opt, const char *text, expr_unit unit, int positive, double *lo,
              double *hi, lw_error *err)
{
    const char *dots = strstr(text, "..");
    if (!dots || dots == text || !dots[2])
        return lw_error_set(err, LW_EINPUT, "%s '%s': expected a range LO..HI, e.g. 1p..1n",
                            opt, text);
    char left[256];
    size_t l = (size_t)(dots - text);
    if (l >= sizeof left)
        return lw_error_set(err, LW_EINPUT, "%s: range too long", opt);
    memcpy(left, text, l);
    left[l] = '\0';
    int rc = cli_number(opt, left, unit, lo, err);
    if (!rc)
        rc = cli_number(opt, dots + 2, unit, hi, err);
    if (rc)
        return rc;
    if (positive && !(*lo > 0))
        return lw_error_set(err, LW_EINPUT, "%s '%s': the range must start above zero", opt, text);
    if (*lo == *hi)
        return lw_error_set(err, LW_EINPUT, "%s '%s': the range is empty (LO equals HI)", opt, text);
    if (*lo > *hi)
        return lw_error_set(err, LW_EINPUT, "%s '%s': the range is inverted; write LO..HI with "
                            "LO below HI", opt, text);
    return LW_OK;
}

/* A cap, a res or a node field must stay positive. */
static int must_be_positive(const desc *d, desc_target t)
{
    if (t.kind == TARGET_NODE_R || t.kind == TARGET_NODE_C)
        return 1;
    return t.kind == TARGET_ELEM && d->elems[t.index].kind != ELEM_GM;
}

int cli_target(const desc *d, const char *opt, const char *name, desc_target *t, lw_error *err)
{
    int rc = desc_target_find(d, name, t, err);
    if (rc) {
        char msg[LW_MSG_MAX];
        snprintf(msg, sizeof msg, "%.700s", err->msg);
        return lw_error_set(err, LW_EINPUT, "%s: %s", opt, msg);
    }
    return LW_OK;
}

static figure_opts fig(const options *o)
{
    figure_opts fo = { o->plot, o->width, o->height, o->keep_script };
    return fo;
}

/* Sweeps and sizing need no owner nodes: the participation factors cost as
 * much as the poles themselves on larger networks. */
check_opts cli_design_opts(const options *o)
{
    check_opts co = { o->fmin, o->fmax, 0, 0, 0, 0, NULL };
    return co;
}

design_goal option_goal(const options *o)
{
    design_goal g = { o->pm, o->gm_given ? o->gm : NAN, o->pm_given };
    return g;
}

static design_goal goal(const options *o)
{
    return option_goal(o);
}

/* density -> VALUE '/um2'   (capacitance per square micrometre) */
int cli_density(const char *text, double *v, lw_error *err)
{
    static const char *const tails[] = { "/um2", "/um^2", "/\xC2\xB5m2", "/\xC2\xB5m^2" };
    const char *slash = strchr(text, '/');
    int ok = 0;
    for (size_t k = 0; slash && k < sizeof tails / sizeof *tails; k++)
        ok |= !strcmp(slash, tails[k]);
    if (!ok)
        return lw_error_set(err, LW_EINPUT, "--density '%s': expected capacitance per area, "
                            "e.g. 2fF/um2", text);
    char num[128];
    size_t l = (size_t)(slash - text);
    if (l >= sizeof num || l == 0)
        return lw_error_set(err, LW_EINPUT, "--density '%s': expected a number before '/'", text);
    memcpy(num, text, l);
    num[l] = '\0';
    int rc = cli_number("--density", num, UNIT_F, v, err);
    if (!rc && !(*v > 0))
        rc = lw_error_set(err, LW_EINPUT, "--density '%s': must be positive", text);
    return rc;
}

int cli_tune_range(const desc *d, desc_target t, const char *name, const char *within,
                   double *lo, double *hi, lw_error *err)
{
    if (within)
        return cli_range("--within", within, desc_target_unit(d, t), 1, lo, hi, err);
    double v0 = desc_target_value(d, t);
    if (!(v0 > 0) || !isfinite(v0))
        return lw_error_set(err, LW_EINPUT, "--tune %s: its value is not positive; give "
                            "the range to search with --within LO..HI", name);
    *lo = v0 / 100;
    *hi = v0 * 100;
    return LW_OK;
}

int cmd_size(const options *o, desc *d, const text_file *tf, int *code, lw_error *err)
{
    if (o->over)
        return cmd_size_over(o, d, tf, code, err);
    if (o->ntune == 2)
        return cmd_size_pair(o, d, code, err);
    desc_target t;
    double lo, hi, dens = NAN;
    int rc = cli_target(d, "--tune", o->tune[0], &t, err);
    if (!rc)
        rc = cli_tune_range(d, t, o->tune[0], o->within[0], &lo, &hi, err);
    if (!rc && o->density)
        rc = cli_density(o->density, &dens, err);
    if (rc)
        return rc;
    check_opts co = cli_design_opts(o);
    size_result r;
    if ((rc = size_run(d, t, lo, hi, goal(o), &co, &r, err)))
        return rc;
    check_result at;
    model *m = NULL;
    co.want_owner = 1; /* the report names the node of the limiting pole */
    if ((rc = design_eval_full(d, t, r.best.value, &co, &at, &m, err)))
        return rc;
    design_point_from(&at, r.best.value, &r.best);
    report_size(stdout, d, o->tune[0], t, &r, &at, goal(o), dens, o->json ? OUT_JSON : OUT_TEXT);
    check_result_free(&at);
    model_free(m);
    desc_eval(d, err);
    *code = r.met ? 0 : 1;
    return LW_OK;
}

int cli_sweep_range(const desc *d, desc_target t, const char *from, const char *to, int lin,
                    double *lo, double *hi, lw_error *err)
{
    expr_unit u = desc_target_unit(d, t);
    int rc;
    if ((rc = cli_number("--from", from, u, lo, err)) || (rc = cli_number("--to", to, u, hi, err)))
        return rc;
    if (*lo == *hi)
        return lw_error_set(err, LW_EINPUT, "--from and --to are equal: the range is empty");
    if (*lo > *hi)
        return lw_error_set(err, LW_EINPUT, "--from %s is above --to %s: the range is inverted",
                            from, to);
    if ((!lin || must_be_positive(d, t)) && !(*lo > 0))
        return lw_error_set(err, LW_EINPUT, "--from %s: %s", from, must_be_positive(d, t)
                            ? "a capacitance or resistance must stay positive"
                            : "a logarithmic sweep needs positive values (or use --lin)");
    return LW_OK;
}

int cmd_sweep(const options *o, desc *d, const text_file *tf, int *code, lw_error *err)
{
    if (o->nvary == 2)
        return cmd_sweep_map(o, d, tf, code, err);
    desc_target t;
    double from, to;
    int rc = cli_target(d, "--vary", o->vary[0], &t, err);
    if (!rc)
        rc = cli_sweep_range(d, t, o->from[0], o->to[0], o->lin, &from, &to, err);
    if (rc)
        return rc;
    int npts = o->points ? o->points : 25;
    if (npts > 10000)
        return lw_error_set(err, LW_EINPUT, "--points %d: a sweep takes at most 10000 points", npts);
    /* sweep --to NODE [--from INPUT | --inject NODE]: a response at every
     * point, named as 'response' names it */
    sweep_probe probe;
    int each;
    if (o->to_node && (rc = cmd_response_source(o, d, &probe.to, &probe.src, &each, err)))
        return rc;
    check_opts co = cli_design_opts(o);
    sweep_result r;
    if ((rc = sweep_run_probe(d, t, from, to, npts, o->lin, goal(o), &co,
                              o->to_node ? &probe : NULL, &r, err)))
        return rc;
    if (o->csv) {
        outfile *of;
        if ((rc = outfile_open(o->csv, &of, err))) {
            sweep_result_free(&r);
            return rc;
        }
        report_sweep(of->f, d, o->vary[0], t, &r, goal(o), OUT_CSV);
        if ((rc = outfile_commit(of, err))) {
            sweep_result_free(&r);
            return rc;
        }
    }
    if (!o->csv || strcmp(o->csv, "-"))
        report_sweep(stdout, d, o->vary[0], t, &r, goal(o), o->json ? OUT_JSON : OUT_TEXT);
    *code = r.failed ? 1 : 0;
    if (o->plot) {
        figure_opts fo = fig(o);
        fflush(stdout);
        rc = figure_margin(&fo, d, o->vary[0], report_unit_symbol(d, t), &r, goal(o), o->lin, err);
    }
    sweep_result_free(&r);
    return rc;
}

int cmd_load(const options *o, desc *d, int *code, lw_error *err)
{
    if (!strcmp(o->node, "gnd"))
        return lw_error_set(err, LW_EINPUT, "--node gnd: ground cannot carry a load; name a "
                            "declared node");
    if (desc_find_input(d, o->node) >= 0)
        return lw_error_set(err, LW_EINPUT, "--node %s: '%s' is an input, an ideal source: a "
                            "load there changes nothing; name a declared node", o->node, o->node);
    int node = desc_find_node(d, o->node);
    if (node < 0) {
        const char **c = malloc(sizeof *c * (size_t)(d->nnodes + 1));
        const char *best = NULL;
        for (int k = 0; c && k < d->nnodes; k++)
            c[k] = d->nodes[k].name;
        if (c)
            best = lw_closest(o->node, c, d->nnodes);
        int rc = best ? lw_error_set(err, LW_EINPUT, "--node: unknown node '%s' (did you mean "
                                     "'%s'?)", o->node, best)
                      : lw_error_set(err, LW_EINPUT, "--node: unknown node '%s'", o->node);
        free(c);
        return rc;
    }
    double lo, hi;
    int rc = cli_range("--cload", o->cload, UNIT_F, 1, &lo, &hi, err);
    if (rc)
        return rc;
    check_opts co = cli_design_opts(o);
    load_result r;
    if ((rc = load_run(d, node, lo, hi, o->points ? o->points : 25, goal(o), &co, &r, err)))
        return rc;
    report_load(stdout, d, &r, lo, hi, goal(o), o->sets, o->nsets,
                o->json ? OUT_JSON : OUT_TEXT);
    *code = r.failed ? 1 : 0;
    if (o->plot && r.inside) {
        figure_opts fo = fig(o);
        char what[DESC_MAX_NAME + 16];
        snprintf(what, sizeof what, "load at %s", d->nodes[node].name);
        fflush(stdout);
        rc = figure_margin(&fo, d, what, "F", &r.sw, goal(o), 0, err);
    } else if (o->plot) {
        figure_opts fo = fig(o);
        fflush(stdout);
        rc = figure_load_outside(&fo, d, &r, lo, hi, goal(o), err);
    }
    load_result_free(&r);
    return rc;
}

int cmd_roots(const options *o, const desc *d, const model *m, const check_result *r,
              lw_error *err)
{
    figure_opts fo = fig(o);
    int rc = figure_roots(&fo, d, m, r, err);
    if (!rc)
        printf("loopwise roots: %s: %d open-loop pole%s, %d zero%s, %d closed-loop pole%s drawn "
               "in %s\n", d->path, r->tf.npoles, r->tf.npoles == 1 ? "" : "s", r->tf.nzeros,
               r->tf.nzeros == 1 ? "" : "s", r->ncl, r->ncl == 1 ? "" : "s", o->plot);
    return rc;
}

int cmd_polar(const options *o, const desc *d, const model *m, const check_result *r,
              lw_error *err)
{
    /* the curve is read far from the crossover too, where the reduced form
     * loses digits when the poles span many decades: as gain does, the LU
     * path for networks small enough that it costs nothing to notice */
    if (d->nnodes <= 64)
        lgain_use_full(r->lg, 1);
    figure_opts fo = fig(o);
    int rc = figure_polar(&fo, d, m, r, err);
    if (rc)
        return rc;
    const nyquist *q = &r->nq;
    if (r->have_nyquist && q->decided)
        printf("loopwise polar: %s: %d clockwise encirclement%s of -1, %d open-loop pole%s in "
               "the right half-plane: %d closed-loop pole%s there; drawn in %s\n", d->path,
               q->encirclements, abs(q->encirclements) == 1 ? "" : "s", q->open_loop_rhp,
               q->open_loop_rhp == 1 ? "" : "s", q->closed_loop_rhp,
               q->closed_loop_rhp == 1 ? "" : "s", o->plot);
    else
        printf("loopwise polar: %s: the Nyquist count is undecided (1 + T passes through 0 on "
               "the imaginary axis); drawn in %s\n", d->path, o->plot);
    return LW_OK;
}
