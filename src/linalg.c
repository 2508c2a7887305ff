/* linalg: SVD, rank test and LU solves through LAPACKE. See linalg.h. */
#include "loopwise/linalg.h"

#include <gsl/gsl_cblas.h>
#include <lapacke.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* Singular values (and with vectors, U and V^T, column-major) of the
 * column-major m x m T, which is overwritten. */
static int svd(int m, double *T, double *s, double *U, double *VT)
{
    char job = U ? 'S' : 'N';
    double q;
    lapack_int info;
    lapack_int *iwork = malloc(sizeof(lapack_int) * 8 * (size_t)m);
    if (!iwork)
        return -1;
    info = LAPACKE_dgesdd_work(LAPACK_COL_MAJOR, job, m, m, T, m, s, U, m, VT, m, &q, -1, iwork);
    double *work = info == 0 ? malloc(sizeof(double) * (size_t)q) : NULL;
    int rc = info != 0 ? 1 : !work ? -1 : 0;
    if (!rc)
        rc = LAPACKE_dgesdd_work(LAPACK_COL_MAJOR, job, m, m, T, m, s, U, m, VT, m, work,
                                 (lapack_int)q, iwork) == 0 ? 0 : 1;
    free(work);
    free(iwork);
    return rc;
}

int linalg_inverse_svd(int m, const double *A, double *inv, double tol)
{
    size_t um = (size_t)m, mm = um * um;
    double *blk = malloc(sizeof(double) * (3 * mm + um));
    if (!blk)
        return -1;
    double *T = blk, *U = T + mm, *VT = U + mm, *s = VT + mm;
    /* the row-major A read as column-major is A^T */
    memcpy(T, A, sizeof(double) * mm);
    int rc = svd(m, T, s, U, VT);
    if (!rc && (!(s[0] > 0) || s[m - 1] < tol * s[0]))
        rc = 2;
    if (!rc) {
        /* A^T = U S V^T (column-major factors), so A = V S U^T and
         * inv = U S^-1 V^T, whose transpose V S^-1 U^T is inv read
         * column-major: the columns of U scaled by 1/s, times V^T */
        for (size_t k = 0; k < um; k++)
            for (size_t i = 0; i < um; i++)
                U[k * um + i] /= s[k];
        cblas_dgemm(CblasColMajor, CblasTrans, CblasTrans, m, m, m, 1.0, VT, m, U, m, 0.0, inv,
                    m);
    }
    free(blk);
    return rc;
}

/* From this order on the rank test estimates the condition number from an
 * LU instead of computing the singular values: the SVD's bidiagonalization
 * runs at matrix-vector speed and took 3 of the 17 s of a 2048-node check
 * (two tests), the LU and its estimate a twentieth of that. Below it the
 * SVD's exact ratio decides, as it always has. */
#define LU_RANK_MIN 1000

/* 1 when the LU of the column-major T (overwritten) has a zero pivot or the
 * reciprocal 1-norm condition number LAPACK estimates (Higham's method,
 * dgecon) is below tol: within a factor n of the 2-norm ratio the SVD gives. */
static int lu_singular(int n, double *T, double tol)
{
    lapack_int *piv = malloc(sizeof(lapack_int) * 2 * (size_t)n);
    double *work = malloc(sizeof(double) * 4 * (size_t)n);
    int sing = 1;
    if (piv && work) {
        double anorm = LAPACKE_dlange_work(LAPACK_COL_MAJOR, '1', n, n, T, n, work), rcond = 0;
        lapack_int info = LAPACKE_dgetrf_work(LAPACK_COL_MAJOR, n, n, T, n, piv);
        if (info == 0 && anorm > 0 &&
            LAPACKE_dgecon_work(LAPACK_COL_MAJOR, '1', n, T, n, anorm, &rcond, work, piv + n) == 0)
            sing = !(rcond > tol);
    }
    free(piv);
    free(work);
    return sing;
}

