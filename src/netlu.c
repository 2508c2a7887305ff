/* netlu: sparse LU of the network matrix A + sB by KLU. See netlu.h. */
#include "loopwise/netlu.h"

#include <limits.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <suitesparse/klu.h>

struct netlu {
    int n, nnz;
    int *Ap, *Ai;        /* the pattern, compressed columns */
    double *Av, *Bv;     /* A's and B's values on it */
    double *Yx;          /* A + sB on it: interleaved complex, or real */
    double *r;           /* the residual of the refinement step (2n) */
    long double *acc;    /* Y x accumulated (2n) */
    double *x0;          /* the right-hand side kept (2n) */
    klu_common common;
    klu_symbolic *sym;
};

void netlu_free(netlu *lu)
{
    if (!lu)
        return;
    if (lu->sym)
        klu_free_symbolic(&lu->sym, &lu->common);
    free(lu->Ap);
    free(lu->Ai);
    free(lu->Av);
    free(lu->Bv);
    free(lu->Yx);
    free(lu->r);
    free(lu->acc);
    free(lu->x0);
    free(lu);
}

int netlu_new(int n, const double *A, const double *B, netlu **out, lw_error *err)
{
    *out = NULL;
    netlu *lu = calloc(1, sizeof *lu);
    if (!lu)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    lu->n = n;
    size_t nnz = 0;
    for (int j = 0; j < n; j++)
        for (int i = 0; i < n; i++)
            nnz += i == j || A[(size_t)i * n + j] != 0 || B[(size_t)i * n + j] != 0;
    if (nnz > (size_t)INT_MAX) { /* KLU's int indices */
        free(lu);
        return lw_error_set(err, LW_EINPUT, "the network has too many nonzeros (%zu) for the "
                            "sparse solver, at most %d", nnz, INT_MAX);
    }
    lu->nnz = (int)nnz;
    lu->Ap = malloc(sizeof(int) * ((size_t)n + 1));
    lu->Ai = malloc(sizeof(int) * nnz);
    lu->Av = malloc(sizeof(double) * nnz);
    lu->Bv = malloc(sizeof(double) * nnz);
    lu->Yx = malloc(sizeof(double) * 2 * nnz);
    lu->r = malloc(sizeof(double) * 2 * (size_t)n);
    lu->x0 = malloc(sizeof(double) * 2 * (size_t)n);
    lu->acc = malloc(sizeof(long double) * 2 * (size_t)n);
    if (!lu->Ap || !lu->Ai || !lu->Av || !lu->Bv || !lu->Yx || !lu->r || !lu->x0 || !lu->acc) {
        netlu_free(lu);
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    size_t k = 0;
    for (int j = 0; j < n; j++) {
        lu->Ap[j] = (int)k;
        for (int i = 0; i < n; i++) {
            double a = A[(size_t)i * n + j], b = B[(size_t)i * n + j];
            if (i == j || a != 0 || b != 0) {
                lu->Ai[k] = i;
                lu->Av[k] = a;
                lu->Bv[k] = b;
                k++;
            }
        }
    }
    lu->Ap[n] = (int)k;
    klu_defaults(&lu->common);
    /* the ordering is chosen on the pattern alone (BTF, then AMD); partial
     * pivoting at each s keeps the factorization stable wherever s lies */
    lu->sym = klu_analyze(n, lu->Ap, lu->Ai, &lu->common);
    if (!lu->sym) {
        int oom = lu->common.status == KLU_OUT_OF_MEMORY;
        netlu_free(lu);
        return oom ? lw_error_set(err, LW_ENOMEM, "out of memory")
                   : lw_error_set(err, LW_ENUMERIC, "the sparse ordering of the network failed");
    }
    *out = lu;
    return LW_OK;
}

static int status_of(const klu_common *c)
{
    if (c->status == KLU_SINGULAR)
        return 2;
    return c->status == KLU_OUT_OF_MEMORY ? -1 : 1;
}

/* One step of iterative refinement (Wilkinson; Higham, "Accuracy and
 * Stability of Numerical Algorithms", 2nd ed., ch. 12): the residual
 * b - Y x accumulated in long double, solved with the same factors and
 * added. It costs one sparse product and one solve, and takes the error of
 * a pivot chosen by KLU's threshold rule (a diagonal entry kept when it is
 * within 1e-3 of the column's largest) back to the rounding of Y itself. */
int netlu_solve(netlu *lu, double complex s, double complex *x)
{
    int n = lu->n, rc = 0;
    double sr = creal(s), si = cimag(s);
    for (int k = 0; k < lu->nnz; k++) {
        lu->Yx[2 * k] = lu->Av[k] + sr * lu->Bv[k];
        lu->Yx[2 * k + 1] = si * lu->Bv[k];
    }
    klu_numeric *num = klu_z_factor(lu->Ap, lu->Ai, lu->Yx, lu->sym, &lu->common);
    if (!num || lu->common.status == KLU_SINGULAR) {
        rc = status_of(&lu->common);
        goto done;
    }
    double *xv = (double *)x; /* C11 6.2.5: a complex is an array of two doubles */
    memcpy(lu->x0, xv, sizeof(double) * 2 * (size_t)n);
    if (!klu_z_solve(lu->sym, num, n, 1, xv, &lu->common)) {
        rc = status_of(&lu->common);
        goto done;
    }
    long double *acc = lu->acc;
    for (int i = 0; i < 2 * n; i++)
        acc[i] = lu->x0[i];
    for (int j = 0; j < n; j++) {
        long double xr = xv[2 * j], xi = xv[2 * j + 1];
        for (int k = lu->Ap[j]; k < lu->Ap[j + 1]; k++) {
            long double yr = lu->Yx[2 * k], yi = lu->Yx[2 * k + 1];
            int i = lu->Ai[k];
            acc[2 * i] -= yr * xr - yi * xi;
            acc[2 * i + 1] -= yr * xi + yi * xr;
        }
    }
    for (int i = 0; i < 2 * n; i++)
        lu->r[i] = (double)acc[i];
    if (!klu_z_solve(lu->sym, num, n, 1, lu->r, &lu->common)) {
        rc = status_of(&lu->common);
        goto done;
    }
    for (int i = 0; i < 2 * n; i++) {
        xv[i] += lu->r[i];
        if (!isfinite(xv[i]))
            rc = 2; /* a pivot so small that the solution overflowed */
    }
done:
    if (num)
        klu_z_free_numeric(&num, &lu->common);
    return rc;
}

int netlu_solve_real(netlu *lu, double s, double *x)
{
    int n = lu->n, rc = 0;
    for (int k = 0; k < lu->nnz; k++)
        lu->Yx[k] = lu->Av[k] + s * lu->Bv[k];
    klu_numeric *num = klu_factor(lu->Ap, lu->Ai, lu->Yx, lu->sym, &lu->common);
    if (!num || lu->common.status == KLU_SINGULAR) {
        rc = status_of(&lu->common);
        goto done;
    }
    memcpy(lu->x0, x, sizeof(double) * (size_t)n);
    if (!klu_solve(lu->sym, num, n, 1, x, &lu->common)) {
        rc = status_of(&lu->common);
        goto done;
    }
    long double *acc = lu->acc;
    for (int i = 0; i < n; i++)
        acc[i] = lu->x0[i];
    for (int j = 0; j < n; j++)
        for (int k = lu->Ap[j]; k < lu->Ap[j + 1]; k++)
            acc[lu->Ai[k]] -= (long double)lu->Yx[k] * x[j];
    for (int i = 0; i < n; i++)
        lu->r[i] = (double)acc[i];
    if (!klu_solve(lu->sym, num, n, 1, lu->r, &lu->common)) {
        rc = status_of(&lu->common);
        goto done;
    }
    for (int i = 0; i < n; i++) {
        x[i] += lu->r[i];
        if (!isfinite(x[i]))
            rc = 2;
    }
done:
    if (num)
        klu_free_numeric(&num, &lu->common);
    return rc;
}
