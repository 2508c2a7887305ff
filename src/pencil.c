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

/* Relative size below which an eigenvalue of the scaled C counts as zero. */
#define RANK_TOL 1e-12
/* Relative size below which a singular value of G22 makes it singular. */
#define SINGULAR_TOL 1e-14

struct pencil {
    int n, r, m;          /* m = n - r capacitance-free coordinates */
    double *d;            /* diagonal scaling */
    gsl_matrix *Q;        /* n x n: eigenvectors of D C D, descending */
    gsl_vector *lam;      /* their eigenvalues */
    gsl_matrix *M;        /* r x r reduced system matrix */
    gsl_matrix *Y2;       /* m x r: G22^-1 G21 */
    gsl_matrix *Z2;       /* r x m: G12 G22^-1 */
    gsl_matrix *G22inv;   /* m x m */
};

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
static int eig_status(int st, const char *what, lw_error *err)
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
        return eig_status(eigvals_general(r, p->M->data, eig), "the poles", err);
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
 * where q = Q^T D e_k (row k of Q times d_k). */
static double io_vectors(const pencil *p, int i, int o, double *b, double *c)
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

static double norm2(const double *v, int n)
{
    double s = 0;
    for (int k = 0; k < n; k++)
        s += v[k] * v[k];
    return sqrt(s);
}

/* Zeros as the eigenvalues of the zero dynamics, a standard eigenproblem of
 * order r - k where k is the relative degree (the first Markov parameter
 * c^T M^(k-1) b that is not zero to rounding). For x with c^T M^j x = 0,
 * j < k, the input u = -c^T M^k x / (c^T M^(k-1) b) holds the output at zero,
 * and x' = (I - b g^T) M x with g^T = c^T M^(k-1) / (c^T M^(k-1) b) maps that
 * subspace into itself: its eigenvalues there are the invariant zeros.
 * With a feedthrough d0 that matters, they are eig(M - b c^T / d0).
 * Returns 0 in *done when the caller should use the bordered pencil. */
