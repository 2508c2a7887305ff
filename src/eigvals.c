/* eigvals: eigenvalues of small real matrices through LAPACKE. */
#include "loopwise/eigvals.h"

#include <lapacke.h>
#include <stdlib.h>

/* LAPACK's Hessenberg QR on T (column-major, n x n, upper Hessenberg from
 * rows/columns ilo..ihi, 1-based); wr, wi and work have n, n and lwork. */
static int hqr(int n, int ilo, int ihi, double *T, double *wr, double *wi, double *work,
               int lwork, double complex *ev)
{
    lapack_int info = LAPACKE_dhseqr_work(LAPACK_COL_MAJOR, 'E', 'N', n, ilo, ihi, T, n, wr, wi,
                                          NULL, 1, work, lwork);
    if (info != 0)
        return 1;
    for (int k = 0; k < n; k++)
        ev[k] = wr[k] + I * wi[k];
    return 0;
}

/* One block for the matrix, wr, wi, the reflector scalars and the work
 * array: 64 n, at least what dgehrd, dormhr and dhseqr require (n) and
 * dgehrd's blocked optimum (32 n). */
static double *workspace(int n, double **T, double **wr, double **wi, double **tau,
                         double **work, int *lwork)
{
    size_t nn = (size_t)n * (size_t)n;
    *lwork = 64 * n;
    double *blk = malloc(sizeof(double) * (nn + 3 * (size_t)n + (size_t)*lwork));
    if (!blk)
        return NULL;
    *T = blk;
    *wr = blk + nn;
    *wi = *wr + n;
    *tau = *wi + n;
    *work = *tau + n;
    return blk;
}

int eigvals_general(int n, const double *A, double complex *ev)
{
    if (n <= 0)
        return 0;
    double *T, *wr, *wi, *tau, *work;
    int lwork;
    double *blk = workspace(n, &T, &wr, &wi, &tau, &work, &lwork);
    if (!blk)
        return -1;
    /* the row-major A read as column-major is A^T: the same eigenvalues */
    for (size_t k = 0; k < (size_t)n * (size_t)n; k++)
        T[k] = A[k];
    lapack_int ilo, ihi;
    int rc = 1;
    if (LAPACKE_dgebal_work(LAPACK_COL_MAJOR, 'B', n, T, n, &ilo, &ihi, work) == 0 &&
        LAPACKE_dgehrd_work(LAPACK_COL_MAJOR, n, ilo, ihi, T, n, tau, work, lwork) == 0) {
        /* the reflectors below the subdiagonal are not needed */
        for (int j = 0; j < n; j++)
            for (int i = j + 2; i < n; i++)
                T[(size_t)j * (size_t)n + (size_t)i] = 0.0;
        rc = hqr(n, ilo, ihi, T, wr, wi, work, lwork, ev);
    }
    free(blk);
    return rc;
}

int eigvals_hessenberg(int n, const double *H, double complex *ev)
{
    if (n <= 0)
        return 0;
    double *T, *wr, *wi, *tau, *work;
    int lwork;
    double *blk = workspace(n, &T, &wr, &wi, &tau, &work, &lwork);
    if (!blk)
        return -1;
    for (int i = 0; i < n; i++)
        for (int j = 0; j < n; j++)
            T[(size_t)j * (size_t)n + (size_t)i] = j >= i - 1 ? H[(size_t)i * (size_t)n + (size_t)j]
                                                              : 0.0;
    int rc = hqr(n, 1, n, T, wr, wi, work, lwork, ev);
    free(blk);
    return rc;
}

int eigvals_hessenberg_form(int n, double *A, double *v, int nv)
{
    if (n <= 0)
        return 0;
    double *T, *wr, *wi, *tau, *work;
    int lwork;
    double *blk = workspace(n, &T, &wr, &wi, &tau, &work, &lwork);
    if (!blk)
        return -1;
    size_t un = (size_t)n;
    for (size_t i = 0; i < un; i++)
        for (size_t j = 0; j < un; j++)
            T[j * un + i] = A[i * un + j];
    int rc = 1;
    /* the vectors side by side are an n x nv column-major matrix already */
    if (LAPACKE_dgehrd_work(LAPACK_COL_MAJOR, n, 1, n, T, n, tau, work, lwork) == 0 &&
        (nv == 0 || LAPACKE_dormhr_work(LAPACK_COL_MAJOR, 'L', 'T', n, nv, 1, n, T, n, tau, v,
                                        n, work, lwork) == 0)) {
        for (size_t i = 0; i < un; i++)
            for (size_t j = 0; j < un; j++)
                A[i * un + j] = j + 1 >= i ? T[j * un + i] : 0.0;
        rc = 0;
    }
    free(blk);
    return rc;
}
