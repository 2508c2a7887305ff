/* Unit tests for the pole and zero structure: open-loop poles, zeros,
 * closed-loop poles, hidden modes and owner nodes, checked against closed
 * forms worked out from the element values. */
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
#include "loopwise/pencil.h"
#include "loopwise/text.h"

#include "testutil.h"

/* Index of the entry of v[n] nearest to want. */
static int nearest(const double complex *v, int n, double complex want)
{
    int best = -1;
    for (int k = 0; k < n; k++)
        if (best < 0 || cabs(v[k] - want) < cabs(v[best] - want))
            best = k;
    assert_true(best >= 0);
    return best;
}

/* Asserts that v[n] holds want (to tol relative) and returns its index. */
static int find_root(const double complex *v, int n, double complex want, double tol)
{
    int k = nearest(v, n, want);
    assert_crel(v[k], want, tol);
    return k;
}

/* ---- networks ------------------------------------------------------------ */





/* Two-stage Miller amplifier in unity feedback; inn has no capacitance. */
static void miller(run *x, double gm1, double gm2, double R1, double C1, double R2, double C2,
                   double Cc)
{
    analyse(x,
            "node inn r=inf\n"
            "node x1 r=%.17g c=%.17g\n"
            "node out r=%.17g c=%.17g\n"
            "gm g1 inn -> x1 %.17g\n"
            "gm g2 x1 -> out -%.17g\n"
            "cap cc x1 out %.17g\n"
            "res fb out inn 1\n"
            "loop main negative inn x1 out\n",
            R1, C1, R2, C2, gm1, gm2, Cc);
}

/* ---- tests ---------------------------------------------------------------- */

static void test_single_rc_poles(void **state)
{
    (void)state;
    const double R = 10e3, C = 1.6e-9, gm = 2e-3;
    run x;
    single_rc(&x, R, C, gm);
    double A = gm * R;
    /* open loop: the RC pole -1/(RC); closed loop: 1 + A/(1 + s RC) = 0 gives
     * s = -(1 + A)/(RC) (closed form, from memory) */
    assert_int_equal(x.r.tf.npoles, 1);
    assert_crel(x.r.tf.poles[0], -1.0 / (R * C), 1e-10);
    assert_false(x.r.tf.hidden[0]);
    assert_int_equal(x.r.tf.nzeros, 0);
    assert_int_equal(x.r.ncl, 1);
    assert_crel(x.r.cl[0], -(1.0 + A) / (R * C), 1e-10);
    assert_true(x.r.stable);
    assert_false(x.r.marginal);
    /* one-pole-per-node estimate 1/(2 pi R C) for x; none for y (no c) */
    assert_rel(x.r.estimate_hz[0], 1.0 / (2 * PI_ * R * C), 1e-12);
    assert_true(isnan(x.r.estimate_hz[1]));
    release(&x);
}

static void test_two_pole_poles(void **state)
{
    (void)state;
    const double R1 = 20e3, C1 = 8e-12, R2 = 50e3, C2 = 20e-12, gm1 = 50e-6, gm2 = 1e-3;
    run x;
    two_pole(&x, R1, C1, R2, C2, gm1, gm2, 0);
    double A = gm1 * gm2 * R1 * R2, w1 = 1 / (R1 * C1), w2 = 1 / (R2 * C2);
    assert_int_equal(x.r.tf.npoles, 2);
    /* sorted by magnitude: w2 = 1e6 rad/s before w1 = 6.25e6 rad/s */
    assert_crel(x.r.tf.poles[0], -w2, 1e-10);
    assert_crel(x.r.tf.poles[1], -w1, 1e-10);
    assert_int_equal(x.r.tf.nzeros, 0);
    /* closed loop: s^2 + (w1 + w2) s + (1 + A) w1 w2 = 0 (closed form, from memory) */
    double bq = w1 + w2, cq = (1 + A) * w1 * w2;
    double complex root = csqrt(bq * bq - 4 * cq + 0 * I);
    assert_int_equal(x.r.ncl, 2);
    find_root(x.r.cl, 2, (-bq + root) / 2, 1e-9);
    find_root(x.r.cl, 2, (-bq - root) / 2, 1e-9);
    assert_true(x.r.stable);
    release(&x);
}

