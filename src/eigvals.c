/* eigvals: dense eigenproblems through LAPACKE. See eigvals.h. */
#include "loopwise/eigvals.h"

#include <gsl/gsl_cblas.h>
#include <lapacke.h>
#ifdef _OPENMP
#include <omp.h>
#endif
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* LAPACK's multishift QZ with aggressive early deflation (Steel and
 * Vandebril, 2021; LAPACK 3.10), the iteration behind dggev3. LAPACKE has no
 * wrapper for it: this is the Fortran routine itself, with the lengths of
 * its three character arguments at the end (gfortran's convention). */
void dlaqz0_(const char *wants, const char *wantq, const char *wantz, const lapack_int *n,
             const lapack_int *ilo, const lapack_int *ihi, double *a, const lapack_int *lda,
             double *b, const lapack_int *ldb, double *alphar, double *alphai, double *beta,
             double *q, const lapack_int *ldq, double *z, const lapack_int *ldz, double *work,
             const lapack_int *lwork, const lapack_int *rec, lapack_int *info, size_t l1,
             size_t l2, size_t l3);

/* OpenBLAS's own thread count. In its OpenMP variant setting it also sets
 * OpenMP's, which is put back at once. */
void openblas_set_num_threads(int n);

void eigvals_blas_one_thread(void)
{
#ifdef _OPENMP
    int nt = omp_get_max_threads();
    openblas_set_num_threads(1);
    omp_set_num_threads(nt);
#else
    openblas_set_num_threads(1);
#endif
}

/* Below this order the QZ step is dhgeqz's (dlaqz0 is built for large
 * pencils: its blocked sweeps only pay from here on). */
#define QZ_MULTISHIFT_MIN 64

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

/* One block for the matrix T (column-major, n x n), wr, wi, the reflector
 * scalars and the work array: 64 n, at least what dgehrd, dormhr and dhseqr
 * require (n) and dgehrd's blocked optimum (32 n); dhseqr's multishift
 * sweeps on large matrices use what is left of it. */
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
    if (kind == COPY_AS_IS) {
        memcpy(w->T, A, sizeof(double) * nn);
        return 0;
    }
    for (size_t i = 0; i < un; i++)
        for (size_t j = 0; j < un; j++)
            w->T[j * un + i] = kind == COPY_T_HESS && j + 1 < i ? 0.0 : A[i * un + j];
    return 0;
}

/* Zeros below the subdiagonal of the column-major T (dgehrd leaves its
 * reflectors there). */
