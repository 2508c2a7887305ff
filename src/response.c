/* response: closed-loop transfers from an input or an injected current, their
 * exact evaluation and the structure of H. See response.h for the method. */
#include "loopwise/response.h"

#include <gsl/gsl_eigen.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/linalg.h"
#include "loopwise/pencil.h"

struct response {
    const model *m;            /* the network (not owned; outlives the evaluator) */
    int n, to;                 /* the network's nodes; the read-out node y is index n */
    double *G, *C;             /* n x n, every gm on */
    double gy;                 /* the read-out node's conductance */
    pencil *p;                 /* of the network with y: (n+1) x (n+1) */
    pencil_hess *h;            /* H for the current source */
    double *u, *v;             /* n+1 values each */
    double *b0, *b1, *w;       /* n values each */
    gsl_matrix *lu;            /* the LU of G, for H(0) */
    gsl_permutation *perm;
    gsl_vector *x, *rhs;
    int lu_ok, reaches;
    response_src src;
    double hinf;
};

void response_free(response *rs)
{
    if (!rs)
        return;
    pencil_hess_free(rs->h);
    pencil_free(rs->p);
    free(rs->G);
    free(rs->u);
    gsl_matrix_free(rs->lu);
    gsl_permutation_free(rs->perm);
    gsl_vector_free(rs->x);
    gsl_vector_free(rs->rhs);
    free(rs);
}

int response_new(const model *m, int to, response **out, lw_error *err)
{
    *out = NULL;
    int n = m->n, n1 = n + 1, rc = LW_OK;
    size_t nn = (size_t)n * (size_t)n, n1n1 = (size_t)n1 * (size_t)n1;
    response *rs = calloc(1, sizeof *rs);
    double *Ga = calloc(n1n1, sizeof(double)), *Ca = calloc(n1n1, sizeof(double));
    if (rs) {
        rs->m = m;
        rs->n = n;
        rs->to = to;
        rs->G = malloc(sizeof(double) * 2 * nn);
        rs->u = malloc(sizeof(double) * (size_t)(2 * n1 + 3 * n));
        rs->lu = gsl_matrix_alloc((size_t)n, (size_t)n);
        rs->perm = gsl_permutation_alloc((size_t)n);
        rs->x = gsl_vector_alloc((size_t)n);
        rs->rhs = gsl_vector_alloc((size_t)n);
    }
    if (!rs || !Ga || !Ca || !rs->G || !rs->u || !rs->lu || !rs->perm || !rs->x || !rs->rhs) {
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
        goto done;
    }
    rs->C = rs->G + nn;
    rs->v = rs->u + n1;
    rs->b0 = rs->v + n1;
    rs->b1 = rs->b0 + n;
    rs->w = rs->b1 + n;
    model_fill_g(m, NULL, rs->G);
    memcpy(rs->C, m->C, sizeof(double) * nn);
    /* the read-out node's conductance on the scale of the node it copies, so
     * that the pencil's diagonal scaling treats both alike */
    double g = 0;
    for (int j = 0; j < n; j++)
        g = fmax(g, fmax(fabs(rs->G[to * n + j]), fabs(rs->G[j * n + to])));
    rs->gy = g > 0 ? g : 1.0;
    for (int i = 0; i < n; i++)
        for (int j = 0; j < n; j++) {
            Ga[i * n1 + j] = rs->G[i * n + j];
            Ca[i * n1 + j] = rs->C[i * n + j];
        }
    Ga[n * n1 + to] = -rs->gy;
    Ga[n * n1 + n] = rs->gy;
    memset(rs->v, 0, sizeof(double) * (size_t)n1);
    rs->v[n] = 1.0;
    if ((rc = pencil_new(n1, Ga, Ca, &rs->p, err)))
        goto done;
    memcpy(rs->lu->data, rs->G, sizeof(double) * nn);
    int sig;
    rs->lu_ok = gsl_linalg_LU_decomp(rs->lu, rs->perm, &sig) == GSL_SUCCESS;
    for (int k = 0; rs->lu_ok && k < n; k++)
        rs->lu_ok = gsl_matrix_get(rs->lu, (size_t)k, (size_t)k) != 0;
done:
    free(Ga);
    free(Ca);
    if (rc) {
        response_free(rs);
        return rc;
    }
    *out = rs;
    return LW_OK;
}