static int zero_dynamics(const pencil *p, const double *b, const double *c, double d0,
                         double complex *z, int *nz, int *done, lw_error *err)
{
    int r = p->r, rc = LW_OK;
    *done = 0;
    double nm = gsl_matrix_norm1(p->M), nb = 0, nc = 0;
    for (int a = 0; a < r; a++) {
        nb += b[a] * b[a];
        nc += c[a] * c[a];
    }
    nb = sqrt(nb);
    nc = sqrt(nc);
    if (!(nm > 0) || !(nb > 0) || !(nc > 0))
        return LW_OK;
    /* M scaled to unit norm: zeros scale back by nm */
    gsl_matrix *Ms = gsl_matrix_alloc((size_t)r, (size_t)r);
    gsl_matrix *W = gsl_matrix_alloc((size_t)r, (size_t)r);
    gsl_vector *tau = gsl_vector_alloc((size_t)r);
    double *v = malloc(sizeof(double) * (size_t)(3 * r));
    if (!Ms || !W || !tau || !v) {
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
        goto done;
    }
    gsl_matrix_memcpy(Ms, p->M);
    gsl_matrix_scale(Ms, 1.0 / nm);
    double *g = v, *t = v + r, *bb = v + 2 * r;
    for (int a = 0; a < r; a++) {
        g[a] = c[a] / nc; /* g runs through c^T Ms^j, normalised */
        bb[a] = b[a] / nb;
    }
    double gnorm = 1.0;
    if (fabs(d0) * nm > 1e-8 * nb * nc) {
        /* feedthrough: zeros = eig(M - b c^T / d0), in the scaled units */
        double kk = nb * nc / (nm * d0);
        for (int a = 0; a < r; a++)
            for (int q = 0; q < r; q++)
                gsl_matrix_set(W, (size_t)a, (size_t)q,
                               gsl_matrix_get(Ms, (size_t)a, (size_t)q) - kk * bb[a] * g[q]);
        if (eigvals_general(r, W->data, z) == 0) {
            for (int a = 0; a < r; a++)
                z[a] *= nm;
            *nz = r;
            *done = 1;
        }
        goto done;
    }
    /* relative degree: rows c^T Ms^j into W until c^T Ms^j b is not zero.
     * The Krylov rows lose accuracy as j grows, so beyond a small order (or a
     * large network) the bordered pencil decides instead. */
    if (r > 32)
        goto done;
    int k = 0;
    double gamma = 0;
    for (; k < r; k++) {
        double mk = 0;
        for (int a = 0; a < r; a++)
            mk += g[a] * bb[a];
        if (k >= 6)
            goto done; /* *done stays 0: the bordered pencil takes over */
        if (fabs(mk) > 1e-10 * gnorm) {
            gamma = mk; /* relative degree k + 1: c^T x = ... = c^T M^k x = 0 on the subspace */
            for (int a = 0; a < r; a++)
                gsl_matrix_set(W, (size_t)a, (size_t)k, g[a]);
            k++;
            break;
        }
        for (int a = 0; a < r; a++)
            gsl_matrix_set(W, (size_t)a, (size_t)k, g[a]);
        /* g <- Ms^T g */
        gnorm = 0;
        for (int a = 0; a < r; a++) {
            double sacc = 0;
            for (int q = 0; q < r; q++)
                sacc += gsl_matrix_get(Ms, (size_t)q, (size_t)a) * g[q];
            t[a] = sacc;
            gnorm += sacc * sacc;
        }
        gnorm = sqrt(gnorm);
        if (!(gnorm > 0)) {
            *done = 1; /* every Markov parameter vanishes: no dynamics seen, no zeros */
            goto done;
        }
        for (int a = 0; a < r; a++)
            g[a] = t[a];
    }
    if (gamma == 0) {
        *done = 1;
        goto done;
    }
    int nr = r - k;
    if (nr == 0) {
        *done = 1;
        goto done;
    }
    /* N: orthonormal basis of the complement of span(W[:, 0..k-1]) from a QR */
    gsl_matrix *Q = gsl_matrix_alloc((size_t)r, (size_t)r), *R = gsl_matrix_alloc((size_t)r, (size_t)r);
    double *MN = malloc(sizeof(double) * (size_t)(r * nr + nr * nr + 1)), *Z = MN + r * nr;
    if (!Q || !R || !MN) {
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
    } else {
        for (int q = k; q < r; q++)
            for (int a = 0; a < r; a++)
                gsl_matrix_set(W, (size_t)a, (size_t)q, 0.0);
        gsl_linalg_QR_decomp(W, tau);
        gsl_linalg_QR_unpack(W, tau, Q, R);
        /* Z = N^T (I - bb g^T / gamma) Ms N, N = Q[:, k..r-1]; the matrices
         * were allocated r x r, so their rows are r apart */
        const double *ms = Ms->data, *qm = Q->data;
        for (int a = 0; a < r; a++)
            for (int q = 0; q < nr; q++) {
                double sacc = 0;
                for (int j = 0; j < r; j++)
                    sacc += ms[a * r + j] * qm[j * r + k + q];
                MN[a * nr + q] = sacc;
            }
        for (int q = 0; q < nr; q++) {
            double gm = 0;
            for (int a = 0; a < r; a++)
                gm += g[a] * MN[a * nr + q];
            for (int a = 0; a < r; a++)
                MN[a * nr + q] -= bb[a] * gm / gamma;
        }
        for (int x = 0; x < nr; x++)
            for (int q = 0; q < nr; q++) {
                double sacc = 0;
                for (int a = 0; a < r; a++)
                    sacc += qm[a * r + k + x] * MN[a * nr + q];
                Z[x * nr + q] = sacc;
            }
        if (eigvals_general(nr, Z, z) == 0) {
            for (int a = 0; a < nr; a++)
                z[a] *= nm;
            *nz = nr;
            *done = 1;
        }
    }
    gsl_matrix_free(Q);
    gsl_matrix_free(R);
    free(MN);
done:
    gsl_matrix_free(Ms);
    gsl_matrix_free(W);
    gsl_vector_free(tau);
    free(v);
    return rc;
}

