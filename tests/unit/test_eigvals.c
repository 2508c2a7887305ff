/* Unit tests: eigvals and linalg (LAPACK: Hessenberg QR and reduction, eigenvectors,
 * the Schur form, QZ of a Hessenberg-triangular pencil, SVD inverse, LU solve)
 * against matrices whose eigenvalues are known in closed form. */
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <cmocka.h>

#include "testutil.h"
#include "loopwise/eigvals.h"
#include "loopwise/linalg.h"

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

/* Right and left eigenvectors from dgeev satisfy their definitions,
 * A x = lambda x and y^H A = lambda y^H, for a real and a complex pair
 * (block diagonal A: eigenvalues -2 and -3 +- 4j by inspection). */
static void test_vectors_definition(void **state)
{
    (void)state;
    enum { N = 3 };
    double A[N * N] = { -3, -4, 0.5, 4, -3, 0.25, 0, 0, -2 }, xr[N * N], xl[N * N];
    double complex ev[N];
    assert_int_equal(eigvals_vectors(N, A, ev, xr, xl), 0);
    for (int k = 0; k < N; k++) {
        double complex x[N], y[N];
        int pair = cimag(ev[k]) > 0 ? 1 : cimag(ev[k]) < 0 ? -1 : 0, k0 = pair < 0 ? k - 1 : k;
        for (int i = 0; i < N; i++) {
            double complex im = pair ? I * xr[(k0 + 1) * N + i] : 0, iml = pair ? I * xl[(k0 + 1) * N + i] : 0;
            x[i] = xr[k0 * N + i] + (pair < 0 ? -im : im);
            y[i] = xl[k0 * N + i] + (pair < 0 ? -iml : iml);
        }
        for (int i = 0; i < N; i++) {
            double complex ax = 0, ya = 0;
            for (int j = 0; j < N; j++) {
                ax += A[i * N + j] * x[j];
                ya += conj(y[j]) * A[j * N + i];
            }
            assert_true(cabs(ax - ev[k] * x[i]) <= 1e-13 * 5);
            assert_true(cabs(ya - ev[k] * conj(y[i])) <= 1e-13 * 5);
        }
    }
}

/* The Hessenberg-triangular pencil A - sB with A = [[1, 2, 3], [4, 5, 6],
 * [0, 7, 8]] and B = diag(0, 1, 1): expanding det(A - sB) along the first
 * row gives s^2 - 5 s + 18, roots 2.5 +- j sqrt(47)/2, and one eigenvalue
 * at infinity (B is singular). */
static void test_pencil_ht(void **state)
{
    (void)state;
    /* column-major */
    double A[9] = { 1, 4, 0, 2, 5, 7, 3, 6, 8 }, B[9] = { 0, 0, 0, 0, 1, 0, 0, 0, 1 };
    double ar[3], ai[3], be[3];
    assert_int_equal(eigvals_pencil_ht(3, A, B, ar, ai, be), 0);
    int inf = 0, fin = 0;
    for (int k = 0; k < 3; k++) {
        if (be[k] == 0) {
            inf++;
            continue;
        }
        double complex z = (ar[k] + I * ai[k]) / be[k];
        assert_crel(z, 2.5 + (cimag(z) > 0 ? 1 : -1) * I * sqrt(47.0) / 2, 1e-13);
        fin++;
    }
    assert_int_equal(inf, 1);
    assert_int_equal(fin, 2);
}

/* The real Schur form is an orthogonal similarity: quasi-triangular, the
 * same trace, Frobenius norm and eigenvalues, and vector lengths kept (from
 * memory: the properties of an orthogonal similarity). */
static void test_schur_form(void **state)
{
    (void)state;
    enum { N = 5 };
    double H[N * N], H0[N * N], v[N], v0[N];
    for (int i = 0; i < N; i++) {
        for (int j = 0; j < N; j++)
            H[i * N + j] = H0[i * N + j] = j + 1 < i ? 0.0 : (i == j ? -1.0 - i : 0.0) + 0.7 * cos(3 * i + j);
        v[i] = v0[i] = 1.0 + i;
    }
    double complex e1[N], e2[N];
    assert_int_equal(eigvals_hessenberg(N, H0, e1), 0);
    assert_int_equal(eigvals_schur(N, H, v, 1, e2), 0);
    double tr = 0, tr0 = 0, f = 0, f0 = 0, nv = 0, nv0 = 0;
    for (int i = 0; i < N; i++) {
        for (int j = 0; j < N; j++) {
            if (i > j + 1)
                assert_true(H[i * N + j] == 0.0);
            f += H[i * N + j] * H[i * N + j];
            f0 += H0[i * N + j] * H0[i * N + j];
        }
        if (i > 1)
            assert_true(H[i * N + i - 1] == 0.0 || H[(i - 1) * N + i - 2] == 0.0);
        tr += H[i * N + i];
        tr0 += H0[i * N + i];
        nv += v[i] * v[i];
        nv0 += v0[i] * v0[i];
    }
    assert_rel(tr, tr0, 1e-13);
    assert_rel(f, f0, 1e-13);
    assert_rel(nv, nv0, 1e-13);
    qsort(e1, N, sizeof *e1, cmp_re);
    qsort(e2, N, sizeof *e2, cmp_re);
    for (int k = 0; k < N; k++)
        assert_crel(e2[k], e1[k], 1e-12);
}

