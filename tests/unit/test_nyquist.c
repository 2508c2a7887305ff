/* Unit tests for the Nyquist count (SPEC section 7): the encirclements of
 * -1 found on the exact T along the imaginary axis, checked against closed
 * forms and against Routh's criterion (the number of sign changes in the
 * first column of the Routh array is the number of roots in the right
 * half-plane; Routh 1877, from memory), never against the program's own
 * eigenvalues. */
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

#include "loopwise/check.h"
#include "loopwise/nyquist.h"

#include "testutil.h"

/* Right-half-plane roots of the real polynomial a[0] s^n + ... + a[n] by
 * Routh's array (regular case: no zero in the first column). */
static int routh_rhp(const double *a, int n)
{
    double row[2][16];
    int len = n / 2 + 1;
    memset(row, 0, sizeof row);
    for (int k = 0; k <= n; k++)
        row[k % 2][k / 2] = a[k];
    int changes = 0;
    double prev = row[0][0];
    for (int r = 1; r <= n; r++) {
        double *top = row[(r - 1) % 2], *mid = row[r % 2];
        assert_true(mid[0] != 0); /* a singular case is not used here */
        if ((mid[0] > 0) != (prev > 0))
            changes++;
        prev = mid[0];
        double next[16] = { 0 };
        for (int k = 0; k + 1 < len; k++)
            next[k] = (mid[0] * top[k + 1] - top[0] * mid[k + 1]) / mid[0];
        memcpy(top, next, sizeof next);
    }
    return changes;
}

static nyquist count_of(const run *x)
{
    assert_true(x->r.have_nyquist);
    assert_true(x->r.nq.decided);
    return x->r.nq;
}

static int rhp_poles(const run *x)
{
    int n = 0;
    for (int k = 0; k < x->r.ncl; k++)
        n += creal(x->r.cl[k]) > 0;
    return n;
}

/* Three equal poles, T = A/(1 + s/p)^3: the characteristic polynomial
 * (s/p + 1)^3 + A has two right-half-plane roots for A > 8 and none below
 * (Routh-Hurwitz); the curve crosses the negative real axis at -A/8, left
 * of -1 exactly when A > 8, once for each sign of the frequency: N = 2. */
static void test_three_equal_poles(void **state)
{
    (void)state;
    const double gains[] = { 2.0, 7.9, 8.1, 30.0 };
    for (int k = 0; k < 4; k++) {
        run x;
        three_pole(&x, gains[k], 10e3, 2e-12);
        nyquist q = count_of(&x);
        double a[4] = { 1, 3, 3, 1 + gains[k] }; /* (s/p)^3 + 3 (s/p)^2 + 3 s/p + 1 + A */
        int want = routh_rhp(a, 3);
        assert_int_equal(want, gains[k] > 8 ? 2 : 0);
        assert_int_equal(q.encirclements, want);
        assert_int_equal(q.open_loop_rhp, 0);
        assert_int_equal(q.closed_loop_rhp, want);
        assert_int_equal(rhp_poles(&x), want);
        release(&x);
    }
}

/* One open-loop pole in the right half-plane: node a has 10 uS to ground
 * and a regenerative pair through b adds -20 uS, so its pole is at
 * +10u/1p = 1e7 rad/s; the main loop through c closes around it with
 * T(s) = A/(s/a - 1), A = gac Rc gca / 10 uS (nodal analysis by hand). The
 * closed loop s = a(1 - A) is stable for A > 1: then T(jw) runs
 * counter-clockwise around -1 once (N = -1), P = 1, Z = 0; for A < 1, N = 0
 * and Z = 1. */
static void test_rhp_pole_held_by_gain(void **state)
{
    (void)state;
    const double A[] = { 0.5, 0.9, 1.1, 4.0 };
    for (int k = 0; k < 4; k++) {
        run x;
        analyse(&x,
                "node a r=100k c=1p\n"
                "node b r=1k\n"
                "node c r=1k\n"
                "gm gab a -> b 1m\n"
                "gm gba b -> a 20u\n"
                "gm gac a -> c -1m\n"
                "gm gca c -> a %.17g\n"
                "loop pair positive a b\n"
                "loop main negative a c\n"
                "break gac\n",
                A[k] * 10e-6);
        nyquist q = count_of(&x);
        assert_int_equal(q.open_loop_rhp, 1);
        assert_int_equal(q.encirclements, A[k] > 1 ? -1 : 0);
        assert_int_equal(q.closed_loop_rhp, A[k] > 1 ? 0 : 1);
        assert_int_equal(rhp_poles(&x), q.closed_loop_rhp);
        release(&x);
    }
}