int pencil_zero_candidates(const pencil *p, int i, int o, double complex *z, int *nz,
                           lw_error *err)
{
    int r = p->r, rc = LW_OK;
    *nz = 0;
    if (r == 0)
        return LW_OK;
    {
        double *bc = malloc(sizeof(double) * (size_t)(2 * r));
        if (!bc)
            return lw_error_set(err, LW_ENOMEM, "out of memory");
        double d0 = io_vectors(p, i, o, bc, bc + r);
        int done = 0;
        rc = zero_dynamics(p, bc, bc + r, d0, z, nz, &done, err);
        free(bc);
        if (rc || done)
            return rc;
        *nz = 0;
    }
    double *b = malloc(sizeof(double) * (size_t)(2 * r));
    gsl_matrix *A = gsl_matrix_calloc((size_t)r + 1, (size_t)r + 1);
    gsl_matrix *B = gsl_matrix_calloc((size_t)r + 1, (size_t)r + 1);
    gsl_vector_complex *alpha = gsl_vector_complex_alloc((size_t)r + 1);
    gsl_vector *beta = gsl_vector_alloc((size_t)r + 1);
    gsl_eigen_gen_workspace *w = gsl_eigen_gen_alloc((size_t)r + 1);
    if (!b || !A || !B || !alpha || !beta || !w) {
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
        goto done;
    }
    double *c = b + r;
    double d0 = io_vectors(p, i, o, b, c);
    double nm = gsl_matrix_norm1(p->M), nb = norm2(b, r), nc = norm2(c, r);
    if (nb == 0 || nc == 0)
        goto done; /* the transfer has no dynamics: no zeros */
    if (!(nm > 0))
        nm = 1;
    /* Scaling b by nm/nb and c by nm/nc leaves the zeros unchanged. */
    double sb = nm / nb, sc = nm / nc;
    for (int a = 0; a < r; a++) {
        for (int j = 0; j < r; j++)
            gsl_matrix_set(A, (size_t)a, (size_t)j, gsl_matrix_get(p->M, (size_t)a, (size_t)j));
        gsl_matrix_set(A, (size_t)a, (size_t)r, sb * b[a]);
        gsl_matrix_set(A, (size_t)r, (size_t)a, sc * c[a]);
        gsl_matrix_set(B, (size_t)a, (size_t)a, 1.0);
    }
    gsl_matrix_set(A, (size_t)r, (size_t)r, sb * sc * d0);
    if (gsl_eigen_gen(A, B, alpha, beta, w) != GSL_SUCCESS) {
        rc = lw_error_set(err, LW_ENUMERIC, "the eigenvalue iteration for the zeros did not "
                          "converge");
        goto done;
    }
    for (int k = 0; k <= r; k++) {
        double be = gsl_vector_get(beta, (size_t)k);
        gsl_complex a = gsl_vector_complex_get(alpha, (size_t)k);
        if (be == 0)
            continue;
        double complex v = (GSL_REAL(a) + I * GSL_IMAG(a)) / be;
        if (isfinite(creal(v)) && isfinite(cimag(v)) && *nz < r)
            z[(*nz)++] = v;
    }
done:
    free(b);
    gsl_matrix_free(A);
    gsl_matrix_free(B);
    gsl_vector_complex_free(alpha);
    gsl_vector_free(beta);
    gsl_eigen_gen_free(w);
    return rc;
}

/* ---- O(rank^2) evaluation through the Hessenberg form ------------------------ */

struct pencil_hess {
    int r;
    double *H;             /* r x r upper Hessenberg, row-major */
    double *b, *c;
    double d0;
    double *work;          /* 2 (r x r + r): real and imaginary parts */
};

void pencil_hess_free(pencil_hess *h)
{
    if (!h)
        return;
    free(h->H);
    free(h->b);
    free(h->work);
    free(h);
}

double pencil_scale(const pencil *p, int k)
{
    return p->d[k];
}

int pencil_hess_new(const pencil *p, int i, int o, pencil_hess **out, lw_error *err)
{
    *out = NULL;
    int r = p->r, rc = LW_OK;
    pencil_hess *h = calloc(1, sizeof *h);
    gsl_vector *bal = r ? gsl_vector_alloc((size_t)r) : NULL;
    if (h) {
        h->r = r;
        h->H = malloc(sizeof(double) * (size_t)(r * r + 1));
        h->b = malloc(sizeof(double) * (size_t)(2 * r + 2));
        h->work = malloc(sizeof(double) * 2 * (size_t)(r * r + r + 1));
    }
    if (!h || !h->H || !h->b || !h->work || (r && !bal)) {
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
        goto done;
    }
    h->c = h->b + r;
    h->d0 = r || p->m ? io_vectors(p, i, o, h->b, h->c) : 0;
    if (r > 0) {
        /* balance first (a diagonal similarity D^-1 M D, Parlett and Reinsch):
         * the Householder steps then keep the small entries of a matrix whose
         * rows span many decades, which the evaluation needs near s = 0 */
        gsl_matrix_view A = gsl_matrix_view_array(h->H, (size_t)r, (size_t)r);
        gsl_matrix_memcpy(&A.matrix, p->M);
        gsl_linalg_balance_matrix(&A.matrix, bal);
        for (int a = 0; a < r; a++) {
            h->b[a] /= gsl_vector_get(bal, (size_t)a);
            h->c[a] *= gsl_vector_get(bal, (size_t)a);
        }
        /* H = U^T M U, and b, c rotated alike */
        int st = eigvals_hessenberg_form(r, h->H, h->b, 2);
        if (st)
            rc = st < 0 ? lw_error_set(err, LW_ENOMEM, "out of memory")
                        : lw_error_set(err, LW_ENUMERIC, "Hessenberg reduction failed");
    }
done:
    gsl_vector_free(bal);
    if (rc) {
        pencil_hess_free(h);
        return rc;
    }
    *out = h;
    return LW_OK;
}

