/* design: sweeps, sizing and load placement on top of check. */
#include "loopwise/design.h"

#include <gsl/gsl_errno.h>
#include <gsl/gsl_roots.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#define TWO_PI 6.283185307179586

/* NAN gain margin: the phase never reaches -180 + 360 m, so no gain change
 * brings the loop to the edge: unbounded, above any requirement. */
static int gm_meets(const design_point *p, design_goal g)
{
    return isnan(g.gm_db) || isnan(p->gm_db) || p->gm_db >= g.gm_db;
}

int design_meets(const design_point *p, design_goal g)
{
    if (!p->stable || isnan(p->pm_deg) || p->pm_deg < g.pm_deg)
        return 0;
    return gm_meets(p, g);
}

int design_fails(const design_point *p, design_goal g)
{
    if (!p->stable)
        return 1;
    if (g.pm_given && (isnan(p->pm_deg) || p->pm_deg < g.pm_deg))
        return 1;
    return !gm_meets(p, g);
}

const char *design_goal_word(design_goal g)
{
    return g.pm_given ? "target" : "reference";
}

int design_eval_full(desc *d, desc_target t, double value, const check_opts *o,
                     check_result *r, model **m, lw_error *err)
{
    desc_saved saved = desc_target_save(d, t);
    desc_target_set(d, t, value, err);
    *m = NULL;
    int rc = desc_eval(d, err);
    if (!rc)
        rc = model_new(d, m, err);
    if (!rc)
        rc = check_run(d, *m, o, r, err);
    desc_target_restore(d, t, saved);
    if (rc) {
        model_free(*m);
        *m = NULL;
    }
    return rc;
}

/* The dominant and second pole of T: the two smallest nonzero magnitudes
 * among the poles T sees (a conjugate pair counts once). */
static void two_poles(const check_result *r, design_point *pt)
{
    const lg_tf *tf = &r->tf;
    int found = 0;
    pt->p1_hz = pt->p2_hz = NAN;
    pt->p2_node = -1;
    for (int k = 0; k < tf->npoles && found < 2; k++) {
        if (tf->hidden[k] || tf->poles[k] == 0 || cimag(tf->poles[k]) > 0)
            continue;
        double hz = cabs(tf->poles[k]) / TWO_PI;
        if (found == 0)
            pt->p1_hz = hz;
        else {
            pt->p2_hz = hz;
            pt->p2_node = tf->owner ? tf->owner[k] : -1;
        }
        found++;
    }
}

void design_point_from(const check_result *r, double value, design_point *pt)
{
    const margins *mg = &r->mg;
    pt->value = value;
    pt->dc = r->tf.dc;
    pt->crossover_hz = mg->best_cross >= 0 ? mg->cross[mg->best_cross].hz : NAN;
    pt->pm_deg = mg->best_cross >= 0 ? mg->cross[mg->best_cross].value : NAN;
    pt->gm_db = mg->best_phase >= 0 ? mg->phase[mg->best_phase].value : NAN;
    pt->stable = r->stable;
    pt->overshoot_pct = pt->settle1_s = pt->peak_db = NAN;
    two_poles(r, pt);
}

int design_eval(desc *d, desc_target t, double value, const check_opts *o, design_point *pt,
                lw_error *err)
{
    check_result r;
    model *m;
    int rc = design_eval_full(d, t, value, o, &r, &m, err);
    if (rc)
        return rc;
    design_point_from(&r, value, pt);
    check_result_free(&r);
    model_free(m);
    return LW_OK;
}

int design_eval2(desc *d, desc_target ta, double a, desc_target tb, double b,
                 const check_opts *o, design_point *pt, lw_error *err)
{
    desc_saved sa = desc_target_save(d, ta), sb = desc_target_save(d, tb);
    desc_target_set(d, ta, a, err);
    desc_target_set(d, tb, b, err);
    model *m = NULL;
    check_result r;
    int rc = desc_eval(d, err);
    if (!rc)
        rc = model_new(d, &m, err);
    if (!rc && !(rc = check_run(d, m, o, &r, err))) {
        design_point_from(&r, a, pt);
        check_result_free(&r);
    }
    model_free(m);
    desc_target_restore(d, tb, sb);
    desc_target_restore(d, ta, sa);
    return rc;
}

