/* Unit tests for margins: crossovers, phase margins, phase crossings and
 * gain margins, checked against closed forms worked out from the element
 * values. */
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

/* The reported (smallest) phase margin and where it occurs. */
static margin_point best_cross(const run *x)
{
    const margins *m = &x->r.mg;
    assert_true(m->ncross > 0);
    assert_true(m->best_cross >= 0 && m->best_cross < m->ncross);
    return m->cross[m->best_cross];
}

static margin_point best_phase(const run *x)
{
    const margins *m = &x->r.mg;
    assert_true(m->nphase > 0);
    assert_true(m->best_phase >= 0 && m->best_phase < m->nphase);
    return m->phase[m->best_phase];
}

/* ---- networks ------------------------------------------------------------ */





/* ---- tests ---------------------------------------------------------------- */

static void test_single_rc_crossover_and_phase_margin(void **state)
{
    (void)state;
    const double R = 10e3, C = 1.6e-9;
    const double gains[] = { 1.5, 3.0, 20.0, 200.0 };
    for (int k = 0; k < 4; k++) {
        double A = gains[k], gm = A / R;
        run x;
        single_rc(&x, R, C, gm);
        double p = 1 / (2 * PI_ * R * C);                 /* pole, Hz */
        /* |A/(1 + jf/p)| = 1 at f = p sqrt(A^2 - 1) (closed form, from memory) */
        double fc = p * sqrt(A * A - 1);
        double pm = 180.0 - atan(sqrt(A * A - 1)) * DEG_; /* closed form, from memory */
        assert_int_equal(x.r.mg.ncross, 1);
        assert_int_equal(x.r.mg.why, CROSS_FOUND);
        margin_point c = best_cross(&x);
        assert_rel(c.hz, fc, 1e-8);
        assert_rel(c.value, pm, 1e-7);
        /* one pole never reaches -180 degrees: no gain margin */
        assert_int_equal(x.r.mg.nphase, 0);
        assert_int_equal(x.r.mg.best_phase, -1);
        release(&x);
    }
}

static void test_single_rc_unwrapped_phase(void **state)
{
    (void)state;
    const double R = 10e3, C = 1.6e-9, A = 20;
    run x;
    single_rc(&x, R, C, A / R);
    double p = 1 / (2 * PI_ * R * C);
    const double fs[] = { 1e-2, 1.0, 10.0, 1e4 };
    for (int k = 0; k < 4; k++) {
        double mag;
        int mis = 0;
        double ph = margin_phase(x.r.lg, &x.r.tf, fs[k] * p, &mag, &mis);
        /* phase -atan(f/p), magnitude A/sqrt(1 + (f/p)^2) (closed form, from memory) */
        assert_rel(ph, -atan(fs[k]) * DEG_, 1e-9);
        assert_rel(mag, A / sqrt(1 + fs[k] * fs[k]), 1e-10);
        assert_false(mis);
    }
    release(&x);
}

static void test_two_pole_crossover_and_phase_margin(void **state)
{
    (void)state;
    const double R1 = 20e3, C1 = 8e-12, R2 = 50e3, C2 = 20e-12, gm2 = 1e-3;
    const double gm1s[] = { 50e-6, 5e-6, 400e-6 };
    for (int k = 0; k < 3; k++) {
        double gm1 = gm1s[k];
        run x;
        two_pole(&x, R1, C1, R2, C2, gm1, gm2, 0);
        double A = gm1 * gm2 * R1 * R2;
        double f1 = 1 / (2 * PI_ * R1 * C1), f2 = 1 / (2 * PI_ * R2 * C2);
        /* |T| = 1: (1 + x/f1^2)(1 + x/f2^2) = A^2 with x = f^2, a quadratic in x:
         * x^2 + (f1^2 + f2^2) x + (1 - A^2) f1^2 f2^2 = 0 (closed form, worked by hand) */
        double bq = f1 * f1 + f2 * f2, cq = (1 - A * A) * f1 * f1 * f2 * f2;
        double xr = 2 * (-cq) / (bq + sqrt(bq * bq - 4 * cq)); /* the positive root */
        double fc = sqrt(xr);
        /* PM = 180 - atan(fc/f1) - atan(fc/f2) (closed form, from memory) */
        double pm = 180.0 - (atan(fc / f1) + atan(fc / f2)) * DEG_;
        assert_int_equal(x.r.mg.ncross, 1);
        margin_point c = best_cross(&x);
        assert_rel(c.hz, fc, 1e-8);
        assert_rel(c.value, pm, 1e-7);
        assert_int_equal(x.r.mg.nphase, 0); /* two poles approach -180 but never reach it */
        release(&x);
    }
}

