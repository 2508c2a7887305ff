/* Unit tests for loopgain: T(s) at the break of networks built from .loop
 * text, checked against closed forms worked out from the element values. */
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
#include "loopwise/desc.h"
#include "loopwise/loopgain.h"
#include "loopwise/margins.h"
#include "loopwise/model.h"
#include "loopwise/text.h"

#include "testutil.h"

/* ---- networks ------------------------------------------------------------ */

/* One RC pole at x (R, C) driven by gf; y is a resistive sense node (1 kohm)
 * fed by gb = -1 mS, so v_y = -v_x. Nodal analysis by hand, break at gf:
 * T(s) = -gf * gb * 1k * R / (1 + sRC) = gm R / (1 + sRC). */
static void single_rc_sign(run *x, double R, double C, double gm, int sense_sign)
{
    analyse(x,
            "node x r=%.17g c=%.17g\n"
            "node y r=1k\n"
            "gm gf y -> x %.17g\n"
            "gm gb x -> y %s1m\n"
            "loop main %s x y\n",
            R, C, gm, sense_sign < 0 ? "-" : "", sense_sign < 0 ? "negative" : "positive");
}



/* ---- tests ---------------------------------------------------------------- */

static void test_single_rc_dc_gain_exact(void **state)
{
    (void)state;
    const double R = 10e3, C = 1.6e-9;
    const double gms[] = { 50e-6, 300e-6, 2e-3, 0.1 };
    for (int k = 0; k < 4; k++) {
        run x;
        single_rc_sign(&x, R, C, gms[k], -1);
        double A = gms[k] * R; /* closed form by nodal analysis, worked by hand */
        assert_rel(x.r.tf.dc, A, 1e-12);
        assert_rel(creal(lgain_eval(x.r.lg, 0)), A, 1e-12);
        assert_true(fabs(cimag(lgain_eval(x.r.lg, 0))) <= 1e-12 * A);
        assert_int_equal(x.r.tf.origin, 0);
        assert_int_equal(x.r.tf.sign, 1);
        release(&x);
    }
}

static void test_single_rc_frequency_response(void **state)
{
    (void)state;
    const double R = 10e3, C = 1.6e-9, gm = 2e-3;
    run x;
    single_rc_sign(&x, R, C, gm, -1);
    double A = gm * R, p = 1.0 / (R * C);
    const double ws[] = { 1e-3, 0.1, 1.0, 7.0, 1e3, 1e6 };
    for (int k = 0; k < 6; k++) {
        double complex s = I * ws[k] * p;
        /* T(s) = A/(1 + s/p): closed form, single pole */
        assert_crel(lgain_eval(x.r.lg, s), A / (1.0 + s / p), 1e-11);
    }
    /* off the jw axis too */
    double complex s = (-0.3 + 2.0 * I) * p;
    assert_crel(lgain_eval(x.r.lg, s), A / (1.0 + s / p), 1e-11);
    release(&x);
}

static void test_single_rc_sign_convention(void **state)
{
    (void)state;
    /* a non-inverting sense stage makes the same loop positive feedback:
     * T(0) = -gm R (closed form by nodal analysis, worked by hand) */
    const double R = 4.7e3, C = 10e-12, gm = 1e-3;
    run x;
    single_rc_sign(&x, R, C, gm, +1);
    assert_rel(x.r.tf.dc, -gm * R, 1e-12);
    assert_int_equal(x.r.tf.sign, -1);
    assert_true(isfinite(x.r.loops[0].dc));
    assert_rel(x.r.loops[0].dc, -gm * R, 1e-12);
    release(&x);
}

