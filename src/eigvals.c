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

/* One block for the matrix T (column-major), wr, wi, the reflector scalars
 * and the work array: 64 n, at least what dgehrd, dormhr and dhseqr require
 * (n) and dgehrd's blocked optimum (32 n). */
typedef struct ws {
    double *blk, *T, *wr, *wi, *tau, *work;
    int lwork;
} ws;

/* How ws_open copies the row-major A into T. */
typedef enum {
    COPY_AS_IS,   /* A^T: the same eigenvalues, no transposition needed */
    COPY_T,       /* A itself */
    COPY_T_HESS,  /* A itself, upper Hessenberg part only */
} copy_kind;

static int ws_open(ws *w, int n, const double *A, copy_kind kind)
{
    size_t un = (size_t)n, nn = un * un;
    w->lwork = 64 * n;
    w->blk = malloc(sizeof(double) * (nn + 3 * un + (size_t)w->lwork));
    if (!w->blk)
        return -1;
    w->T = w->blk;
    w->wr = w->T + nn;
    w->wi = w->wr + n;
    w->tau = w->wi + n;
    w->work = w->tau + n;
    for (size_t i = 0; i < un; i++)
        for (size_t j = 0; j < un; j++)
            w->T[kind == COPY_AS_IS ? i * un + j : j * un + i] =
                kind == COPY_T_HESS && j + 1 < i ? 0.0 : A[i * un + j];
    return 0;
}

int eigvals_general(int n, const double *A, double complex *ev)
{
    ws w;
    if (n <= 0)
        return 0;
    if (ws_open(&w, n, A, COPY_AS_IS))
        return -1;
    lapack_int ilo, ihi;
    int rc = 1;
    if (LAPACKE_dgebal_work(LAPACK_COL_MAJOR, 'B', n, w.T, n, &ilo, &ihi, w.work) == 0 &&
        LAPACKE_dgehrd_work(LAPACK_COL_MAJOR, n, ilo, ihi, w.T, n, w.tau, w.work, w.lwork) == 0) {
        /* the reflectors below the subdiagonal are not needed */
        for (int j = 0; j < n; j++)
            for (int i = j + 2; i < n; i++)
                w.T[(size_t)j * (size_t)n + (size_t)i] = 0.0;
        rc = hqr(n, ilo, ihi, w.T, w.wr, w.wi, w.work, w.lwork, ev);
    }
    free(w.blk);
    return rc;
}

int eigvals_hessenberg(int n, const double *H, double complex *ev)
{
    ws w;
    if (n <= 0)
        return 0;
    if (ws_open(&w, n, H, COPY_T_HESS))
        return -1;
    int rc = hqr(n, 1, n, w.T, w.wr, w.wi, w.work, w.lwork, ev);
    free(w.blk);
    return rc;
}

int eigvals_hessenberg_form(int n, double *A, double *v, int nv)
{
    ws w;
    if (n <= 0)
        return 0;
    if (ws_open(&w, n, A, COPY_T))
        return -1;
    size_t un = (size_t)n;
    int rc = 1;
    /* the vectors side by side are an n x nv column-major matrix already */
    if (LAPACKE_dgehrd_work(LAPACK_COL_MAJOR, n, 1, n, w.T, n, w.tau, w.work, w.lwork) == 0 &&
        (nv == 0 || LAPACKE_dormhr_work(LAPACK_COL_MAJOR, 'L', 'T', n, nv, 1, n, w.T, n, w.tau, v,
                                        n, w.work, w.lwork) == 0)) {
        for (size_t i = 0; i < un; i++)
            for (size_t j = 0; j < un; j++)
                A[i * un + j] = j + 1 >= i ? w.T[j * un + i] : 0.0;
        rc = 0;
    }
    free(w.blk);
    return rc;
}