static void test_three_pole_routh_hurwitz(void **state)
{
    (void)state;
    const double R = 10e3, C = 2e-12, p = 1 / (R * C);
    /* Routh-Hurwitz on (1 + s/p)^3 + A: stable for A < 8, unstable beyond */
    const double gains[] = { 7.8, 8.2, 2.0, 20.0 };
    const int stable[] = { 1, 0, 1, 0 };
    for (int k = 0; k < 4; k++) {
        run x;
        three_pole(&x, gains[k], R, C);
        double A = gains[k], c3 = cbrt(A);
        assert_int_equal(x.r.tf.npoles, 3);
        for (int j = 0; j < 3; j++)
            assert_crel(x.r.tf.poles[j], -p, 1e-4); /* a triple root: sensitive */
        if (x.r.stable != stable[k])
            print_error("A = %g: stable = %d, expected %d\n", A, x.r.stable, stable[k]);
        assert_int_equal(x.r.stable, stable[k]);
        /* closed-loop poles: 1 + s/p = A^(1/3) (-1)^(1/3) (closed form, from memory) */
        assert_int_equal(x.r.ncl, 3);
        find_root(x.r.cl, 3, p * (-1 - c3), 1e-9);
        find_root(x.r.cl, 3, p * (-1 + c3 * cexp(I * PI_ / 3)), 1e-9);
        find_root(x.r.cl, 3, p * (-1 + c3 * cexp(-I * PI_ / 3)), 1e-9);
        assert_false(x.r.marginal);
        release(&x);
    }
}

static void test_second_order_closed_loop_poles(void **state)
{
    (void)state;
    const double wn = 2 * PI_ * 1e6;
    const double zetas[] = { 0.3, 0.5, 0.7 };
    for (int k = 0; k < 3; k++) {
        double z = zetas[k];
        run x;
        second_order(&x, wn, z, 1e-12, 1e-12);
        /* open loop: s = 0 and s = -2 zeta wn */
        assert_int_equal(x.r.tf.npoles, 2);
        find_root(x.r.tf.poles, 2, -2 * z * wn, 1e-10);
        int k0 = nearest(x.r.tf.poles, 2, 0);
        assert_true(cabs(x.r.tf.poles[k0]) <= 1e-9 * wn);
        /* closed loop: s^2 + 2 zeta wn s + wn^2 = 0, s = -zeta wn +- j wn sqrt(1 - zeta^2)
         * (standard second-order form, from memory) */
        assert_int_equal(x.r.ncl, 2);
        find_root(x.r.cl, 2, wn * (-z + I * sqrt(1 - z * z)), 1e-9);
        find_root(x.r.cl, 2, wn * (-z - I * sqrt(1 - z * z)), 1e-9);
        assert_true(x.r.stable);
        release(&x);
    }
}

