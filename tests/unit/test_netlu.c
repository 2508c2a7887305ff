/* Unit tests: netlu (the sparse LU of A + sB by KLU) against the closed-form
 * inverse of a tridiagonal matrix: an RC ladder of equal segments. */
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <cmocka.h>

#include "testutil.h"
#include "loopwise/netlu.h"

#define N 300

/* A = tridiag(-1, 2, -1) (a ladder of unit conductances, both ends to
 * ground), B = I (a unit capacitor on every node), stored dense row-major
 * as loopgain.c hands them over. */
static void ladder(double *A, double *B)
{
    memset(A, 0, sizeof(double) * N * N);
    memset(B, 0, sizeof(double) * N * N);
    for (int i = 0; i < N; i++) {
        A[i * N + i] = 2;
        B[i * N + i] = 1;
        if (i > 0)
            A[i * N + i - 1] = A[(i - 1) * N + i] = -1;
    }
}

/* The (i, j) entry (1-based, i <= j) of (A + sI)^-1 for A = tridiag(-1, 2,
 * -1) of order n: sinh(i t) sinh((n + 1 - j) t) / (sinh t sinh((n + 1) t))
 * with 2 cosh t = 2 + s (from memory: the Green's function of the second
 * difference; e.g. Hu and O'Connell, "Analytical inversion of symmetric
 * tridiagonal matrices", J. Phys. A 29, 1996). Written with exponentials
 * scaled by exp(-(n + 1) t) so that nothing overflows: t is taken with a
 * positive real part. */
static double complex ladder_inverse(int n, double complex s, int i, int j)
{
    if (i > j) {
        int t = i;
        i = j;
        j = t;
    }
    double complex t = cacosh(1 + s / 2);
    if (creal(t) < 0)
        t = -t;
    /* sinh(x) = e^x (1 - e^-2x) / 2 in each factor; the exponents add to
     * i + (n + 1 - j) - 1 - (n + 1) = i - j - 1 */
    double complex num = (1 - cexp(-2.0 * i * t)) * (1 - cexp(-2.0 * (n + 1 - j) * t));
    double complex den = (1 - cexp(-2.0 * t)) * (1 - cexp(-2.0 * (n + 1) * t));
    return cexp((double)(i - j - 1) * t) * num / den;
}

/* The sparse LU of the matrices fill writes; with empty >= 0, that node
 * left with nothing on it (a zero row and column). netlu keeps its own
 * copy of the matrices. */
static netlu *lu_of(void (*fill)(double *, double *), int empty)
{
    double *A = malloc(sizeof(double) * N * N), *B = malloc(sizeof(double) * N * N);
    assert_non_null(A);
    assert_non_null(B);
    fill(A, B);
    for (int k = 0; empty >= 0 && k < N; k++)
        A[empty * N + k] = B[empty * N + k] = A[k * N + empty] = B[k * N + empty] = 0;
    netlu *lu = NULL;
    lw_error err;
    lw_error_clear(&err);
    assert_int_equal(netlu_new(N, A, B, &lu, &err), LW_OK);
    free(A);
    free(B);
    return lu;
}

/* At s = 0 the inverse is min(i, j)(n + 1 - max(i, j))/(n + 1) (Gregory and
 * Karney, "A Collection of Matrices for Testing Computational Algorithms",
 * 1969): checked through the real solve, a column at a time. */
static void test_real_dc(void **state)
{
    (void)state;
    double x[N];
    netlu *lu = lu_of(ladder, -1);
    int cols[] = { 1, 37, 150, 300 };
    for (int c = 0; c < 4; c++) {
        int j = cols[c];
        memset(x, 0, sizeof x);
        x[j - 1] = 1;
        assert_int_equal(netlu_solve_real(lu, 0.0, x), 0);
        for (int i = 1; i <= N; i++) {
            double want = (double)(i < j ? i : j) * (N + 1 - (i > j ? i : j)) / (N + 1);
            assert_rel(x[i - 1], want, 1e-12);
        }
    }
    netlu_free(lu);
    netlu_free(NULL);
}

/* Complex s, from a point where the entries stay within a few decades of
 * each other to one where they span hundreds (s = 1e4 j: each step along
 * the ladder divides by about 1e4): the refinement keeps each entry to a
 * relative accuracy near rounding, as T far below unity needs. */