/* The inverse of [[4, 7], [2, 6]] is [[0.6, -0.7], [-0.2, 0.4]] (the 2x2
 * formula: swap the diagonal, negate the rest, divide by det = 10); a
 * singular matrix is refused. A complex 2x2 system by Cramer's rule. */
static void test_linalg(void **state)
{
    (void)state;
    double A[4] = { 4, 7, 2, 6 }, inv[4];
    assert_int_equal(linalg_inverse_svd(2, A, inv, 1e-14), 0);
    assert_rel(inv[0], 0.6, 1e-14);
    assert_rel(inv[1], -0.7, 1e-14);
    assert_rel(inv[2], -0.2, 1e-14);
    assert_rel(inv[3], 0.4, 1e-14);
    double S[4] = { 1, 2, 2, 4 };
    assert_int_equal(linalg_inverse_svd(2, S, inv, 1e-14), 2);
    assert_int_equal(linalg_singular(2, S, 1e-13), 1);
    assert_int_equal(linalg_singular(2, A, 1e-13), 0);
    /* [[1 + j, 2], [3, 4 - j]] x = [1, j]: det = (1 + j)(4 - j) - 6 = -1 + 3j,
     * x1 = (4 - j - 2j) / det, x2 = ((1 + j) j - 3) / det */
    double complex M[4] = { 1 + I, 2, 3, 4 - I }, x[2] = { 1, I };
    int piv[2];
    assert_int_equal(linalg_solve_complex(2, M, piv, x), 0);
    double complex det = -1 + 3 * I;
    assert_crel(x[0], (4 - 3 * I) / det, 1e-14);
    assert_crel(x[1], ((1 + I) * I - 3) / det, 1e-14);
}

/* The rank test on both of its paths (the SVD below order 1000, LU with a
 * condition estimate from there on): the path graph's Laplacian, a
 * resistor ladder with no resistor to ground, is singular (the vector of
 * ones is in its null space); with both ends grounded it is
 * tridiag(-1, 2, -1), whose eigenvalues 2 - 2 cos(k pi/(n + 1)) give a
 * condition number of about 4 (n + 1)^2 / pi^2, 6e5 at n = 1200 (from
 * memory): far from singular at 1e-13. */
static void test_rank_paths(void **state)
{
    (void)state;
    const int sizes[] = { 200, 1200 };
    for (int t = 0; t < 2; t++) {
        int n = sizes[t];
        double *L = calloc((size_t)n * (size_t)n, sizeof(double));
        assert_non_null(L);
        for (int i = 0; i < n; i++) {
            L[(size_t)i * n + i] = i == 0 || i == n - 1 ? 1.0 : 2.0;
            if (i > 0)
                L[(size_t)i * n + i - 1] = L[(size_t)(i - 1) * n + i] = -1.0;
        }
        assert_int_equal(linalg_singular(n, L, 1e-13), 1);
        L[0] = L[(size_t)n * n - 1] = 2.0; /* both ends grounded */
        assert_int_equal(linalg_singular(n, L, 1e-13), 0);
        /* and singular again when one row repeats another */
        memcpy(L + (size_t)(n - 1) * n, L + (size_t)(n - 2) * n, sizeof(double) * (size_t)n);
        assert_int_equal(linalg_singular(n, L, 1e-13), 1);
        free(L);
    }
}

/* The same paths where no pivot is exactly zero, so the SVD's ratio or
 * dgecon's estimate decides: a ladder of conductances 0.1 + (i mod 7)/3
 * (not binary fractions: its floating Laplacian's row sums round to about
 * 1e-16, not to 0), floating, then grounded at one end by 1e-3. scipy's
 * SVD and dgecon of the same equilibrated matrices (rows, then columns, by
 * their largest entry) give, at n = 200 and 1200: floating 6e-17 / 2e-17
 * and 2e-19 / 4e-20; grounded 8.6e-7 / 8.2e-8 and 3.7e-7 / 3.6e-8. So the
 * grounded ladder is singular at a tolerance of 1e-5, not at 1e-9. */
static void test_rank_rounded(void **state)
{
    (void)state;
    int sizes[] = { 200, 1200 };
    for (int t = 0; t < 2; t++) {
        int n = sizes[t];
        double *L = calloc((size_t)n * (size_t)n, sizeof(double));
        assert_non_null(L);
        for (int i = 0; i + 1 < n; i++) {
            double g = 0.1 + (i % 7) / 3.0;
            L[(size_t)i * n + i] += g;
            L[(size_t)(i + 1) * n + i + 1] += g;
            L[(size_t)i * n + i + 1] -= g;
            L[(size_t)(i + 1) * n + i] -= g;
        }
        assert_int_equal(linalg_singular(n, L, 1e-13), 1);
        L[0] += 1e-3;
        assert_int_equal(linalg_singular(n, L, 1e-13), 0);
        assert_int_equal(linalg_singular(n, L, 1e-9), 0);
        assert_int_equal(linalg_singular(n, L, 1e-5), 1);
        free(L);
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_companion_real_roots),
        cmocka_unit_test(test_complex_pair),
        cmocka_unit_test(test_hessenberg_triangular),
        cmocka_unit_test(test_hessenberg_form),
        cmocka_unit_test(test_vectors_definition),
        cmocka_unit_test(test_pencil_ht),
        cmocka_unit_test(test_schur_form),
        cmocka_unit_test(test_linalg),
        cmocka_unit_test(test_rank_paths),
        cmocka_unit_test(test_rank_rounded),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