static void test_miller_rhp_zero_and_pole_splitting(void **state)
{
    (void)state;
    /* gm2 R2 = 100, Cc = 10 C1 */
    const double gm1 = 100e-6, gm2 = 1e-3, R1 = 1e6, C1 = 100e-15, R2 = 100e3, C2 = 2e-12,
                 Cc = 1e-12;
    run x;
    miller(&x, gm1, gm2, R1, C1, R2, C2, Cc);
    /* the only feedforward is Cc: one zero, at s = +gm2/Cc (textbook result, from memory) */
    assert_int_equal(x.r.tf.nzeros, 1);
    assert_rel(creal(x.r.tf.zeros[0]) / (2 * PI_), gm2 / (2 * PI_ * Cc), 1e-6);
    assert_true(fabs(cimag(x.r.tf.zeros[0])) <= 1e-6 * gm2 / Cc);
    assert_true(creal(x.r.tf.zeros[0]) > 0);
    /* inn has no capacitance: two natural frequencies */
    assert_int_equal(x.r.tf.npoles, 2);
    double p1 = -creal(x.r.tf.poles[0]) / (2 * PI_), p2 = -creal(x.r.tf.poles[1]) / (2 * PI_);
    assert_true(fabs(cimag(x.r.tf.poles[0])) <= 1e-9 * fabs(creal(x.r.tf.poles[0])));
    assert_true(fabs(cimag(x.r.tf.poles[1])) <= 1e-9 * fabs(creal(x.r.tf.poles[1])));
    /* pole splitting (textbook approximations, from memory) */
    assert_rel(p1, 1 / (2 * PI_ * gm2 * R2 * R1 * Cc), 0.05);
    assert_rel(p2, gm2 * Cc / (2 * PI_ * (C1 * C2 + Cc * (C1 + C2))), 0.05);
    /* and exactly: the roots of the nodal determinant
     * (C1 C2 + Cc (C1 + C2)) s^2 + (G1 (C2 + Cc) + G2 (C1 + Cc) + gm2 Cc) s + G1 G2 */
    double G1 = 1 / R1, G2 = 1 / R2;
    double aq = C1 * C2 + Cc * (C1 + C2), bq = G1 * (C2 + Cc) + G2 * (C1 + Cc) + gm2 * Cc,
           cq = G1 * G2;
    double disc = sqrt(bq * bq - 4 * aq * cq);
    double slow = 2 * cq / (-bq - disc), fast = (-bq - disc) / (2 * aq); /* stable forms */
    assert_rel(creal(x.r.tf.poles[0]), slow, 1e-9);
    assert_rel(creal(x.r.tf.poles[1]), fast, 1e-9);
    release(&x);
}

static void test_miller_zero_tracks_gm2_over_cc(void **state)
{
    (void)state;
    /* the zero stays at gm2/Cc whatever the other values */
    const double cases[][3] = { { 1e-3, 1e-12, 2e-12 }, { 4e-3, 0.5e-12, 7e-12 },
                                { 0.2e-3, 3e-12, 1e-12 } };
    for (int k = 0; k < 3; k++) {
        double gm2 = cases[k][0], Cc = cases[k][1], C2 = cases[k][2];
        run x;
        miller(&x, 80e-6, gm2, 2e6, 150e-15, 60e3, C2, Cc);
        int z = nearest(x.r.tf.zeros, x.r.tf.nzeros, gm2 / Cc);
        assert_int_equal(x.r.tf.nzeros, 1);
        assert_crel(x.r.tf.zeros[z], gm2 / Cc, 1e-6); /* textbook result, from memory */
        release(&x);
    }
}

static void test_output_node_pole_is_hidden(void **state)
{
    (void)state;
    const double R1 = 20e3, C1 = 8e-12, R2 = 50e3, C2 = 20e-12, gm1 = 50e-6, gm2 = 1e-3;
    run x;
    two_pole(&x, R1, C1, R2, C2, gm1, gm2, 1);
    const lg_tf *tf = &x.r.tf;
    /* det Y0 has the node o's own pole -1/(3k 1n); T cannot see it */
    assert_int_equal(tf->npoles, 3);
    int ko = find_root(tf->poles, 3, -1 / (3e3 * 1e-9), 1e-10);
    int ka = find_root(tf->poles, 3, -1 / (R1 * C1), 1e-10);
    int kb = find_root(tf->poles, 3, -1 / (R2 * C2), 1e-10);
    assert_true(tf->hidden[ko]);
    assert_false(tf->hidden[ka]);
    assert_false(tf->hidden[kb]);
    /* the decoupled mode does not show up as a zero */
    assert_int_equal(tf->nzeros, 0);
    /* closed loop: the loop's pair plus o's pole, untouched */
    assert_int_equal(x.r.ncl, 3);
    find_root(x.r.cl, 3, -1 / (3e3 * 1e-9), 1e-9);
    release(&x);
}