/* ---- root refinement between two grid points --------------------------- */

typedef struct refine_ctx {
    desc *d;
    desc_target t;
    const check_opts *o;
    design_goal g;
    int logscale;
    double offset;          /* added to the swept value before it is set */
    int failed;
    lw_error *err;
} refine_ctx;

/* Distance to the goal: positive when met. Combines phase and gain margin.
 * A point without a crossover has no phase margin to meet: it ranks below
 * every point that has one, and among such points by its gain margin (from
 * the target's, or from 0 dB). An unstable point ranks below every stable
 * one, in the same order among its kind: the worst corner or sample, and
 * the best value of an unreachable size, are never an unstable one while a
 * stable one is at hand. */
double design_goal_distance(const design_point *p, design_goal g)
{
    double v = p->pm_deg - g.pm_deg;
    if (isnan(p->pm_deg)) {
        double gm = isnan(p->gm_db) ? 0.0 : p->gm_db - (isnan(g.gm_db) ? 0.0 : g.gm_db);
        v = -1e3 + fmax(-500.0, fmin(500.0, gm));
    }
    if (!isnan(g.gm_db) && !isnan(p->gm_db)) /* NAN: unbounded, never the limit */
        v = fmin(v, p->gm_db - g.gm_db);
    if (!p->stable)
        v = fmin(v, 0.0) - 1e4;
    return v;
}

/* The point at the swept value v (the offset added, as the sweep does). */
static int ctx_eval(refine_ctx *c, double v, design_point *pt)
{
    return design_eval(c->d, c->t, v + c->offset, c->o, pt, c->err);
}

static double refine_fn(double x, void *vp)
{
    refine_ctx *c = vp;
    design_point pt;
    if (ctx_eval(c, c->logscale ? exp(x) : x, &pt) != LW_OK) {
        c->failed = 1;
        return 0;
    }
    return design_goal_distance(&pt, c->g);
}

/* Brent's method on [a, b] (in ln v when logscale) to relative 1e-6 in v. */
static int refine(refine_ctx *c, double a, double b, double *root)
{
    double xa = c->logscale ? log(a) : a, xb = c->logscale ? log(b) : b;
    gsl_function F = { refine_fn, c };
    gsl_root_fsolver *s = gsl_root_fsolver_alloc(gsl_root_fsolver_brent);
    if (!s)
        return lw_error_set(c->err, LW_ENOMEM, "out of memory");
    c->failed = 0;
    int st = gsl_root_fsolver_set(s, &F, xa, xb);
    for (int it = 0; st == GSL_SUCCESS && !c->failed && it < 100; it++) {
        if ((st = gsl_root_fsolver_iterate(s)) != GSL_SUCCESS)
            break;
        double lo = gsl_root_fsolver_x_lower(s), hi = gsl_root_fsolver_x_upper(s);
        double tol = c->logscale ? 1e-7 : 1e-7 * fmax(fabs(lo), fabs(hi));
        if (gsl_root_test_interval(lo, hi, tol, 0) == GSL_SUCCESS)
            break;
    }
    double x = gsl_root_fsolver_root(s);
    gsl_root_fsolver_free(s);
    if (c->failed)
        return LW_EINPUT;
    *root = c->logscale ? exp(x) : x;
    /* a sign change of the margin without a root (a jump where a crossover
     * appears or vanishes) still brackets the boundary: report it */
    return LW_OK;
}

/* Whether the goal distance jumps at the refined root x->value rather than
 * passing through the target (a crossover that appears or vanishes there):
 * the distance 1e-6 on either side (inside [a, b]) differs by more than a
 * degree. x->before and x->after get the phase margins there. */
static int crossing_jump(refine_ctx *c, double a, double b, design_crossing *x)
{
    double lo = x->value - 1e-6 * fabs(x->value), hi = x->value + 1e-6 * fabs(x->value);
    lo = fmax(lo, fmin(a, b));
    hi = fmin(hi, fmax(a, b));
    design_point p, q;
    int rc = ctx_eval(c, lo, &p);
    if (!rc)
        rc = ctx_eval(c, hi, &q);
    if (rc)
        return rc;
    x->before = p.pm_deg;
    x->after = q.pm_deg;
    x->jump = !(fabs(design_goal_distance(&q, c->g) - design_goal_distance(&p, c->g)) <= 1.0);
    return LW_OK;
}