/* Which nodes a source reaches: v = Y^-1 b has v_k structurally nonzero only
 * when a chain of nonzero couplings Y[l][k] (v_k enters node l's equation)
 * leads from a node where b is nonzero to k. */
static int reaches(const response *rs, const double *b0, const double *b1)
{
    int n = rs->n, head = 0, tail = 0, found = 0;
    int *queue = malloc(sizeof(int) * (size_t)(n + 1));
    unsigned char *seen = calloc((size_t)n + 1, 1);
    if (!queue || !seen) {
        free(queue);
        free(seen);
        return 1; /* let the numbers decide */
    }
    for (int k = 0; k < n; k++)
        if (b0[k] != 0 || b1[k] != 0) {
            seen[k] = 1;
            queue[tail++] = k;
        }
    while (head < tail && !found) {
        int k = queue[head++];
        found = k == rs->to;
        for (int l = 0; l < n; l++)
            if (!seen[l] && (rs->G[l * n + k] != 0 || rs->C[l * n + k] != 0)) {
                seen[l] = 1;
                queue[tail++] = l;
            }
    }
    free(queue);
    free(seen);
    return found;
}

/* w with C w = b1 (b1 in the range of C: see response.h). C is symmetric and
 * positive semidefinite; scaled to a unit diagonal where it has one,
 * D C D = V diag(l) V^T (GSL's symmetric eigensolver), and
 * w = D V diag(1/l) V^T D b1 over the eigenvalues above 1e-12 of the largest:
 * the least-norm solution, which serves as well as any. */
static int c_solve(const response *rs, double *w, lw_error *err)
{
    int n = rs->n, rc = LW_OK;
    gsl_matrix *A = gsl_matrix_alloc((size_t)n, (size_t)n), *V = gsl_matrix_alloc((size_t)n, (size_t)n);
    gsl_vector *l = gsl_vector_alloc((size_t)n);
    gsl_eigen_symmv_workspace *ws = gsl_eigen_symmv_alloc((size_t)n);
    double *d = malloc(sizeof(double) * (size_t)(2 * n));
    if (!A || !V || !l || !ws || !d) {
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
        goto done;
    }
    double *q = d + n;
    for (int i = 0; i < n; i++)
        d[i] = rs->C[i * n + i] > 0 ? 1.0 / sqrt(rs->C[i * n + i]) : 1.0;
    for (int i = 0; i < n; i++)
        for (int j = 0; j < n; j++)
            gsl_matrix_set(A, (size_t)i, (size_t)j, d[i] * rs->C[i * n + j] * d[j]);
    if (gsl_eigen_symmv(A, l, V, ws) != GSL_SUCCESS) {
        rc = lw_error_set(err, LW_ENUMERIC, "the eigensolver failed on the capacitance matrix");
        goto done;
    }
    double lmax = 0;
    for (int k = 0; k < n; k++)
        lmax = fmax(lmax, gsl_vector_get(l, (size_t)k));
    for (int k = 0; k < n; k++) {
        double lk = gsl_vector_get(l, (size_t)k), s = 0;
        for (int j = 0; j < n && lk > 1e-12 * lmax; j++)
            s += gsl_matrix_get(V, (size_t)j, (size_t)k) * d[j] * rs->b1[j];
        q[k] = lk > 1e-12 * lmax ? s / lk : 0;
    }
    for (int i = 0; i < n; i++) {
        double s = 0;
        for (int k = 0; k < n; k++)
            s += gsl_matrix_get(V, (size_t)i, (size_t)k) * q[k];
        w[i] = d[i] * s;
    }
done:
    gsl_matrix_free(A);
    gsl_matrix_free(V);
    gsl_vector_free(l);
    gsl_eigen_symmv_free(ws);
    free(d);
    return rc;
}

/* u' = [b0 - G w; g w_to] with C w = b1 (see response.h). */
static int fill_u(response *rs, double *u, lw_error *err)
{
    int n = rs->n, nonzero = 0;
    for (int k = 0; k < n; k++)
        nonzero |= rs->b1[k] != 0;
    memset(rs->w, 0, sizeof(double) * (size_t)n);
    if (nonzero) {
        int rc = c_solve(rs, rs->w, err);
        if (rc)
            return rc;
    }
    for (int i = 0; i < n; i++) {
        double s = rs->b0[i];
        for (int j = 0; j < n; j++)
            s -= rs->G[i * n + j] * rs->w[j];
        u[i] = s;
    }
    u[n] = rs->gy * rs->w[rs->to];
    return LW_OK;
}