static void test_owner_nodes(void **state)
{
    (void)state;
    /* chain a -> b -> o with gain: with the break off, the right eigenvector of
     * a's pole is largest at b and o, but by participation factors each pole
     * belongs to its own RC node (Perez-Arriaga, Verghese and Schweppe 1982;
     * for a triangular pencil the left eigenvector of a node's own pole
     * vanishes on every node downstream of it, worked by hand) */
    const double R1 = 20e3, C1 = 8e-12, R2 = 50e3, C2 = 20e-12, gm1 = 50e-6, gm2 = 1e-3;
    run x;
    two_pole(&x, R1, C1, R2, C2, gm1, gm2, 1);
    const lg_tf *tf = &x.r.tf;
    assert_non_null(tf->owner);
    int na = desc_find_node(x.d, "a"), nb = desc_find_node(x.d, "b"),
        no = desc_find_node(x.d, "o");
    assert_int_equal(tf->owner[nearest(tf->poles, 3, -1 / (R1 * C1))], na);
    assert_int_equal(tf->owner[nearest(tf->poles, 3, -1 / (R2 * C2))], nb);
    assert_int_equal(tf->owner[nearest(tf->poles, 3, -1 / (3e3 * 1e-9))], no);
    release(&x);
}

static void test_owner_nodes_miller(void **state)
{
    (void)state;
    /* For the Miller pair the right eigenvector of the slow pole is about 100
     * times larger at out than at x1, yet by participation factors
     * |l_k (C r)_k| (worked by hand from the 2x2 pencil: 0.997 at x1) the slow
     * pole is x1's and the fast one out's. inn has no capacitance and owns none. */
    run x;
    miller(&x, 100e-6, 1e-3, 1e6, 100e-15, 100e3, 2e-12, 1e-12);
    const lg_tf *tf = &x.r.tf;
    int inn = desc_find_node(x.d, "inn"), x1 = desc_find_node(x.d, "x1"),
        out = desc_find_node(x.d, "out");
    assert_int_equal(tf->npoles, 2);
    for (int k = 0; k < tf->npoles; k++)
        assert_int_not_equal(tf->owner[k], inn);
    assert_int_equal(tf->owner[0], x1);
    assert_int_equal(tf->owner[1], out);
    release(&x);
}

/* The inverse of a 3x3 complex matrix by cofactors (Cramer's rule). */
static void inverse3(const double complex A[9], double complex X[9])
{
    double complex det = A[0] * (A[4] * A[8] - A[5] * A[7]) - A[1] * (A[3] * A[8] - A[5] * A[6]) +
                         A[2] * (A[3] * A[7] - A[4] * A[6]);
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++) {
            /* X[i][j] = cofactor(j, i) / det */
            int r0 = (j + 1) % 3, r1 = (j + 2) % 3, c0 = (i + 1) % 3, c1 = (i + 2) % 3;
            X[i * 3 + j] = (A[r0 * 3 + c0] * A[r1 * 3 + c1] - A[r0 * 3 + c1] * A[r1 * 3 + c0]) / det;
        }
}

/* A transfer between node vectors, v^T (G + sC)^-1 u, through the reduced
 * Hessenberg form: three nodes (two capacitive, one without capacitance, so
 * that the Schur elimination is exercised), a floating capacitor, a gm;
 * against Cramer's rule on the 3x3 nodal matrix at several complex s. */
