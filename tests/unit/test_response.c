/* Unit tests of the closed-loop responses (response.c, step.c, modal.c)
 * against closed forms from outside the project: first- and second-order
 * step responses, closed-loop peaking, a right-half-plane zero's undershoot,
 * hand-written dividers and RC couplings, a repeated pole. */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>
#include <gsl/gsl_sf_lambert.h>

#include "loopwise/step.h"

#include "testutil.h"

#define TWO_PI (2 * PI_)

/* A small loop of its own, decoupled from every path under test: its
 * closed-loop poles belong to the network but H cannot see them. */
#define AUX_LOOP                                                                         \
    "node p r=10k c=1p\nnode q r=10k c=1p\ngm gpq p -> q 1m\ngm gqp q -> p -1m\n"        \
    "loop aux negative p q\nbreak gpq\n"

typedef struct resp_run {
    run x;
    response *rs;
    response_result res;
    step_form *sf;
    step_result st;
    int have_step;
} resp_run;

static int node_of(const desc *d, const char *name)
{
    int k = desc_find_node(d, name);
    assert_true(k >= 0);
    return k;
}

/* Runs the response at `to` from input `from` (or, when from is NULL, the
 * current into node `inject`), with its step response when stable. */
static void respond(resp_run *z, const char *to, const char *from, const char *inject)
{
    lw_error err;
    lw_error_clear(&err);
    response_src src;
    if (from) {
        src.kind = RESP_INPUT;
        src.index = desc_find_input(z->x.d, from);
        assert_true(src.index >= 0);
    } else {
        src.kind = RESP_INJECT;
        src.index = node_of(z->x.d, inject);
    }
    assert_int_equal(response_new(z->x.m, node_of(z->x.d, to), &z->rs, &err), 0);
    assert_int_equal(response_source(z->rs, src, &err), 0);
    assert_int_equal(response_analyse(z->rs, z->x.r.cl, z->x.r.ncl, NULL, &z->res, &err), 0);
    z->have_step = 0;
    if (z->x.r.stable) {
        assert_int_equal(step_form_new(z->rs, &z->sf, &err), 0);
        assert_int_equal(step_run(z->sf, &z->res, &z->st, &err), 0);
        z->have_step = 1;
    }
}

static void done(resp_run *z)
{
    step_form_free(z->sf);
    response_result_free(&z->res);
    response_free(z->rs);
    release(&z->x);
}

/* A divider into an RC node: vin - R1 - out, out r=R2 c=C. H = k/(1 + s tau),
 * k = R2/(R1 + R2), tau = (R1 || R2) C (nodal analysis by hand). The step of
 * a single pole: 1% at tau ln 100, 0.1% at tau ln 1000, 10-90% in tau ln 9
 * (any circuits text; from memory). */
static void one_pole(void **state)
{
    (void)state;
    resp_run z;
    memset(&z, 0, sizeof z);
    const double R1 = 3e3, R2 = 1e3, C = 2e-9, k = R2 / (R1 + R2), tau = R1 * R2 / (R1 + R2) * C;
    analyse(&z.x, "input vin\nnode out r=%.17g c=%.17g\nres r1 vin out %.17g\n" AUX_LOOP, R2, C,
            R1);
    respond(&z, "out", "vin", NULL);
    assert_rel(z.res.dc, k, 1e-12);
    assert_true(z.res.hinf == 0);
    assert_true(z.res.peak_hz == 0);
    assert_rel(z.res.bandwidth_hz, 1 / (TWO_PI * tau), 1e-9);
    /* the auxiliary loop's two poles are there, and not in H */
    assert_int_equal(z.x.r.ncl, 3);
    int hidden = 0;
    for (int k2 = 0; k2 < z.x.r.ncl; k2++)
        hidden += z.res.tf.hidden[k2];
    assert_int_equal(hidden, 2);
    assert_int_equal(z.res.tf.nzeros, 0);
    assert_rel(z.st.final, k, 1e-12);
    assert_true(z.st.initial == 0);
    assert_true(isnan(z.st.peak_time));
    assert_true(z.st.overshoot_pct == 0 && z.st.undershoot_pct == 0);
    assert_rel(z.st.settle1, tau * log(100.0), 1e-9);
    assert_rel(z.st.settle01, tau * log(1000.0), 1e-9);
    assert_rel(z.st.rise_time, tau * log(9.0), 1e-9);
    assert_true(z.st.has_slow);
    assert_crel(z.st.slow_pole, -1 / tau, 1e-9);
    assert_rel(z.st.slow_amplitude, 1.0, 1e-9);
    done(&z);
    /* the same node driven by a current: H = R1 || R2 / (1 + s tau) ohm */
    memset(&z, 0, sizeof z);
    analyse(&z.x, "input vin\nnode out r=%.17g c=%.17g\nres r1 vin out %.17g\n" AUX_LOOP, R2, C,
            R1);
    respond(&z, "out", NULL, "out");
    assert_rel(z.res.dc, R1 * R2 / (R1 + R2), 1e-12);
    assert_rel(z.st.settle1, tau * log(100.0), 1e-9);
    done(&z);
}

