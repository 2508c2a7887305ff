/* cmd_response: the 'response' command (SPEC section 6): which transfer the
 * options name, the run, and the output. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/cli.h"
#include "loopwise/figures_response.h"
#include "loopwise/outfile.h"
#include "loopwise/report_response.h"

enum { DEFAULT_POINTS = 121 };

/* Suggests a name among the nodes (or the inputs). */
static int unknown(const desc *d, const char *opt, const char *name, int inputs, lw_error *err)
{
    int n = inputs ? d->ninputs : d->nnodes;
    const char **c = malloc(sizeof *c * (size_t)(n + 1));
    const char *best = NULL;
    for (int k = 0; c && k < n; k++)
        c[k] = inputs ? d->inputs[k].name : d->nodes[k].name;
    if (c)
        best = lw_closest(name, c, n);
    int rc = best ? lw_error_set(err, LW_EINPUT, "%s: unknown %s '%s' (did you mean '%s'?)", opt,
                                 inputs ? "input" : "node", name, best)
                  : lw_error_set(err, LW_EINPUT, "%s: unknown %s '%s'", opt,
                                 inputs ? "input" : "node", name);
    free(c);
    return rc;
}

/* A node for --to or --inject: not gnd, not an input. */
static int node_option(const desc *d, const char *opt, const char *name, int *node, lw_error *err)
{
    if (!strcmp(name, "gnd"))
        return lw_error_set(err, LW_EINPUT, "%s gnd: ground does not move; name a declared node",
                            opt);
    if (desc_find_input(d, name) >= 0)
        return lw_error_set(err, LW_EINPUT, "%s %s: '%s' is an input (a driven node); %s", opt,
                            name, name, !strcmp(opt, "--to")
                            ? "a response is read at a node" : "use --from for an input");
    *node = desc_find_node(d, name);
    return *node < 0 ? unknown(d, opt, name, 0, err) : LW_OK;
}

int cmd_response_source(const options *o, const desc *d, int *to, response_src *src, int *each,
                        lw_error *err)
{
    *each = 0;
    if (!o->to_node)
        return lw_error_set(err, LW_EINPUT, "%s needs --to NODE: the node whose response is read",
                            o->command);
    int rc = node_option(d, "--to", o->to_node, to, err);
    if (rc)
        return rc;
    if (o->inject) {
        if (!strcmp(o->inject, "each")) {
            *each = 1;
            *src = (response_src){ RESP_INJECT, *to };
            return LW_OK;
        }
        *src = (response_src){ RESP_INJECT, 0 };
        return node_option(d, "--inject", o->inject, &src->index, err);
    }
    if (o->from_node) {
        int x = desc_find_input(d, o->from_node);
        if (x < 0 && (desc_find_node(d, o->from_node) >= 0 || !strcmp(o->from_node, "gnd")))
            return lw_error_set(err, LW_EINPUT, "--from %s: '%s' is not an input; --from names an "
                                "'input' line of the file (for a current into a node, use "
                                "--inject %s)", o->from_node, o->from_node, o->from_node);
        if (x < 0)
            return d->ninputs ? unknown(d, "--from", o->from_node, 1, err)
                              : lw_error_set(err, LW_EINPUT, "--from %s: the file declares no "
                                             "input", o->from_node);
        *src = (response_src){ RESP_INPUT, x };
        return LW_OK;
    }
    if (d->ninputs == 1) {
        *src = (response_src){ RESP_INPUT, 0 };
        return LW_OK;
    }
    if (d->ninputs == 0)
        return lw_error_set(err, LW_EINPUT, "the file declares no input: add an 'input' line, or "
                            "give a current with --inject NODE");
    char list[512] = "";
    for (int k = 0; k < d->ninputs && strlen(list) < 400; k++)
        snprintf(list + strlen(list), sizeof list - strlen(list), "%s%s", k ? ", " : "",
                 d->inputs[k].name);
    return lw_error_set(err, LW_EINPUT, "the file has %d inputs (%s): choose one with --from "
                        "NAME, or give a current with --inject NODE", d->ninputs, list);
}

/* The frequency table: n points log-spaced over the band. */
static int table(response *rs, const response_result *res, int n, response_table *t,
                 lw_error *err)
{
    t->n = n;
    t->hz = malloc(sizeof(double) * (size_t)(3 * n));
    if (!t->hz)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    t->db = t->hz + n;
    t->ph = t->db + n;
    double lo = log10(res->fmin_hz), hi = log10(res->fmax_hz);
    for (int k = 0; k < n; k++) {
        double mag;
        t->hz[k] = pow(10.0, lo + (hi - lo) * k / (n - 1));
        t->ph[k] = response_phase(rs, res, t->hz[k], &mag);
        t->db[k] = mag > 0 && isfinite(mag) ? 20.0 * log10(mag) : NAN;
        if (isnan(t->db[k]))
            t->ph[k] = NAN;
    }
    return LW_OK;
}