static void clear_below(int n, double *T)
{
    for (size_t j = 0; j < (size_t)n; j++)
        for (size_t i = j + 2; i < (size_t)n; i++)
            T[j * (size_t)n + i] = 0.0;
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
        clear_below(n, w.T);
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

int eigvals_hessenberg_balanced(int n, const double *H, double complex *ev)
{
    ws w;
    if (n <= 0)
        return 0;
    if (ws_open(&w, n, H, COPY_T_HESS))
        return -1;
    lapack_int ilo, ihi;
    int rc = 1;
    /* scaling only: a diagonal similarity keeps the zeros below the subdiagonal */
    if (LAPACKE_dgebal_work(LAPACK_COL_MAJOR, 'S', n, w.T, n, &ilo, &ihi, w.work) == 0)
        rc = hqr(n, ilo, ihi, w.T, w.wr, w.wi, w.work, w.lwork, ev);
    free(w.blk);
    return rc;
}

/* Copies the column-major T back into the row-major A, zeros below the
 * subdiagonal. */
static void store_hessenberg(int n, const double *T, double *A)
{
    size_t un = (size_t)n;
    for (size_t i = 0; i < un; i++)
        for (size_t j = 0; j < un; j++)
            A[i * un + j] = j + 1 >= i ? T[j * un + i] : 0.0;
}

int eigvals_schur(int n, double *H, double *v, int nv, double complex *ev)
{
    ws w;
    if (n <= 0)
        return 0;
    if (ws_open(&w, n, H, COPY_T_HESS))
        return -1;
    size_t un = (size_t)n, nn = un * un;
    double *Z = malloc(sizeof(double) * (nn + un * (size_t)(nv > 0 ? nv : 1)));
    if (!Z) {
        free(w.blk);
        return -1;
    }
    double *tmp = Z + nn;
    int rc = 1;
    if (LAPACKE_dhseqr_work(LAPACK_COL_MAJOR, 'S', 'I', n, 1, n, w.T, n, w.wr, w.wi, Z, n,
                            w.work, w.lwork) == 0) {
        for (size_t i = 0; i < un; i++)
            for (size_t j = 0; j < un; j++)
                H[i * un + j] = j + 1 >= i ? w.T[j * un + i] : 0.0;
        for (int k = 0; k < n; k++)
            ev[k] = w.wr[k] + I * w.wi[k];
        /* v -> Z^T v, the vectors side by side as an n x nv column-major matrix */
        if (nv > 0) {
            memcpy(tmp, v, sizeof(double) * un * (size_t)nv);
            cblas_dgemm(CblasColMajor, CblasTrans, CblasNoTrans, n, nv, n, 1.0, Z, n, tmp, n,
                        0.0, v, n);
        }
        rc = 0;
    }
    free(Z);
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
    int rc = 1;
    /* the vectors side by side are an n x nv column-major matrix already */
    if (LAPACKE_dgehrd_work(LAPACK_COL_MAJOR, n, 1, n, w.T, n, w.tau, w.work, w.lwork) == 0 &&
        (nv == 0 || LAPACKE_dormhr_work(LAPACK_COL_MAJOR, 'L', 'T', n, nv, 1, n, w.T, n, w.tau, v,
                                        n, w.work, w.lwork) == 0)) {
        store_hessenberg(n, w.T, A);
        rc = 0;
    }
    free(w.blk);
    return rc;
}

int eigvals_controller_form(int n, double *A, double *b, double *c)
{
    ws w;
    if (n <= 0)
        return 0;
    if (ws_open(&w, n, A, COPY_T))
        return -1;
    int rc = 1;
    double tau0 = 0;
    /* the coordinate where b is largest goes first (a symmetric permutation,
     * exact): for the unit vector of a transfer's input b is that
     * coordinate alone and the reflection below is the identity, which
     * keeps the grading the balancing gave */
    int imax = 0;
    for (int k = 1; k < n; k++)
        if (fabs(b[k]) > fabs(b[imax]))
            imax = k;
    if (imax != 0) {
        size_t un = (size_t)n, im = (size_t)imax;
        for (size_t j = 0; j < un; j++) { /* rows 0 and imax */
            double t = w.T[j * un];
            w.T[j * un] = w.T[j * un + im];
            w.T[j * un + im] = t;
        }
        for (size_t i = 0; i < un; i++) { /* columns 0 and imax */
            double t = w.T[i];
            w.T[i] = w.T[im * un + i];
            w.T[im * un + i] = t;
        }
        double t = b[0];
        b[0] = b[imax];
        b[imax] = t;
        t = c[0];
        c[0] = c[imax];
        c[imax] = t;
    }
    /* P = I - tau v v^T with P b = beta e_1 (v_1 = 1, the rest left in b);
     * T -> P T P and c -> P c. The Hessenberg reduction that follows acts on
     * rows and columns 2..n only, so e_1 stays as it is. */
    if (n > 1) {
        if (LAPACKE_dlarfg_work(n, b, b + 1, 1, &tau0) != 0)
            goto done;
        double beta = b[0];
        b[0] = 1.0;
        if (LAPACKE_dlarfx_work(LAPACK_COL_MAJOR, 'L', n, n, b, tau0, w.T, n, w.work) != 0 ||
            LAPACKE_dlarfx_work(LAPACK_COL_MAJOR, 'R', n, n, b, tau0, w.T, n, w.work) != 0 ||
            LAPACKE_dlarfx_work(LAPACK_COL_MAJOR, 'L', n, 1, b, tau0, c, n, w.work) != 0)
            goto done;
        memset(b, 0, sizeof(double) * (size_t)n);
        b[0] = beta;
    }
    if (LAPACKE_dgehrd_work(LAPACK_COL_MAJOR, n, 1, n, w.T, n, w.tau, w.work, w.lwork) != 0 ||
        LAPACKE_dormhr_work(LAPACK_COL_MAJOR, 'L', 'T', n, 1, 1, n, w.T, n, w.tau, c, n, w.work,
                            w.lwork) != 0)
        goto done;
    store_hessenberg(n, w.T, A);
    rc = 0;
done:
    free(w.blk);
    return rc;
}

int eigvals_vectors(int n, const double *A, double complex *ev, double *xr, double *xl)
{
    if (n <= 0)
        return 0;
    size_t un = (size_t)n, nn = un * un;
    char jl = xl ? 'V' : 'N', jr = xr ? 'V' : 'N';
    double q;
    lapack_int info = LAPACKE_dgeev_work(LAPACK_COL_MAJOR, jl, jr, n, NULL, n, NULL, NULL, xl, n,
                                         xr, n, &q, -1);
    if (info != 0)
        return 1;
    size_t lwork = (size_t)q > 4 * un ? (size_t)q : 4 * un;
    double *blk = malloc(sizeof(double) * (nn + 2 * un + lwork));
    if (!blk)
        return -1;
    double *T = blk, *wr = T + nn, *wi = wr + n, *work = wi + n;
    for (size_t i = 0; i < un; i++)
        for (size_t j = 0; j < un; j++)
            T[j * un + i] = A[i * un + j];
    info = LAPACKE_dgeev_work(LAPACK_COL_MAJOR, jl, jr, n, T, n, wr, wi, xl, n, xr, n, work,
                              (lapack_int)lwork);
    if (info == 0)
        for (int k = 0; k < n; k++)
            ev[k] = wr[k] + I * wi[k];
    free(blk);
    return info == 0 ? 0 : 1;
}

int eigvals_symmetric(int n, double *A, double *w)
{
    if (n <= 0)
        return 0;
    double q;
    lapack_int iq;
    if (LAPACKE_dsyevd_work(LAPACK_COL_MAJOR, 'V', 'L', n, A, n, w, &q, -1, &iq, -1) != 0)
        return 1;
    size_t lwork = (size_t)q, liwork = (size_t)iq;
    double *work = malloc(sizeof(double) * lwork);
    lapack_int *iwork = malloc(sizeof(lapack_int) * liwork);
    int rc = -1;
    if (work && iwork)
        rc = LAPACKE_dsyevd_work(LAPACK_COL_MAJOR, 'V', 'L', n, A, n, w, work, (lapack_int)lwork,
                                 iwork, (lapack_int)liwork) == 0 ? 0 : 1;
    free(work);
    free(iwork);
    return rc;
}

int eigvals_pencil_ht(int n, double *A, double *B, double *alphar, double *alphai,
                      double *beta)
{
    if (n <= 0)
        return 0;
    lapack_int info, one = 1, ln = n, rec = 0;
    if (n < QZ_MULTISHIFT_MIN) {
        double *work = malloc(sizeof(double) * (size_t)n);
        if (!work)
            return -1;
        info = LAPACKE_dhgeqz_work(LAPACK_COL_MAJOR, 'E', 'N', 'N', n, 1, n, A, n, B, n, alphar,
                                   alphai, beta, NULL, 1, NULL, 1, work, n);
        free(work);
        return info == 0 ? 0 : 1;
    }
    double q;
    lapack_int lwork = -1;
    dlaqz0_("E", "N", "N", &ln, &one, &ln, A, &ln, B, &ln, alphar, alphai, beta, NULL, &one, NULL,
            &one, &q, &lwork, &rec, &info, 1, 1, 1);
    if (info != 0)
        return 1;
    lwork = (lapack_int)q > n ? (lapack_int)q : n;
    double *work = malloc(sizeof(double) * (size_t)lwork);
    if (!work)
        return -1;
    dlaqz0_("E", "N", "N", &ln, &one, &ln, A, &ln, B, &ln, alphar, alphai, beta, NULL, &one, NULL,
            &one, work, &lwork, &rec, &info, 1, 1, 1);
    free(work);
    return info == 0 ? 0 : 1;
}