/* An integrator and two equal poles, T = K/(s (1 + s/p)^2): the contour's
 * half circle around the origin decides. The characteristic polynomial
 * s^3/p^2 + 2 s^2/p + s + K is stable for K < 2p (Routh), with two roots
 * in the right half-plane beyond. K = g1 g2 g3 R^2 / Ci, p = 1/(R C). */
static void test_integrator_indentation(void **state)
{
    (void)state;
    const double R = 10e3, C = 1e-12, Ci = 10e-12, p = 1 / (R * C);
    const double ratio[] = { 0.2, 1.5, 2.5, 10.0 };
    for (int k = 0; k < 4; k++) {
        double K = ratio[k] * p, g1 = K * Ci / (1e-3 * 1e-3 * R * R);
        run x;
        analyse(&x,
                "node i r=inf c=%.17g\n"
                "node o1 r=%.17g c=%.17g\n"
                "node o2 r=%.17g c=%.17g\n"
                "gm gi o2 -> i %.17g\n"
                "gm g2 i -> o1 -1m\n"
                "gm g3 o1 -> o2 1m\n"
                "loop main negative i o1 o2\n",
                Ci, R, C, R, C, g1);
        nyquist q = count_of(&x);
        assert_int_equal(x.r.tf.origin, -1);
        double a[4] = { 1 / (p * p), 2 / p, 1, K };
        int want = routh_rhp(a, 3);
        assert_int_equal(want, ratio[k] > 2 ? 2 : 0);
        assert_int_equal(q.encirclements, want);
        assert_int_equal(q.closed_loop_rhp, want);
        assert_int_equal(rhp_poles(&x), want);
        release(&x);
    }
}

/* Product of the real polynomials a (degree na) and b (degree nb), highest
 * power first, into c (degree na + nb). */
static void poly_mul(const double *a, int na, const double *b, int nb, double *c)
{
    for (int k = 0; k <= na + nb; k++)
        c[k] = 0;
    for (int i = 0; i <= na; i++)
        for (int j = 0; j <= nb; j++)
            c[i + j] += a[i] * b[j];
}

/* Conditional stability: three lag-lead stages and three poles,
 *   T = K [(1 + s/z)/(1 + s/a)]^3 / (1 + s/q)^3,
 * each lag-lead a node with r = Rx to ground and a series R-C branch
 * (impedance Rx (1 + sRC)/(1 + s(R + Rx)C): z = 1/(RC), a = 1/((R + Rx)C),
 * worked by hand). With a far below z the phase dips below -180 degrees
 * while |T| is still large, so the loop is stable at low gain, unstable in
 * a middle range, stable again between two higher gains and unstable above.
 * The characteristic polynomial (1 + s/a)^3 (1 + s/q)^3 + K (1 + s/z)^3 is
 * counted by Routh's array at each gain; the Nyquist count must agree in
 * every range. */
