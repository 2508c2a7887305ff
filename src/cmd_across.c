/* cmd_across: 'size --over corners|montecarlo', 'size' with two --tune, and
 * 'sweep' with two --vary (the map): option checks, the run, the output. */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "loopwise/cli.h"
#include "loopwise/figures.h"
#include "loopwise/outfile.h"
#include "loopwise/report_across.h"

static int same_target(desc_target a, desc_target b)
{
    return a.kind == b.kind && a.index == b.index;
}

/* When the value sized is a param whose own spread is the only one left
 * (the others pinned by --set, or none), there is nothing to vary: say so
 * rather than blame --set. */
static int only_tuned_spread(const desc *d, desc_target t, int ranges, const char *name,
                             lw_error *err)
{
    if (t.kind != TARGET_PARAM)
        return LW_OK;
    int others = 0, mine = 0;
    for (int k = 0; k < d->nparams; k++) {
        const desc_param *p = &d->params[k];
        int spread = ranges ? p->spread.has_range : p->spread.dist != DIST_NONE;
        if (k == t.index)
            mine = spread;
        else
            others += spread && p->override == DESC_NO_OVERRIDE;
    }
    if (mine && !others)
        return lw_error_set(err, LW_EINPUT, "--tune %s: it is the only param with %s left, and "
                            "the value sized is not %s; give another param %s, or size it "
                            "without --over", name, ranges ? "a corner range" : "a distribution",
                            ranges ? "combined" : "drawn",
                            ranges ? "a corner range" : "a distribution");
    return LW_OK;
}

int cmd_size_over(const options *o, desc *d, const text_file *tf, int *code, lw_error *err)
{
    desc_target t;
    double lo, hi;
    double dens = NAN;
    int rc = cli_target(d, "--tune", o->tune[0], &t, err);
    if (!rc)
        rc = cli_tune_range(d, t, o->tune[0], o->within[0], &lo, &hi, err);
    if (!rc && o->density)
        rc = cli_density(o->density, &dens, err);
    if (!rc)
        rc = only_tuned_spread(d, t, !strcmp(o->over, "corners"), o->tune[0], err);
    if (rc)
        return rc;
    design_goal g = option_goal(o);
    out_format fmt = o->json ? OUT_JSON : OUT_TEXT;
    char *again = NULL;
    if (!strcmp(o->over, "corners")) {
        check_opts co = cli_design_opts(o);
        size_corners_result r;
        if ((rc = size_corners_run(d, t, lo, hi, o->levels ? o->levels : 2, g, &co, &r, err)))
            return rc;
        const corner_result *cr = &r.corners;
        again = cli_reproduce(o, d, o->tune[0], r.value, cr->params, cr->nparams,
                              cr->values + r.limiting * cr->nparams);
        if (again)
            report_size_corners(stdout, d, o->tune[0], t, &r, g, again, dens, fmt);
        else
            rc = lw_error_set(err, LW_ENOMEM, "out of memory");
        *code = r.met ? 0 : 1;
        size_corners_free(&r);
    } else {
        check_opts co = { .fmin_hz = o->fmin, .fmax_hz = o->fmax };
        uint64_t seed = o->seed_given ? o->seed : 1;
        size_mc_result r;
        if ((rc = size_mc_run(tf, d->path, o->sets, o->nsets, o->tune[0], lo, hi, o->samples,
                              seed, o->yield, g, &co, isatty(2) && !o->json ? stderr : NULL,
                              &r, err)))
            return rc;
        const mc_result *m = &r.mc;
        if (r.limiting >= 0 &&
            !(again = cli_reproduce(o, d, o->tune[0], r.value, m->params, m->nparams,
                                    m->values + (size_t)r.limiting * (size_t)m->nparams)))
            rc = lw_error_set(err, LW_ENOMEM, "out of memory");
        if (!rc)
            report_size_mc(stdout, d, o->tune[0], t, &r, g, o->yield, seed, again, dens, fmt);
        *code = r.met ? 0 : 1;
        size_mc_free(&r);
    }
    free(again);
    return rc;
}

int cmd_size_pair(const options *o, desc *d, int *code, lw_error *err)
{
    desc_target t[2];
    double lo[2], hi[2], dens = NAN;
    int rc = LW_OK;
    for (int k = 0; k < 2 && !rc; k++) {
        rc = cli_target(d, "--tune", o->tune[k], &t[k], err);
        if (!rc)
            rc = cli_tune_range(d, t[k], o->tune[k], o->within[k], &lo[k], &hi[k], err);
    }
    if (!rc && o->density)
        rc = cli_density(o->density, &dens, err);
    if (rc)
        return rc;
    if (same_target(t[0], t[1]))
        return lw_error_set(err, LW_EINPUT, "--tune %s is given twice; size two different "
                            "values together", o->tune[1]);
    design_goal g = option_goal(o);
    check_opts co = cli_design_opts(o);
    size_pair_result r;
    if ((rc = size_pair_run(d, t[0], lo[0], hi[0], t[1], lo[1], hi[1], g, &co, &r, err)))
        return rc;
    report_size_pair(stdout, d, o->tune, t, &r, g, dens, o->json ? OUT_JSON : OUT_TEXT);
    *code = r.met ? 0 : 1;
    return LW_OK;
}

int cmd_sweep_map(const options *o, desc *d, const text_file *tf, int *code, lw_error *err)
{
    desc_target t[2];
    double lo[2], hi[2];
    int rc = LW_OK;
    for (int k = 0; k < 2 && !rc; k++) {
        rc = cli_target(d, "--vary", o->vary[k], &t[k], err);
        if (!rc)
            rc = cli_sweep_range(d, t[k], o->from[k], o->to[k], o->lin, &lo[k], &hi[k], err);
    }
    if (rc)
        return rc;
    if (same_target(t[0], t[1]))
        return lw_error_set(err, LW_EINPUT, "--vary %s is given twice; a map varies two "
                            "different values", o->vary[1]);
    int n = o->points ? o->points : 25;
    if (n > MAP_MAX_POINTS)
        return lw_error_set(err, LW_EINPUT, "--points %d: a map takes at most %d points on each "
                            "axis", n, MAP_MAX_POINTS);
    design_goal g = option_goal(o);
    check_opts co = cli_design_opts(o);
    map_result r;
    map_source src = { tf, d->path, o->sets, o->nsets };
    if ((rc = map_run(&src, t[0], lo[0], hi[0], t[1], lo[1], hi[1], n, o->lin, g, &co, &r, err)))
        return rc;
    if (o->csv) {
        outfile *of;
        if (!(rc = outfile_open(o->csv, &of, err))) {
            report_map(of->f, d, o->vary, t, &r, g, OUT_CSV);
            rc = outfile_commit(of, err);
        }
    }
    if (!rc && (!o->csv || strcmp(o->csv, "-")))
        report_map(stdout, d, o->vary, t, &r, g, o->json ? OUT_JSON : OUT_TEXT);
    *code = r.failed ? 1 : 0;
    if (!rc && o->plot) {
        figure_opts fo = { o->plot, o->width, o->height, o->keep_script };
        fflush(stdout);
        const char *units[2] = { report_unit_symbol(d, t[0]), report_unit_symbol(d, t[1]) };
        rc = figure_map(&fo, d, o->vary, units, &r, g, o->lin, err);
    }
    map_result_free(&r);
    return rc;
}
