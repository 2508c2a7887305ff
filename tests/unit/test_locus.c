/* Unit tests for the paths of the closed-loop poles (locus.h): every point
 * against the closed-form roots of 1 + k T(s) = 0 at its own k, worked by
 * hand for loops whose characteristic polynomial is known, and the joining
 * of the roots into paths checked against the geometry of those roots. */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>

#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/locus.h"

#include "testutil.h"

static locus trace(const run *x)
{
    locus L;
    lw_error err;
    assert_int_equal(locus_trace(x->m, 400, &L, &err), LW_OK);
    assert_true(L.nk > 30);
    assert_true(L.k[0] == 0 && L.k[L.nk - 1] == 1);
    for (int i = 1; i < L.nk; i++)
        assert_true(L.k[i] > L.k[i - 1]);
    return L;
}

/* Three equal poles, T = A/(1 + s/p)^3 (three_pole): at gain k the roots of
 * (1 + s/p)^3 + kA = 0 are s = p (-1 + (kA)^(1/3) e^(j pi (2m + 1)/3)),
 * m = 0, 1, 2: three straight rays from -p at +60, 180 and -60 degrees.
 * Each path must keep to one ray (the joining never swaps two roots). */
static void test_three_rays(void **state)
{
    (void)state;
    const double A = 27, R = 10e3, C = 2e-12, p = 1 / (R * C);
    run x;
    three_pole(&x, A, R, C);
    locus L = trace(&x);
    assert_int_equal(L.npaths, 3);
    int rays[3] = { 0, 0, 0 };
    for (int q = 0; q < 3; q++) {
        const double complex *s = L.s + (size_t)q * L.nk;
        assert_crel(s[0], -p, 1e-4); /* the triple pole, spread by rounding */
        double dir = NAN;
        for (int i = 1; i < L.nk; i++) {
            double r = cbrt(L.k[i] * A);
            double best = INFINITY;
            for (int m = 0; m < 3; m++)
                best = fmin(best, cabs(s[i] - p * (-1 + r * cexp(I * PI_ * (2 * m + 1) / 3))));
            assert_true(best <= 1e-6 * p * (1 + r));
            if (L.k[i] < 1e-3)
                continue; /* near the triple pole rounding decides the direction */
            double a = carg(s[i] + p);
            if (isnan(dir))
                dir = a;
            assert_true(fabs(remainder(a - dir, 2 * PI_)) < 1e-3);
        }
        /* which ray: +60, 180 or -60 degrees */
        int m = (int)lround(dir / (PI_ / 3));
        assert_true(m == 1 || m == 3 || m == -3 || m == -1);
        rays[m == 1 ? 0 : m == -1 ? 2 : 1]++;
    }
    assert_int_equal(rays[0], 1);
    assert_int_equal(rays[1], 1);
    assert_int_equal(rays[2], 1);
    /* the steps were small enough to join the roots surely */
    assert_true(L.max_step <= 0.05 + 1e-12);
    locus_free(&L);
    release(&x);
}

/* Two poles, T = A/((1 + s R1 C1)(1 + s R2 C2)), A = gm1 R1 gm2 R2
 * (two_pole, by hand): the roots of (1 + s/p1)(1 + s/p2) + kA meet at
 * -(p1 + p2)/2 when 1 + kA = (p1 + p2)^2/(4 p1 p2) and leave the real axis
 * there. A node outside the loop (3 kohm, 1 nF) keeps its pole at every k. */
static void test_breakaway_and_outside(void **state)
{
    (void)state;
    const double R1 = 100e3, C1 = 10e-12, R2 = 10e3, C2 = 1e-12, g1 = 1e-3, g2 = 1e-3;
    const double p1 = 1 / (R1 * C1), p2 = 1 / (R2 * C2), A = g1 * R1 * g2 * R2;
    run x;
    two_pole(&x, R1, C1, R2, C2, g1, g2, 1);
    locus L = trace(&x);
    assert_int_equal(L.npaths, 3);
    double po = 1 / (3e3 * 1e-9);
    int still = 0;
    for (int q = 0; q < 3; q++) {
        const double complex *s = L.s + (size_t)q * L.nk;
        if (cabs(s[0] + po) < 1e-9 * po) {
            for (int i = 0; i < L.nk; i++)
                assert_crel(s[i], -po, 1e-9);
            still++;
            continue;
        }
        for (int i = 0; i < L.nk; i++) {
            double complex c = (1 + s[i] / p1) * (1 + s[i] / p2) + L.k[i] * A;
            assert_true(cabs(c) <= 1e-8 * (1 + L.k[i] * A + cabs(s[i] / p1) * cabs(s[i] / p2)));
        }
        /* from an open-loop pole to a root of the whole loop */
        assert_true(cabs(s[0] + p1) < 1e-9 * p1 || cabs(s[0] + p2) < 1e-9 * p2);
        double complex end = s[L.nk - 1];
        double disc = (p1 + p2) * (p1 + p2) - 4 * p1 * p2 * (1 + A);
        assert_true(disc < 0); /* a complex pair at k = 1 */
        assert_rel(creal(end), -(p1 + p2) / 2, 1e-9);
        assert_rel(fabs(cimag(end)), sqrt(-disc) / 2, 1e-9);
    }
    assert_int_equal(still, 1);
    locus_free(&L);
    release(&x);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_three_rays),
        cmocka_unit_test(test_breakaway_and_outside),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