static void test_complex(void **state)
{
    (void)state;
    double complex x[N];
    netlu *lu = lu_of(ladder, -1);
    double complex ss[] = { 1e-3 * I, 0.5 + 2 * I, 1e4 * I, -1e-4 + 1e-2 * I };
    for (int c = 0; c < 4; c++) {
        int j = 120;
        memset(x, 0, sizeof x);
        x[j - 1] = 1;
        assert_int_equal(netlu_solve(lu, ss[c], x), 0);
        for (int i = 1; i <= N; i += 7) {
            double complex want = ladder_inverse(N, ss[c], i, j);
            if (cabs(want) > 1e-280)
                assert_crel(x[i - 1], want, 1e-11);
        }
    }
    /* a node with nothing on it (a zero row and column) makes A + sB
     * singular at every s: the solver says so */
    netlu_free(lu);
    lu = lu_of(ladder, 5);
    memset(x, 0, sizeof x);
    x[0] = 1;
    assert_int_equal(netlu_solve(lu, 1.0 + I, x), 2);
    netlu_free(lu);
}

/* The refinement step: N/2 blocks [[a, 1], [1, a]] with a = d + s, d =
 * 1.5e-3. KLU keeps a diagonal pivot within 1e-3 of its column's largest
 * entry, so it pivots on a and the second pivot is a - 1/a: growth 1/d,
 * about 670, and an unrefined solve off by some hundred units of rounding,
 * though each block is as well conditioned as a matrix can be (singular
 * values 1 + |a| and 1 - |a|). The inverse of a block is
 * [[a, -1], [-1, a]] / (a^2 - 1) (Cramer's rule); one step of refinement
 * brings every entry back to a few units of rounding (Higham, 2nd ed.,
 * ch. 12: fixed-precision refinement makes the solve componentwise
 * backward stable; from memory). */
#define GROWTH_D 1.5e-3
static void growth_blocks(double *A, double *B)
{
    const double d = GROWTH_D;
    memset(A, 0, sizeof(double) * N * N);
    memset(B, 0, sizeof(double) * N * N);
    for (int i = 0; i < N; i += 2) {
        A[i * N + i] = A[(i + 1) * N + i + 1] = d;
        A[i * N + i + 1] = A[(i + 1) * N + i] = 1;
        B[i * N + i] = B[(i + 1) * N + i + 1] = 1;
    }
}

static void test_refinement(void **state)
{
    (void)state;
    const double d = GROWTH_D;
    netlu *lu = lu_of(growth_blocks, -1);
    double complex ss[] = { 0, 2e-4 * I, 1e-4 + 3e-4 * I };
    for (int c = 0; c < 3; c++) {
        double complex x[N], b[N];
        for (int i = 0; i < N; i++)
            b[i] = x[i] = (i % 2 ? -0.7 : 1.0) + 0.37 * i / N + (c ? 0.2 * I : 0);
        assert_int_equal(netlu_solve(lu, ss[c], x), 0);
        double complex a = d + ss[c];
        for (int i = 0; i < N; i += 2) {
            double complex w0 = (a * b[i] - b[i + 1]) / (a * a - 1);
            double complex w1 = (a * b[i + 1] - b[i]) / (a * a - 1);
            assert_crel(x[i], w0, 1e-15);
            assert_crel(x[i + 1], w1, 1e-15);
        }
        if (c == 0) { /* the real solve, the same numbers */
            double xr[N];
            for (int i = 0; i < N; i++)
                xr[i] = creal(b[i]);
            assert_int_equal(netlu_solve_real(lu, 0.0, xr), 0);
            for (int i = 0; i < N; i += 2) {
                assert_rel(xr[i], creal((d * b[i] - b[i + 1]) / (d * d - 1)), 1e-15);
                assert_rel(xr[i + 1], creal((d * b[i + 1] - b[i]) / (d * d - 1)), 1e-15);
            }
        }
    }
    netlu_free(lu);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_real_dc),
        cmocka_unit_test(test_complex),
        cmocka_unit_test(test_refinement),
    };
    return cmocka_run_group_tests_name("netlu", tests, NULL, NULL);
}
