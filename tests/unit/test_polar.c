/* Unit tests for the polar plot's curve: the compressed radius against its
 * definition (polar.h), and the sampled points of T(j2πf) against the
 * closed forms of networks worked by nodal analysis by hand, including how
 * closely the drawn polyline follows the true curve through a sharp
 * resonance and how a pole on the imaginary axis is stepped around. */
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

#include "loopwise/polar.h"

#include "testutil.h"

#define TWO_PI_ (2.0 * PI_)

/* The radius as polar.h defines it, written out here: |T| up to 1, then
 * 1 + (20 log10 |T|)/40. */
static double rho_def(double mag)
{
    return mag <= 1 ? mag : 1 + 20 * log10(mag) / 40;
}

static double complex drawn(double complex t)
{
    return t == 0 ? 0 : rho_def(cabs(t)) * cexp(I * carg(t));
}

static void test_radius(void **state)
{
    (void)state;
    /* inside the unit circle the plane is as it is */
    assert_rel(polar_radius(0.5, INFINITY), 0.5, 1e-15);
    assert_rel(polar_radius(1.0, INFINITY), 1.0, 1e-15);
    /* half a unit per 20 dB: 20 dB -> 1.5, 80 dB -> 3, 160 dB -> 5 */
    assert_rel(polar_radius(10.0, INFINITY), 1.5, 1e-15);
    assert_rel(polar_radius(1e4, INFINITY), 3.0, 1e-15);
    assert_rel(polar_radius(1e8, INFINITY), 5.0, 1e-15);
    /* continuous at |T| = 1 and rising */
    assert_rel(polar_radius(1.0 + 1e-12, INFINITY), 1.0, 1e-11);
    assert_true(polar_radius(2.0, INFINITY) > polar_radius(1.9, INFINITY));
    /* the clamp, and the inverse below it */
    assert_rel(polar_radius(1e12, POLAR_RHO_MAX), POLAR_RHO_MAX, 1e-15);
    assert_rel(polar_unmap_radius(1.5), 10.0, 1e-13);
    assert_rel(polar_unmap_radius(0.25), 0.25, 1e-15);
    /* every angle is kept: the phase reads as drawn */
    const double complex ts[] = { -1.0, 3.0 - 4.0 * I, -0.2 + 0.1 * I, 1e5 * I, -7e3 - 2e3 * I };
    for (int k = 0; k < 5; k++) {
        double complex p = polar_map(ts[k], INFINITY);
        assert_rel(carg(p), carg(ts[k]), 1e-14);
        assert_rel(cabs(p), rho_def(cabs(ts[k])), 1e-14);
    }
    assert_true(polar_map(0, INFINITY) == 0);
    /* -1 stays at -1 */
    assert_crel(polar_map(-1.0, INFINITY), -1.0, 1e-15);
}

/* The distance from p to the segment a-b. */
static double seg_dist(double complex p, double complex a, double complex b)
{
    double complex d = b - a;
    double len2 = creal(d) * creal(d) + cimag(d) * cimag(d);
    double s = len2 > 0 ? (creal(p - a) * creal(d) + cimag(p - a) * cimag(d)) / len2 : 0;
    s = s < 0 ? 0 : s > 1 ? 1 : s;
    return cabs(p - (a + s * d));
}

/* Checks every sample against the closed form t_of(f) and that the true
 * curve at a quarter, half and three quarters of each step (in log f)
 * stays within twice the tolerance of the drawn chord; returns the
 * largest |T| sampled. */