static void test_conditionally_stable(void **state)
{
    (void)state;
    const double Rx = 1e6, R = 10e3, C = 100e-12;      /* z = 1e6, a = 9.9e3 rad/s */
    const double Rq = 1e3, Cq = 1e-12;                  /* q = 1e9 rad/s */
    const double z = 1 / (R * C), a = 1 / ((R + Rx) * C), q = 1 / (Rq * Cq);
    const double Ks[] = { 0.5, 50.0, 1e3, 5e4, 5e5, 2e6, 3e7, 1e8 };
    int pattern[8];
    for (int k = 0; k < 8; k++) {
        /* K = g1 Rx g2 Rx g3 Rx g4 Rq g5 Rq g6 Rq at DC */
        double g = pow(Ks[k] / (Rx * Rx * Rx * Rq * Rq * Rq), 1.0 / 6.0);
        run x;
        analyse(&x,
                "node x1 r=%.17g\n"
                "node k1 r=inf c=%.17g\n"
                "node x2 r=%.17g\n"
                "node k2 r=inf c=%.17g\n"
                "node x3 r=%.17g\n"
                "node k3 r=inf c=%.17g\n"
                "node o1 r=%.17g c=%.17g\n"
                "node o2 r=%.17g c=%.17g\n"
                "node o3 r=%.17g c=%.17g\n"
                "res s1 x1 k1 %.17g\n"
                "res s2 x2 k2 %.17g\n"
                "res s3 x3 k3 %.17g\n"
                "gm g1 o3 -> x1 %.17g\n"
                "gm g2 x1 -> x2 %.17g\n"
                "gm g3 x2 -> x3 %.17g\n"
                "gm g4 x3 -> o1 %.17g\n"
                "gm g5 o1 -> o2 %.17g\n"
                "gm g6 o2 -> o3 %.17g\n"
                "loop main negative x1 x2 x3 o1 o2 o3\n",
                Rx, C, Rx, C, Rx, C, Rq, Cq, Rq, Cq, Rq, Cq, R, R, R, -g, g, g, g, g, g);
        double la[2] = { 1 / a, 1 }, lz[2] = { 1 / z, 1 }, lq[2] = { 1 / q, 1 };
        double a2[3], a3[4], q2[3], q3[4], den[7], z2[3], z3[4], ch[7];
        poly_mul(la, 1, la, 1, a2);
        poly_mul(a2, 2, la, 1, a3);
        poly_mul(lq, 1, lq, 1, q2);
        poly_mul(q2, 2, lq, 1, q3);
        poly_mul(a3, 3, q3, 3, den);
        poly_mul(lz, 1, lz, 1, z2);
        poly_mul(z2, 2, lz, 1, z3);
        for (int j = 0; j < 7; j++)
            ch[j] = den[j] + (j >= 3 ? Ks[k] * z3[j - 3] : 0);
        int want = routh_rhp(ch, 6);
        nyquist qn = count_of(&x);
        assert_int_equal(qn.open_loop_rhp, 0);
        assert_int_equal(qn.encirclements, want);
        assert_int_equal(qn.closed_loop_rhp, want);
        assert_int_equal(rhp_poles(&x), want);
        pattern[k] = want > 0;
        release(&x);
    }
    /* the gains chosen show every range: stable, unstable, stable between
     * two gains, unstable above */
    int changes = 0;
    for (int k = 1; k < 8; k++)
        changes += pattern[k] != pattern[k - 1];
    assert_int_equal(pattern[0], 0);
    assert_int_equal(changes, 3);
}

/* Three integrators in a chain (a Jordan block: the eigenvalue iteration
 * spreads the triple pole at the origin over eps^(1/3) of the largest
 * pole), two of them with a series R-C to ground, and two RC poles:
 *   T = K (1 + s/z)^2 / (s^3 (1 + s/p)^2).
 * The origin order must come out as -3 with three poles at exactly 0, the
 * crossover and phase margin must match the closed form (|T| = 1 solved
 * here by bisection on the formula; phase -270 + 2 atan(w/z) - 2 atan(w/p)),
 * and the count must match Routh's array on s^3 (1 + s/p)^2 + K (1 + s/z)^2. */
static void test_three_integrators(void **state)
{
    (void)state;
    const double Rz = 100e3, Cz = 10e-12, C3 = 10e-12, Rp = 1e3, Cp = 100e-12, g = 1e-3;
    const double z = 1 / (Rz * Cz), p = 1 / (Rp * Cp);
    const double K = g * g * g * g * g * Rp * Rp / (Cz * Cz * C3);
    run x;
    analyse(&x,
            "node x1 r=inf\n"
            "node k1 r=inf c=%.17g\n"
            "node x2 r=inf\n"
            "node k2 r=inf c=%.17g\n"
            "node x3 r=inf c=%.17g\n"
            "node o1 r=%.17g c=%.17g\n"
            "node o2 r=%.17g c=%.17g\n"
            "res s1 x1 k1 %.17g\n"
            "res s2 x2 k2 %.17g\n"
            "gm g1 o2 -> x1 %.17g\n"
            "gm g2 x1 -> x2 %.17g\n"
            "gm g3 x2 -> x3 %.17g\n"
            "gm g4 x3 -> o1 %.17g\n"
            "gm g5 o1 -> o2 %.17g\n"
            "loop main negative x1 x2 x3 o1 o2\n",
            Cz, Cz, C3, Rp, Cp, Rp, Cp, Rz, Rz, -g, g, g, g, g);
    assert_int_equal(x.r.tf.origin, -3);
    int at0 = 0;
    for (int k = 0; k < x.r.tf.npoles; k++)
        at0 += x.r.tf.poles[k] == 0;
    assert_int_equal(at0, 3);
    double lo = z, hi = 1e3 * p;
    for (int it = 0; it < 200; it++) {
        double w = sqrt(lo * hi);
        double mag = K * (1 + w * w / (z * z)) / (w * w * w * (1 + w * w / (p * p)));
        if (mag > 1)
            lo = w;
        else
            hi = w;
    }
    double wc = sqrt(lo * hi);
    double pm = 180.0 - 270.0 + 2 * atan(wc / z) * DEG_ - 2 * atan(wc / p) * DEG_;
    assert_int_equal(x.r.mg.ncross, 1);
    assert_rel(x.r.mg.cross[0].hz, wc / (2 * PI_), 1e-8);
    assert_rel(x.r.mg.cross[0].value, pm, 1e-6);
    /* in units of z: s^3 (1 + s/P)^2 + K' (1 + s)^2, K' = K / z^3, times P^2 */
    double P = p / z, Kn = K / (z * z * z);
    double a[6] = { 1, 2 * P, P * P, P * P * Kn, 2 * P * P * Kn, P * P * Kn };
    nyquist q = count_of(&x);
    int want = routh_rhp(a, 5);
    assert_int_equal(want, 2);
    assert_int_equal(q.encirclements, want);
    assert_int_equal(q.closed_loop_rhp, want);
    assert_int_equal(rhp_poles(&x), want);
    release(&x);
}