/* The standard second-order loop: an integrator x (c1, no resistance) and a
 * pole at out, closed by unity feedback; vin adds at x. Closed loop
 * H = wn^2 / (s^2 + 2 zeta wn s + wn^2). Closed forms (textbook, from
 * memory): overshoot exp(-pi zeta / sqrt(1 - zeta^2)), peak time
 * pi / (wn sqrt(1 - zeta^2)); frequency peak 1 / (2 zeta sqrt(1 - zeta^2)) at
 * wn sqrt(1 - 2 zeta^2) when zeta < 1/sqrt(2); the open loop
 * wn^2 / (s (s + 2 zeta wn)) has phase margin
 * atan(2 zeta / sqrt(sqrt(1 + 4 zeta^4) - 2 zeta^2)). */
static void second_order_step(void **state)
{
    (void)state;
    const double zetas[] = { 0.15, 0.3, 0.5, 0.6, 0.8 };
    const double wn = TWO_PI * 2e6, c = 1e-12, g1 = 1e-3;
    for (size_t k = 0; k < sizeof zetas / sizeof *zetas; k++) {
        double zeta = zetas[k], wd = wn * sqrt(1 - zeta * zeta);
        resp_run z;
        memset(&z, 0, sizeof z);
        analyse(&z.x, "input vin\nnode x r=inf c=%.17g\nnode out r=%.17g c=%.17g\n"
                "gm gi vin -> x %.17g\ngm gf out -> x %.17g\ngm ga x -> out %.17g\n"
                "loop main negative x out\nbreak ga\n", c, 1 / (2 * zeta * wn * c), c, g1, -g1,
                wn * wn * c * c / g1);
        respond(&z, "out", "vin", NULL);
        assert_rel(z.res.dc, 1.0, 1e-12);
        assert_rel(z.st.overshoot_pct, 100 * exp(-PI_ * zeta / sqrt(1 - zeta * zeta)), 1e-9);
        assert_rel(z.st.peak_time, PI_ / wd, 1e-9);
        assert_rel(z.st.peak_value, 1 + exp(-PI_ * zeta / sqrt(1 - zeta * zeta)), 1e-12);
        double pm = atan(2 * zeta / sqrt(sqrt(1 + 4 * pow(zeta, 4)) - 2 * zeta * zeta)) * DEG_;
        assert_rel(z.x.r.mg.cross[z.x.r.mg.best_cross].value, pm, 1e-9);
        if (zeta < 1 / sqrt(2.0)) {
            assert_rel(z.res.peak_value, 1 / (2 * zeta * sqrt(1 - zeta * zeta)), 1e-9);
            assert_rel(z.res.peak_hz, wn * sqrt(1 - 2 * zeta * zeta) / TWO_PI, 1e-9);
        } else {
            assert_true(z.res.peak_hz == 0);
        }
        /* the slow mode is the pair itself, its envelope 1/sqrt(1 - zeta^2)
         * of the final value at 0+ (the residue of wn^2/(s (s - p)) at p) */
        assert_crel(z.st.slow_pole, -zeta * wn + I * wd, 1e-9);
        assert_rel(z.st.slow_amplitude, 1 / sqrt(1 - zeta * zeta), 1e-9);
        done(&z);
    }
}

