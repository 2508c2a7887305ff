/* size_over: sizing against the worst corner and against a yield target. */
#include "loopwise/size_over.h"

#include <gsl/gsl_errno.h>
#include <gsl/gsl_min.h>
#include <gsl/gsl_roots.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* ---- corners ------------------------------------------------------------- */

typedef struct corner_ctx {
    desc *d;
    desc_target t;
    corner_result *cr;
    const check_opts *o;
    design_goal g;
    int analyses;
    lw_error *err;
} corner_ctx;

/* Corner c analysed with the target at v. */
static int corner_at(corner_ctx *x, int c, double v, design_point *pt)
{
    desc_saved saved = desc_target_save(x->d, x->t);
    desc_target_set(x->d, x->t, v, x->err);
    int valid;
    int rc = variation_eval_at(x->d, x->cr->nparams, x->cr->params,
                               x->cr->values + c * x->cr->nparams, x->o, pt, &valid, x->err);
    desc_target_restore(x->d, x->t, saved);
    x->analyses++;
    if (!rc && !valid) {
        char msg[LW_MSG_MAX];
        snprintf(msg, sizeof msg, "%.600s", x->err->msg);
        rc = lw_error_set(x->err, LW_EINPUT, "corner %d gives a value that is not allowed: %s",
                          c + 1, msg);
    }
    pt->value = v;
    return rc;
}

/* Every corner at v into cr->pts; *worst gets the corner with the smallest
 * distance to the goal (the first of equals) and the return is that
 * distance, or NAN on an error (rc in *rc). */
static double all_corners(corner_ctx *x, double v, int *worst, int *rc)
{
    double wd = INFINITY;
    *worst = -1;
    for (int c = 0; c < x->cr->ncorners; c++) {
        if ((*rc = corner_at(x, c, v, &x->cr->pts[c])))
            return NAN;
        double dist = design_goal_distance(&x->cr->pts[c], x->g);
        if (*worst < 0 || dist < wd) {
            wd = dist;
            *worst = c;
        }
    }
    return wd;
}

/* 1 when every corner analysed into cr->pts meets the goal. */
static int all_meet(const corner_ctx *x)
{
    for (int c = 0; c < x->cr->ncorners; c++)
        if (!design_meets(&x->cr->pts[c], x->g))
            return 0;
    return 1;
}

/* The first corner that fails in cr->pts, the most negative distance first. */
static int worst_failing(const corner_ctx *x)
{
    int w = -1;
    double wd = INFINITY;
    for (int c = 0; c < x->cr->ncorners; c++)
        if (!design_meets(&x->cr->pts[c], x->g)) {
            double dist = design_goal_distance(&x->cr->pts[c], x->g);
            if (w < 0 || dist < wd) {
                w = c;
                wd = dist;
            }
        }
    return w;
}

typedef struct root_ctx {
    corner_ctx *x;
    int corner, failed;
} root_ctx;

static double corner_fn(double lnv, void *vp)
{
    root_ctx *rc = vp;
    design_point pt;
    if (corner_at(rc->x, rc->corner, exp(lnv), &pt)) {
        rc->failed = 1;
        return 0;
    }
    return design_goal_distance(&pt, rc->x->g);
}

/* The root of corner c's distance in [a, b] (it fails at a, meets at b), by
 * Brent's method on ln v to a relative 1e-7, then moved just inside the
 * met side: the smallest value found where corner c meets. */
static int corner_root(corner_ctx *x, int c, double a, double b, double *root)
{
    root_ctx ctx = { x, c, 0 };
    gsl_function F = { corner_fn, &ctx };
    gsl_root_fsolver *s = gsl_root_fsolver_alloc(gsl_root_fsolver_brent);
    if (!s)
        return lw_error_set(x->err, LW_ENOMEM, "out of memory");
    int st = gsl_root_fsolver_set(s, &F, log(a), log(b));
    for (int it = 0; st == GSL_SUCCESS && !ctx.failed && it < 100; it++) {
        if ((st = gsl_root_fsolver_iterate(s)) != GSL_SUCCESS)
            break;
        if (gsl_root_test_interval(gsl_root_fsolver_x_lower(s), gsl_root_fsolver_x_upper(s),
                                   1e-7, 0) == GSL_SUCCESS)
            break;
    }
    double hi = exp(gsl_root_fsolver_x_upper(s));
    gsl_root_fsolver_free(s);
    if (ctx.failed)
        return LW_EINPUT;
    /* the upper end of the last bracket is on the met side of the root
     * (Brent keeps the sign change inside it); a margin that jumps (a
     * crossover appearing) still has its boundary there */
    *root = fmin(hi, b);
    return LW_OK;
}

