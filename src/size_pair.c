/* size_pair: two values sized together. */
#include "loopwise/size_pair.h"

#include <gsl/gsl_errno.h>
#include <gsl/gsl_min.h>
#include <gsl/gsl_roots.h>
#include <math.h>
#include <string.h>

typedef struct pair_ctx {
    desc *d;
    desc_target ta, tb;
    double blo, bhi;
    design_goal g;
    const check_opts *o;
    int analyses, failed;
    lw_error *err;
    double a;               /* the A that B is being chosen for */
    double gb[SIZE_PAIR_GRID_B], gd[SIZE_PAIR_GRID_B];   /* the last B scan */
} pair_ctx;

static double grid_value(double lo, double hi, int k, int n)
{
    return k == 0 ? lo : k == n - 1 ? hi : lo * pow(hi / lo, (double)k / (n - 1));
}

/* The distance to the goal at (x->a, b); -inf after an error. */
static double dist_at(pair_ctx *x, double b)
{
    design_point pt;
    x->analyses++;
    if (design_eval2(x->d, x->ta, x->a, x->tb, b, x->o, &pt, x->err)) {
        x->failed = 1;
        return -INFINITY;
    }
    return design_goal_distance(&pt, x->g);
}

static double neg_dist(double lnb, void *vp)
{
    pair_ctx *x = vp;
    return -dist_at(x, exp(lnb));
}

/* M(a): the largest distance over B, and the B giving it. */
static double best_b(pair_ctx *x, double a, double *bbest)
{
    x->a = a;
    int j = 0;
    for (int k = 0; k < SIZE_PAIR_GRID_B && !x->failed; k++) {
        x->gb[k] = grid_value(x->blo, x->bhi, k, SIZE_PAIR_GRID_B);
        x->gd[k] = dist_at(x, x->gb[k]);
        if (x->gd[k] > x->gd[j])
            j = k;
    }
    *bbest = x->gb[j];
    double best = x->gd[j];
    if (x->failed || j == 0 || j == SIZE_PAIR_GRID_B - 1 || !isfinite(best))
        return best;
    /* an interior best: Brent's minimiser of -distance on ln b, which the
     * grid point brackets between its neighbours */
    gsl_function F = { neg_dist, x };
    gsl_min_fminimizer *s = gsl_min_fminimizer_alloc(gsl_min_fminimizer_brent);
    if (!s)
        return best;
    if (gsl_min_fminimizer_set_with_values(s, &F, log(x->gb[j]), -best, log(x->gb[j - 1]),
                                           -x->gd[j - 1], log(x->gb[j + 1]),
                                           -x->gd[j + 1]) == GSL_SUCCESS) {
        for (int it = 0; it < 60 && !x->failed; it++) {
            if (gsl_min_fminimizer_iterate(s) != GSL_SUCCESS)
                break;
            if (gsl_min_test_interval(gsl_min_fminimizer_x_lower(s),
                                      gsl_min_fminimizer_x_upper(s), 1e-4, 0) == GSL_SUCCESS)
                break;
        }
        double f = -gsl_min_fminimizer_f_minimum(s);
        if (f > best) {
            best = f;
            *bbest = exp(gsl_min_fminimizer_x_minimum(s));
        }
    }
    gsl_min_fminimizer_free(s);
    return best;
}

static double m_of(double lna, void *vp)
{
    pair_ctx *x = vp;
    double b;
    double m = best_b(x, exp(lna), &b);
    /* a bounded stand-in for "no margin at any B" keeps Brent's steps sane */
    return isfinite(m) ? m : -1e3;
}

typedef struct edge_ctx {
    pair_ctx *x;
    double level;
} edge_ctx;

static double edge_fn(double lnb, void *vp)
{
    edge_ctx *e = vp;
    return dist_at(e->x, exp(lnb)) - e->level;
}

/* The root of dist - level between grid points b0 (one side) and b1. */
static double edge_root(pair_ctx *x, double level, double b0, double b1)
{
    edge_ctx e = { x, level };
    gsl_function F = { edge_fn, &e };
    gsl_root_fsolver *s = gsl_root_fsolver_alloc(gsl_root_fsolver_brent);
    double lo = fmin(b0, b1), hi = fmax(b0, b1), root = sqrt(lo * hi);
    if (!s)
        return root;
    if (gsl_root_fsolver_set(s, &F, log(lo), log(hi)) == GSL_SUCCESS) {
        for (int it = 0; it < 60 && !x->failed; it++) {
            if (gsl_root_fsolver_iterate(s) != GSL_SUCCESS)
                break;
            if (gsl_root_test_interval(gsl_root_fsolver_x_lower(s), gsl_root_fsolver_x_upper(s),
                                       1e-5, 0) == GSL_SUCCESS)
                break;
        }
        root = exp(gsl_root_fsolver_root(s));
    }
    gsl_root_fsolver_free(s);
    return root;
}

