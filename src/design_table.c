/* design_table: where compensation does most. For every node with
 * capacitance to ground, and every cap and res element (floating ones
 * included: a Miller capacitor is a cap between two nodes), the phase
 * margin change when that value doubles and when it halves, each from a
 * whole analysis of the changed network. */
#include "loopwise/design.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

/* Tables beyond these sizes cost more analyses than a check should. */
enum { TABLE_MAX_NODES = 64, TABLE_MAX_ELEMS = 256 };

static int margin_of(const desc *d, const model *m, const check_opts *o, double *pm,
                     lw_error *err)
{
    check_result r;
    int rc = check_run(d, m, o, &r, err);
    if (rc)
        return rc;
    *pm = r.mg.best_cross >= 0 ? r.mg.cross[r.mg.best_cross].value : NAN;
    check_result_free(&r);
    return LW_OK;
}

/* The capacitance from node k to ground is the row sum of C (a two-terminal
 * stamp adds nothing to it), so scaling it by f changes C_kk alone. */
static int pm_with_ground_cap(const desc *d, model *m, int k, double f, const check_opts *o,
                              double *pm, lw_error *err)
{
    int n = m->n;
    double cg = 0, ckk = m->C[k * n + k];
    for (int j = 0; j < n; j++)
        cg += m->C[k * n + j];
    *pm = NAN;
    if (!(cg > 1e-12 * ckk) || !(cg > 0))
        return LW_OK;
    m->C[k * n + k] = ckk + (f - 1) * cg;
    int rc = margin_of(d, m, o, pm, err);
    m->C[k * n + k] = ckk;
    return rc;
}

/* The margin with element e's value times f: a cap's stamp in C grows by
 * (f - 1) C, a res's in G by (1/f - 1)/R. The matrices are saved and put
 * back whole, so rounding leaves no trace. */
static int pm_with_element(const desc *d, model *m, int e, double f, const check_opts *o,
                           double *save, double *pm, lw_error *err)
{
    const desc_elem *x = &d->elems[e];
    int n = m->n, is_cap = x->kind == ELEM_CAP;
    double *A = is_cap ? m->C : m->Gp;
    size_t nn = (size_t)n * (size_t)n;
    memcpy(save, A, sizeof(double) * nn);
    model_stamp2(A, n, x->a, x->b, is_cap ? (f - 1) * x->value : (1.0 / f - 1) / x->value);
    int rc = margin_of(d, m, o, pm, err);
    memcpy(A, save, sizeof(double) * nn);
    return rc;
}

int design_node_table(const desc *d, const check_opts *o, check_result *r, lw_error *err)
{
    if (d->nnodes > TABLE_MAX_NODES)
        return LW_OK;
    check_opts q = *o;
    q.want_loops = 0;
    q.want_owner = 0;
    q.want_nyquist = 0;
    double pm_now = r->mg.best_cross >= 0 ? r->mg.cross[r->mg.best_cross].value : NAN;
    size_t n = (size_t)d->nnodes + 1, ne = (size_t)d->nelems + 1;
    r->node_double = malloc(sizeof(double) * n);
    r->node_half = malloc(sizeof(double) * n);
    r->node_cg = malloc(sizeof(double) * n);
    r->elem_double = malloc(sizeof(double) * ne);
    r->elem_half = malloc(sizeof(double) * ne);
    if (!r->node_double || !r->node_half || !r->node_cg || !r->elem_double || !r->elem_half)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    model *m = NULL;
    int rc = model_new(d, &m, err);
    double *save = rc ? NULL : malloc(sizeof(double) * (size_t)m->n * (size_t)m->n);
    if (!rc && !save)
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
    for (int k = 0; k < d->nnodes && !rc; k++) {
        double a = NAN, b = NAN, cg = 0;
        for (int j = 0; j < m->n; j++)
            cg += m->C[k * m->n + j];
        r->node_cg[k] = cg;
        if (!isnan(pm_now))
            rc = pm_with_ground_cap(d, m, k, 2.0, &q, &a, err);
        if (!rc && !isnan(pm_now))
            rc = pm_with_ground_cap(d, m, k, 0.5, &q, &b, err);
        r->node_double[k] = a - pm_now;
        r->node_half[k] = b - pm_now;
    }
    int passive = 0;
    for (int e = 0; e < d->nelems; e++)
        passive += d->elems[e].kind != ELEM_GM;
    for (int e = 0; e < d->nelems && !rc; e++) {
        double a = NAN, b = NAN;
        if (d->elems[e].kind != ELEM_GM && passive <= TABLE_MAX_ELEMS && !isnan(pm_now)) {
            rc = pm_with_element(d, m, e, 2.0, &q, save, &a, err);
            if (!rc)
                rc = pm_with_element(d, m, e, 0.5, &q, save, &b, err);
        }
        r->elem_double[e] = a - pm_now;
        r->elem_half[e] = b - pm_now;
    }
    free(save);
    model_free(m);
    return rc;
}

static double effect(const design_row *w)
{
    double a = fabs(w->pm_double), b = fabs(w->pm_half);
    return isnan(a) ? b : isnan(b) ? a : fmax(a, b);
}

/* Largest effect first; rows without a figure last; file order on ties. */
static int cmp_row(const void *pa, const void *pb)
{
    const design_row *x = pa, *y = pb;
    double ex = effect(x), ey = effect(y);
    if (isnan(ex) != isnan(ey))
        return isnan(ex) ? 1 : -1;
    if (!isnan(ex) && ex != ey)
        return ex > ey ? -1 : 1;
    return x->order - y->order;
}

int design_table_rows(const desc *d, const check_result *r, design_row **out)
{
    *out = NULL;
    if (!r->node_double)
        return 0;
    design_row *w = malloc(sizeof *w * (size_t)(d->nnodes + d->nelems + 1));
    if (!w)
        return -1;
    int n = 0;
    for (int k = 0; k < d->nnodes; k++)
        if (r->node_cg[k] > 0)
            w[n++] = (design_row){ ROW_NODE, k, r->node_cg[k], r->node_double[k],
                                   r->node_half[k], n };
    for (int e = 0; e < d->nelems; e++)
        if (d->elems[e].kind != ELEM_GM)
            w[n++] = (design_row){ d->elems[e].kind == ELEM_CAP ? ROW_CAP : ROW_RES, e,
                                   d->elems[e].value, r->elem_double[e], r->elem_half[e], n };
    qsort(w, (size_t)n, sizeof *w, cmp_row);
    *out = w;
    return n;
}
