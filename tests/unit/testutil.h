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
    if (rc == LW_OK)
        rc = check_run(x->d, x->m, &o, &x->r, &err);
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

#endif