/* The B range around bbest (distance m there) where the distance stays at or
 * above level, from the last scan (at x->a) with its edges refined; NANs
 * when m itself is below the level. */
static void b_range(pair_ctx *x, double level, double bbest, double m, double *lo, double *hi)
{
    *lo = *hi = NAN;
    if (!(m >= level))
        return;
    int n = SIZE_PAIR_GRID_B, k = n - 1;
    double in = bbest;
    while (k > 0 && x->gb[k] > bbest)
        k--;
    for (; k >= 0 && x->gd[k] >= level; k--)
        in = x->gb[k];
    *lo = k < 0 ? x->blo : edge_root(x, level, x->gb[k], in);
    in = bbest;
    for (k = 0; k < n - 1 && x->gb[k] < bbest; k++)
        ;
    for (; k < n && x->gd[k] >= level; k++)
        in = x->gb[k];
    *hi = k == n ? x->bhi : edge_root(x, level, in, x->gb[k]);
}

int size_pair_run(desc *d, desc_target ta, double alo, double ahi, desc_target tb, double blo,
                  double bhi, design_goal g, const check_opts *o, size_pair_result *r,
                  lw_error *err)
{
    memset(r, 0, sizeof *r);
    r->alo = alo;
    r->ahi = ahi;
    r->blo = blo;
    r->bhi = bhi;
    r->flat_lo = r->flat_hi = r->more_a = r->more_lo = r->more_hi = NAN;
    pair_ctx x = { .d = d, .ta = ta, .tb = tb, .blo = blo, .bhi = bhi, .g = g, .o = o, .err = err };
    gsl_error_handler_t *old = gsl_set_error_handler_off();
    double ga[SIZE_PAIR_GRID_A], gm[SIZE_PAIR_GRID_A], gbest;
    int k, best = 0;
    for (k = 0; k < SIZE_PAIR_GRID_A && !x.failed; k++) {
        ga[k] = grid_value(alo, ahi, k, SIZE_PAIR_GRID_A);
        gm[k] = best_b(&x, ga[k], &gbest);
        if (gm[k] > gm[best])
            best = k;
        if (gm[k] >= 0)
            break;
    }
    if (!x.failed && k < SIZE_PAIR_GRID_A) {
        r->met = 1;
        r->a = ga[k];
        if (k > 0) {
            /* M < 0 at ga[k-1], >= 0 at ga[k]: Brent on M(ln a) */
            gsl_function F = { m_of, &x };
            gsl_root_fsolver *s = gsl_root_fsolver_alloc(gsl_root_fsolver_brent);
            if (s && gsl_root_fsolver_set(s, &F, log(ga[k - 1]), log(ga[k])) == GSL_SUCCESS) {
                for (int it = 0; it < 60 && !x.failed; it++) {
                    if (gsl_root_fsolver_iterate(s) != GSL_SUCCESS)
                        break;
                    if (gsl_root_test_interval(gsl_root_fsolver_x_lower(s),
                                               gsl_root_fsolver_x_upper(s), 1e-5,
                                               0) == GSL_SUCCESS)
                        break;
                }
                /* the upper end keeps M >= 0 */
                r->a = exp(gsl_root_fsolver_x_upper(s));
            }
            gsl_root_fsolver_free(s);
        }
    } else if (!x.failed) {
        r->a = ga[best];
    }
    if (!x.failed) {
        /* B at the answer, and the flatness there from the same scan */
        double m = best_b(&x, r->a, &r->b);
        if (!x.failed && r->met && m < 0) /* rounding at the root: the grid point meets */
            m = best_b(&x, r->a = ga[k], &r->b);
        b_range(&x, m - SIZE_PAIR_FLAT_DEG, r->b, m, &r->flat_lo, &r->flat_hi);
        if (r->met && r->a * SIZE_PAIR_MORE_A <= ahi) {
            r->more_a = r->a * SIZE_PAIR_MORE_A;
            double b2, m2 = best_b(&x, r->more_a, &b2);
            b_range(&x, 0.0, b2, m2, &r->more_lo, &r->more_hi);
        }
    }
    if (!x.failed && design_eval2(d, ta, r->a, tb, r->b, o, &r->at, err))
        x.failed = 1;
    r->analyses = x.analyses + 1;
    gsl_set_error_handler(old);
    desc_eval(d, err);
    return x.failed ? LW_EINPUT : LW_OK;
}