static double check_samples(const polar_curve *c, double complex (*t_of)(double, const double *),
                            const double *par, double flo, double fhi)
{
    double peak = 0;
    assert_true(c->n > 10);
    assert_rel(c->hz[0], flo, 1e-9);
    assert_rel(c->hz[c->n - 1], fhi, 1e-9);
    for (int k = 0; k < c->n; k++) {
        assert_crel(c->t[k], t_of(c->hz[k], par), 1e-8);
        peak = fmax(peak, cabs(c->t[k]));
        if (k == 0 || c->gap[k])
            continue;
        assert_true(c->hz[k] > c->hz[k - 1]);
        double complex a = drawn(c->t[k - 1]), b = drawn(c->t[k]);
        for (int q = 1; q <= 3; q++) {
            double f = c->hz[k - 1] * pow(c->hz[k] / c->hz[k - 1], q / 4.0);
            double complex p = drawn(t_of(f, par));
            double tol = cabs(p + 1.0) < POLAR_NEAR ? POLAR_TOL_NEAR : POLAR_TOL;
            if (!(seg_dist(p, a, b) <= 2 * tol))
                print_error("at %g Hz the curve is %g from its chord (tolerance %g)\n", f,
                            seg_dist(p, a, b), tol);
            assert_true(seg_dist(p, a, b) <= 2 * tol);
        }
    }
    return peak;
}

/* single_rc: T = gm R / (1 + j 2 pi f R C) (testutil.h, by hand). */
static double complex one_pole(double f, const double *p)
{
    return p[2] * p[0] / (1.0 + I * TWO_PI_ * f * p[0] * p[1]);
}

static void test_one_pole(void **state)
{
    (void)state;
    const double par[3] = { 100e3, 10e-12, 1e-3 }; /* R, C, gm: T(0) = 100 */
    run x;
    single_rc(&x, par[0], par[1], par[2]);
    polar_curve c;
    lw_error err;
    assert_int_equal(polar_curve_sample(x.r.lg, &x.r.tf, x.r.mg.fmin_hz, x.r.mg.fmax_hz, &c, &err),
                     LW_OK);
    assert_int_equal(c.origin_order, 0);
    assert_int_equal(c.coarse, 0);
    double peak = check_samples(&c, one_pole, par, x.r.mg.fmin_hz, x.r.mg.fmax_hz);
    /* a one-pole curve is a half circle from T(0) = 100 to 0: no gap */
    assert_rel(peak, 100.0, 1e-5);
    for (int k = 0; k < c.n; k++)
        assert_int_equal(c.gap[k], 0);
    polar_curve_free(&c);
    release(&x);
}

/* A gyrator resonator inside the loop (by hand): nodes a and b, each R to
 * ground and C, a -> b with g and b -> a with -g; x (1 kohm) drives a
 * with gi and b drives x with -1 mS:
 *   T = g gi / (Y^2 + g^2),  Y = j w C + 1/R,
 * poles (-1/R +- j g)/C, Q about gR/2, the peak |T| about gi R / 2. */
static const char resonator[] =
    "node x r=1k\n"
    "node a r=%.17g c=%.17g\n"
    "node b r=%.17g c=%.17g\n"
    "gm gi x -> a %.17g\n"
    "gm gab a -> b %.17g\n"
    "gm gba b -> a -%.17g\n"
    "gm go b -> x -1m\n"
    "loop main negative x a b\n"
    "break gi\n";

static double complex gyrator_t(double f, const double *p)
{
    double R = p[0], C = p[1], g = p[2], gi = p[3];
    double complex Y = I * TWO_PI_ * f * C + (isinf(R) ? 0 : 1 / R);
    return g * gi / (Y * Y + g * g);
}

static void test_resonance(void **state)
{
    (void)state;
    const double par[4] = { 1e6, 1e-12, 1e-3, 0.1e-3 }; /* Q about 500 at 159 MHz */
    run x;
    analyse(&x, resonator, par[0], par[1], par[0], par[1], par[3], par[2], par[2]);
    polar_curve c;
    lw_error err;
    assert_int_equal(polar_curve_sample(x.r.lg, &x.r.tf, x.r.mg.fmin_hz, x.r.mg.fmax_hz, &c, &err),
                     LW_OK);
    double peak = check_samples(&c, gyrator_t, par, x.r.mg.fmin_hz, x.r.mg.fmax_hz);
    /* the top of the resonance, where |Y^2 + g^2| is least: on a fine grid
     * over the 0.2% band around g/(2 pi C) */
    double f0 = par[2] / (TWO_PI_ * par[1]), top = 0;
    for (int k = -20000; k <= 20000; k++)
        top = fmax(top, cabs(gyrator_t(f0 * (1 + 1e-7 * k), par)));
    assert_true(top > 40); /* about gi R / 2 = 50 */
    /* the drawn curve reaches it: within the tolerance at its radius */
    assert_true(rho_def(top) - rho_def(peak) <= POLAR_TOL);
    polar_curve_free(&c);
    release(&x);
}

