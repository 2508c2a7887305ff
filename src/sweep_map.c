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

static int load_copy(const map_source *src, desc **d, lw_error *err)
{
    int rc = desc_parse(src->t, src->path, d, err);
    for (int k = 0; !rc && k < src->nsets; k++)
        rc = desc_set(*d, src->sets[k], err);
    if (!rc)
        rc = desc_eval(*d, err);
    return rc;
}

/* Grid line i of A: every point, then the boundary along B on it (into
 * edge[], at most n - 1, *nedge of them). */
static int map_row(desc *d, const map_result *r, int i, desc_target ta, desc_target tb, int lin,
                   design_goal g, const check_opts *o, map_edge *edge, int *nedge, int *analyses,
                   lw_error *err)
{
    int n = r->n, rc = LW_OK;
    *nedge = 0;
    for (int j = 0; j < n && !rc; j++) {
        rc = design_eval2(d, ta, r->va[i], tb, r->vb[j], o, &r->pts[i * n + j], err);
        (*analyses)++;
    }
    edge_ctx c = { d, ta, tb, r->va[i], lin, 0, 0, g, o, err };
    for (int j = 1; j < n && !rc; j++) {
        double x = design_goal_distance(&r->pts[i * n + j - 1], g);
        double y = design_goal_distance(&r->pts[i * n + j], g);
        if ((x >= 0) == (y >= 0))
            continue;
        double root = r->vb[j];
        if ((rc = edge_root(&c, r->vb[j - 1], r->vb[j], &root)))
            break;
        edge[(*nedge)++] = (map_edge){ i, r->va[i], root, y >= 0 };
    }
    *analyses += c.analyses;
    return rc;
}

int map_run(const map_source *src, desc_target ta, double a0, double a1, desc_target tb,
            double b0, double b1, int n, int lin, design_goal g, const check_opts *o,
            map_result *r, lw_error *err)
{
    memset(r, 0, sizeof *r);
    size_t nn = (size_t)n * (size_t)n;
    r->n = n;
    r->va = malloc(sizeof(double) * (size_t)n);
    r->vb = malloc(sizeof(double) * (size_t)n);
    r->pts = calloc(nn, sizeof *r->pts);
    r->edge = malloc(sizeof *r->edge * nn);
    int *rowedges = calloc((size_t)n, sizeof(int));
    if (!r->va || !r->vb || !r->pts || !r->edge || !rowedges) {
        free(rowedges);
        map_result_free(r);
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    for (int k = 0; k < n; k++) {
        r->va[k] = axis_value(a0, a1, k, n, lin);
        r->vb[k] = axis_value(b0, b1, k, n, lin);
    }
    gsl_error_handler_t *old = gsl_set_error_handler_off();
    int failed = 0, analyses = 0, status = LW_OK;
    lw_error first;
    lw_error_clear(&first);
    /* row i's edges go to edge[i * n ...] first, then are packed in row order */
    #pragma omp parallel reduction(+ : analyses)
    {
        desc *d = NULL;
        lw_error e;
        lw_error_clear(&e);
        int mine = load_copy(src, &d, &e) == LW_OK;
        #pragma omp for schedule(dynamic, 1)
        for (int i = 0; i < n; i++) {
            int bad;
            #pragma omp atomic read
            bad = failed;
            if (bad || !mine)
                continue;
            int st = map_row(d, r, i, ta, tb, lin, g, o, r->edge + (size_t)i * (size_t)n,
                             &rowedges[i], &analyses, &e);
            if (st != LW_OK) {
                #pragma omp critical
                {
                    if (!failed) {
                        first = e;
                        status = st;
                    }
                    failed = 1;
                }
            }
        }
        if (!mine) {
            #pragma omp critical
            {
                if (!failed) {
                    first = e;
                    status = LW_EINPUT;
                }
                failed = 1;
            }
        }
        desc_free(d);
    }
    gsl_set_error_handler(old);
    r->analyses = analyses;
    for (int i = 0; i < n; i++)
        for (int k = 0; k < rowedges[i]; k++)
            r->edge[r->nedge++] = r->edge[(size_t)i * (size_t)n + (size_t)k];
    free(rowedges);
    for (size_t k = 0; k < nn && !failed; k++) {
        r->missed |= !design_meets(&r->pts[k], g);
        r->failed |= design_fails(&r->pts[k], g);
    }
    if (failed) {
        *err = first;
        map_result_free(r);
        return status;
    }
    return LW_OK;
}