static int write_csv(const options *o, void (*emit)(FILE *, const desc *, const void *, out_format),
                     const desc *d, const void *what, lw_error *err)
{
    outfile *of;
    int rc = outfile_open(o->csv, &of, err);
    if (rc)
        return rc;
    emit(of->f, d, what, OUT_CSV);
    return outfile_commit(of, err);
}

static void emit_response(FILE *f, const desc *d, const void *p, out_format fmt)
{
    report_response(f, d, p, fmt);
}

static void emit_each(FILE *f, const desc *d, const void *p, out_format fmt)
{
    report_each(f, d, p, fmt);
}

static int run_each(const options *o, const desc *d, response *rs, const check_result *r,
                    int to, lw_error *err)
{
    each_report er = { d->nodes[to].name, NULL, 0, r->cl, r->ncl, r->stable };
    step_each_item *items = NULL;
    step_form *sf = NULL;
    int rc = response_source(rs, (response_src){ RESP_INJECT, to }, err);
    if (!rc && r->stable) {
        int *nodes = malloc(sizeof(int) * (size_t)(d->nnodes + 1));
        items = malloc(sizeof *items * (size_t)(d->nnodes + 1));
        if (!nodes || !items)
            rc = lw_error_set(err, LW_ENOMEM, "out of memory");
        for (int k = 0; !rc && k < d->nnodes; k++)
            nodes[k] = k;
        if (!rc)
            rc = step_form_new(rs, &sf, err);
        if (!rc)
            rc = step_each(rs, sf, nodes, d->nnodes, items, err);
        free(nodes);
        if (!rc) {
            report_each_sort(items, d->nnodes);
            er.items = items;
            er.n = d->nnodes;
        }
    }
    if (!rc && o->csv)
        rc = write_csv(o, emit_each, d, &er, err);
    if (!rc && (!o->csv || strcmp(o->csv, "-"))) {
        report_each(stdout, d, &er, o->json ? OUT_JSON : OUT_TEXT);
        if (!r->stable && !o->json)
            fputs("The closed loop is UNSTABLE (a pole in the right half-plane, or on the "
                  "j\xCF\x89 axis): no step settles, so there is nothing to rank.\n", stdout);
    }
    step_form_free(sf);
    free(items);
    return rc;
}

int cmd_response(const options *o, const desc *d, const model *m, const check_result *r,
                 lw_error *err)
{
    int to, each;
    response_src src;
    int rc = cmd_response_source(o, d, &to, &src, &each, err);
    if (rc)
        return rc;
    if (each && o->plot)
        return lw_error_set(err, LW_EINPUT, "-o draws one response; with --inject each, name "
                            "one node to --inject to draw it");
    response *rs = NULL;
    if ((rc = response_new(m, to, &rs, err)))
        return rc;
    if (each) {
        rc = run_each(o, d, rs, r, to, err);
        response_free(rs);
        return rc;
    }
    response_result res;
    step_result st;
    step_form *sf = NULL;
    response_opts ro = { o->fmin, o->fmax };
    response_report rr = { d->nodes[to].name, src.kind == RESP_INPUT ? d->inputs[src.index].name
                           : NULL, src.kind == RESP_INJECT ? d->nodes[src.index].name : NULL,
                           NULL, r->cl, r->ncl, r->stable, NULL, o->step, { 0, NULL, NULL, NULL } };
    if ((rc = response_source(rs, src, err)) ||
        (rc = response_analyse(rs, r->cl, r->ncl, &ro, &res, err))) {
        response_free(rs);
        return rc;
    }
    rr.res = &res;
    if (r->stable && !(rc = step_form_new(rs, &sf, err)) && !(rc = step_run(sf, &res, &st, err)))
        rr.step = &st;
    if (!rc)
        rc = table(rs, &res, o->points ? o->points : DEFAULT_POINTS, &rr.tab, err);
    if (!rc && o->csv)
        rc = write_csv(o, emit_response, d, &rr, err);
    if (!rc && (!o->csv || strcmp(o->csv, "-")))
        report_response(stdout, d, &rr, o->json ? OUT_JSON : OUT_TEXT);
    if (!rc && o->plot) {
        figure_opts fo = { o->plot, o->width, o->height, o->keep_script };
        fflush(stdout);
        rc = o->step && rr.step ? figure_step(&fo, d, &rr, sf, err)
                                : figure_response(&fo, d, &rr, rs, err);
        if (rc == LW_OK && o->step && !rr.step)
            fputs("loopwise: the loop is unstable: no step response to draw; drew |H| instead\n",
                  stderr);
    }
    free(rr.tab.hz);
    step_form_free(sf);
    response_result_free(&res);
    response_free(rs);
    return rc;
}