/* A resonance far above the crossover: a dominant pole (a: Ra, Ca) and a
 * gyrator-capacitor tank (x, y: Rr, Cr, +-g), nodal analysis by hand:
 *   T(s) = K w0^2 / ((1 + s ta)(s^2 + b s + w0^2)),
 *   ta = Ra Ca, b = 2/(Rr Cr), w0^2 = (g^2 + 1/Rr^2)/Cr^2,
 *   K = gf g ga Ra / (Cr^2 w0^2).
 * Near w0 the tank adds -90 degrees to the pole's -90 and peaks by Q ~ 50,
 * so |T| there is about K p1 Q / w0 = K/200: for some gains the curve
 * crosses the negative real axis left of -1 three decades above the
 * crossover. Routh on ta s^3 + (1 + ta b) s^2 + (b + ta w0^2) s + w0^2 (1 + K)
 * decides (stable iff a1 a2 > a0 a3, all positive). Where |T| is below one
 * half the count crosses whole runs of the grid in one step, so this
 * checks that a peak between such runs is still walked. */
static void test_resonance_above_crossover(void **state)
{
    (void)state;
    const double Ra = 1e6, Ca = 10e-12, Rr = 100e3, Cr = 1e-12, g = 1e-3, ga = 1e-3;
    const double ta = Ra * Ca, b = 2 / (Rr * Cr), w02 = (g * g + 1 / (Rr * Rr)) / (Cr * Cr);
    const double Ks[] = { 50.0, 150.0, 250.0, 1000.0 };
    for (int k = 0; k < 4; k++) {
        double gf = Ks[k] * Cr * Cr * w02 / (g * ga * Ra);
        run x;
        analyse(&x,
                "node a r=%.17g c=%.17g\n"
                "node x r=%.17g c=%.17g\n"
                "node y r=%.17g c=%.17g\n"
                "gm gax a -> x %.17g\n"
                "gm gxy x -> y %.17g\n"
                "gm gyx y -> x %.17g\n"
                "gm gya y -> a %.17g\n"
                "loop tank negative x y\n"
                "loop main negative a x y\n"
                "break gya\n",
                Ra, Ca, Rr, Cr, Rr, Cr, ga, g, -g, -gf);
        double a[4] = { ta, 1 + ta * b, b + ta * w02, w02 * (1 + Ks[k]) };
        int want = routh_rhp(a, 3);
        assert_int_equal(want, Ks[k] > 200 ? 2 : 0); /* a1 a2 > a0 a3 <=> K < ~200 */
        nyquist q = count_of(&x);
        assert_int_equal(q.open_loop_rhp, 0);
        assert_int_equal(q.encirclements, want);
        assert_int_equal(q.closed_loop_rhp, want);
        assert_int_equal(rhp_poles(&x), want);
        release(&x);
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_three_equal_poles),
        cmocka_unit_test(test_rhp_pole_held_by_gain),
        cmocka_unit_test(test_integrator_indentation),
        cmocka_unit_test(test_conditionally_stable),
        cmocka_unit_test(test_three_integrators),
        cmocka_unit_test(test_resonance_above_crossover),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