/* Gaussian elimination of the Hessenberg system (sI - H) x = b: each column
 * has one entry below the diagonal, so each step compares two rows and
 * swaps them when the lower one is larger (partial pivoting). O(r^2), on
 * separate real and imaginary parts (the operands are scaled, so the
 * overflow guards of the library's complex arithmetic are not needed).
 * Entries below the subdiagonal are never read, so they are not filled. */
double complex pencil_hess_eval(pencil_hess *h, double complex s)
{
    int r = h->r;
    if (r == 0)
        return h->d0;
    double *ar = h->work, *ai = ar + r * r, *xr = ai + r * r, *xi = xr + r;
    double sr = creal(s), si = cimag(s);
    for (int a = 0; a < r; a++) {
        int k0 = a > 0 ? a - 1 : 0;
        for (int k = k0; k < r; k++) {
            ar[a * r + k] = -h->H[a * r + k];
            ai[a * r + k] = 0.0;
        }
        ar[a * r + a] += sr;
        ai[a * r + a] = si;
        xr[a] = h->b[a];
        xi[a] = 0.0;
    }
    for (int k = 0; k < r - 1; k++) {
        double *pr = ar + k * r, *pi = ai + k * r, *nr = ar + (k + 1) * r, *ni = ai + (k + 1) * r;
        if (fabs(nr[k]) + fabs(ni[k]) > fabs(pr[k]) + fabs(pi[k])) {
            for (int j = k; j < r; j++) {
                double tr = pr[j], ti = pi[j];
                pr[j] = nr[j];
                pi[j] = ni[j];
                nr[j] = tr;
                ni[j] = ti;
            }
            double tr = xr[k], ti = xi[k];
            xr[k] = xr[k + 1];
            xi[k] = xi[k + 1];
            xr[k + 1] = tr;
            xi[k + 1] = ti;
        }
        double nk = pr[k] * pr[k] + pi[k] * pi[k];
        if (nk == 0)
            return NAN;
        /* f = n_k / p_k */
        double fr = (nr[k] * pr[k] + ni[k] * pi[k]) / nk, fi = (ni[k] * pr[k] - nr[k] * pi[k]) / nk;
        if (fr != 0 || fi != 0) {
            for (int j = k + 1; j < r; j++) {
                nr[j] -= fr * pr[j] - fi * pi[j];
                ni[j] -= fr * pi[j] + fi * pr[j];
            }
            xr[k + 1] -= fr * xr[k] - fi * xi[k];
            xi[k + 1] -= fr * xi[k] + fi * xr[k];
        }
    }
    double sumr = 0, sumi = 0;
    for (int k = r - 1; k >= 0; k--) {
        const double *pr = ar + k * r, *pi = ai + k * r;
        double vr = xr[k], vi = xi[k];
        for (int j = k + 1; j < r; j++) {
            vr -= pr[j] * xr[j] - pi[j] * xi[j];
            vi -= pr[j] * xi[j] + pi[j] * xr[j];
        }
        double nk = pr[k] * pr[k] + pi[k] * pi[k];
        if (nk == 0)
            return NAN;
        xr[k] = (vr * pr[k] + vi * pi[k]) / nk;
        xi[k] = (vi * pr[k] - vr * pi[k]) / nk;
        sumr += h->c[k] * xr[k];
        sumi += h->c[k] * xi[k];
    }
    return sumr + h->d0 + I * sumi;
}

int pencil_hess_feedback_eigen(const pencil_hess *h, double gain, double complex *eig, int *ok,
                               lw_error *err)
{
    int r = h->r;
    double den = 1.0 + gain * h->d0;
    *ok = 0;
    if (r == 0)
        return LW_OK;
    /* 1 + T = (1 + gain d0) (1 + kappa c^T (sI - H)^-1 b), kappa = gain/(1 + gain d0),
     * and det(sI - H + kappa b c^T) = det(sI - H) (1 + kappa c^T (sI - H)^-1 b). */
    if (!(fabs(den) > 1e-9 * fmax(1.0, fabs(gain * h->d0))))
        return LW_OK;
    double kappa = gain / den;
    double *A = malloc(sizeof(double) * (size_t)(r * r));
    if (!A)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    for (int a = 0; a < r; a++)
        for (int k = 0; k < r; k++)
            A[a * r + k] = h->H[a * r + k] - kappa * h->b[a] * h->c[k];
    int rc = eig_status(eigvals_general(r, A, eig), "the closed-loop poles", err);
    free(A);
    *ok = rc == LW_OK;
    return rc;
}

int pencil_hess_eigen(const pencil_hess *h, double complex *eig, lw_error *err)
{
    return eig_status(eigvals_hessenberg(h->r, h->H, eig), "the poles", err);
}