static void test_general_transfer(void **state)
{
    (void)state;
    const double G[9] = { 1 / 10e3 + 1 / 4.7e3, -1 / 4.7e3, 0,
                          -1 / 4.7e3 - 2e-4, 1 / 4.7e3 + 1 / 22e3 + 1 / 8.2e3, -1 / 8.2e3,
                          0, -1 / 8.2e3, 1 / 8.2e3 + 1 / 33e3 };
    const double C[9] = { 2e-12 + 0.5e-12, -0.5e-12, 0, -0.5e-12, 3e-12 + 0.5e-12, 0, 0, 0, 0 };
    const double u[3] = { 1.0, 0.0, -0.5 }, v[3] = { 0.3, 1.0, 2.0 };
    pencil *p = NULL;
    pencil_hess *h = NULL;
    lw_error err;
    lw_error_clear(&err);
    assert_int_equal(pencil_new(3, G, C, &p, &err), LW_OK);
    assert_int_equal(pencil_rank(p), 2);
    assert_int_equal(pencil_hess_new(p, &(pencil_io){ 0, 0, 0, u, v }, &h, &err), LW_OK);
    const double complex s[] = { 0, 1e6, 3e7 * I, -2e7 + 5e7 * I, 1e10 * I };
    for (int k = 0; k < 5; k++) {
        double complex A[9], X[9], want = 0;
        for (int q = 0; q < 9; q++)
            A[q] = G[q] + s[k] * C[q];
        inverse3(A, X);
        for (int i = 0; i < 3; i++)
            for (int j = 0; j < 3; j++)
                want += v[i] * X[i * 3 + j] * u[j];
        assert_crel(pencil_hess_eval(h, s[k]), want, 1e-10);
    }
    pencil_hess_free(h);
    pencil_free(p);
}

/* A lightly damped pair far below the fastest pole is stable, not on the
 * axis: T = wn^2/(s (s + 2 zeta wn)) closes to s^2 + 2 zeta wn s + wn^2
 * (poles at -zeta wn +- j wn sqrt(1 - zeta^2), closed form), here with
 * zeta = 0.02 and wn = 1e6 rad/s, beside a node outside the loop whose pole
 * is at 1e14 rad/s: 1e-9 of that largest pole would be 1e5 rad/s, wider
 * than the pair's 2e4 rad/s distance from the axis. */
static void test_damped_pair_beside_fast_pole(void **state)
{
    (void)state;
    const double wn = 1e6, zeta = 0.02, Ca = 1e-12, Cb = 1e-12;
    double Rb = 1.0 / (2.0 * zeta * wn * Cb), g1 = wn * wn * Ca * Cb / 1e-3;
    run x;
    analyse(&x,
            "node a r=inf c=%.17g\n"
            "node b r=%.17g c=%.17g\n"
            "node f r=1 c=10f\n"
            "gm g1 b -> a %.17g\n"
            "gm g2 a -> b -1m\n"
            "gm gf b -> f 1u\n"
            "loop main negative a b\n",
            Ca, Rb, Cb, g1);
    find_root(x.r.cl, x.r.ncl, -zeta * wn + I * wn * sqrt(1 - zeta * zeta), 1e-9);
    assert_int_equal(x.r.stable, 1);
    assert_int_equal(x.r.marginal, 0);
    release(&x);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_single_rc_poles),
        cmocka_unit_test(test_two_pole_poles),
        cmocka_unit_test(test_three_pole_routh_hurwitz),
        cmocka_unit_test(test_second_order_closed_loop_poles),
        cmocka_unit_test(test_miller_rhp_zero_and_pole_splitting),
        cmocka_unit_test(test_miller_zero_tracks_gm2_over_cc),
        cmocka_unit_test(test_output_node_pole_is_hidden),
        cmocka_unit_test(test_owner_nodes),
        cmocka_unit_test(test_owner_nodes_miller),
        cmocka_unit_test(test_general_transfer),
        cmocka_unit_test(test_damped_pair_beside_fast_pole),
    };
    return cmocka_run_group_tests_name("poles", tests, NULL, NULL);
}