/* Two RC stages in a ring with the input summed at the first: T(0) = A,
 * H = A / ((1 + s tau1)(1 + s tau2) + A). With wn^2 = (1 + A)/(tau1 tau2) and
 * 2 zeta wn = 1/tau1 + 1/tau2, the closed-loop peak over DC is
 * 1 / (2 zeta sqrt(1 - zeta^2)) at wn sqrt(1 - 2 zeta^2) (the second-order
 * result, from memory), H(0) = A / (1 + A). */
static void two_pole_peaking(void **state)
{
    (void)state;
    const double R1 = 100e3, C1 = 5e-12, R2 = 20e3, C2 = 1e-12, g1 = 2e-3, g2 = 1e-3;
    const double A = g1 * R1 * g2 * R2, t1 = R1 * C1, t2 = R2 * C2;
    const double wn = sqrt((1 + A) / (t1 * t2)), zeta = (1 / t1 + 1 / t2) / (2 * wn);
    resp_run z;
    memset(&z, 0, sizeof z);
    analyse(&z.x, "input vin\nnode a r=%.17g c=%.17g\nnode b r=%.17g c=%.17g\n"
            "gm g1 a -> b %.17g\ngm g2 b -> a %.17g\ngm gi vin -> a %.17g\n"
            "loop ring negative a b\nbreak g1\n", R1, C1, R2, C2, g1, -g2, g2);
    respond(&z, "b", "vin", NULL);
    assert_true(zeta < 0.5);
    assert_rel(z.res.dc, A / (1 + A), 1e-12);
    assert_rel(z.res.peak_value / z.res.dc, 1 / (2 * zeta * sqrt(1 - zeta * zeta)), 1e-9);
    assert_rel(z.res.peak_hz, wn * sqrt(1 - 2 * zeta * zeta) / TWO_PI, 1e-9);
    done(&z);
}

/* A slow path and a fast one of opposite sign summed at out:
 * H = R2 (K1 - K3 (1 + s tau1)) / ((1 + s tau1)(1 + s tau2)),
 * K1 = g1 R1 g2, K3 = g3: a right-half-plane zero at (K1 - K3)/(K3 tau1).
 * With tz = K3 tau1/(K1 - K3), partial fractions of H(s)/s (by hand) give
 * y/H(0) = 1 - (tau1 + tz)/(tau1 - tau2) e^(-t/tau1) + (tau2 + tz)/(tau1 - tau2)
 * e^(-t/tau2), whose minimum is where y' = 0:
 * t* = ln(tau1 (tau2 + tz) / (tau2 (tau1 + tz))) / (1/tau2 - 1/tau1). */
static void rhp_zero_undershoot(void **state)
{
    (void)state;
    const double R1 = 100e3, C1 = 10e-12, R2 = 10e3, C2 = 1e-12, g1 = 1e-3, g2 = 1e-3, g3 = 20e-3;
    const double t1 = R1 * C1, t2 = R2 * C2, K1 = g1 * R1 * g2, K3 = g3, tz = K3 * t1 / (K1 - K3);
    resp_run z;
    memset(&z, 0, sizeof z);
    analyse(&z.x, "input vin\nnode n1 r=%.17g c=%.17g\nnode out r=%.17g c=%.17g\n"
            "gm g1 vin -> n1 %.17g\ngm g2 n1 -> out %.17g\ngm g3 vin -> out %.17g\n" AUX_LOOP,
            R1, C1, R2, C2, g1, g2, -g3);
    respond(&z, "out", "vin", NULL);
    double h0 = R2 * (K1 - K3);
    assert_rel(z.res.dc, h0, 1e-12);
    assert_int_equal(z.res.tf.nzeros, 1);
    assert_crel(z.res.tf.zeros[0], 1 / tz, 1e-9);
    double a = (t1 + tz) / (t1 - t2), b = (t2 + tz) / (t1 - t2);
    double ts = log(t1 * (t2 + tz) / (t2 * (t1 + tz))) / (1 / t2 - 1 / t1);
    double ymin = 1 - a * exp(-ts / t1) + b * exp(-ts / t2);
    assert_true(ymin < 0);
    assert_rel(z.st.undershoot_pct, -100 * ymin, 1e-9);
    done(&z);
}