static void test_two_pole_response(void **state)
{
    (void)state;
    const double R1 = 20e3, C1 = 8e-12, R2 = 50e3, C2 = 20e-12, gm1 = 50e-6, gm2 = 1e-3;
    run x;
    two_pole(&x, R1, C1, R2, C2, gm1, gm2, 0);
    double A = gm1 * gm2 * R1 * R2, w1 = 1.0 / (R1 * C1), w2 = 1.0 / (R2 * C2);
    /* T(0) = gm1 gm2 R1 R2: closed form by nodal analysis, worked by hand */
    assert_rel(x.r.tf.dc, A, 1e-12);
    const double ws[] = { 1e3, 1e6, 3e6, 1e8, 1e10 };
    for (int k = 0; k < 5; k++) {
        double complex s = I * ws[k];
        assert_crel(lgain_eval(x.r.lg, s), A / ((1.0 + s / w1) * (1.0 + s / w2)), 1e-11);
    }
    release(&x);
}

static void test_output_node_outside_loop_leaves_T(void **state)
{
    (void)state;
    const double R1 = 20e3, C1 = 8e-12, R2 = 50e3, C2 = 20e-12, gm1 = 50e-6, gm2 = 1e-3;
    run with, without;
    two_pole(&with, R1, C1, R2, C2, gm1, gm2, 1);
    two_pole(&without, R1, C1, R2, C2, gm1, gm2, 0);
    double A = gm1 * gm2 * R1 * R2, w1 = 1.0 / (R1 * C1), w2 = 1.0 / (R2 * C2);
    assert_rel(with.r.tf.dc, A, 1e-12);
    for (double w = 1e2; w < 1e11; w *= 7.3) {
        double complex s = I * w;
        /* the node o draws no current from the loop: T is the two-pole form */
        assert_crel(lgain_eval(with.r.lg, s), A / ((1.0 + s / w1) * (1.0 + s / w2)), 1e-11);
        assert_crel(lgain_eval(with.r.lg, s), lgain_eval(without.r.lg, s), 1e-12);
    }
    release(&with);
    release(&without);
}

static void test_integrator_unbounded_dc(void **state)
{
    (void)state;
    const double wn = 2 * PI_ * 1e6, zeta = 0.5;
    run x;
    second_order(&x, wn, zeta, 1e-12, 1e-12);
    /* T = wn^2/(s(s + 2 zeta wn)): a pole at s = 0, so T(0) is unbounded */
    assert_true(isinf(x.r.tf.dc) && x.r.tf.dc > 0);
    assert_int_equal(x.r.tf.origin, -1);
    assert_int_equal(x.r.tf.sign, 1);
    const double ws[] = { 1e2, 1e5, 1e6, 2 * PI_ * 1e6, 1e8 };
    for (int k = 0; k < 5; k++) {
        double complex s = I * ws[k];
        assert_crel(lgain_eval(x.r.lg, s), wn * wn / (s * (s + 2 * zeta * wn)), 1e-10);
    }
    release(&x);
}

static void test_miller_response(void **state)
{
    (void)state;
    const double gm1 = 100e-6, gm2 = 1e-3, R1 = 1e6, C1 = 100e-15, R2 = 100e3, C2 = 2e-12,
                 Cc = 1e-12;
    run x;
    analyse(&x,
            "node inn r=inf\n"
            "node x1 r=%.17g c=%.17g\n"
            "node out r=%.17g c=%.17g\n"
            "gm g1 inn -> x1 %.17g\n"
            "gm g2 x1 -> out -%.17g\n"
            "cap cc x1 out %.17g\n"
            "res fb out inn 1\n"
            "loop main negative inn x1 out\n",
            R1, C1, R2, C2, gm1, gm2, Cc);
    /* Two-stage Miller amplifier by nodal analysis (textbook form):
     * T(s) = gm1 (gm2 - s Cc) / D(s),
     * D(s) = G1 G2 + s (G1 (C2 + Cc) + G2 (C1 + Cc) + gm2 Cc) + s^2 (C1 C2 + Cc (C1 + C2)) */
    double G1 = 1 / R1, G2 = 1 / R2;
    assert_rel(x.r.tf.dc, gm1 * gm2 * R1 * R2, 1e-10); /* rounding: G spans 1 S to 1 uS */
    for (double w = 1e2; w < 1e12; w *= 9.1) {
        double complex s = I * w;
        double complex D = G1 * G2 + s * (G1 * (C2 + Cc) + G2 * (C1 + Cc) + gm2 * Cc) +
                           s * s * (C1 * C2 + Cc * (C1 + C2));
        assert_crel(lgain_eval(x.r.lg, s), gm1 * (gm2 - s * Cc) / D, 1e-10);
    }
    release(&x);
}