int linalg_singular(int n, const double *A, double tol)
{
    size_t un = (size_t)n, nn = un * un;
    double *blk = malloc(sizeof(double) * (nn + 3 * un));
    if (!blk)
        return 1;
    double *T = blk, *rs = T + nn, *cs = rs + n, *s = cs + n;
    for (size_t i = 0; i < un; i++) {
        rs[i] = 0;
        for (size_t j = 0; j < un; j++)
            rs[i] = fmax(rs[i], fabs(A[i * un + j]));
        rs[i] = rs[i] > 0 ? 1.0 / rs[i] : 1.0;
    }
    for (size_t j = 0; j < un; j++) {
        cs[j] = 0;
        for (size_t i = 0; i < un; i++)
            cs[j] = fmax(cs[j], fabs(A[i * un + j]) * rs[i]);
        cs[j] = cs[j] > 0 ? 1.0 / cs[j] : 1.0;
    }
    /* the transpose has the same singular values: no reordering needed */
    for (size_t i = 0; i < un; i++)
        for (size_t j = 0; j < un; j++)
            T[i * un + j] = rs[i] * A[i * un + j] * cs[j];
    int sing = n < LU_RANK_MIN ? svd(n, T, s, NULL, NULL) != 0 || !(s[n - 1] > tol * s[0])
                               : lu_singular(n, T, tol);
    free(blk);
    return sing;
}

int linalg_bordered_singular(int n, const double *A, const double *u, int col, int row,
                             double tol)
{
    int nb = n + 1;
    double *B = calloc((size_t)nb * (size_t)nb, sizeof(double));
    if (!B)
        return 1; /* undecided, as linalg_singular */
    double big = 0, umax = 0;
    for (int k = 0; k < n * n; k++)
        big = fmax(big, fabs(A[k]));
    for (int k = 0; u && k < n; k++)
        umax = fmax(umax, fabs(u[k]));
    if (big == 0)
        big = 1;
    for (int i = 0; i < n; i++) {
        for (int j = 0; j < n; j++)
            B[i * nb + j] = A[i * n + j];
        B[i * nb + n] = !u ? (i == col ? big : 0.0) : umax > 0 ? big * u[i] / umax : 0.0;
    }
    B[n * nb + row] = big;
    int sing = linalg_singular(nb, B, tol);
    free(B);
    return sing;
}

int linalg_qr_basis(int r, int k, double *W, double *Q, double *rdiag)
{
    size_t ur = (size_t)r;
    double *tau = malloc(sizeof(double) * (ur + 64 * ur + 1)), *work = tau + r;
    if (!tau)
        return -1;
    lapack_int lwork = 64 * r;
    int rc = 1;
    if (LAPACKE_dgeqrf_work(LAPACK_COL_MAJOR, r, k, W, r, tau, work, lwork) == 0) {
        for (int q = 0; q < k; q++)
            rdiag[q] = W[(size_t)q * ur + q];
        memset(Q, 0, sizeof(double) * ur * ur);
        memcpy(Q, W, sizeof(double) * ur * (size_t)k);
        rc = LAPACKE_dorgqr_work(LAPACK_COL_MAJOR, r, r, k, Q, r, tau, work, lwork) == 0 ? 0 : 1;
    }
    free(tau);
    return rc;
}

/* The row-major A read as column-major is A^T: its LU solves A x = rhs
 * with the transposed triangular solves, and nothing is copied. */
int linalg_solve_real(int n, double *A, int *piv, double *rhs)
{
    lapack_int info = LAPACKE_dgetrf_work(LAPACK_COL_MAJOR, n, n, A, n, piv);
    if (info > 0)
        return 2;
    if (info < 0)
        return 1;
    return LAPACKE_dgetrs_work(LAPACK_COL_MAJOR, 'T', n, 1, A, n, piv, rhs, n) == 0 ? 0 : 1;
}

int linalg_solve_complex(int n, double complex *A, int *piv, double complex *rhs)
{
    lapack_int info = LAPACKE_zgetrf_work(LAPACK_COL_MAJOR, n, n, A, n, piv);
    if (info > 0)
        return 2;
    if (info < 0)
        return 1;
    return LAPACKE_zgetrs_work(LAPACK_COL_MAJOR, 'T', n, 1, A, n, piv, rhs, n) == 0 ? 0 : 1;
}
