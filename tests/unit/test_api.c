/* Unit tests of the public API (loopwise.h) against closed forms: a ring of
 * three equal inverting stages, each of gain a at DC with one pole p, read
 * from a buffer. Its loop gain is T = a^3 / (1 + s/p)^3 (worked out from
 * the stamps: each stage inverts and the three inversions make the loop
 * negative), so, from Routh-Hurwitz and the cube roots of -1:
 *   crossover      f = p sqrt(a^2 - 1)
 *   phase margin   180 - 3 atan(sqrt(a^2 - 1))      (degrees)
 *   gain margin    20 log10(8 / a^3), where the phase is -180 at f = p sqrt 3
 *   closed loop    s = -p (1 + a),  s = -p (1 - a/2) +/- j p a sqrt(3)/2
 *   stable while a < 2.
 * The description is also changed with lw_loop_set and lw_sweep_point, and
 * bad input gives the command line's message with its place. */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "loopwise/loopwise.h"

#define PI_ 3.14159265358979323846

static const char ring[] =
    "# three equal inverting stages in a ring\n"
    "param a = 1.5\n"
    "node n1 r=10k c=1p\n"
    "node n2 r=10k c=1p\n"
    "node n3 r=10k c=1p\n"
    "gm g1 n1 -> n2 -a/10k\n"
    "gm g2 n2 -> n3 -a/10k\n"
    "gm g3 n3 -> n1 -a/10k\n"
    "loop ring negative n1 n2 n3\n";

static const double P_HZ = 1 / (2 * PI_ * 10e3 * 1e-12); /* 15.9 MHz */

static void close_to(double got, double want, double rel)
{
    if (!(fabs(got - want) <= rel * fabs(want)))
        fail_msg("%.12g, expected %.12g (relative %.1e)", got, want, rel);
}

static lw_loop *parse_ring(void)
{
    lw_loop *l = NULL;
    lw_message msg;
    int rc = lw_loop_parse(ring, strlen(ring), "ring.loop", &l, &msg);
    if (rc)
        fail_msg("%s", msg.text);
    return l;
}

static void check_ring(lw_loop *l, double a)
{
    lw_check *c = NULL;
    lw_message msg;
    assert_int_equal(lw_check_run(l, 0, 0, &c, &msg), LW_OK);
    lw_margins m = lw_check_margins(c);
    close_to(m.dc_loop_gain, a * a * a, 1e-9);
    close_to(m.crossover_hz, P_HZ * sqrt(a * a - 1), 1e-8);
    close_to(m.phase_margin_deg, 180 - 3 * atan(sqrt(a * a - 1)) * 180 / PI_, 1e-8);
    close_to(m.gain_margin_db, 20 * log10(8 / (a * a * a)), 1e-8);
    close_to(m.phase_crossover_hz, P_HZ * sqrt(3), 1e-8);
    assert_int_equal(m.ncrossovers, 1);
    assert_int_equal(m.stable, a < 2);
    /* three poles at -p, one per node, each its own estimate */
    int n;
    const lw_root *r = lw_check_roots(c, LW_OPEN_LOOP_POLES, &n);
    assert_int_equal(n, 3);
    for (int k = 0; k < n; k++) {
        close_to(r[k].re_hz, -P_HZ, 1e-6);
        assert_non_null(r[k].node);
        close_to(r[k].estimate_hz, P_HZ, 1e-12);
    }
    r = lw_check_roots(c, LW_OPEN_LOOP_ZEROS, &n);
    assert_int_equal(n, 0);
    /* closed loop: sorted by magnitude, then imaginary part */
    r = lw_check_roots(c, LW_CLOSED_LOOP_POLES, &n);
    assert_int_equal(n, 3);
    close_to(r[0].re_hz, -P_HZ * (1 - a / 2), 1e-8);
    close_to(r[0].im_hz, -P_HZ * a * sqrt(3) / 2, 1e-8);
    close_to(r[1].im_hz, P_HZ * a * sqrt(3) / 2, 1e-8);
    close_to(r[2].re_hz, -P_HZ * (1 + a), 1e-8);
    assert_null(r[2].node);
    const lw_loop_verdict *v = lw_check_loops(c, &n);
    assert_int_equal(n, 1);
    assert_string_equal(v[0].name, "ring");
    assert_int_equal(v[0].negative, 1);
    close_to(v[0].dc_gain, a * a * a, 1e-9);
    assert_string_equal(lw_check_break(c), "g1");
    assert_true(isnan(lw_check_dominance_db(c)));
    /* the exit-code rule: a target above the margin, a gain margin target */
    double pm = m.phase_margin_deg;
    assert_int_equal(lw_check_verdict(c, NAN, NAN), a < 2 ? 0 : 1);
    assert_int_equal(lw_check_verdict(c, pm - 1, NAN), a < 2 ? 0 : 1);
    assert_int_equal(lw_check_verdict(c, pm + 1, NAN), 1);
    assert_int_equal(lw_check_verdict(c, NAN, m.gain_margin_db + 1), 1);
    lw_check_free(c);
}

static void test_check_from_buffer(void **state)
{
    (void)state;
    lw_loop *l = parse_ring();
    check_ring(l, 1.5);
    lw_loop_free(l);
}