void size_corners_free(size_corners_result *r)
{
    if (r)
        corner_result_free(&r->corners);
}

/* The grid value k of SIZE_OVER_GRID over lo..hi (log spaced, ends exact). */
static double grid_value(double lo, double hi, int k, int n)
{
    return k == 0 ? lo : k == n - 1 ? hi : lo * pow(hi / lo, (double)k / (n - 1));
}

/* Scans corner c from grid point k0 up; returns the first grid point where
 * it meets (n when none) and the point of its largest distance in *best. */
static int scan_corner(corner_ctx *x, int c, int k0, double lo, double hi, int *best, int *rc)
{
    double bd = -INFINITY;
    *best = k0;
    for (int k = k0; k < SIZE_OVER_GRID; k++) {
        design_point pt;
        if ((*rc = corner_at(x, c, grid_value(lo, hi, k, SIZE_OVER_GRID), &pt)))
            return SIZE_OVER_GRID;
        if (design_meets(&pt, x->g))
            return k;
        double dist = design_goal_distance(&pt, x->g);
        if (dist > bd) {
            bd = dist;
            *best = k;
        }
    }
    return SIZE_OVER_GRID;
}

typedef struct worst_ctx {
    corner_ctx *x;
    int failed;
} worst_ctx;

/* -W(v), W the worst corner's distance to the goal, on ln v: the
 * minimiser's objective. */
static double worst_fn(double lnv, void *vp)
{
    worst_ctx *c = vp;
    int w, rc = LW_OK;
    double wd = all_corners(c->x, exp(lnv), &w, &rc);
    if (rc) {
        c->failed = 1;
        return 0;
    }
    return -wd;
}

/* When no value meets the goal at every corner: the value in lo..hi where
 * the worst corner comes nearest, max over v of W(v) = min over corners of
 * the distance. W is only piecewise smooth (its best is often where two
 * corners cross), so the whole grid is scanned and the best grid point's
 * bracket refined by Brent's minimiser (golden sections where a parabola
 * does not fit) to a relative 1e-6 in v. */
static int best_worst_case(corner_ctx *x, double lo, double hi, double *value)
{
    int best = 0, w, rc = LW_OK;
    double bw = -INFINITY, wk[SIZE_OVER_GRID];
    for (int k = 0; k < SIZE_OVER_GRID; k++) {
        wk[k] = all_corners(x, grid_value(lo, hi, k, SIZE_OVER_GRID), &w, &rc);
        if (rc)
            return rc;
        if (wk[k] > bw) {
            bw = wk[k];
            best = k;
        }
    }
    *value = grid_value(lo, hi, best, SIZE_OVER_GRID);
    if (best == 0 || best == SIZE_OVER_GRID - 1 ||
        !(wk[best] > wk[best - 1] && wk[best] > wk[best + 1]))
        return LW_OK; /* at an end of the range, or flat: the grid point stands */
    worst_ctx c = { x, 0 };
    gsl_function F = { worst_fn, &c };
    gsl_min_fminimizer *m = gsl_min_fminimizer_alloc(gsl_min_fminimizer_brent);
    if (!m)
        return lw_error_set(x->err, LW_ENOMEM, "out of memory");
    double a = log(grid_value(lo, hi, best - 1, SIZE_OVER_GRID));
    double b = log(grid_value(lo, hi, best + 1, SIZE_OVER_GRID));
    int st = gsl_min_fminimizer_set_with_values(m, &F, log(*value), -wk[best], a, -wk[best - 1],
                                                b, -wk[best + 1]);
    for (int it = 0; st == GSL_SUCCESS && !c.failed && it < 100; it++) {
        if ((st = gsl_min_fminimizer_iterate(m)) != GSL_SUCCESS)
            break;
        if (gsl_min_test_interval(gsl_min_fminimizer_x_lower(m), gsl_min_fminimizer_x_upper(m),
                                  1e-6, 0) == GSL_SUCCESS)
            break;
    }
    double xm = gsl_min_fminimizer_x_minimum(m), fm = gsl_min_fminimizer_f_minimum(m);
    gsl_min_fminimizer_free(m);
    if (c.failed)
        return LW_EINPUT;
    if (fm <= -wk[best])
        *value = exp(xm);
    return LW_OK;
}

