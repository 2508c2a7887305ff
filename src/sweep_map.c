/* sweep_map: the two-value map and its boundary. */
#include "loopwise/sweep_map.h"

#include <gsl/gsl_errno.h>
#include <gsl/gsl_roots.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

void map_result_free(map_result *r)
{
    if (!r)
        return;
    free(r->va);
    free(r->vb);
    free(r->pts);
    free(r->edge);
    memset(r, 0, sizeof *r);
}

/* SPEC 4's spacing: v_i = A (B/A)^(i/(N-1)), or A + (B-A) i/(N-1); ends exact. */
static double axis_value(double from, double to, int k, int n, int lin)
{
    if (k == n - 1)
        return to;
    double f = (double)k / (n - 1);
    return lin ? from + (to - from) * f : from * pow(to / from, f);
}

typedef struct edge_ctx {
    desc *d;
    desc_target ta, tb;
    double a;
    int lin, failed, analyses;
    design_goal g;
    const check_opts *o;
    lw_error *err;
} edge_ctx;

static double edge_fn(double x, void *vp)
{
    edge_ctx *c = vp;
    design_point pt;
    c->analyses++;
    if (design_eval2(c->d, c->ta, c->a, c->tb, c->lin ? x : exp(x), c->o, &pt, c->err)) {
        c->failed = 1;
        return 0;
    }
    return design_goal_distance(&pt, c->g);
}

/* The B between b0 and b1 (distances of opposite signs) where the distance
 * to the goal changes sign, at A = c->a. */
static int edge_root(edge_ctx *c, double b0, double b1, double *root)
{
    gsl_function F = { edge_fn, c };
    gsl_root_fsolver *s = gsl_root_fsolver_alloc(gsl_root_fsolver_brent);
    if (!s)
        return lw_error_set(c->err, LW_ENOMEM, "out of memory");
    double x0 = c->lin ? b0 : log(b0), x1 = c->lin ? b1 : log(b1);
    int st = gsl_root_fsolver_set(s, &F, x0, x1);
    for (int it = 0; st == GSL_SUCCESS && !c->failed && it < 100; it++) {
        if ((st = gsl_root_fsolver_iterate(s)) != GSL_SUCCESS)
            break;
        double lo = gsl_root_fsolver_x_lower(s), hi = gsl_root_fsolver_x_upper(s);
        double tol = c->lin ? 1e-7 * fmax(fabs(lo), fabs(hi)) : 1e-7;
        if (gsl_root_test_interval(lo, hi, tol, 0) == GSL_SUCCESS)
            break;
    }
    double x = gsl_root_fsolver_root(s);
    gsl_root_fsolver_free(s);
    if (c->failed)
        return LW_EINPUT;
    *root = c->lin ? x : exp(x);
    return LW_OK;
}

int map_run(desc *d, desc_target ta, double a0, double a1, desc_target tb, double b0,
            double b1, int n, int lin, design_goal g, const check_opts *o, map_result *r,
            lw_error *err)
{
    memset(r, 0, sizeof *r);
    size_t nn = (size_t)n * (size_t)n;
    r->n = n;
    r->va = malloc(sizeof(double) * (size_t)n);
    r->vb = malloc(sizeof(double) * (size_t)n);
    r->pts = calloc(nn, sizeof *r->pts);
    r->edge = malloc(sizeof *r->edge * nn);
    if (!r->va || !r->vb || !r->pts || !r->edge) {
        map_result_free(r);
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    for (int k = 0; k < n; k++) {
        r->va[k] = axis_value(a0, a1, k, n, lin);
        r->vb[k] = axis_value(b0, b1, k, n, lin);
    }
    gsl_error_handler_t *old = gsl_set_error_handler_off();
    int rc = LW_OK;
    for (int i = 0; i < n && !rc; i++)
        for (int j = 0; j < n && !rc; j++) {
            design_point *p = &r->pts[i * n + j];
            rc = design_eval2(d, ta, r->va[i], tb, r->vb[j], o, p, err);
            r->analyses++;
            r->missed |= !rc && !design_meets(p, g);
            r->failed |= !rc && design_fails(p, g);
        }
    edge_ctx c = { d, ta, tb, 0, lin, 0, 0, g, o, err };
    for (int i = 0; i < n && !rc; i++) {
        c.a = r->va[i];
        for (int j = 1; j < n && !rc; j++) {
            double x = design_goal_distance(&r->pts[i * n + j - 1], g);
            double y = design_goal_distance(&r->pts[i * n + j], g);
            if ((x >= 0) == (y >= 0))
                continue;
            double root = r->vb[j];
            if ((rc = edge_root(&c, r->vb[j - 1], r->vb[j], &root)))
                break;
            r->edge[r->nedge++] = (map_edge){ i, r->va[i], root, y >= 0 };
        }
    }
    r->analyses += c.analyses;
    gsl_set_error_handler(old);
    desc_eval(d, err);
    if (rc)
        map_result_free(r);
    return rc;
}
