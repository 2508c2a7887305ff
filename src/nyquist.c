/* nyquist: the Nyquist count on the exact T. See nyquist.h. */
#include "loopwise/nyquist.h"

#include <complex.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/fform.h"
#include "loopwise/margins.h"

#define TWO_PI 6.283185307179586
#define PI_ 3.14159265358979323846
/* The largest change of arg(1 + T) (radians) accepted in one step: far
 * below pi, so the branch of each step is never in doubt. */
#define STEP_RAD (15.0 * PI_ / 180.0)
/* Steps narrower than this (log10 f) are not split further: 1 + T then
 * passes through or next to 0 (a closed-loop pole on the axis). */
#define MIN_STEP 1e-11
/* Unresolved steps after which the walk gives up on the evaluator. */
#define MAX_FORCED 20
/* A pole with |re| below this times its magnitude sits on the axis. */
#define AXIS_TOL 1e-9
/* Points per decade of the grid the walk starts from (margin_grid). */
#define PER_DECADE 20
/* |T| below this at a grid point, by the factored form, marks the point as
 * "small": along a run of such points 1 + T stays in the disc of radius 1
 * around 1 (the margins' scan finds no crossover there on the same grid),
 * so it cannot wind around 0 and only the run's two ends are evaluated. */
#define SMALL_LOG_MAG (-0.6931471805599453) /* ln 0.5 */
/* |T| at a run's exact end above which the form, which put it under one
 * half there, is not believed for the rest of the count. */
#define FORM_DOUBT 0.75

static double complex one_plus_t(lgain *lg, double u)
{
    return 1.0 + lgain_eval(lg, I * TWO_PI * pow(10.0, u));
}

/* Adds to *delta the change of arg(1 + T) from u0 (where its value is *prev)
 * to u1, halving each step until the argument moves by less than STEP_RAD.
 * Returns 1, 0 when a step could not be resolved, or -1 when more than
 * MAX_FORCED steps could not be: T is noise there (the fast evaluation has
 * lost its accuracy), not a closed-loop pole on the axis. */
static int walk(lgain *lg, double u0, double u1, double complex *prev, double *delta)
{
    double u = u0, h = u1 - u0;
    double complex a = *prev;
    int resolved = 1, forced = 0;
    while (u < u1) {
        if (forced > MAX_FORCED)
            return -1;
        double ub = fmin(u + h, u1);
        double complex b = one_plus_t(lg, ub);
        if (!isfinite(creal(b)) || !isfinite(cimag(b)) || b == 0) {
            resolved = 0; /* exactly on a pole of T or a closed-loop pole */
            u = ub;
            continue;
        }
        double d = remainder(carg(b) - carg(a), TWO_PI);
        if (fabs(d) > STEP_RAD && ub - u > MIN_STEP) {
            h = 0.5 * (ub - u);
            continue;
        }
        if (fabs(d) > STEP_RAD) {
            resolved = 0;
            forced++;
        }
        *delta += d;
        a = b;
        u = ub;
        h *= 2;
    }
    *prev = a;
    return resolved;
}

static int cmp_double(const void *pa, const void *pb)
{
    double a = *(const double *)pa, b = *(const double *)pb;
    return a < b ? -1 : a > b;
}

/* P, the hidden right-half-plane modes, and the positive frequencies (log10
 * Hz, sorted, one entry per pole so a double pole appears twice) of the
 * poles of T on the imaginary axis above the origin. */
static int classify_poles(const lg_tf *tf, nyquist *nq, double *axis_u, int *naxis)
{
    *naxis = 0;
    for (int k = 0; k < tf->npoles; k++) {
        double complex p = tf->poles[k];
        if (p == 0)
            continue; /* the origin: indented by its order below */
        int on_axis = fabs(creal(p)) <= AXIS_TOL * cabs(p);
        if (tf->hidden[k]) {
            nq->hidden_rhp += creal(p) > 0 && !on_axis;
            continue;
        }
        if (on_axis) {
            nq->axis_poles++;
            if (cimag(p) > 0)
                axis_u[(*naxis)++] = log10(cimag(p) / TWO_PI);
        } else {
            nq->open_loop_rhp += creal(p) > 0;
        }
    }
    qsort(axis_u, (size_t)*naxis, sizeof *axis_u, cmp_double);
    return 0;
}

/* The change of arg(1 + T) over the positive frequencies, 0+ to +inf, on
 * the grid u[n]; an axis pole (axis_u, rising) is passed on a small half
 * circle to its right, where T ~ R/(s - jw0) turns by -180 degrees per
 * order while |T| is huge. Returns as walk does. */
