/* Unit tests of corners and Monte Carlo against closed forms and published
 * values. */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>
#include <gsl/gsl_cdf.h>

#include "loopwise/variation.h"

#include "testutil.h"
#define PI PI_
#define DEG (PI_ / 180.0)

static text_file *text_of(const char *src)
{
    text_file *t;
    lw_error err;
    assert_int_equal(text_from_buffer(src, strlen(src), &t, &err), 0);
    return t;
}


/* Thermal voltage kT/q at 300 K from the exact SI values of k and q
 * (CODATA 2018: k = 1.380649e-23 J/K, q = 1.602176634e-19 C): 25.852 mV,
 * the "25.85 mV at room temperature" of every device textbook. */
static void thermal_voltage(void **state)
{
    (void)state;
    desc *d = load_text("param t = 300\nparam u = vt(t)\nparam u2 = vt(2*t)\n"
                        "node a r=1k c=1p\nnode b r=1k c=1p\n"
                        "gm g1 a -> b 1m\ngm g2 b -> a -1m\nloop l negative a b\n");
    assert_rel(d->params[1].value, 1.380649e-23 * 300 / 1.602176634e-19, 1e-15);
    assert_true(fabs(d->params[1].value - 25.85e-3) < 0.005e-3);
    assert_rel(d->params[2].value, 2 * d->params[1].value, 1e-15);
    desc_free(d);
}

/* Clopper-Pearson against published and closed-form values. */
static void clopper_pearson(void **state)
{
    (void)state;
    double lo, hi, lower;
    /* zero failures in n trials: the one-sided 95% lower bound on the success
     * rate is 0.05^(1/n) exactly (closed form of the beta quantile), and
     * 1 - 0.05^(1/n) is close to 3/n, the "rule of three" (from memory). */
    for (int n = 10; n <= 100000; n *= 10) {
        mc_clopper_pearson(n, n, 0.05, &lo, &hi, &lower);
        assert_rel(lower, pow(0.05, 1.0 / n), 1e-9);
        assert_rel(lo, pow(0.025, 1.0 / n), 1e-9);
        assert_true(hi == 1.0);
        if (n >= 1000)
            assert_rel(1 - lower, 3.0 / n, 0.01);
    }
    /* 5 successes in 10: the exact 95% interval 0.187 to 0.813 (a textbook
     * value, from memory) */
    mc_clopper_pearson(5, 10, 0.05, &lo, &hi, &lower);
    assert_true(fabs(lo - 0.1871) < 5e-4);
    assert_true(fabs(hi - 0.8129) < 5e-4);
    /* no successes: the interval starts at 0 and ends at 1 - 0.025^(1/n) */
    mc_clopper_pearson(0, 20, 0.05, &lo, &hi, &lower);
    assert_true(lo == 0.0);
    assert_rel(hi, 1 - pow(0.025, 1.0 / 20), 1e-9);
}

/* The two-pole loop A/((1 + s/p1)(1 + s/p2)) with the dominant capacitor
 * normally distributed. The margin grows monotonically with the capacitor,
 * so the yield is P(C > C*) = 1 - Phi((C* - mu)/sigma), where C* is the
 * capacitor giving exactly the target (closed form:
 * th1 + th2 = 180 - PM, cos th1 cos th2 = 1/A, wc = p2 tan th2, p1 = wc/tan th1). */
static const char two_pole_text[] =
    "param cdom = 30p normal 6p\n"
    "node a r=100k c=cdom\n"
    "node b r=10k  c=1p\n"
    "gm g1 a -> b 1m\n"
    "gm g2 b -> a -10m\n"
    "loop l negative a b\n"
    "break g1\n";

static void yield_normal_cdf(void **state)
{
    (void)state;
    const double A = 1e-3 * 100e3 * 10e-3 * 10e3, R1 = 100e3, p2 = 1.0 / (10e3 * 1e-12);
    const double pm = 60, beta = (180 - pm) * DEG, diff = acos(2.0 / A - cos(beta));
    const double th1 = (beta + diff) / 2, th2 = (beta - diff) / 2;
    const double cstar = 1.0 / (R1 * p2 * tan(th2) / tan(th1));
    const double want = 1 - gsl_cdf_ugaussian_P((cstar - 30e-12) / 6e-12);
    text_file *t = text_of(two_pole_text);
    check_opts o = { 0 };
    design_goal g = { pm, NAN, 1 };
    mc_result r;
    lw_error err;
    const int n = 20000;
    assert_int_equal(montecarlo_run(t, "test.loop", NULL, 0, n, 12345, g, &o, NULL, &r, &err), 0);
    /* binomial spread of the estimate: 4 sigma */
    double tol = 4 * sqrt(want * (1 - want) / n);
    if (fabs(r.yield - want) > tol)
        print_error("yield %.5f, normal CDF %.5f (C* = %g)\n", r.yield, want, cstar);
    assert_true(fabs(r.yield - want) <= tol);
    assert_true(r.ci_lo <= r.yield && r.yield <= r.ci_hi);
    mc_result_free(&r);
    text_free(t);
}