int size_corners_run(desc *d, desc_target t, double lo, double hi, int levels, design_goal g,
                     const check_opts *o, size_corners_result *r, lw_error *err)
{
    memset(r, 0, sizeof *r);
    r->lo = lo;
    r->hi = hi;
    /* the tuned value is pinned while the corners are set up, so that a
     * tuned param with a range of its own is not also combined */
    double v0 = desc_target_value(d, t);
    desc_saved saved = desc_target_save(d, t);
    desc_target_set(d, t, v0, err);
    int rc = corners_setup(d, levels, &r->corners, err);
    desc_target_restore(d, t, saved);
    if (rc)
        return rc;
    gsl_error_handler_t *old = gsl_set_error_handler_off();
    corner_ctx x = { d, t, &r->corners, o, g, 0, err };
    /* start from the worst corner at the file's value (inside the range) */
    r->nominal_value = v0 >= lo && v0 <= hi ? v0 : sqrt(lo * hi);
    int c = -1, k0 = 0, best = 0, k = 0;
    all_corners(&x, r->nominal_value, &r->nominal_worst, &rc);
    c = r->nominal_worst;
    double value = NAN;
    while (!rc) {
        k = scan_corner(&x, c, k0, lo, hi, &best, &rc);
        if (rc)
            break;
        if (k == SIZE_OVER_GRID) {
            /* corner c meets nowhere from grid point k0 up: not reachable;
             * report where the worst case comes nearest */
            rc = best_worst_case(&x, lo, hi, &value);
            break;
        }
        double b = grid_value(lo, hi, k, SIZE_OVER_GRID);
        int w;
        all_corners(&x, b, &w, &rc);
        if (rc)
            break;
        if (!all_meet(&x)) {
            /* another corner fails where c meets: follow it from here */
            c = worst_failing(&x);
            k0 = k;
            r->switches++;
            continue;
        }
        if (k == 0) {
            value = b;
            r->met = 1;
            r->at_lo = 1;
            break;
        }
        /* W < 0 at the grid point below (corner c fails there), W >= 0 at b:
         * solve the failing corner's own margin, check every corner at its
         * root, and repeat with one that still fails */
        double a = grid_value(lo, hi, k - 1, SIZE_OVER_GRID);
        for (int guard = 0; !rc && guard <= r->corners.ncorners; guard++) {
            double root = b;
            if ((rc = corner_root(&x, c, a, b, &root)))
                break;
            all_corners(&x, root, &w, &rc);
            if (rc)
                break;
            if (all_meet(&x)) {
                value = root;
                r->met = 1;
                break;
            }
            c = worst_failing(&x);
            a = root;
            r->switches++;
        }
        if (!rc && !r->met)
            value = b; /* a corner kept failing just below b: b is where all meet */
        r->met = 1;
        break;
    }
    /* every corner at the answer, ranked: the first is the one that limits */
    int w = -1;
    if (!rc)
        all_corners(&x, value, &w, &rc);
    r->value = value;
    r->limiting = r->met ? c : w; /* unreachable: the worst corner there */
    r->analyses = x.analyses;
    gsl_set_error_handler(old);
    desc_eval(d, err);
    if (!rc)
        rc = corners_rank(&r->corners, g, err);
    if (rc)
        size_corners_free(r);
    return rc;
}

/* ---- Monte Carlo --------------------------------------------------------- */

int size_mc_passes_needed(int n, double p)
{
    /* the lower bound grows with the passes: bisect on the count */
    double lo, hi, l1;
    mc_clopper_pearson(n, n, 0.05, &lo, &hi, &l1);
    if (l1 < p)
        return n + 1;
    int a = 0, b = n;
    while (b - a > 1) {
        int m = (a + b) / 2;
        mc_clopper_pearson(m, n, 0.05, &lo, &hi, &l1);
        if (l1 >= p)
            b = m;
        else
            a = m;
    }
    mc_clopper_pearson(a, n, 0.05, &lo, &hi, &l1);
    return l1 >= p ? a : b;
}

void size_mc_free(size_mc_result *r)
{
    if (r)
        mc_result_free(&r->mc);
}

typedef struct mc_ctx {
    const text_file *tf;
    const char *path;
    const char **sets;       /* the command line's, then the tuned value */
    int nsets;
    const char *tune;
    int nsamples;
    uint64_t seed;
    design_goal g;
    const check_opts *o;
    FILE *progress;
    int runs;
    lw_error *err;
} mc_ctx;