/* Where the closed loop's stability changes between a (stable_a) and b:
 * bisection on the verdict (in ln v when logscale) to 1e-7 relative in v.
 * The verdict is a step, not a smooth function: Brent has nothing to fit. */
static int stability_edge(refine_ctx *c, double a, double b, int stable_a, double *edge)
{
    double xa = c->logscale ? log(a) : a, xb = c->logscale ? log(b) : b;
    for (int it = 0; it < 200; it++) {
        double tol = c->logscale ? 1e-7 : 1e-7 * fmax(fabs(xa), fabs(xb));
        if (!(fabs(xb - xa) > tol))
            break;
        double xm = 0.5 * (xa + xb);
        design_point pt;
        int rc = ctx_eval(c, c->logscale ? exp(xm) : xm, &pt);
        if (rc)
            return rc;
        if (pt.stable == stable_a)
            xa = xm;
        else
            xb = xm;
    }
    double x = 0.5 * (xa + xb);
    *edge = c->logscale ? exp(x) : x;
    return LW_OK;
}

/* ---- sweep ------------------------------------------------------------- */

void sweep_result_free(sweep_result *r)
{
    if (!r)
        return;
    free(r->pts);
    free(r->cross);
    free(r->edge);
    memset(r, 0, sizeof *r);
}

int sweep_run(desc *d, desc_target t, double from, double to, int npts, int lin,
              design_goal g, const check_opts *o, sweep_result *r, lw_error *err)
{
    return sweep_run_offset(d, t, from, to, 0.0, npts, lin, g, o, r, err);
}

static int sweep_points(desc *d, desc_target t, double from, double to, double offset, int npts,
                        int lin, design_goal g, const check_opts *o, const sweep_probe *probe,
                        sweep_result *r, lw_error *err);

int sweep_run_offset(desc *d, desc_target t, double from, double to, double offset, int npts,
                     int lin, design_goal g, const check_opts *o, sweep_result *r, lw_error *err)
{
    return sweep_points(d, t, from, to, offset, npts, lin, g, o, NULL, r, err);
}

int sweep_run_probe(desc *d, desc_target t, double from, double to, int npts, int lin,
                    design_goal g, const check_opts *o, const sweep_probe *probe,
                    sweep_result *r, lw_error *err)
{
    return sweep_points(d, t, from, to, 0.0, npts, lin, g, o, probe, r, err);
}

/* One point of a sweep, with the probe's figures when there is one. */
static int sweep_point(desc *d, desc_target t, double v, const check_opts *o,
                       const sweep_probe *probe, design_point *pt, lw_error *err)
{
    if (!probe)
        return design_eval(d, t, v, o, pt, err);
    check_result r;
    model *m;
    int rc = design_eval_full(d, t, v, o, &r, &m, err);
    if (rc)
        return rc;
    design_point_from(&r, v, pt);
    rc = design_probe_point(m, &r, probe, o, pt, err);
    check_result_free(&r);
    model_free(m);
    return rc;
}