/* break NODE (SPEC 1): node a controls g1 -> b and g3 -> c, taken together.
 * With g1, g3 off, a unit drive u = g1 e_b + g3 e_c gives, by nodal analysis
 * worked by hand, v_b = g1/(Gb + sCb), v_c = g3/(Gc + sCc), and at a, where
 * g2 and g4 (-1 mS each, from b and c) inject -1m v_b and -1m v_c,
 * v_a = -1m (v_b + v_c)/(Ga + sCa); T = -v_a. */
static void test_break_node_closed_form(void **state)
{
    (void)state;
    run x;
    analyse(&x, "node a r=1k c=1p\n"
                "node b r=1k c=1p\n"
                "node c r=2k c=3p\n"
                "gm g1 a -> b 1m\n"
                "gm g2 b -> a -1m\n"
                "gm g3 a -> c 1m\n"
                "gm g4 c -> a -1m\n"
                "loop l1 negative a b\n"
                "loop l2 negative a c\n"
                "break a\n");
    assert_int_equal(x.d->brk_node, 0);
    assert_int_equal(x.m->brk_node, 0);
    const double Ga = 1e-3, Ca = 1e-12, Gb = 1e-3, Cb = 1e-12, Gc = 0.5e-3, Cc = 3e-12;
    const double ws[] = { 0, 1e6, 3e7, 1e8, 1e9, 1e10 };
    for (int k = 0; k < 6; k++) {
        double complex s = I * ws[k];
        double complex vb = 1e-3 / (Gb + s * Cb), vc = 1e-3 / (Gc + s * Cc);
        double complex t = 1e-3 * (vb + vc) / (Ga + s * Ca);
        assert_crel(lgain_eval(x.r.lg, s), t, 1e-11);
        assert_crel(lgain_eval_full(x.r.lg, s), t, 1e-11);
    }
    /* T(0) = 1m (1m 1k + 1m 2k) 1k = 3 */
    assert_rel(x.r.tf.dc, 3.0, 1e-12);
    /* one zero: vb + vc = 0 at s = -(Gb + Gc)/(Cb + Cc) (Gb Cc ... worked from
     * 1m/(Gb + sCb) + 1m/(Gc + sCc) = 0: Gc + sCc + Gb + sCb = 0) */
    assert_int_equal(x.r.tf.nzeros, 1);
    assert_crel(x.r.tf.zeros[0], -(Gb + Gc) / (Cb + Cc), 1e-9);
    /* det Y = det Y0 (1 + T): the closed-loop poles are the roots of
     * (Ga + sCa)(Gb + sCb)(Gc + sCc) + 1m 1m ((Gc + sCc) + (Gb + sCb)) */
    for (int k = 0; k < x.r.ncl; k++) {
        double complex p = x.r.cl[k];
        double complex f = (Ga + p * Ca) * (Gb + p * Cb) * (Gc + p * Cc) +
                           1e-6 * ((Gc + p * Cc) + (Gb + p * Cb));
        double scale = cabs(Ga + p * Ca) * cabs(Gb + p * Cb) * cabs(Gc + p * Cc);
        assert_true(cabs(f) <= 1e-9 * scale);
    }
    assert_int_equal(x.r.ncl, 3);
    release(&x);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_single_rc_dc_gain_exact),
        cmocka_unit_test(test_single_rc_frequency_response),
        cmocka_unit_test(test_single_rc_sign_convention),
        cmocka_unit_test(test_two_pole_response),
        cmocka_unit_test(test_output_node_outside_loop_leaves_T),
        cmocka_unit_test(test_integrator_unbounded_dc),
        cmocka_unit_test(test_miller_response),
        cmocka_unit_test(test_break_node_closed_form),
    };
    return cmocka_run_group_tests_name("loopgain", tests, NULL, NULL);
}