/* A divider with a capacitor across its top: H = (1/R1 + s Cf) /
 * (1/R1 + 1/R2 + s (C + Cf)), so H(0) = R2/(R1 + R2), H(inf) = Cf/(C + Cf),
 * one pole tau = (R1 || R2)(C + Cf), and y(t) = H0 + (Hinf - H0) e^(-t/tau)
 * (by hand). Overcompensated (Hinf > H0): the peak is at 0+. */
static void divider_feedthrough(void **state)
{
    (void)state;
    const double R1 = 9e3, R2 = 1e3, C = 1e-12, Cf = 0.5e-12;
    const double h0 = R2 / (R1 + R2), hi = Cf / (C + Cf), tau = R1 * R2 / (R1 + R2) * (C + Cf);
    resp_run z;
    memset(&z, 0, sizeof z);
    analyse(&z.x, "input vin\nnode out r=%.17g c=%.17g\nres r1 vin out %.17g\n"
            "cap cf out vin %.17g\n" AUX_LOOP, R2, C, R1, Cf);
    respond(&z, "out", "vin", NULL);
    assert_rel(z.res.dc, h0, 1e-12);
    assert_rel(z.res.hinf, hi, 1e-12);
    assert_rel(z.st.initial, hi, 1e-12);
    assert_rel(z.st.peak_value, hi, 1e-12);
    assert_true(z.st.peak_time == 0);
    assert_rel(z.st.overshoot_pct, 100 * (hi - h0) / h0, 1e-9);
    assert_true(isnan(z.st.rise_time)); /* y starts beyond 10% */
    assert_rel(z.st.settle1, tau * log((hi - h0) / (0.01 * h0)), 1e-9);
    /* |H| rises from H0 to Hinf: the largest value only as f grows */
    assert_true(isnan(z.res.peak_hz));
    assert_rel(z.res.peak_value, hi, 1e-12);
    /* the zero of the numerator, at -1/(R1 Cf) */
    assert_int_equal(z.res.tf.nzeros, 1);
    assert_crel(z.res.tf.zeros[0], -1 / (R1 * Cf), 1e-9);
    done(&z);
}

/* AC coupling: vin - Cc - out, out r=R c=C. H = s R Cc / (1 + s R (C + Cc)):
 * H(0) = 0, H(inf) = Cc/(C + Cc), y(t) = H(inf) e^(-t/tau) (by hand). With a
 * final value of 0 the band is 1% of the peak |y| = y(0+). */
static void rc_coupling(void **state)
{
    (void)state;
    const double R = 50e3, C = 3e-12, Cc = 1e-12, tau = R * (C + Cc), hi = Cc / (C + Cc);
    resp_run z;
    memset(&z, 0, sizeof z);
    analyse(&z.x, "input vin\nnode out r=%.17g c=%.17g\ncap cc vin out %.17g\n" AUX_LOOP, R, C,
            Cc);
    respond(&z, "out", "vin", NULL);
    assert_true(z.res.dc == 0);
    assert_int_equal(z.res.tf.origin, 1);
    assert_rel(z.res.hinf, hi, 1e-12);
    assert_true(isnan(z.res.bandwidth_hz));
    assert_true(z.st.final == 0);
    assert_true(isnan(z.st.overshoot_pct) && isnan(z.st.undershoot_pct));
    assert_true(isnan(z.st.rise_time));
    assert_rel(z.st.peak_value, hi, 1e-12);
    assert_true(z.st.peak_time == 0);
    assert_rel(z.st.settle1, tau * log(100.0), 1e-9);
    assert_rel(z.st.settle01, tau * log(1000.0), 1e-9);
    done(&z);
}

/* Two identical RC stages in cascade: H = K / (1 + s tau)^2, a double pole
 * (a Jordan block: no partial fractions with simple residues). The step is
 * y/K = 1 - (1 + x) e^-x, x = t/tau (by hand); (1 + x) e^-x = e has the root
 * x = -1 - W_-1(-e/exp(1)) (Lambert's W, lower branch; GSL's
 * gsl_sf_lambert_Wm1), which gives the settling and rise times. */