static int sweep_points(desc *d, desc_target t, double from, double to, double offset, int npts,
                        int lin, design_goal g, const check_opts *o, const sweep_probe *probe,
                        sweep_result *r, lw_error *err)
{
    memset(r, 0, sizeof *r);
    r->probed = probe != NULL;
    if (probe)
        r->probe = *probe;
    r->pts = calloc((size_t)npts, sizeof *r->pts);
    r->cross = calloc((size_t)npts, sizeof *r->cross);
    r->edge = calloc((size_t)npts, sizeof *r->edge);
    if (!r->pts || !r->cross || !r->edge) {
        sweep_result_free(r);
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    gsl_error_handler_t *old = gsl_set_error_handler_off();
    int rc = LW_OK;
    for (int k = 0; k < npts && !rc; k++) {
        /* SPEC 4: v_i = A (B/A)^(i/(N-1)), or A + (B-A) i/(N-1) */
        double f = npts > 1 ? (double)k / (npts - 1) : 0;
        double v = lin ? from + (to - from) * f : from * pow(to / from, f);
        if (k == npts - 1)
            v = to;
        rc = sweep_point(d, t, v + offset, o, probe, &r->pts[k], err);
        r->pts[k].value = v;
        r->npts = k + 1;
        r->missed |= !rc && !design_meets(&r->pts[k], g);
        r->failed |= !rc && design_fails(&r->pts[k], g);
    }
    refine_ctx c = { d, t, o, g, !lin, offset, 0, err };
    for (int k = 1; k < r->npts && !rc; k++) {
        double a = design_goal_distance(&r->pts[k - 1], g), b = design_goal_distance(&r->pts[k], g);
        if ((a >= 0) == (b >= 0))
            continue;
        double root = r->pts[k].value;
        if ((rc = refine(&c, r->pts[k - 1].value, r->pts[k].value, &root)))
            break;
        design_crossing x = { root, b >= 0, 0, NAN, NAN };
        if ((rc = crossing_jump(&c, r->pts[k - 1].value, r->pts[k].value, &x)))
            break;
        r->cross[r->ncross++] = x;
    }
    for (int k = 1; k < r->npts && !rc; k++) {
        if (r->pts[k - 1].stable == r->pts[k].stable)
            continue;
        double edge = r->pts[k].value;
        if ((rc = stability_edge(&c, r->pts[k - 1].value, r->pts[k].value, r->pts[k - 1].stable,
                                 &edge)))
            break;
        r->edge[r->nedge++] = (design_crossing){ edge, r->pts[k].stable, 0, NAN, NAN };
    }
    gsl_set_error_handler(old);
    desc_eval(d, err);
    if (rc)
        sweep_result_free(r);
    return rc;
}

int sweep_smallest_margin(const sweep_result *r)
{
    int w = -1;
    for (int k = 0; k < r->npts; k++)
        if (!isnan(r->pts[k].pm_deg) && (w < 0 || r->pts[k].pm_deg < r->pts[w].pm_deg))
            w = k;
    return w;
}

/* ---- size -------------------------------------------------------------- */

enum { SIZE_GRID = 81 };

int size_run(desc *d, desc_target t, double lo, double hi, design_goal g, const check_opts *o,
             size_result *r, lw_error *err)
{
    memset(r, 0, sizeof *r);
    r->lo = lo;
    r->hi = hi;
    r->hi_value = NAN;
    sweep_result sw;
    /* The margin need not be monotonic in the value (a Miller capacitor
     * also moves a right-half-plane zero): scan a log grid first. */
    int rc = sweep_run(d, t, lo, hi, SIZE_GRID, 0, g, o, &sw, err);
    if (rc)
        return rc;
    int first = -1, last = -1;
    for (int k = 0; k < sw.npts; k++)
        if (design_meets(&sw.pts[k], g)) {
            if (first < 0)
                first = k;
            last = k;
        }
    if (first < 0) {
        int best = 0;
        for (int k = 1; k < sw.npts; k++)
            if (design_goal_distance(&sw.pts[k], g) > design_goal_distance(&sw.pts[best], g))
                best = k;
        r->best = sw.pts[best];
        sweep_result_free(&sw);
        return LW_OK;
    }
    r->met = 1;
    r->at_lo = first == 0;
    double value = sw.pts[first].value;
    for (int k = 0; k < sw.ncross; k++)
        if (sw.cross[k].rises && sw.cross[k].value <= value) {
            value = sw.cross[k].value;
            break;
        }
    if (last < sw.npts - 1) {
        r->window = 1;
        for (int k = 0; k < sw.ncross; k++)
            if (!sw.cross[k].rises && sw.cross[k].value >= value)
                r->hi_value = sw.cross[k].value;
    }
    sweep_result_free(&sw);
    gsl_error_handler_t *old = gsl_set_error_handler_off();
    rc = design_eval(d, t, value, o, &r->best, err);
    gsl_set_error_handler(old);
    /* the refined root sits on the boundary; nudge inside when rounding put it just outside */
    if (!rc && !design_meets(&r->best, g))
        rc = design_eval(d, t, value * (1 + 1e-6), o, &r->best, err);
    desc_eval(d, err);
    return rc;
}

/* ---- load -------------------------------------------------------------- */

void load_result_free(load_result *r)
{
    if (!r)
        return;
    sweep_result_free(&r->sw);
    free(r->met_lo);
    free(r->met_hi);
    r->met_lo = r->met_hi = NULL;
    r->nmet = 0;
}

/* The boundary between grid points k-1 and k where the goal starts (rises)
 * or stops being met: the refined crossing there, or the grid point on the
 * met side when none was refined (the goal also asks for stability, which
 * the crossings of the margin do not see). */
static double met_edge(const sweep_result *sw, int k, int rises)
{
    double a = sw->pts[k - 1].value, b = sw->pts[k].value;
    for (int c = 0; c < sw->ncross; c++)
        if (sw->cross[c].rises == rises && sw->cross[c].value >= a && sw->cross[c].value <= b)
            return sw->cross[c].value;
    return rises ? b : a;
}

/* The load ranges that meet the goal, from the grid and its crossings; the
 * margin need not fall as the load grows (a load can also split a pole pair
 * or slow a pole that was limiting), so every range is kept. */
static int met_ranges(load_result *r, design_goal g, lw_error *err)
{
    const sweep_result *sw = &r->sw;
    r->met_lo = malloc(sizeof(double) * (size_t)(sw->npts + 1));
    r->met_hi = malloc(sizeof(double) * (size_t)(sw->npts + 1));
    if (!r->met_lo || !r->met_hi)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    int open = 0;
    for (int k = 0; k < sw->npts; k++) {
        int m = design_meets(&sw->pts[k], g);
        if (m && !open) {
            r->met_lo[r->nmet] = k == 0 ? sw->pts[0].value : met_edge(sw, k, 1);
            open = 1;
        } else if (!m && open) {
            r->met_hi[r->nmet++] = met_edge(sw, k, 0);
            open = 0;
        }
    }
    if (open)
        r->met_hi[r->nmet++] = sw->pts[sw->npts - 1].value;
    r->max_load_f = r->nmet ? r->met_hi[r->nmet - 1] : NAN;
    return LW_OK;
}

/* The node is inside the loop when extra capacitance there changes T.
 * nominal gets the margins without a load. */
static int node_inside(desc *d, desc_target t, double c0, double cl, const check_opts *o,
                       int *inside, design_point *nominal, lw_error *err)
{
    check_result a, b;
    model *ma, *mb;
    int rc = design_eval_full(d, t, c0, o, &a, &ma, err);
    if (rc)
        return rc;
    if ((rc = design_eval_full(d, t, c0 + cl, o, &b, &mb, err))) {
        check_result_free(&a);
        model_free(ma);
        return rc;
    }
    *inside = 0;
    design_point_from(&a, 0.0, nominal);
    double lo = log10(a.mg.fmin_hz), hi = log10(a.mg.fmax_hz);
    for (int k = 0; k <= 40 && !*inside; k++) {
        double complex s = I * TWO_PI * pow(10.0, lo + (hi - lo) * k / 40.0);
        double complex ta = lgain_eval(a.lg, s), tb = lgain_eval(b.lg, s);
        *inside = cabs(ta - tb) > 1e-6 * fmax(cabs(ta), cabs(tb));
    }
    check_result_free(&a);
    check_result_free(&b);
    model_free(ma);
    model_free(mb);
    return LW_OK;
}

/* Driving-point resistance at node k of the whole network at DC, as the
 * "return ratio" of a unit gm from k to k: -(-1) [G^-1]_kk. */
static int seen_resistance(desc *d, int node, double *rs, lw_error *err)
{
    model *m;
    int rc = desc_eval(d, err);
    if (!rc)
        rc = model_new(d, &m, err);
    if (rc)
        return rc;
    double *G = malloc(sizeof(double) * (size_t)m->n * (size_t)m->n);
    lgain *lg = NULL;
    if (!G)
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
    if (!rc) {
        model_fill_g(m, NULL, G);
        rc = lgain_new(m->n, G, m->C, node, node, -1.0, &lg, err);
    }
    if (!rc) {
        double complex z = lgain_eval(lg, 0);
        *rs = isfinite(creal(z)) && creal(z) > 0 ? creal(z) : INFINITY;
    }
    lgain_free(lg);
    free(G);
    model_free(m);
    return rc;
}

/* The compensation that helps most with the worst load in place: the
 * compensation table at that load (design_table.c), its cap rows first
 * (the values a designer sizes for compensation), then the capacitance to
 * ground at another node, and a res only when no capacitance helps (a
 * resistor usually sets a bias or an output voltage too); a change helps
 * when it gains more than 0.05 degrees (the table's own threshold for
 * "the largest gain"). */
static int load_advice(desc *d, desc_target t, double c, const check_opts *o, load_result *r,
                       lw_error *err)
{
    r->advice_index = -1;
    desc_saved saved = desc_target_save(d, t);
    desc_target_set(d, t, c, err);
    model *m = NULL;
    check_result cr;
    int have = 0;
    design_row *w = NULL;
    int rc = desc_eval(d, err);
    if (!rc)
        rc = model_new(d, &m, err);
    if (!rc && !(rc = check_run(d, m, o, &cr, err)))
        have = 1;
    if (!rc)
        rc = design_node_table(d, o, &cr, err);
    int n = rc ? 0 : design_table_rows(d, &cr, &w);
    if (n < 0)
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
    static const design_row_kind order[3] = { ROW_CAP, ROW_NODE, ROW_RES };
    for (int pass = 0; pass < 3 && r->advice_index < 0; pass++)
        for (int k = 0; k < n; k++) {
            const design_row *x = &w[k];
            if (x->kind != order[pass] || (x->kind == ROW_NODE && x->index == r->node))
                continue;
            int half = !(x->pm_double >= x->pm_half) && !isnan(x->pm_half);
            double gain = half ? x->pm_half : x->pm_double;
            if (gain > 0.05 && (r->advice_index < 0 || gain > r->advice_gain)) {
                r->advice_kind = (int)x->kind;
                r->advice_index = x->index;
                r->advice_half = half;
                r->advice_gain = gain;
            }
        }
    free(w);
    if (have)
        check_result_free(&cr);
    model_free(m);
    desc_target_restore(d, t, saved);
    return rc;
}

int load_run(desc *d, int node, double lo, double hi, int npts, design_goal g, const check_opts *o,
             load_result *r, lw_error *err)
{
    memset(r, 0, sizeof *r);
    r->node = node;
    r->max_load_f = NAN;
    desc_target t = { TARGET_NODE_C, node };
    double c0 = d->nodes[node].c;
    r->c_node = c0;
    for (int e = 0; e < d->nelems; e++)
        if (d->elems[e].kind == ELEM_CAP && d->elems[e].a == node && d->elems[e].b == DESC_GND)
            r->c_node += d->elems[e].value;
    gsl_error_handler_t *old = gsl_set_error_handler_off();
    int rc = node_inside(d, t, c0, hi, o, &r->inside, &r->nominal, err);
    if (!rc && !r->inside)
        rc = seen_resistance(d, node, &r->r_seen, err);
    if (!rc && r->inside) {
        /* the points are spaced in the added load (SPEC section 4's log
         * spacing from LO to HI); each sets the node's c to c0 + load */
        rc = sweep_run_offset(d, t, lo, hi, c0, npts, 0, g, o, &r->sw, err);
        if (!rc) {
            r->failed = r->sw.failed;
            r->met = !r->sw.missed;
            rc = met_ranges(r, g, err);
        }
        int w = rc ? -1 : sweep_smallest_margin(&r->sw);
        r->worst_load = w >= 0 ? r->sw.pts[w].value : hi;
        r->advice_index = -1;
        if (!rc && !r->met)
            rc = load_advice(d, t, c0 + r->worst_load, o, r, err);
    } else if (!rc) {
        /* outside: every load leaves the loop as it is */
        r->met = design_meets(&r->nominal, g);
        r->failed = design_fails(&r->nominal, g);
    }
    gsl_set_error_handler(old);
    desc_eval(d, err);
    if (rc)
        load_result_free(r);
    return rc;
}