static void fill_b(response *rs, response_src src)
{
    if (src.kind == RESP_INPUT) {
        model_input_fill(rs->m, src.index, rs->b0, rs->b1);
        return;
    }
    memset(rs->b0, 0, sizeof(double) * (size_t)rs->n);
    memset(rs->b1, 0, sizeof(double) * (size_t)rs->n);
    rs->b0[src.index] = 1.0;
}

int response_source(response *rs, response_src src, lw_error *err)
{
    int r = pencil_rank(rs->p), rc;
    rs->src = src;
    fill_b(rs, src);
    if ((rc = fill_u(rs, rs->u, err)))
        return rc;
    rs->reaches = reaches(rs, rs->b0, rs->b1);
    pencil_hess_free(rs->h);
    rs->h = NULL;
    if ((rc = pencil_hess_new(rs->p, &(pencil_io){ 0, 0, 0, rs->u, rs->v }, &rs->h, err)))
        return rc;
    double *A = malloc(sizeof(double) * (size_t)(r * r + 2 * r + 1));
    if (!A)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    rc = pencil_state_space(rs->p, &(pencil_io){ 0, 0, 0, rs->u, rs->v }, A, A + r * r,
                            A + r * r + r, &rs->hinf, err);
    free(A);
    if (!rs->reaches)
        rs->hinf = 0;
    return rc;
}

static double dc_of(response *rs)
{
    int n = rs->n;
    if (!rs->lu_ok)
        return INFINITY;
    /* at s = 0 the capacitive part of b vanishes: H(0) = e_to^T G^-1 b0 */
    memcpy(rs->rhs->data, rs->b0, sizeof(double) * (size_t)n);
    if (gsl_linalg_LU_solve(rs->lu, rs->perm, rs->rhs, rs->x) != GSL_SUCCESS)
        return INFINITY;
    return gsl_vector_get(rs->x, (size_t)rs->to);
}

double complex response_eval(response *rs, double complex s)
{
    return rs->reaches ? pencil_hess_eval(rs->h, s) : 0;
}

double response_dc(response *rs)
{
    return rs->reaches ? dc_of(rs) : 0;
}

double response_hinf(const response *rs)
{
    return rs->hinf;
}

void response_origin_possible(const response *rs, int *pole, int *zero)
{
    *pole = linalg_singular(rs->n, rs->G, 1e-13);
    *zero = linalg_bordered_singular(rs->n, rs->G, rs->b0, -1, rs->to, 1e-13);
}

int response_reaches(const response *rs)
{
    return rs->reaches;
}

int response_rank(const response *rs)
{
    return pencil_rank(rs->p);
}

int response_state(response *rs, double *A, double *b, double *c, double *d, lw_error *err)
{
    return pencil_state_space(rs->p, &(pencil_io){ 0, 0, 0, rs->u, rs->v }, A, b, c, d, err);
}

int response_input_vector(response *rs, response_src src, double *b, double *d, double *dc,
                          int *reach, lw_error *err)
{
    int r = pencil_rank(rs->p), n1 = rs->n + 1;
    double *u = malloc(sizeof(double) * (size_t)(n1 + r * r + r + 1));
    if (!u)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    fill_b(rs, src);
    int rc = fill_u(rs, u, err);
    if (!rc)
        rc = pencil_state_space(rs->p, &(pencil_io){ 0, 0, 0, u, rs->v }, u + n1, b,
                                u + n1 + r * r, d, err);
    *reach = reaches(rs, rs->b0, rs->b1);
    *dc = *reach ? dc_of(rs) : 0;
    if (!*reach) {
        memset(b, 0, sizeof(double) * (size_t)r);
        *d = 0;
    }
    free(u);
    fill_b(rs, rs->src);
    if (!rc)
        rc = fill_u(rs, rs->u, err); /* w back to the current source's */
    return rc;
}

int response_zero_candidates(response *rs, int method, double complex *z, int *nz, int *used,
                             lw_error *err)
{
    return pencil_zero_candidates(rs->p, &(pencil_io){ 0, 0, 0, rs->u, rs->v }, method, z, nz,
                                  used, err);
}