static double lambert_x(double level)
{
    return -1 - gsl_sf_lambert_Wm1(-level / exp(1.0));
}

static void repeated_pole(void **state)
{
    (void)state;
    const double R = 10e3, C = 1e-12, g1 = 1e-3, g2 = 2e-3, tau = R * C, K = g1 * R * g2 * R;
    resp_run z;
    memset(&z, 0, sizeof z);
    analyse(&z.x, "input vin\nnode n1 r=%.17g c=%.17g\nnode n2 r=%.17g c=%.17g\n"
            "gm g1 vin -> n1 %.17g\ngm g2 n1 -> n2 %.17g\n" AUX_LOOP, R, C, R, C, g1, g2);
    respond(&z, "n2", "vin", NULL);
    assert_rel(z.st.final, K, 1e-12);
    assert_rel(z.st.settle1, tau * lambert_x(0.01), 1e-9);
    assert_rel(z.st.settle01, tau * lambert_x(0.001), 1e-9);
    assert_rel(z.st.rise_time, tau * (lambert_x(0.1) - lambert_x(0.9)), 1e-9);
    assert_true(isnan(z.st.peak_time) && z.st.overshoot_pct == 0);
    assert_crel(z.st.slow_pole, -1 / tau, 1e-6);
    done(&z);
    /* the loop of second_order_step with zeta = 1: a double closed-loop pole
     * at -wn that no eigenvalue routine returns exactly (it splits by about
     * sqrt(eps)); y = 1 - (1 + wn t) e^(-wn t), the same closed form */
    const double wn = TWO_PI * 2e6, c = 1e-12, gi = 1e-3;
    memset(&z, 0, sizeof z);
    analyse(&z.x, "input vin\nnode x r=inf c=%.17g\nnode out r=%.17g c=%.17g\n"
            "gm gi vin -> x %.17g\ngm gf out -> x %.17g\ngm ga x -> out %.17g\n"
            "loop main negative x out\nbreak ga\n", c, 1 / (2 * wn * c), c, gi, -gi,
            wn * wn * c * c / gi);
    respond(&z, "out", "vin", NULL);
    assert_rel(z.st.settle1, lambert_x(0.01) / wn, 1e-9);
    assert_rel(z.st.settle01, lambert_x(0.001) / wn, 1e-9);
    assert_rel(z.st.rise_time, (lambert_x(0.1) - lambert_x(0.9)) / wn, 1e-9);
    assert_true(isnan(z.st.peak_time));
    done(&z);
    /* and a third pole at -wn after it (an RC stage n3 driven from out): a
     * triple pole, split by about eps^(1/3) by any eigenvalue routine, whose
     * residues would be 1e10 times the answer. y/K = 1 - e^-x (1 + x + x^2/2),
     * x = wn t (by hand); its 1% time from the closed form by bisection */
    const double r3 = 10e3, c3 = 1 / (wn * r3), g3 = 1e-4;
    memset(&z, 0, sizeof z);
    analyse(&z.x, "input vin\nnode x r=inf c=%.17g\nnode out r=%.17g c=%.17g\n"
            "node n3 r=%.17g c=%.17g\ngm gi vin -> x %.17g\ngm gf out -> x %.17g\n"
            "gm ga x -> out %.17g\ngm g3 out -> n3 %.17g\nloop main negative x out\n"
            "break ga\n", c, 1 / (2 * wn * c), c, r3, c3, gi, -gi, wn * wn * c * c / gi, g3);
    respond(&z, "n3", "vin", NULL);
    double K3 = g3 * r3;
    assert_rel(z.st.final, K3, 1e-12);
    const double xs[] = { 0.25, 1, 2.5, 6, 12 };
    for (int k = 0; k < 5; k++) {
        double x = xs[k], want = K3 * (1 - exp(-x) * (1 + x + x * x / 2));
        assert_true(fabs(step_value(z.sf, &z.st, x / wn) - want) <= 1e-10 * K3);
    }
    double lo = 1, hi = 30;
    for (int it = 0; it < 200; it++) {
        double mid = 0.5 * (lo + hi);
        *(exp(-mid) * (1 + mid + mid * mid / 2) > 0.01 ? &lo : &hi) = mid;
    }
    assert_rel(z.st.settle1, lo / wn, 1e-9);
    done(&z);
}