/* The results own their names: the description may go first. */
static void test_results_outlive_the_description(void **state)
{
    (void)state;
    lw_loop *l = parse_ring();
    lw_check *c = NULL;
    assert_int_equal(lw_check_run(l, 0, 0, &c, NULL), LW_OK);
    lw_loop_free(l);
    int n;
    const lw_loop_verdict *v = lw_check_loops(c, &n);
    assert_string_equal(v[0].name, "ring");
    assert_string_equal(v[0].measured_at, "g1");
    const lw_root *r = lw_check_roots(c, LW_OPEN_LOOP_POLES, &n);
    assert_true(!strcmp(r[0].node, "n1") || !strcmp(r[0].node, "n2") || !strcmp(r[0].node, "n3"));
    lw_check_free(c);
    lw_check_free(NULL);
    lw_loop_free(NULL);
    lw_response_free(NULL);
}

static void test_set_and_sweep_point(void **state)
{
    (void)state;
    lw_loop *l = parse_ring();
    lw_message msg;
    assert_int_equal(lw_loop_set(l, "a=1.2", &msg), LW_OK);
    check_ring(l, 1.2);
    /* an expression, back to 1.5 */
    assert_int_equal(lw_loop_set(l, "a=3/2", &msg), LW_OK);
    check_ring(l, 1.5);
    /* one sweep point at a = 1.8, and the description left at 1.5 */
    lw_point p;
    assert_int_equal(lw_sweep_point(l, "a", 1.8, 0, 0, &p, &msg), LW_OK);
    assert_true(p.value == 1.8);
    close_to(p.phase_margin_deg, 180 - 3 * atan(sqrt(1.8 * 1.8 - 1)) * 180 / PI_, 1e-8);
    close_to(p.crossover_hz, P_HZ * sqrt(1.8 * 1.8 - 1), 1e-8);
    close_to(p.gain_margin_db, 20 * log10(8 / (1.8 * 1.8 * 1.8)), 1e-8);
    close_to(p.dc_loop_gain, 1.8 * 1.8 * 1.8, 1e-9);
    assert_int_equal(p.stable, 1);
    /* past a = 2 the ring oscillates (Routh-Hurwitz) */
    assert_int_equal(lw_sweep_point(l, "a", 2.1, 0, 0, &p, &msg), LW_OK);
    assert_int_equal(p.stable, 0);
    assert_true(p.gain_margin_db < 0);
    check_ring(l, 1.5);
    lw_loop_free(l);
}

static void test_errors_name_the_place(void **state)
{
    (void)state;
    const char bad[] = "node a r=1k c=1p\ngm g a -> x 1m\n";
    lw_loop *l = (lw_loop *)&l; /* must come back NULL */
    lw_message msg;
    assert_int_equal(lw_loop_parse(bad, strlen(bad), "bad.loop", &l, &msg), LW_EINPUT);
    assert_null(l);
    assert_int_equal(msg.line, 2);
    assert_int_equal(msg.col, 11);
    assert_string_equal(msg.text, "bad.loop:2:11: unknown node 'x' (did you mean 'a'?)");
    /* a bad override leaves the description as it was */
    l = parse_ring();
    assert_int_equal(lw_loop_set(l, "nosuch=1", &msg), LW_EINPUT);
    assert_non_null(strstr(msg.text, "unknown param or element 'nosuch'"));
    assert_int_equal(msg.line, 0);
    assert_int_equal(lw_loop_set(l, "n1.r=-5", &msg), LW_EINPUT);
    check_ring(l, 1.5);
    lw_point p;
    assert_int_equal(lw_sweep_point(l, "nosuch", 1, 0, 0, &p, &msg), LW_EINPUT);
    lw_response *r = (lw_response *)&r;
    lw_response_request q = { "n1", NULL, NULL, 0, 0 };
    /* no input in the ring and none named: the command line's refusal */
    assert_int_equal(lw_response_run(l, &q, &r, &msg), LW_EINPUT);
    assert_null(r);
    assert_non_null(strstr(msg.text, "the file declares no input"));
    lw_loop_free(l);
}

/* A current into n1 read at n1, with the loop closed: by Blackman's
 * impedance formula Z = Z0 (1 + T_short) / (1 + T_open), with Z0 = R (the
 * break's gm off), T_short = 0 (n1 grounded kills the loop) and T_open =
 * a^3, H(0) = R / (1 + a^3); its poles are the closed-loop poles. */
static void test_response_to_a_current(void **state)
{
    (void)state;
    lw_loop *l = parse_ring();
    lw_response *r = NULL;
    lw_message msg;
    lw_response_request q = { "n1", NULL, "n1", 0, 0 };
    assert_int_equal(lw_response_run(l, &q, &r, &msg), LW_OK);
    lw_response_summary s = lw_response_figures(r);
    double a3 = 1.5 * 1.5 * 1.5;
    close_to(s.dc, 10e3 / (1 + a3), 1e-9);
    close_to(s.dc_db, 20 * log10(10e3 / (1 + a3)), 1e-9);
    assert_int_equal(s.stable, 1);
    assert_int_equal(s.has_step, 1);
    close_to(s.step_final, 10e3 / (1 + a3), 1e-9);
    int n;
    const lw_root *p = lw_response_poles(r, &n);
    assert_int_equal(n, 3);
    close_to(p[2].re_hz, -P_HZ * 2.5, 1e-8);
    lw_response_free(r);
    lw_loop_free(l);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_check_from_buffer),
        cmocka_unit_test(test_results_outlive_the_description),
        cmocka_unit_test(test_set_and_sweep_point),
        cmocka_unit_test(test_errors_name_the_place),
        cmocka_unit_test(test_response_to_a_current),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