/* The resonator without loss (R = inf): a pole pair of T on the imaginary
 * axis at g/(2 pi C). The curve stops short of it and goes on past it with
 * the gap marked, order 1. */
static void test_axis_pole(void **state)
{
    (void)state;
    const double par[4] = { INFINITY, 1e-12, 1e-3, 0.1e-3 };
    run x;
    analyse(&x,
            "node x r=1k\n"
            "node a r=inf c=%.17g\n"
            "node b r=inf c=%.17g\n"
            "gm gi x -> a %.17g\n"
            "gm gab a -> b %.17g\n"
            "gm gba b -> a -%.17g\n"
            "gm go b -> x -1m\n"
            "loop main negative x a b\n"
            "break gi\n",
            par[1], par[1], par[3], par[2], par[2]);
    polar_curve c;
    lw_error err;
    assert_int_equal(polar_curve_sample(x.r.lg, &x.r.tf, 1e6, 1e10, &c, &err), LW_OK);
    double f0 = par[2] / (TWO_PI_ * par[1]);
    int gaps = 0;
    for (int k = 0; k < c.n; k++) {
        assert_crel(c.t[k], gyrator_t(c.hz[k], par), 1e-6);
        if (!c.gap[k])
            continue;
        gaps++;
        assert_int_equal(c.gap[k], 1);
        assert_true(c.hz[k - 1] < f0 && c.hz[k] > f0);
        assert_rel(c.hz[k - 1], f0, 1e-5);
        assert_rel(c.hz[k], f0, 1e-5);
        /* below the pole T = g gi / (g^2 - (wC)^2) > 0 and huge, above it < 0 */
        assert_true(creal(c.t[k - 1]) > 1e3 && creal(c.t[k]) < -1e3);
    }
    assert_int_equal(gaps, 1);
    polar_curve_free(&c);
    release(&x);
}

/* second_order: T = wn^2 / (s (s + 2 zeta wn)), a pole at the origin. */
static double complex integrator_t(double f, const double *p)
{
    double complex s = I * TWO_PI_ * f;
    return p[0] * p[0] / (s * (s + 2 * p[1] * p[0]));
}

static void test_integrator(void **state)
{
    (void)state;
    const double par[2] = { 2 * PI_ * 1e6, 0.5 };
    run x;
    second_order(&x, par[0], par[1], 1e-12, 1e-12);
    polar_curve c;
    lw_error err;
    assert_int_equal(polar_curve_sample(x.r.lg, &x.r.tf, x.r.mg.fmin_hz, x.r.mg.fmax_hz, &c, &err),
                     LW_OK);
    assert_int_equal(c.origin_order, 1);
    check_samples(&c, integrator_t, par, x.r.mg.fmin_hz, x.r.mg.fmax_hz);
    /* at the lowest frequency T lies just below the negative imaginary
     * axis: arg T = -90 deg - atan(w / (2 zeta wn)) */
    double w = TWO_PI_ * c.hz[0];
    assert_rel(carg(c.t[0]), -PI_ / 2 - atan(w / (2 * par[1] * par[0])), 1e-9);
    polar_curve_free(&c);
    release(&x);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_radius),
        cmocka_unit_test(test_one_pole),
        cmocka_unit_test(test_resonance),
        cmocka_unit_test(test_axis_pole),
        cmocka_unit_test(test_integrator),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