/* A doublet: H = (1 + s/z)/((1 + s/p1)(1 + s/p2)) with the zero 3% above the
 * slow pole p2, built as two first-order paths summed at out, w1/(1 + s/p1)
 * + w2/(1 + s/p2) (matching numerators: w1 + w2 = 1, w1/p2 + w2/p1 = 1/z). The
 * step's p2 term is -(1 - p2/z)/(1 - p2/p1) e^(-p2 t) (partial fractions of
 * H(s)/s, by hand): 3% of the final value, lasting longest above 0.1%, and a
 * zero within 10% of it: the slow mode, flagged as a doublet (SPEC 6). */
static void doublet(void **state)
{
    (void)state;
    const double R = 10e3, C1 = 5e-12, C2 = 100e-12, p1 = 1 / (R * C1), p2 = 1 / (R * C2);
    const double z = 1.03 * p2, w1 = (1 / z - 1 / p1) / (1 / p2 - 1 / p1), w2 = 1 - w1;
    resp_run x;
    memset(&x, 0, sizeof x);
    analyse(&x.x, "input vin\nnode n1 r=%.17g c=%.17g\nnode n2 r=%.17g c=%.17g\n"
            "node out r=1k\ngm g1 vin -> n1 %.17g\ngm g2 vin -> n2 %.17g\n"
            "gm s1 n1 -> out 1m\ngm s2 n2 -> out 1m\n" AUX_LOOP, R, C1, R, C2, w1 / R,
            w2 / R);
    respond(&x, "out", "vin", NULL);
    assert_rel(x.st.final, 1.0, 1e-12);
    assert_int_equal(x.res.tf.nzeros, 1);
    assert_crel(x.res.tf.zeros[0], -z, 1e-9);
    assert_true(x.st.has_slow);
    assert_crel(x.st.slow_pole, -p2, 1e-9);
    assert_rel(x.st.slow_amplitude, (1 - p2 / z) / (1 - p2 / p1), 1e-9);
    assert_true(x.st.slow_doublet);
    done(&x);
}

/* --inject each: every node of the one-pole network; 'out' is the RC node
 * (R1 || R2 and tau as in one_pole); the auxiliary loop's nodes do not
 * reach it. */
static void inject_each(void **state)
{
    (void)state;
    const double R1 = 3e3, R2 = 1e3, C = 2e-9, tau = R1 * R2 / (R1 + R2) * C;
    resp_run z;
    memset(&z, 0, sizeof z);
    analyse(&z.x, "input vin\nnode out r=%.17g c=%.17g\nres r1 vin out %.17g\n" AUX_LOOP, R2, C,
            R1);
    respond(&z, "out", NULL, "out");
    int nodes[3] = { 0, 1, 2 };
    step_each_item items[3];
    lw_error err;
    assert_int_equal(step_each(z.rs, z.sf, nodes, 3, items, &err), 0);
    int out = node_of(z.x.d, "out");
    for (int k = 0; k < 3; k++) {
        if (items[k].node == out) {
            assert_true(items[k].reaches);
            assert_rel(items[k].final, R1 * R2 / (R1 + R2), 1e-12);
            assert_true(items[k].overshoot_pct == 0);
            assert_rel(items[k].settle1, tau * log(100.0), 1e-9);
        } else {
            assert_false(items[k].reaches);
            assert_true(items[k].final == 0 && isnan(items[k].overshoot_pct));
        }
    }
    done(&z);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(one_pole),
        cmocka_unit_test(second_order_step),
        cmocka_unit_test(two_pole_peaking),
        cmocka_unit_test(rhp_zero_undershoot),
        cmocka_unit_test(divider_feedthrough),
        cmocka_unit_test(rc_coupling),
        cmocka_unit_test(repeated_pole),
        cmocka_unit_test(doublet),
        cmocka_unit_test(inject_each),
    };
    return cmocka_run_group_tests_name("response", tests, NULL, NULL);
}