static void test_three_pole_gain_margin(void **state)
{
    (void)state;
    const double R = 10e3, C = 2e-12;
    const double gains[] = { 7.8, 8.2, 2.0 };
    const int stable[] = { 1, 0, 1 };
    for (int k = 0; k < 3; k++) {
        double A = gains[k];
        run x;
        three_pole(&x, A, R, C);
        double p = 1 / (2 * PI_ * R * C);
        /* each pole gives 60 degrees at f = tan(60) p = sqrt(3) p, where
         * |T| = A/(1 + 3)^(3/2) = A/8 (closed form, from memory) */
        assert_int_equal(x.r.mg.nphase, 1);
        margin_point g = best_phase(&x);
        assert_rel(g.hz, sqrt(3.0) * p, 1e-8);
        assert_rel(g.value, 20 * log10(8 / A), 1e-6); /* signed: negative for A > 8 */
        /* Routh-Hurwitz: the closed loop is stable exactly for A < 8 */
        assert_int_equal(x.r.stable, stable[k]);
        /* crossover: A/(1 + u^2)^(3/2) = 1, u = sqrt(A^(2/3) - 1);
         * PM = 180 - 3 atan(u) (closed form, worked by hand) */
        double u = sqrt(pow(A, 2.0 / 3.0) - 1);
        margin_point c = best_cross(&x);
        assert_rel(c.hz, u * p, 1e-8);
        assert_rel(c.value, 180.0 - 3 * atan(u) * DEG_, 1e-6);
        /* phase margin and closed-loop stability agree in sign here */
        assert_int_equal(c.value > 0, stable[k]);
        release(&x);
    }
}

static void test_second_order_phase_margin(void **state)
{
    (void)state;
    const double wn = 2 * PI_ * 1e6;
    const double zetas[] = { 0.3, 0.5, 0.7 };
    for (int k = 0; k < 3; k++) {
        double z = zetas[k];
        run x;
        second_order(&x, wn, z, 1e-12, 1e-12);
        double q = sqrt(sqrt(1 + 4 * z * z * z * z) - 2 * z * z);
        /* standard phase-margin/damping relation, from memory:
         * PM = atan(2 zeta / sqrt(sqrt(1 + 4 zeta^4) - 2 zeta^2)) at wc = wn q */
        double pm = atan(2 * z / q) * DEG_;
        assert_int_equal(x.r.mg.ncross, 1);
        margin_point c = best_cross(&x);
        assert_rel(c.hz, wn * q / (2 * PI_), 1e-8);
        assert_rel(c.value, pm, 1e-7);
        /* the integrator anchors the phase at -90; it tends to -180 and never crosses */
        assert_int_equal(x.r.mg.nphase, 0);
        release(&x);
    }
}

static void test_output_node_does_not_change_margins(void **state)
{
    (void)state;
    const double R1 = 20e3, C1 = 8e-12, R2 = 50e3, C2 = 20e-12, gm1 = 50e-6, gm2 = 1e-3;
    run with, without;
    two_pole(&with, R1, C1, R2, C2, gm1, gm2, 1);
    two_pole(&without, R1, C1, R2, C2, gm1, gm2, 0);
    double A = gm1 * gm2 * R1 * R2;
    double f1 = 1 / (2 * PI_ * R1 * C1), f2 = 1 / (2 * PI_ * R2 * C2);
    double bq = f1 * f1 + f2 * f2, cq = (1 - A * A) * f1 * f1 * f2 * f2;
    double fc = sqrt(2 * (-cq) / (bq + sqrt(bq * bq - 4 * cq))); /* closed form, worked by hand */
    double pm = 180.0 - (atan(fc / f1) + atan(fc / f2)) * DEG_;   /* closed form, from memory */
    margin_point a = best_cross(&with), b = best_cross(&without);
    assert_int_equal(with.r.mg.ncross, without.r.mg.ncross);
    assert_rel(a.hz, fc, 1e-8);
    assert_rel(a.value, pm, 1e-7);
    assert_rel(a.hz, b.hz, 1e-9);
    assert_rel(a.value, b.value, 1e-9);
    assert_int_equal(with.r.mg.nphase, without.r.mg.nphase);
    assert_int_equal(with.r.mg.mismatch, 0);
    release(&with);
    release(&without);
}