static int positive_half(lgain *lg, const double *u, const unsigned char *small, int n,
                         const double *axis_u, int naxis, double *delta)
{
    double complex prev = one_plus_t(lg, u[0]);
    int decided = isfinite(creal(prev)) && isfinite(cimag(prev)) && prev != 0, j = 0;
    int use_small = small != NULL;
    double cur = u[0];
    while (j < naxis && axis_u[j] <= cur)
        j++; /* below the band: beyond the walk's reach, and left as such */
    for (int k = 1; k < n && decided > 0; k++) {
        while (j < naxis && axis_u[j] <= u[k] && decided > 0) {
            double up = axis_u[j], gap = 1e-7;
            int w = walk(lg, cur, up - gap, &prev, delta);
            decided = w < 0 ? w : decided && w;
            while (j < naxis && axis_u[j] == up) {
                *delta -= PI_;
                j++;
            }
            cur = up + gap;
            prev = one_plus_t(lg, cur);
        }
        if (use_small && small[k - 1] && cur == u[k - 1] && decided > 0) {
            /* a run of small points with no axis pole inside: its two ends */
            int e = k;
            while (e + 1 < n && small[e] && small[e + 1] && !(j < naxis && axis_u[j] <= u[e + 1]))
                e++;
            double complex b = e > k ? one_plus_t(lg, u[e]) : prev;
            /* the exact T well above the one half the form gave at either
             * end: the form is wrong here, and is not used again */
            if (!(cabs(prev - 1.0) < FORM_DOUBT && cabs(b - 1.0) < FORM_DOUBT)) {
                use_small = 0; /* (also when b is not a number) */
            } else if (e > k) {
                /* 1 + T with |T| < 1 at both ends: the right half-plane, one branch */
                *delta += carg(b) - carg(prev);
                prev = b;
                cur = u[e];
                k = e;
                continue;
            }
        }
        if (u[k] > cur && decided > 0) {
            int w = walk(lg, cur, u[k], &prev, delta);
            decided = w < 0 ? w : decided && w;
            cur = u[k];
        }
    }
    return decided;
}

/* Clears small[] near each lightly damped hidden pole (a mode T cannot
 * see, so the form leaves it out). Its pole-zero pair, a gap g apart,
 * still moves the exact T near |p| by about g / |re p| relative; a pair is
 * hidden only when g is a tiny fraction of |p|, so only a pole with
 * q = |p| / 2|re p| above HIDDEN_Q_MIN can make that a visible peak, and
 * the walk is to look there: the band |p| (1 +- 2/q) holds the grid's
 * points at |p| (1 +- 0.5/q). */
#define HIDDEN_Q_MIN 1e3
static void unmark_hidden(const lg_tf *tf, const double *u, int n, unsigned char *small)
{
    for (int k = 0; k < tf->npoles; k++) {
        double complex p = tf->poles[k];
        if (!tf->hidden[k] || p == 0 || cimag(p) < 0)
            continue;
        double q = cabs(p) / (2 * fabs(creal(p))); /* inf on the axis */
        if (!(q > HIDDEN_Q_MIN))
            continue;
        double up = log10(cabs(p) / TWO_PI), band = log10(1 + 2 / q) + 1e-9;
        for (int i = 0; i < n; i++)
            if (fabs(u[i] - up) <= band)
                small[i] = 0;
    }
}

/* small[k] = 1 where the factored form puts |T| at u[k] under one half;
 * NULL (walk every step) when there is no form to trust. */
static unsigned char *small_points(lgain *lg, const lg_tf *tf, const double *u, int n,
                                   double flo, double fhi)
{
    fform ff;
    if (!fform_build(lg, tf, flo, fhi, &ff)) {
        fform_free(&ff);
        return NULL;
    }
    unsigned char *small = malloc((size_t)n + 1);
    for (int k = 0; small && k < n; k++) {
        double lm, ph;
        fform_eval(&ff, TWO_PI * pow(10.0, u[k]), &lm, &ph);
        small[k] = lm < SMALL_LOG_MAG;
    }
    if (small)
        unmark_hidden(tf, u, n, small);
    fform_free(&ff);
    return small;
}

int nyquist_count(lgain *lg, const lg_tf *tf, double flo, double fhi, int trust_form,
                  nyquist *nq, lw_error *err)
{
    memset(nq, 0, sizeof *nq);
    double *axis_u = malloc(sizeof(double) * (size_t)(tf->npoles + 1));
    if (!axis_u)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    int naxis;
    classify_poles(tf, nq, axis_u, &naxis);
    int origin_poles = tf->origin < 0 ? -tf->origin : 0;
    nq->axis_poles += origin_poles;
    if (tf->sign == 0) {
        /* T is identically zero: 1 + T = 1 winds around nothing */
        nq->decided = 1;
        nq->closed_loop_rhp = nq->open_loop_rhp + nq->hidden_rhp;
        free(axis_u);
        return LW_OK;
    }
    int n;
    double *u = margin_grid(tf, flo / 10, fhi * 10, PER_DECADE, &n);
    if (!u) {
        free(axis_u);
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    unsigned char *small = trust_form ? small_points(lg, tf, u, n, flo, fhi) : NULL;
    double delta = 0;
    int decided = positive_half(lg, u, small, n, axis_u, naxis, &delta);
    if (decided < 0 && !lgain_uses_full(lg)) {
        /* the fast evaluation is noise somewhere on the way: again on the
         * LU of the whole network */
        lgain_use_full(lg, 1);
        delta = 0;
        decided = positive_half(lg, u, small, n, axis_u, naxis, &delta);
    }
    decided = decided > 0;
    free(small);
    free(u);
    free(axis_u);
    /* the negative frequencies mirror the positive ones (T(-jw) is the
     * conjugate of T(jw), traversed the other way: the same change); the
     * half circle around the origin turns T by -180 degrees per pole there */
    double total = 2.0 * delta - PI_ * origin_poles;
    double turns = -total / TWO_PI;
    nq->encirclements = (int)lround(turns);
    nq->decided = decided && fabs(turns - nq->encirclements) < 0.05;
    nq->closed_loop_rhp = nq->encirclements + nq->open_loop_rhp + nq->hidden_rhp;
    return LW_OK;
}