/* Same seed, same answer, sample by sample; another seed, another draw. */
static void deterministic(void **state)
{
    (void)state;
    text_file *t = text_of(two_pole_text);
    check_opts o = { 0 };
    design_goal g = { 60, NAN, 1 };
    mc_result a, b, c;
    lw_error err;
    assert_int_equal(montecarlo_run(t, "t", NULL, 0, 500, 7, g, &o, NULL, &a, &err), 0);
    assert_int_equal(montecarlo_run(t, "t", NULL, 0, 500, 7, g, &o, NULL, &b, &err), 0);
    assert_int_equal(montecarlo_run(t, "t", NULL, 0, 500, 8, g, &o, NULL, &c, &err), 0);
    assert_memory_equal(a.values, b.values, sizeof(double) * 500);
    assert_true(memcmp(a.values, c.values, sizeof(double) * 500) != 0);
    mc_result_free(&a);
    mc_result_free(&b);
    mc_result_free(&c);
    text_free(t);
}

/* Corners: every combination of the range ends, worst first. With the
 * dominant capacitor the only corner param, the worst corner is its low end
 * and its margin is the closed form at that capacitance. */
static void corners_two_pole(void **state)
{
    (void)state;
    desc *d = load_text("param cdom = 30p corners 10p..50p\nparam r2 = 10k corners -10%..+10%\n"
                        "node a r=100k c=cdom\nnode b r=r2 c=1p\n"
                        "gm g1 a -> b 1m\ngm g2 b -> a -10m\nloop l negative a b\nbreak g1\n");
    check_opts o = { 0 };
    design_goal g = { 60, NAN, 1 };
    corner_result r;
    lw_error err;
    assert_int_equal(corners_run(d, &o, g, 2, &r, &err), 0);
    assert_int_equal(r.ncorners, 4);
    int w = r.order[0];
    assert_rel(r.values[w * 2 + 0], 10e-12, 1e-12);
    assert_rel(r.values[w * 2 + 1], 11e3, 1e-12); /* a slower second pole is worse */
    /* PM of A/((1+s/p1)(1+s/p2)) at that corner (closed form, from memory) */
    double A = 1e-3 * 100e3 * 10e-3 * 11e3, p1 = 1 / (100e3 * 10e-12), p2 = 1 / (11e3 * 1e-12);
    double a2 = 1 / (p1 * p1 * p2 * p2), b2 = 1 / (p1 * p1) + 1 / (p2 * p2);
    double wc = sqrt((-b2 + sqrt(b2 * b2 - 4 * a2 * (1 - A * A))) / (2 * a2));
    assert_rel(r.pts[w].pm_deg, 180 - (atan(wc / p1) + atan(wc / p2)) / DEG, 1e-8);
    for (int k = 1; k < 4; k++)
        assert_true(r.pts[r.order[k]].pm_deg >= r.pts[r.order[k - 1]].pm_deg);
    corner_result_free(&r);
    desc_free(d);
}

/* A percentage spread is of the nominal's size: for a negative nominal
 * -10%..+10% spans nominal - 10% |nominal| to nominal + 10% |nominal|
 * (an inverting stage's gm of -1m spreads to -1.1m..-0.9m), not an
 * inverted range. */
static void percent_of_negative_nominal(void **state)
{
    (void)state;
    desc *d = load_text("param g = -1m corners -10%..+10% uniform -20%..+20%\n"
                        "node a r=100k c=30p\nnode b r=10k c=1p\n"
                        "gm g1 a -> b g\ngm g2 b -> a 10m\nloop l negative a b\nbreak g1\n");
    const desc_spread *sp = &d->params[0].spread;
    assert_rel(sp->lo_v, -1.1e-3, 1e-12);
    assert_rel(sp->hi_v, -0.9e-3, 1e-12);
    assert_rel(sp->a_v, -1.2e-3, 1e-12);
    assert_rel(sp->b_v, -0.8e-3, 1e-12);
    desc_free(d);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(thermal_voltage),
        cmocka_unit_test(clopper_pearson),
        cmocka_unit_test(yield_normal_cdf),
        cmocka_unit_test(deterministic),
        cmocka_unit_test(corners_two_pole),
        cmocka_unit_test(percent_of_negative_nominal),
    };
    return cmocka_run_group_tests_name("variation", tests, NULL, NULL);
}