static void test_no_crossover(void **state)
{
    (void)state;
    const double R = 10e3, C = 1.6e-9;
    const double gains[] = { 0.5, 0.99, 1e-3 };
    for (int k = 0; k < 3; k++) {
        run x;
        single_rc(&x, R, C, gains[k] / R);
        /* |T| <= A < 1 at every frequency: no crossover */
        assert_int_equal(x.r.mg.ncross, 0);
        assert_int_equal(x.r.mg.best_cross, -1);
        assert_int_equal(x.r.mg.why, CROSS_BELOW);
        assert_true(x.r.stable);
        release(&x);
    }
}

/* The exact scan (margins_find_exact) on its own gives the closed-form
 * margins of three equal poles, with no help from the factored form. */
static void test_exact_scan_three_poles(void **state)
{
    (void)state;
    const double R = 10e3, C = 2e-12;
    const double gains[] = { 2.0, 7.8, 8.2 };
    for (int k = 0; k < 3; k++) {
        double A = gains[k], p = 1 / (2 * PI_ * R * C);
        run x;
        three_pole(&x, A, R, C);
        margins m;
        lw_error err;
        lw_error_clear(&err);
        assert_int_equal(margins_find_exact(x.r.lg, &x.r.tf, x.r.mg.fmin_hz, x.r.mg.fmax_hz, &m,
                                            &err),
                         LW_OK);
        assert_int_equal(m.exact, 1);
        assert_int_equal(m.mismatch, 0);
        /* closed forms as in test_three_pole_gain_margin: the phase crossing
         * at sqrt(3) p with |T| = A/8; the crossover at u p, u = sqrt(A^(2/3)
         * - 1), PM = 180 - 3 atan(u) (worked by hand) */
        double u = sqrt(pow(A, 2.0 / 3.0) - 1);
        assert_int_equal(m.ncross, 1);
        assert_rel(m.cross[0].hz, u * p, 1e-8);
        assert_rel(m.cross[0].value, 180.0 - 3 * atan(u) * DEG_, 1e-6);
        assert_int_equal(m.nphase, 1);
        assert_rel(m.phase[0].hz, sqrt(3.0) * p, 1e-8);
        assert_rel(m.phase[0].value, 20 * log10(8 / A), 1e-6);
        release(&x);
    }
}

/* A factored form that is not T's (a spurious zero added to the structure,
 * as a dropped zero would be the other way round) is noticed by the spot
 * checks, and with phase_exact set the phase is walked on the exact T: it
 * follows -3 atan(f/p) continuously past -180 degrees (closed form). */
static void test_wrong_structure_noticed(void **state)
{
    (void)state;
    const double R = 10e3, C = 2e-12, A = 2.0, p = 1 / (2 * PI_ * R * C);
    run x;
    three_pole(&x, A, R, C);
    lg_tf *tf = &x.r.tf;
    assert_int_equal(x.r.mg.mismatch, 0);
    assert_int_equal(tf->nzeros, 0);
    double complex keep = tf->zeros ? tf->zeros[0] : 0;
    double complex *z = realloc(tf->zeros, sizeof *z * 2);
    assert_non_null(z);
    tf->zeros = z;
    tf->zeros[0] = -2 * PI_ * 0.5 * p; /* not a zero of T */
    tf->nzeros = 1;
    margins m;
    lw_error err;
    lw_error_clear(&err);
    assert_int_equal(margins_find(x.r.lg, tf, x.r.mg.fmin_hz, x.r.mg.fmax_hz, &m, &err), LW_OK);
    assert_true(m.mismatch > 0);
    tf->phase_exact = 1;
    const double f[] = { 0.01, 0.3, 1.0, 1.7320508075688772, 3.0, 10.0, 100.0 };
    for (int k = 0; k < 7; k++) {
        double mag, ph = margin_phase(x.r.lg, tf, f[k] * p, &mag, NULL);
        assert_rel(ph, -3 * atan(f[k]) * DEG_, 1e-9);
        assert_rel(mag, A / pow(1 + f[k] * f[k], 1.5), 1e-9);
    }
    tf->nzeros = 0;
    tf->zeros[0] = keep;
    release(&x);
}

