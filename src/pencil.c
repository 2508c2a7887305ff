/* pencil: reduction of G + sC to a standard eigenproblem, poles, owners and
 * zero candidates. See pencil.h for the method. */
#include "loopwise/pencil.h"

#include <gsl/gsl_blas.h>
#include <gsl/gsl_complex_math.h>
#include <gsl/gsl_eigen.h>
#include <gsl/gsl_linalg.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/eigvals.h"
#include "pencil_impl.h"

/* Relative size below which an eigenvalue of the scaled C counts as zero. */
#define RANK_TOL 1e-12
/* Relative size below which a singular value of G22 makes it singular. */
#define SINGULAR_TOL 1e-14

void pencil_free(pencil *p)
{
    if (!p)
        return;
    free(p->d);
    gsl_matrix_free(p->Q);
    gsl_vector_free(p->lam);
    gsl_matrix_free(p->M);
    gsl_matrix_free(p->Y2);
    gsl_matrix_free(p->Z2);
    gsl_matrix_free(p->G22inv);
    free(p);
}

int pencil_rank(const pencil *p)
{
    return p->r;
}

static void make_scaling(int n, const double *G, const double *C, double *d)
{
    for (int k = 0; k < n; k++) {
        double c = C[k * n + k], g = 0;
        for (int j = 0; j < n; j++) {
            g = fmax(g, fabs(G[k * n + j]));
            g = fmax(g, fabs(G[j * n + k]));
        }
        d[k] = c > 0 ? 1.0 / sqrt(c) : (g > 0 ? 1.0 / sqrt(g) : 1.0);
    }
}

/* Inverse of A (m x m) through its SVD; LW_ENUMERIC when singular. */
static int invert_svd(gsl_matrix *A, gsl_matrix *inv, lw_error *err)
{
    size_t m = A->size1;
    gsl_matrix *V = gsl_matrix_alloc(m, m);
    gsl_vector *S = gsl_vector_alloc(m), *work = gsl_vector_alloc(m);
    int rc = LW_OK;
    if (!V || !S || !work) {
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
        goto done;
    }
    if (gsl_linalg_SV_decomp(A, V, S, work) != GSL_SUCCESS) {
        rc = lw_error_set(err, LW_ENUMERIC, "singular value decomposition failed");
        goto done;
    }
    double smax = gsl_vector_get(S, 0), smin = gsl_vector_get(S, m - 1);
    if (!(smax > 0) || smin < SINGULAR_TOL * smax) {
        rc = lw_error_set(err, LW_ENUMERIC, "the network is singular: the nodes without "
                          "capacitance do not have a well-defined voltage (check for a node "
                          "tied only to gm outputs, or an island of resistors with no path "
                          "to ground)");
        goto done;
    }
    /* inv = V S^-1 U^T, with U now in A */
    for (size_t i = 0; i < m; i++)
        for (size_t j = 0; j < m; j++) {
            double s = 0;
            for (size_t k = 0; k < m; k++)
                s += gsl_matrix_get(V, i, k) / gsl_vector_get(S, k) * gsl_matrix_get(A, j, k);
            gsl_matrix_set(inv, i, j, s);
        }
done:
    gsl_matrix_free(V);
    gsl_vector_free(S);
    gsl_vector_free(work);
    return rc;
}

