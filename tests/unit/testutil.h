/* testutil: what the unit tests share: relative-tolerance asserts and a
 * helper that runs a .loop text through the whole pipeline
 * (text -> desc -> model -> check). Include after cmocka.h. */
#ifndef LOOPWISE_TESTUTIL_H
#define LOOPWISE_TESTUTIL_H

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

#define PI_ 3.14159265358979323846
#define DEG_ (180.0 / PI_)

#define assert_rel(got, want, tol)                                                       \
    do {                                                                                 \
        double g_ = (got), w_ = (want);                                                  \
        double s_ = fabs(w_) > 0 ? fabs(w_) : 1.0;                                       \
        if (!(fabs(g_ - w_) <= (tol) * s_)) {                                            \
            print_error("%s = %.17g, expected %.17g (relative tolerance %g)\n", #got, g_, \
                        w_, (double)(tol));                                              \
            fail();                                                                      \
        }                                                                                \
    } while (0)

/* Complex values: |got - want| <= tol * |want|. */
#define assert_crel(got, want, tol)                                                      \
    do {                                                                                 \
        double complex g_ = (got), w_ = (want);                                          \
        double s_ = cabs(w_) > 0 ? cabs(w_) : 1.0;                                       \
        if (!(cabs(g_ - w_) <= (tol) * s_)) {                                            \
            print_error("%s = %.17g%+.17gj, expected %.17g%+.17gj (relative tolerance %g)\n", \
                        #got, creal(g_), cimag(g_), creal(w_), cimag(w_), (double)(tol)); \
            fail();                                                                      \
        }                                                                                \
    } while (0)

/* One analysed network: the description, its model and the check result. */
typedef struct run {
    desc *d;
    model *m;
    check_result r;
} run;

/* Formats the .loop text, then text_from_buffer -> desc_parse -> desc_eval
 * -> model_new -> check_run with owners and declared loops. */
static void analyse(run *x, const char *fmt, ...) __attribute__((format(printf, 2, 3), unused));
static void analyse(run *x, const char *fmt, ...)
{
    char src[4096];
    va_list ap;
    va_start(ap, fmt);
    int len = vsnprintf(src, sizeof src, fmt, ap);
    va_end(ap);
    assert_true(len > 0 && len < (int)sizeof src);
    memset(x, 0, sizeof *x);
    text_file *t = NULL;
    lw_error err;
    lw_error_clear(&err);
    int rc = text_from_buffer(src, (size_t)len, &t, &err);
    if (rc == LW_OK)
        rc = desc_parse(t, "test.loop", &x->d, &err);
    text_free(t);
    if (rc == LW_OK)
        rc = desc_eval(x->d, &err);
    if (rc == LW_OK)
        rc = model_new(x->d, &x->m, &err);
    check_opts o; /* { 0, 0, 1, 1 }: automatic band, owners, declared loops */
    memset(&o, 0, sizeof o);
    o.want_owner = 1;
    o.want_loops = 1;
    o.want_nyquist = 1;
    if (rc == LW_OK)
        rc = check_run(x->d, x->m, &o, &x->r, &err);
    /* every network a unit test analyses also checks that the two stability
     * verdicts agree: the Nyquist count and the closed-loop poles */
    if (rc == LW_OK && x->r.nyquist_disagrees) {
        print_error("the Nyquist count (Z = %d) disagrees with the closed-loop poles\n--- input "
                    "---\n%s", x->r.nq.closed_loop_rhp, src);
        fail();
    }
    if (rc != LW_OK) {
        print_error("analysis failed (%d) at %d:%d: %s\n--- input ---\n%s", rc, err.line,
                    err.col, err.msg, src);
        model_free(x->m);
        desc_free(x->d);
        fail();
    }
}

static __attribute__((unused)) void release(run *x)
{
    check_result_free(&x->r);
    model_free(x->m);
    desc_free(x->d);
}

/* Parses and evaluates a .loop text (no analysis); fails the test on error. */
static __attribute__((unused)) desc *load_text(const char *src)
{
    text_file *t;
    desc *d = NULL;
    lw_error err;
    lw_error_clear(&err);
    int rc = text_from_buffer(src, strlen(src), &t, &err);
    if (!rc) {
        rc = desc_parse(t, "test.loop", &d, &err);
        text_free(t);
    }
    if (!rc)
        rc = desc_eval(d, &err);
    if (rc) {
        print_error("%d:%d: %s\n", err.line, err.col, err.msg);
        fail();
    }
    return d;
}

/* ---- networks shared by the loop-gain, pole and margin tests ---- */

/* One RC pole (R, C) with a resistive unity inverting sense node y:
 * T(s) = gm R/(1 + sRC) (nodal analysis, worked by hand). */
static __attribute__((unused)) void single_rc(run *x, double R, double C, double gm)
{
    analyse(x,
            "node x r=%.17g c=%.17g\n"
            "node y r=1k\n"
            "gm gf y -> x %.17g\n"
            "gm gb x -> y -1m\n"
            "loop main negative x y\n",
            R, C, gm);
}

/* Two gm-RC stages in a ring; with out_node, o (3 kohm, 1 nF) hangs off b
 * through gx and is outside the loop. */
static __attribute__((unused)) void two_pole(run *x, double R1, double C1, double R2, double C2, double gm1,
                     double gm2, int out_node)
{
    analyse(x,
            "node a r=%.17g c=%.17g\n"
            "node b r=%.17g c=%.17g\n"
            "%s"
            "gm g1 b -> a %.17g\n"
            "gm g2 a -> b -%.17g\n"
            "%s"
            "loop main negative a b\n",
            R1, C1, R2, C2, out_node ? "node o r=3k c=1n\n" : "", gm1, gm2,
            out_node ? "gm gx b -> o 1m\n" : "");
}

/* Three identical inverting gm-RC stages in a ring, DC loop gain A:
 * T(s) = A/(1 + s/p)^3 with p = 1/(RC). The gms come from a param. */
static __attribute__((unused)) void three_pole(run *x, double A, double R, double C)
{
    analyse(x,
            "param A = %.17g\n"
            "param R = %.17g\n"
            "param gs = A^(1/3) / R\n"
            "node n1 r=R c=%.17g\n"
            "node n2 r=R c=%.17g\n"
            "node n3 r=R c=%.17g\n"
            "gm g1 n3 -> n1 -gs\n"
            "gm g2 n1 -> n2 -gs\n"
            "gm g3 n2 -> n3 -gs\n"
            "loop ring negative n1 n2 n3\n",
            A, R, C, C, C);
}

/* Integrator a then RC stage b: T = wn^2/(s(s + 2 zeta wn)). */
static __attribute__((unused)) void second_order(run *x, double wn, double zeta, double Ca, double Cb)
{
    double Rb = 1.0 / (2.0 * zeta * wn * Cb);
    double g1 = wn * wn * Ca * Cb / 1e-3;
    analyse(x,
            "node a r=inf c=%.17g\n"
            "node b r=%.17g c=%.17g\n"
            "gm g1 b -> a %.17g\n"
            "gm g2 a -> b -1m\n"
            "loop main negative a b\n",
            Ca, Rb, Cb, g1);
}

#endif