/* The loop of issue 16: the loop's input node has capacitance only (a pole
 * four decades above the rest) in front of a gm-C resonator tapped at its
 * band-pass node. T vanishes where node rb's own admittance 1/r + sc is zero
 * (its return current then holds ra at zero), s = -1/(r c) (worked by hand
 * from the nodal equations); the zero must be found to full accuracy, and
 * without an accuracy warning. The margins are checked against the numpy
 * reference in tests/ref/family.py. */
static void test_zero_with_poles_decades_apart(void **state)
{
    (void)state;
    run x;
    analyse(&x, "node vin c=13.9f\n"
                "node s1 r=212k c=320f\n"
                "node s2 r=1.42M c=2.63p\n"
                "node ra r=344k c=89.8f\n"
                "node rb r=415k c=60.4f\n"
                "node vo r=7.97k c=923f\n"
                "gm gq ra -> rb 66.7u\n"
                "gm gr rb -> ra -78.9u\n"
                "gm g1 vin -> s1 -2.5m\n"
                "gm g2 s1 -> s2 -56.6u\n"
                "gm ga s2 -> ra 31.3u\n"
                "gm go ra -> vo -741u\n"
                "res fb vo vin 257\n"
                "loop main negative vin s1 s2 ra vo\n"
                "loop tank negative ra rb\n"
                "break g1\n");
    assert_int_equal(x.r.tf.nzeros, 1);
    assert_crel(x.r.tf.zeros[0], -1.0 / (415e3 * 60.4e-15), 1e-9);
    assert_int_equal(check_accuracy_warning(&x.r), 0);
    release(&x);
}

/* Net positive feedback, one pole: T(s) = -A/(1 + s/p) with p = 1/(RC).
 * Its phase starts on -180 degrees at f = 0 and falls from there to -270,
 * so the only phase crossing is at DC, with GM = -20 log10 A (SPEC 1: every
 * frequency where the phase is -180 + 360 m); a gain 1/A higher makes
 * 1 + T(0) = 0, a closed-loop pole at s = 0. The closed loop has its pole
 * at s = -p (1 - A): stable exactly for A < 1. For A > 1, |T| = 1 at
 * f = p sqrt(A^2 - 1) with PM = -atan(sqrt(A^2 - 1)) (closed forms, worked
 * by hand). */
static void test_positive_feedback_gain_margin_at_dc(void **state)
{
    (void)state;
    const double R = 10e3, C = 1.6e-9;
    const double gains[] = { 0.5, 0.9, 2.0 };
    for (int k = 0; k < 3; k++) {
        double A = gains[k], p = 1 / (2 * PI_ * R * C);
        run x;
        analyse(&x,
                "node x r=%.17g c=%.17g\n"
                "node y r=1k\n"
                "gm gf y -> x %.17g\n"
                "gm gb x -> y 1m\n"
                "loop main positive x y\n",
                R, C, A / R);
        assert_rel(x.r.tf.dc, -A, 1e-12);
        assert_int_equal(x.r.mg.nphase, 1);
        margin_point g = best_phase(&x);
        assert_true(g.hz == 0);
        assert_rel(g.value, -20 * log10(A), 1e-12);
        assert_int_equal(x.r.stable, A < 1);
        if (A < 1) {
            assert_int_equal(x.r.mg.ncross, 0);
        } else {
            margin_point c = best_cross(&x);
            assert_rel(c.hz, p * sqrt(A * A - 1), 1e-8);
            assert_rel(c.value, -atan(sqrt(A * A - 1)) * DEG_, 1e-7);
        }
        release(&x);
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_single_rc_crossover_and_phase_margin),
        cmocka_unit_test(test_single_rc_unwrapped_phase),
        cmocka_unit_test(test_two_pole_crossover_and_phase_margin),
        cmocka_unit_test(test_three_pole_gain_margin),
        cmocka_unit_test(test_second_order_phase_margin),
        cmocka_unit_test(test_output_node_does_not_change_margins),
        cmocka_unit_test(test_no_crossover),
        cmocka_unit_test(test_exact_scan_three_poles),
        cmocka_unit_test(test_wrong_structure_noticed),
        cmocka_unit_test(test_zero_with_poles_decades_apart),
        cmocka_unit_test(test_positive_feedback_gain_margin_at_dc),
    };
    return cmocka_run_group_tests_name("margins", tests, NULL, NULL);
}