/* Monte Carlo with the target at v: the same seed, so the same draws. */
static int mc_at(mc_ctx *x, double v, mc_result *out)
{
    char set[DESC_MAX_NAME + 48];
    snprintf(set, sizeof set, "%s=%.17g", x->tune, v);
    x->sets[x->nsets] = set;
    x->runs++;
    if (x->progress) {
        fprintf(x->progress, "\rsize: Monte Carlo run %d, %s = %.6g ", x->runs, x->tune, v);
        fflush(x->progress);
    }
    return montecarlo_run(x->tf, x->path, x->sets, x->nsets + 1, x->nsamples, x->seed, x->g,
                          x->o, NULL, out, x->err);
}

int size_mc_run(const text_file *tf, const char *path, const char *const *sets, int nsets,
                const char *tune, double lo, double hi, int nsamples, uint64_t seed,
                double yield, design_goal g, const check_opts *o, FILE *progress,
                size_mc_result *r, lw_error *err)
{
    memset(r, 0, sizeof *r);
    r->lo = lo;
    r->hi = hi;
    r->limiting = -1;
    r->below = NAN;
    r->need = size_mc_passes_needed(nsamples, yield);
    if (r->need > nsamples) {
        double l1, a, b;
        mc_clopper_pearson(nsamples, nsamples, 0.05, &a, &b, &l1);
        return lw_error_set(err, LW_EINPUT, "--samples %d cannot show a yield of %.4g%%: even "
                            "with every sample passing the one-sided 95%% lower bound is "
                            "%.3f%%; take at least %.0f samples", nsamples, 100 * yield,
                            100 * l1, ceil(log(0.05) / log(yield)));
    }
    const char **all = malloc(sizeof *all * (size_t)(nsets + 1));
    if (!all)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    for (int k = 0; k < nsets; k++)
        all[k] = sets[k];
    mc_ctx x = { tf, path, all, nsets, tune, nsamples, seed, g, o, progress, 0, err };
    mc_result below, at;
    memset(&below, 0, sizeof below);
    memset(&at, 0, sizeof at);
    int rc = LW_OK, k, best = -1, bestn = -1;
    double a = NAN, b = NAN;
    /* the grid: the first value that reaches `need` passes */
    for (k = 0; k < SIZE_MC_GRID && !rc; k++) {
        double v = grid_value(lo, hi, k, SIZE_MC_GRID);
        mc_result m;
        if ((rc = mc_at(&x, v, &m)))
            break;
        if (m.passes > bestn) {
            bestn = m.passes;
            best = k;
        }
        if (m.passes >= r->need) {
            b = v;
            at = m;
            break;
        }
        mc_result_free(&below);
        below = m;
        a = v;
    }
    if (!rc && k == SIZE_MC_GRID) {
        /* never reached: report the value with the most passes */
        mc_result_free(&below);
        r->value = grid_value(lo, hi, best, SIZE_MC_GRID);
        rc = mc_at(&x, r->value, &r->mc);
        r->runs = x.runs;
        if (progress)
            fprintf(progress, "\r%60s\r", "");
        free(all);
        return rc;
    }
    /* bisection on ln v: a fails, b reaches the target */
    while (!rc && !isnan(a) && b / a - 1 > 1e-4) {
        double m = sqrt(a * b);
        mc_result mm;
        if ((rc = mc_at(&x, m, &mm)))
            break;
        if (mm.passes >= r->need) {
            mc_result_free(&at);
            at = mm;
            b = m;
        } else {
            mc_result_free(&below);
            below = mm;
            a = m;
        }
    }
    if (!rc) {
        r->met = 1;
        r->value = b;
        r->below = a;
        r->mc = at;
        memset(&at, 0, sizeof at);
        /* the limiting sample: passes at b, failed at a; the nearest to
         * failing at b if several changed */
        double ld = INFINITY;
        for (int i = 0; !isnan(a) && i < nsamples; i++) {
            if (!r->mc.valid[i] || !below.valid[i] || !design_meets(&r->mc.pts[i], g) ||
                design_meets(&below.pts[i], g))
                continue;
            double dist = design_goal_distance(&r->mc.pts[i], g);
            if (dist < ld) {
                ld = dist;
                r->limiting = i;
            }
        }
    }
    r->runs = x.runs;
    if (progress)
        fprintf(progress, "\r%60s\r", "");
    mc_result_free(&below);
    mc_result_free(&at);
    free(all);
    if (rc)
        size_mc_free(r);
    return rc;
}
