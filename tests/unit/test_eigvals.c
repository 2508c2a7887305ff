/* Unit tests: eigvals (LAPACK's Hessenberg QR and Hessenberg reduction)
 * against matrices whose eigenvalues are known in closed form. */
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <cmocka.h>

#include "testutil.h"
#include "loopwise/eigvals.h"

/* Sorts by real part, then imaginary part, for comparison. */
static int cmp_re(const void *pa, const void *pb)
{
    double complex a = *(const double complex *)pa, b = *(const double complex *)pb;
    if (creal(a) != creal(b))
        return creal(a) < creal(b) ? -1 : 1;
    return cimag(a) < cimag(b) ? -1 : (cimag(a) > cimag(b));
}

/* The companion matrix of prod (s - r_k) has the r_k as eigenvalues (from
 * memory: its characteristic polynomial is the polynomial it is built from).
 * Roots -1, -10, -100, -1000: the coefficients of (s+1)(s+10)(s+100)(s+1000)
 * = s^4 + 1111 s^3 + 112110 s^2 + 1111000 s + 1000000. */
static void test_companion_real_roots(void **state)
{
    (void)state;
    double A[16] = {
        -1111, -112110, -1111000, -1000000,
        1,     0,       0,        0,
        0,     1,       0,        0,
        0,     0,       1,        0,
    };
    double complex ev[4];
    assert_int_equal(eigvals_general(4, A, ev), 0);
    qsort(ev, 4, sizeof *ev, cmp_re);
    assert_crel(ev[0], -1000, 1e-10);
    assert_crel(ev[1], -100, 1e-10);
    assert_crel(ev[2], -10, 1e-10);
    assert_crel(ev[3], -1, 1e-10);
    assert_rel(A[0], -1111, 0); /* A is left as it was */
}

/* [[a, -b], [b, a]] has eigenvalues a +- jb (closed form). */
static void test_complex_pair(void **state)
{
    (void)state;
    double A[4] = { -3, -4, 4, -3 };
    double complex ev[2];
    assert_int_equal(eigvals_general(2, A, ev), 0);
    qsort(ev, 2, sizeof *ev, cmp_re);
    assert_crel(ev[0], -3 - 4 * I, 1e-14);
    assert_crel(ev[1], -3 + 4 * I, 1e-14);
}

/* An upper triangular matrix (a Hessenberg one) has its diagonal as
 * eigenvalues; the entries below the subdiagonal must be ignored. Values six
 * decades apart, as the poles of a loop are. */
static void test_hessenberg_triangular(void **state)
{
    (void)state;
    double H[9] = {
        -1e6, 3,   5,
        0,    -1,  7,
        99,   0,   -1e3, /* below the subdiagonal: not part of H */
    };
    double complex ev[3];
    assert_int_equal(eigvals_hessenberg(3, H, ev), 0);
    qsort(ev, 3, sizeof *ev, cmp_re);
    assert_crel(ev[0], -1e6, 1e-14);
    assert_crel(ev[1], -1e3, 1e-14);
    assert_crel(ev[2], -1, 1e-14);
}

/* The reduction is a similarity by an orthogonal U: the result is upper
 * Hessenberg, keeps the eigenvalues, the trace and the Frobenius norm, and
 * rotates the vectors without changing their lengths (from memory: the
 * properties of an orthogonal similarity). */
static void test_hessenberg_form(void **state)
{
    (void)state;
    enum { N = 5 };
    double A[N * N], A0[N * N], v[2 * N], v0[2 * N];
    for (int i = 0; i < N; i++) {
        for (int j = 0; j < N; j++)
            A[i * N + j] = A0[i * N + j] = (i == j ? -2.0 * (i + 1) : 0.0) + 0.3 * sin(i * 7 + j);
        v[i] = v0[i] = 1.0 + i;
        v[N + i] = v0[N + i] = cos(i);
    }
    assert_int_equal(eigvals_hessenberg_form(N, A, v, 2), 0);
    double tr = 0, tr0 = 0, f = 0, f0 = 0, nb = 0, nb0 = 0, nc = 0, nc0 = 0, dot = 0, dot0 = 0;
    for (int i = 0; i < N; i++) {
        for (int j = 0; j < N; j++) {
            if (i > j + 1)
                assert_true(A[i * N + j] == 0.0);
            f += A[i * N + j] * A[i * N + j];
            f0 += A0[i * N + j] * A0[i * N + j];
        }
        tr += A[i * N + i];
        tr0 += A0[i * N + i];
        nb += v[i] * v[i];
        nb0 += v0[i] * v0[i];
        nc += v[N + i] * v[N + i];
        nc0 += v0[N + i] * v0[N + i];
        dot += v[i] * v[N + i];
        dot0 += v0[i] * v0[N + i];
    }
    assert_rel(tr, tr0, 1e-13);
    assert_rel(f, f0, 1e-13);
    assert_rel(nb, nb0, 1e-13);
    assert_rel(nc, nc0, 1e-13);
    assert_rel(dot, dot0, 1e-12);
    double complex e1[N], e2[N];
    assert_int_equal(eigvals_general(N, A0, e1), 0);
    assert_int_equal(eigvals_hessenberg(N, A, e2), 0);
    qsort(e1, N, sizeof *e1, cmp_re);
    qsort(e2, N, sizeof *e2, cmp_re);
    for (int k = 0; k < N; k++)
        assert_crel(e2[k], e1[k], 1e-12);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_companion_real_roots),
        cmocka_unit_test(test_complex_pair),
        cmocka_unit_test(test_hessenberg_triangular),
        cmocka_unit_test(test_hessenberg_form),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