/* Eigendecomposition of the scaled C; sets p->r. */
static int split_capacitance(pencil *p, const double *C, lw_error *err)
{
    int n = p->n;
    gsl_matrix *Cs = gsl_matrix_alloc((size_t)n, (size_t)n);
    gsl_eigen_symmv_workspace *w = gsl_eigen_symmv_alloc((size_t)n);
    if (!Cs || !w) {
        gsl_matrix_free(Cs);
        gsl_eigen_symmv_free(w);
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    for (int i = 0; i < n; i++)
        for (int j = 0; j < n; j++)
            gsl_matrix_set(Cs, (size_t)i, (size_t)j, p->d[i] * C[i * n + j] * p->d[j]);
    int st = gsl_eigen_symmv(Cs, p->lam, p->Q, w);
    gsl_eigen_symmv_free(w);
    gsl_matrix_free(Cs);
    if (st != GSL_SUCCESS)
        return lw_error_set(err, LW_ENUMERIC, "eigendecomposition of the capacitance matrix failed");
    gsl_eigen_symmv_sort(p->lam, p->Q, GSL_EIGEN_SORT_VAL_DESC);
    double lmax = gsl_vector_get(p->lam, 0);
    p->r = 0;
    for (int k = 0; k < n; k++)
        if (lmax > 0 && gsl_vector_get(p->lam, (size_t)k) > RANK_TOL * lmax)
            p->r++;
    p->m = n - p->r;
    return LW_OK;
}

/* Gq = Q^T (D G D) Q, then the Schur complement on the capacitance-free block. */
static int eliminate(pencil *p, const double *G, lw_error *err)
{
    int n = p->n, r = p->r, m = p->m, rc = LW_OK;
    gsl_matrix *Gs = gsl_matrix_alloc((size_t)n, (size_t)n);
    gsl_matrix *T = gsl_matrix_alloc((size_t)n, (size_t)n);
    gsl_matrix *Gq = gsl_matrix_alloc((size_t)n, (size_t)n);
    if (!Gs || !T || !Gq) {
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
        goto done;
    }
    for (int i = 0; i < n; i++)
        for (int j = 0; j < n; j++)
            gsl_matrix_set(Gs, (size_t)i, (size_t)j, p->d[i] * G[i * n + j] * p->d[j]);
    gsl_blas_dgemm(CblasNoTrans, CblasNoTrans, 1.0, Gs, p->Q, 0.0, T);
    gsl_blas_dgemm(CblasTrans, CblasNoTrans, 1.0, p->Q, T, 0.0, Gq);
    if (r > 0)
        p->M = gsl_matrix_alloc((size_t)r, (size_t)r);
    if (r > 0 && !p->M) {
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
        goto done;
    }
    if (m > 0) {
        p->G22inv = gsl_matrix_alloc((size_t)m, (size_t)m);
        gsl_matrix *G22 = gsl_matrix_alloc((size_t)m, (size_t)m);
        if (!p->G22inv || !G22) {
            gsl_matrix_free(G22);
            rc = lw_error_set(err, LW_ENOMEM, "out of memory");
            goto done;
        }
        gsl_matrix_view v22 = gsl_matrix_submatrix(Gq, (size_t)r, (size_t)r, (size_t)m, (size_t)m);
        gsl_matrix_memcpy(G22, &v22.matrix);
        rc = invert_svd(G22, p->G22inv, err);
        gsl_matrix_free(G22);
        if (rc)
            goto done;
    }
    if (m > 0 && r > 0) {
        p->Y2 = gsl_matrix_alloc((size_t)m, (size_t)r);
        p->Z2 = gsl_matrix_alloc((size_t)r, (size_t)m);
        if (!p->Y2 || !p->Z2) {
            rc = lw_error_set(err, LW_ENOMEM, "out of memory");
            goto done;
        }
        gsl_matrix_view G21 = gsl_matrix_submatrix(Gq, (size_t)r, 0, (size_t)m, (size_t)r);
        gsl_matrix_view G12 = gsl_matrix_submatrix(Gq, 0, (size_t)r, (size_t)r, (size_t)m);
        gsl_blas_dgemm(CblasNoTrans, CblasNoTrans, 1.0, p->G22inv, &G21.matrix, 0.0, p->Y2);
        gsl_blas_dgemm(CblasNoTrans, CblasNoTrans, 1.0, &G12.matrix, p->G22inv, 0.0, p->Z2);
    }
    for (int i = 0; i < r; i++)
        for (int j = 0; j < r; j++) {
            double f = gsl_matrix_get(Gq, (size_t)i, (size_t)j);
            for (int k = 0; k < m; k++)
                f -= gsl_matrix_get(Gq, (size_t)i, (size_t)(r + k)) *
                     gsl_matrix_get(p->Y2, (size_t)k, (size_t)j);
            double li = gsl_vector_get(p->lam, (size_t)i), lj = gsl_vector_get(p->lam, (size_t)j);
            gsl_matrix_set(p->M, (size_t)i, (size_t)j, -f / sqrt(li * lj));
        }
done:
    gsl_matrix_free(Gs);
    gsl_matrix_free(T);
    gsl_matrix_free(Gq);
    return rc;
}

int pencil_new(int n, const double *G, const double *C, pencil **out, lw_error *err)
{
    *out = NULL;
    pencil *p = calloc(1, sizeof *p);
    if (!p)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    p->n = n;
    p->d = malloc(sizeof(double) * (size_t)n);
    p->Q = gsl_matrix_alloc((size_t)n, (size_t)n);
    p->lam = gsl_vector_alloc((size_t)n);
    if (!p->d || !p->Q || !p->lam) {
        pencil_free(p);
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    make_scaling(n, G, C, p->d);
    int rc = split_capacitance(p, C, err);
    if (!rc)
        rc = eliminate(p, G, err);
    if (rc) {
        pencil_free(p);
        return rc;
    }
    *out = p;
    return LW_OK;
}

/* Maps reduced right/left eigenvectors y, w (length r) to node coordinates:
 * x = D Q [L^-1/2 y; -Y2 L^-1/2 y],  l = D Q [L^-1/2 w; -Z2^T L^-1/2 w]. */
static void to_nodes(const pencil *p, const double complex *y, int left, double complex *x,
                     double complex *tmp)
{
    int r = p->r, m = p->m, n = p->n;
    for (int i = 0; i < r; i++)
        tmp[i] = y[i] / sqrt(gsl_vector_get(p->lam, (size_t)i));
    for (int k = 0; k < m; k++) {
        double complex s = 0;
        for (int j = 0; j < r; j++)
            s += (left ? gsl_matrix_get(p->Z2, (size_t)j, (size_t)k)
                       : gsl_matrix_get(p->Y2, (size_t)k, (size_t)j)) * tmp[j];
        tmp[r + k] = -s;
    }
    for (int i = 0; i < n; i++) {
        double complex s = 0;
        for (int k = 0; k < n; k++)
            s += gsl_matrix_get(p->Q, (size_t)i, (size_t)k) * tmp[k];
        x[i] = p->d[i] * s;
    }
}

/* Owner of each eigenvalue from participation factors. */
static int owners(const pencil *p, const double *C, const gsl_matrix_complex *evec, int *owner,
                  lw_error *err)
{
    int r = p->r, n = p->n, rc = LW_OK;
    gsl_matrix_complex *lu = gsl_matrix_complex_alloc((size_t)r, (size_t)r);
    gsl_matrix_complex *inv = gsl_matrix_complex_alloc((size_t)r, (size_t)r);
    gsl_permutation *perm = gsl_permutation_alloc((size_t)r);
    double complex *y = malloc(sizeof *y * (size_t)(4 * n + 4));
    if (!lu || !inv || !perm || !y) {
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
        goto done;
    }
    double complex *w = y + n + 1, *x = w + n + 1, *l = x + n + 1, *tmp = l; /* tmp reused */
    double complex *tmp2 = malloc(sizeof *tmp2 * (size_t)(n + 1));
    if (!tmp2) {
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
        goto done;
    }
    (void)tmp;
    gsl_matrix_complex_memcpy(lu, evec);
    int sig, inv_ok = gsl_linalg_complex_LU_decomp(lu, perm, &sig) == GSL_SUCCESS &&
                      gsl_linalg_complex_LU_invert(lu, perm, inv) == GSL_SUCCESS;
    for (int k = 0; k < r; k++) {
        for (int i = 0; i < r; i++) {
            gsl_complex a = gsl_matrix_complex_get(evec, (size_t)i, (size_t)k);
            gsl_complex b = gsl_matrix_complex_get(inv, (size_t)k, (size_t)i);
            y[i] = GSL_REAL(a) + I * GSL_IMAG(a);
            w[i] = GSL_REAL(b) + I * GSL_IMAG(b);
        }
        to_nodes(p, y, 0, x, tmp2);
        to_nodes(p, w, 1, l, tmp2);
        int best = -1, best_fb = -1;
        double bestv = -1, bestfb = -1;
        for (int j = 0; j < n; j++) {
            if (!(C[j * n + j] > 0))
                continue;
            double complex cx = 0;
            for (int q = 0; q < n; q++)
                cx += C[j * n + q] * x[q];
            double part = cabs(l[j] * cx);
            double energy = C[j * n + j] * cabs(x[j]) * cabs(x[j]);
            if (inv_ok && isfinite(part) && part > bestv) {
                bestv = part;
                best = j;
            }
            if (isfinite(energy) && energy > bestfb) {
                bestfb = energy;
                best_fb = j;
            }
        }
        owner[k] = best >= 0 ? best : best_fb;
    }
    free(tmp2);
done:
    gsl_matrix_complex_free(lu);
    gsl_matrix_complex_free(inv);
    gsl_permutation_free(perm);
    free(y);
    return rc;
}

/* An eigvals status as an lw_error: -1 out of memory, 1 no convergence. */
int pencil_eig_status(int st, const char *what, lw_error *err)
{
    if (st < 0)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    if (st > 0)
        return lw_error_set(err, LW_ENUMERIC, "the eigenvalue iteration for %s did not converge",
                            what);
    return LW_OK;
}

int pencil_eigen(const pencil *p, const double *C, double complex *eig, int *owner,
                 lw_error *err)
{
    int r = p->r, rc = LW_OK;
    if (r == 0)
        return LW_OK;
    if (!owner) {
        /* values only: LAPACK, no Schur vectors */
        return pencil_eig_status(eigvals_general(r, p->M->data, eig), "the poles", err);
    }
    gsl_matrix *A = gsl_matrix_alloc((size_t)r, (size_t)r);
    gsl_vector_complex *ev = gsl_vector_complex_alloc((size_t)r);
    gsl_matrix_complex *evec = gsl_matrix_complex_alloc((size_t)r, (size_t)r);
    gsl_eigen_nonsymmv_workspace *w = gsl_eigen_nonsymmv_alloc((size_t)r);
    if (!A || !ev || !evec || !w) {
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
        goto done;
    }
    gsl_matrix_memcpy(A, p->M);
    gsl_eigen_nonsymmv_params(1, w);
    if (gsl_eigen_nonsymmv(A, ev, evec, w) != GSL_SUCCESS) {
        rc = lw_error_set(err, LW_ENUMERIC, "the eigenvalue iteration for the poles did not "
                          "converge");
        goto done;
    }
    for (int k = 0; k < r; k++) {
        gsl_complex z = gsl_vector_complex_get(ev, (size_t)k);
        eig[k] = GSL_REAL(z) + I * GSL_IMAG(z);
    }
    rc = owners(p, C, evec, owner, err);
done:
    gsl_matrix_free(A);
    gsl_vector_complex_free(ev);
    gsl_matrix_complex_free(evec);
    gsl_eigen_nonsymmv_free(w);
    return rc;
}

/* b = L^-1/2 (qo1 - Z2 qo2), c = L^-1/2 (qi1 - Y2^T qi2), d0 = qi2^T G22^-1 qo2,
 * where qo = Q^T e_o and qi = Q^T e_i are rows of Q (the factors d_i d_o are
 * left to the caller). */
static double io_unit(const pencil *p, int i, int o, double *b, double *c)
{
    int r = p->r, m = p->m;
    double d0 = 0;
    for (int k = 0; k < r; k++) {
        double sb = gsl_matrix_get(p->Q, (size_t)o, (size_t)k);
        double sc = gsl_matrix_get(p->Q, (size_t)i, (size_t)k);
        for (int j = 0; j < m; j++) {
            sb -= gsl_matrix_get(p->Z2, (size_t)k, (size_t)j) *
                  gsl_matrix_get(p->Q, (size_t)o, (size_t)(r + j));
            sc -= gsl_matrix_get(p->Y2, (size_t)j, (size_t)k) *
                  gsl_matrix_get(p->Q, (size_t)i, (size_t)(r + j));
        }
        double s = sqrt(gsl_vector_get(p->lam, (size_t)k));
        b[k] = sb / s;
        c[k] = sc / s;
    }
    for (int a = 0; a < m; a++)
        for (int j = 0; j < m; j++)
            d0 += gsl_matrix_get(p->Q, (size_t)i, (size_t)(r + a)) *
                  gsl_matrix_get(p->G22inv, (size_t)a, (size_t)j) *
                  gsl_matrix_get(p->Q, (size_t)o, (size_t)(r + j));
    return d0;
}

/* The same for node vectors u, v: qu = Q^T D u, qv = Q^T D v. */
static double io_general(const pencil *p, const double *u, const double *v, double *b, double *c)
{
    int n = p->n, r = p->r, m = p->m;
    double *qu = malloc(sizeof(double) * (size_t)(2 * n)), *qv = qu ? qu + n : NULL, d0 = 0;
    if (!qu)
        return NAN;
    for (int k = 0; k < n; k++) {
        double su = 0, sv = 0;
        for (int j = 0; j < n; j++) {
            double q = gsl_matrix_get(p->Q, (size_t)j, (size_t)k) * p->d[j];
            su += q * u[j];
            sv += q * v[j];
        }
        qu[k] = su;
        qv[k] = sv;
    }
    for (int k = 0; k < r; k++) {
        double sb = qu[k], sc = qv[k];
        for (int j = 0; j < m; j++) {
            sb -= gsl_matrix_get(p->Z2, (size_t)k, (size_t)j) * qu[r + j];
            sc -= gsl_matrix_get(p->Y2, (size_t)j, (size_t)k) * qv[r + j];
        }
        double s = sqrt(gsl_vector_get(p->lam, (size_t)k));
        b[k] = sb / s;
        c[k] = sc / s;
    }
    for (int a = 0; a < m; a++)
        for (int j = 0; j < m; j++)
            d0 += qv[r + a] * gsl_matrix_get(p->G22inv, (size_t)a, (size_t)j) * qu[r + j];
    free(qu);
    return d0;
}

double pencil_io_vectors(const pencil *p, const pencil_io *io, double *b, double *c)
{
    return io->unit ? io_unit(p, io->in, io->out, b, c) : io_general(p, io->u, io->v, b, c);
}

double pencil_scale(const pencil *p, int k)
{
    return p->d[k];
}
