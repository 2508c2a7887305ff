/* margins: crossovers (Brent's method on log|T| against log f), phase
 * margins, phase crossings and gain margins. */
#include "loopwise/margins.h"

#include <gsl/gsl_errno.h>
#include <gsl/gsl_roots.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/fform.h"
#include "loopwise/units.h"

#define TWO_PI 6.283185307179586
#define DEG (180.0 / 3.14159265358979323846)
#define M_LN10_ 2.30258509299404568402
#define LW_EAGAIN_SCAN 100   /* internal: restart the scan on the LU path */

/* The largest phase step (degrees) the exact scan takes between two points:
 * small enough that the branch nearest the previous point is the right one
 * and that a step holds at most one phase crossing. */
#define EXACT_STEP_DEG 15.0
/* Steps narrower than this (in log10 f) are taken whatever the phase does:
 * a zero on the imaginary axis makes the phase jump by 180 degrees. */
#define EXACT_MIN_STEP 1e-10
/* Steps taken at the smallest width beyond which the phase is taken for
 * noise (an evaluation that lost its accuracy), so that no walk runs on. */
#define EXACT_MAX_FORCED 20
/* ln |T| below which a phase crossing is not polished on the exact T
 * (100 dB below unity) */
#define FAR_LOG_MAG (-11.512925464970229)

/* The unwrapped phase of a value t = T(j 2 pi hz) already evaluated. */
static double phase_of(const lg_tf *tf, double hz, double complex t, double *mag,
                       int *mismatch)
{
    double pf = fform_phase(tf, TWO_PI * hz);
    *mag = cabs(t);
    if (!(*mag > 0) || !isfinite(*mag)) {
        if (mismatch)
            *mismatch = !isfinite(*mag);
        return pf;
    }
    double pe = carg(t) * DEG;
    double ph = pe + 360.0 * round((pf - pe) / 360.0);
    if (mismatch)
        *mismatch = fabs(ph - pf) > 2.0;
    return ph;
}

/* The exact phase at hz walked from a point (hz0, ph0) where it is known,
 * in steps of at most EXACT_STEP_DEG as in the exact scan. */
static double walk_phase(lgain *lg, double hz0, double ph0, double hz, double *mag)
{
    double u = log10(hz0), ut = log10(hz), h = ut - u, ph = ph0, min_step = EXACT_MIN_STEP;
    int forced = 0;
    double complex t = lgain_eval(lg, I * TWO_PI * hz0);
    while (u < ut) {
        double ub = fmin(u + h, ut);
        t = lgain_eval(lg, I * TWO_PI * pow(10.0, ub));
        double pb = ph + remainder(carg(t) * DEG - ph, 360.0);
        if (isfinite(pb) && fabs(pb - ph) > EXACT_STEP_DEG && ub - u > min_step) {
            h = 0.5 * (ub - u);
            continue;
        }
        if (isfinite(pb) && fabs(pb - ph) > EXACT_STEP_DEG && ++forced == EXACT_MAX_FORCED)
            min_step = 1e-3; /* noise, not a zero on the axis: onward coarsely */
        if (isfinite(pb))
            ph = pb;
        u = ub;
        h *= 2;
    }
    *mag = cabs(t);
    return ph;
}

double margin_phase(lgain *lg, const lg_tf *tf, double hz, double *mag, int *mismatch)
{
    double complex t = lgain_eval(lg, I * TWO_PI * hz);
    if (!tf->phase_exact)
        return phase_of(tf, hz, t, mag, mismatch);
    /* the factored form is not to be trusted: walk the exact phase up from
     * far below every root (where the anchor holds) or from the last point
     * walked to */
    if (mismatch)
        *mismatch = 0;
    double lo = INFINITY, hz0, ph0;
    for (int k = 0; k < tf->npoles + tf->nzeros; k++) {
        double complex v = k < tf->npoles ? tf->poles[k] : tf->zeros[k - tf->npoles];
        if (v != 0)
            lo = fmin(lo, cabs(v) / TWO_PI);
    }
    lo = isfinite(lo) ? 1e-4 * lo : 1e-3;
    if (hz <= lo)
        return phase_of(tf, hz, t, mag, NULL);
    if (!lgain_walk_recall(lg, &hz0, &ph0) || hz0 > hz) {
        hz0 = lo;
        ph0 = phase_of(tf, lo, lgain_eval(lg, I * TWO_PI * lo), mag, NULL);
    }
    double ph = walk_phase(lg, hz0, ph0, hz, mag);
    lgain_walk_store(lg, hz, ph);
    return ph;
}

/* ---- root finding -------------------------------------------------------- */

/* w = 2 pi 10^u for the factored form: exp is cheaper than pow, and the
 * factored form only brackets (the exact T is evaluated at pow(10, u)). */
static double scan_w(double u)
{
    return TWO_PI * exp(M_LN10_ * u);
}

typedef struct fparams {
    lgain *lg;
    const lg_tf *tf;
    const fform *ff;     /* NULL: scan with the exact T */
    double target;       /* phase target in degrees (phase crossings) */
    int unwrap;          /* 1: the exact phase's branch is the one nearest ref, */
    double ref;          /* not the factored form's (the exact scan) */
} fparams;

/* The unwrapped phase of t = T(j 2 pi hz): on the branch of the factored
 * form, or in the exact scan on the branch nearest fp->ref. *mismatch as
 * in phase_of (never set in the exact scan). */
static double exact_phase(const fparams *fp, double hz, double complex t, double *mag,
                          int *mismatch)
{
    if (!fp->unwrap)
        return phase_of(fp->tf, hz, t, mag, mismatch);
    *mag = cabs(t);
    if (mismatch)
        *mismatch = 0;
    return fp->ref + remainder(carg(t) * DEG - fp->ref, 360.0);
}

static void eval_at(const fparams *fp, double u, int exact, double *lm, double *ph)
{
    if (!exact && fp->ff) {
        fform_eval(fp->ff, scan_w(u), lm, ph);
        return;
    }
    double hz = pow(10.0, u), mag;
    *ph = exact_phase(fp, hz, lgain_eval(fp->lg, I * TWO_PI * hz), &mag, NULL);
    *lm = log(mag);
}

static double log_mag_ff(double u, void *vp)
{
    double lm, ph;
    eval_at(vp, u, 0, &lm, &ph);
    return lm;
}

static double log_mag_exact(double u, void *vp)
{
    const fparams *fp = vp;
    return log(cabs(lgain_eval(fp->lg, I * TWO_PI * pow(10.0, u)))); /* no phase needed */
}

static double phase_ff(double u, void *vp)
{
    double lm, ph;
    eval_at(vp, u, 0, &lm, &ph);
    return ph - ((fparams *)vp)->target;
}

static double phase_exact(double u, void *vp)
{
    double lm, ph;
    eval_at(vp, u, 1, &lm, &ph);
    return ph - ((fparams *)vp)->target;
}

/* Brent's method on [lo, hi] in u = log10 f to |du| < tol. */
static int brent(double (*fn)(double, void *), fparams *fp, double lo, double hi, double tol,
                 double *root)
{
    gsl_function F = { fn, fp };
    gsl_root_fsolver *s = gsl_root_fsolver_alloc(gsl_root_fsolver_brent);
    if (!s)
        return LW_ENOMEM;
    int st = gsl_root_fsolver_set(s, &F, lo, hi);
    for (int it = 0; st == GSL_SUCCESS && it < 200; it++) {
        st = gsl_root_fsolver_iterate(s);
        if (st != GSL_SUCCESS)
            break;
        lo = gsl_root_fsolver_x_lower(s);
        hi = gsl_root_fsolver_x_upper(s);
        if (gsl_root_test_interval(lo, hi, tol, 0) == GSL_SUCCESS)
            break;
    }
    *root = gsl_root_fsolver_root(s);
    gsl_root_fsolver_free(s);
    return st == GSL_SUCCESS ? LW_OK : LW_ENUMERIC;
}

/* Newton's method on the factored form between grid points a and b (ga and
 * gb the function there, of opposite signs), kept inside the bracket: a step
 * that leaves it is replaced by bisection. u is log10 f, so the slopes per
 * ln w are multiplied by ln 10. Fails (LW_ENUMERIC) when 60 steps do not
 * bring it to |du| < tol. */
static int newton_ff(fparams *fp, int phase, double a, double b, double ga, double gb,
                     double tol, double *root)
{
    if (ga == 0 || gb == 0) {
        *root = ga == 0 ? a : b;
        return LW_OK;
    }
    double lo = ga < 0 ? a : b, hi = ga < 0 ? b : a;
    double x = a - ga * (b - a) / (gb - ga);
    for (int it = 0; it < 60; it++) {
        double lm, ph, dlm, dph;
        fform_eval_d(fp->ff, scan_w(x), &lm, &ph, &dlm, &dph);
        double g = phase ? ph - fp->target : lm, dg = M_LN10_ * (phase ? dph : dlm);
        if (g < 0)
            lo = x;
        else
            hi = x;
        double xn = x - g / dg;
        if (!isfinite(xn) || !((xn - lo) * (xn - hi) < 0))
            xn = 0.5 * (lo + hi);
        if (fabs(xn - x) < tol || g == 0) {
            *root = g == 0 ? x : xn;
            return LW_OK;
        }
        x = xn;
    }
    return LW_ENUMERIC;
}

/* A root of the scanning function between grid points a and b, refined on
 * the exact T: first on the factored form, then in a small bracket around
 * it (widened until the exact function changes sign). |du| < 1e-13 is a
 * relative error in f below 3e-13. Returns 1 in *approx when the exact
 * function gave no bracket and the factored root stands. */
static int find_root(fparams *fp, int phase, double a, double b, double ga, double gb,
                     double *root, int *approx)
{
    double (*ffn)(double, void *) = phase ? phase_ff : log_mag_ff;
    double (*efn)(double, void *) = phase ? phase_exact : log_mag_exact;
    *approx = 0;
    if (!fp->ff)
        return brent(efn, fp, a, b, 1e-13, root);
    double u0;
    int rc = newton_ff(fp, phase, a, b, ga, gb, 1e-10, &u0);
    if (rc)
        rc = brent(ffn, fp, a, b, 1e-10, &u0);
    if (rc)
        return rc;
    /* secant steps on the exact function from the factored root: it is
     * usually right to a few units in 1e-12 already */
    double x0 = u0, f0 = efn(x0, fp), x1 = u0 + 1e-8, f1 = efn(x1, fp);
    for (int it = 0; it < 4 && isfinite(f0) && isfinite(f1) && f1 != f0; it++) {
        double x2 = x1 - f1 * (x1 - x0) / (f1 - f0);
        if (!(x2 > a && x2 < b) || fabs(x2 - u0) > 1e-3)
            break;
        if (fabs(x2 - x1) < 1e-13) {
            *root = x2;
            return LW_OK;
        }
        x0 = x1;
        f0 = f1;
        x1 = x2;
        f1 = efn(x1, fp);
    }
    for (double d = 1e-9; d < 0.3; d *= 30) {
        double lo = fmax(a, u0 - d), hi = fmin(b, u0 + d);
        double flo = efn(lo, fp), fhi = efn(hi, fp);
        if (isfinite(flo) && isfinite(fhi) && (flo < 0) != (fhi < 0))
            return brent(efn, fp, lo, hi, 1e-13, root);
        if (lo == a && hi == b)
            break;
    }
    *root = u0;
    *approx = 1;
    return LW_OK;
}


static void add_point(margin_point *arr, int *n, double hz, double value)
{
    if (*n < MARGIN_MAX_POINTS)
        arr[(*n)++] = (margin_point){ hz, value };
}

static int spot_check(fparams *fp, margins *m, double hz, double complex t, double lm,
                      double ph);
static void structure_check(const fparams *fp, margins *m, double hz, double complex t,
                            double lm, double ph);

static int crossover(fparams *fp, margins *m, double ua, double ub, double la, double lb)
{
    double u;
    int approx, rc = find_root(fp, 0, ua, ub, la, lb, &u, &approx);
    if (rc)
        return rc;
    double mag, hz = pow(10.0, u), lf = NAN, pf = NAN;
    int mis = 0;
    double complex t = lgain_eval(fp->lg, I * TWO_PI * hz);
    double ph = exact_phase(fp, hz, t, &mag, &mis);
    if (fp->ff)
        fform_eval(fp->ff, TWO_PI * hz, &lf, &pf);
    if (spot_check(fp, m, hz, t, lf, pf))
        return LW_EAGAIN_SCAN;
    m->mismatch += mis + approx;
    add_point(m->cross, &m->ncross, hz, 180.0 + ph);
    return LW_OK;
}

static int phase_crossing(fparams *fp, margins *m, double ua, double ub, double pa, double pb,
                          double target)
{
    double u;
    int approx;
    fp->target = target;
    if (fp->ff && !fp->unwrap &&
        newton_ff(fp, 1, ua, ub, pa - target, pb - target, 1e-10, &u) == LW_OK) {
        /* more than 100 dB below unity no margin is decided (the smallest
         * gain margin is where |T| is largest): the factored form's root and
         * magnitude stand, without O(rank^2) evaluations of the exact T. A
         * long chain of stages crosses -180 + 360 m hundreds of times up
         * there. */
        double lf, pf;
        fform_eval(fp->ff, scan_w(u), &lf, &pf);
        if (lf < FAR_LOG_MAG) {
            add_point(m->phase, &m->nphase, pow(10.0, u), -20.0 * lf / M_LN10_);
            return LW_OK;
        }
    }
    int rc = find_root(fp, 1, ua, ub, pa - target, pb - target, &u, &approx);
    if (rc)
        return rc;
    double hz = pow(10.0, u), lf = NAN, pf = NAN;
    double complex t = lgain_eval(fp->lg, I * TWO_PI * hz);
    double mag = cabs(t);
    if (fp->ff)
        fform_eval(fp->ff, TWO_PI * hz, &lf, &pf);
    structure_check(fp, m, hz, t, lf, pf);
    /* far from unity gain the exact phase is the noisier of the two and the
     * factored root stands; it only matters within 80 dB of unity */
    m->mismatch += approx && mag > 1e-4 && mag < 1e4;
    add_point(m->phase, &m->nphase, hz, -20.0 * log10(mag));
    return LW_OK;
}

static void pick_best(margins *m)
{
    m->best_cross = m->best_phase = -1;
    for (int k = 0; k < m->ncross; k++)
        if (m->best_cross < 0 || m->cross[k].value < m->cross[m->best_cross].value)
            m->best_cross = k;
    for (int k = 0; k < m->nphase; k++)
        if (m->best_phase < 0 || m->phase[k].value < m->phase[m->best_phase].value)
            m->best_phase = k;
}

/* Compares the factored form (lm, ph) at hz with the fast exact T there
 * (t): a disagreement beyond rounding means the poles or zeros behind the
 * factored form are not the ones of T (issue 16), and is counted. */
static void structure_check(const fparams *fp, margins *m, double hz, double complex t,
                            double lm, double ph)
{
    double mag;
    int mis = 0;
    double pe = exact_phase(fp, hz, t, &mag, &mis);
    if (!(mag > 1e-4 && mag < 1e4))
        return; /* 80 dB or more from unity: no margin is decided there */
    m->mismatch += mis;
    if (fp->ff && !isnan(lm))
        m->mismatch += fabs(log(mag) - lm) > 1e-6 * fmax(1.0, fabs(lm)) || fabs(pe - ph) > 1e-3;
}

/* Compares, at hz, the factored form (lm, ph) with the fast exact T (tf_), and the
 * fast T with the LU of the whole network. Where |T| matters for the margins
 * (within 80 dB of unity) a disagreement of the fast path switches the
 * evaluator to the LU path and asks for a new scan (returns 1). */
static int spot_check(fparams *fp, margins *m, double hz, double complex tf_, double lm,
                      double ph)
{
    double complex tl = lgain_eval_full(fp->lg, I * TWO_PI * hz);
    double al = cabs(tl);
    int relevant = al > 1e-4 && al < 1e4;
    if (relevant && !(cabs(tf_ - tl) <= 1e-9 * al) && !lgain_uses_full(fp->lg)) {
        lgain_use_full(fp->lg, 1);
        return 1;
    }
    if (!relevant)
        return 0; /* 80 dB or more from unity: no margin is decided there */
    m->mismatch += !(cabs(tf_ - tl) <= 1e-7 * al);
    structure_check(fp, m, hz, tf_, lm, ph);
    return 0;
}

/* Scans the grid: a sign change of log|T| brackets a crossover, a change of
 * floor((phase + 180)/360) brackets a phase crossing at -180 + 360 k. */
static int scan(fparams *fp, margins *m, const double *u, int n)
{
    double lm_prev = 0, ph_prev = 0;
    int above = 0, below = 0, rc = LW_OK;
    for (int k = 0; k < n && rc == LW_OK; k++) {
        double lm, ph;
        eval_at(fp, u[k], 0, &lm, &ph);
        if (k == n / 2) {
            double hz = pow(10.0, u[k]);
            if (spot_check(fp, m, hz, lgain_eval(fp->lg, I * TWO_PI * hz), lm, ph))
                return LW_EAGAIN_SCAN;
        }
        if (!isfinite(lm))
            continue;
        above |= lm > 0;
        below |= lm < 0;
        if (k > 0 && u[k] > u[k - 1]) {
            if ((lm_prev < 0) != (lm < 0) && lm_prev != 0)
                rc = crossover(fp, m, u[k - 1], u[k], lm_prev, lm);
            double qa = floor((ph_prev + 180.0) / 360.0), qb = floor((ph + 180.0) / 360.0);
            for (double q = fmin(qa, qb) + 1; rc == LW_OK && q <= fmax(qa, qb); q++)
                rc = phase_crossing(fp, m, u[k - 1], u[k], ph_prev, ph, -180.0 + 360.0 * q);
        }
        lm_prev = lm;
        ph_prev = ph;
    }
    m->why = m->ncross > 0 ? CROSS_FOUND : (above && !below ? CROSS_ABOVE : CROSS_BELOW);
    return rc;
}

/* ---- the exact scan ------------------------------------------------------ */

typedef struct xpoint {
    double u, lm, ph;
} xpoint;

static xpoint exact_point(fparams *fp, double u, double ref)
{
    double hz = pow(10.0, u), mag;
    fp->ref = ref;
    double ph = exact_phase(fp, hz, lgain_eval(fp->lg, I * TWO_PI * hz), &mag, NULL);
    return (xpoint){ u, log(mag), ph };
}

static int exact_segment(fparams *fp, margins *m, xpoint a, xpoint b)
{
    int rc = LW_OK;
    fp->ref = a.ph;
    if ((a.lm < 0) != (b.lm < 0) && a.lm != 0)
        rc = crossover(fp, m, a.u, b.u, a.lm, b.lm);
    double qa = floor((a.ph + 180.0) / 360.0), qb = floor((b.ph + 180.0) / 360.0);
    for (double q = fmin(qa, qb) + 1; rc == LW_OK && q <= fmax(qa, qb); q++) {
        fp->ref = a.ph;
        rc = phase_crossing(fp, m, a.u, b.u, a.ph, b.ph, -180.0 + 360.0 * q);
    }
    return rc;
}

/* The scan on the exact T alone, for when the factored form disagrees with
 * it: the phase is unwrapped along the grid itself, each step halved until
 * the phase moves by less than EXACT_STEP_DEG, starting from the branch of
 * the low-frequency anchor (sign and origin order, which come from T on
 * the real axis, not from the zeros). */
static int scan_exact(fparams *fp, margins *m, const double *u, int n)
{
    int above = 0, below = 0, rc = LW_OK, forced = 0;
    double min_step = EXACT_MIN_STEP;
    double hz0 = pow(10.0, u[0]), mag;
    xpoint a = { u[0], 0, phase_of(fp->tf, hz0, lgain_eval(fp->lg, I * TWO_PI * hz0), &mag,
                                   NULL) };
    a.lm = log(mag);
    for (int k = 1; k < n && rc == LW_OK; k++) {
        double h = u[k] - a.u;
        while (rc == LW_OK && a.u < u[k]) {
            double ub = fmin(a.u + h, u[k]);
            xpoint b = exact_point(fp, ub, a.ph);
            if (!isfinite(b.lm) || !isfinite(b.ph)) {
                a.u = ub; /* exactly on a pole or zero: step over it */
                continue;
            }
            if (fabs(b.ph - a.ph) > EXACT_STEP_DEG && ub - a.u > min_step) {
                h = 0.5 * (ub - a.u);
                continue;
            }
            if (fabs(b.ph - a.ph) > EXACT_STEP_DEG && ++forced == EXACT_MAX_FORCED) {
                /* the phase is noise here, not a zero on the axis: again on
                 * the LU path, or, on it already, onward in coarse steps with
                 * the warning raised */
                if (!lgain_uses_full(fp->lg)) {
                    lgain_use_full(fp->lg, 1);
                    return LW_EAGAIN_SCAN;
                }
                m->mismatch++;
                min_step = 1e-3;
            }
            above |= b.lm > 0;
            below |= b.lm < 0;
            if (isfinite(a.lm))
                rc = exact_segment(fp, m, a, b);
            a = b;
            h *= 2;
        }
    }
    m->why = m->ncross > 0 ? CROSS_FOUND : (above && !below ? CROSS_ABOVE : CROSS_BELOW);
    return rc;
}

/* T(0) < 0 and finite: the phase starts on -180 degrees at f = 0 (SPEC 1:
 * every frequency where it is -180 + 360 m), and the gain margin there is
 * that of T(0) itself. First in the list, which runs up in frequency. */
static void dc_point(const lg_tf *tf, margins *m)
{
    if (tf->origin != 0 || !(tf->dc < 0) || !isfinite(tf->dc))
        return;
    int n = m->nphase < MARGIN_MAX_POINTS ? m->nphase : MARGIN_MAX_POINTS - 1;
    memmove(m->phase + 1, m->phase, sizeof *m->phase * (size_t)n);
    m->phase[0] = (margin_point){ 0.0, -20.0 * log10(-tf->dc) };
    m->nphase = n + 1;
}

char *margin_where(double hz, char *buf, size_t size)
{
    if (hz == 0) {
        snprintf(buf, size, "DC");
        return buf;
    }
    return si_format(hz, "Hz", buf, size);
}

static int find(lgain *lg, const lg_tf *tf, double flo, double fhi, int exact, margins *m,
                lw_error *err)
{
    m->fmin_hz = flo;
    m->fmax_hz = fhi;
    m->ncross = m->nphase = m->mismatch = 0;
    m->exact = exact;
    m->why = CROSS_BELOW;
    fform ff = { 0 };
    int have_ff = !exact && tf->sign != 0 && fform_build(lg, tf, flo, fhi, &ff);
    fparams fp = { lg, tf, have_ff ? &ff : NULL, 0, exact, 0 };
    int n;
    double *u = margin_grid(tf, flo, fhi, have_ff ? MARGIN_PER_DECADE : 4 * MARGIN_PER_DECADE, &n);
    if (!u) {
        fform_free(&ff);
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    int (*run)(fparams *, margins *, const double *, int) = exact ? scan_exact : scan;
    gsl_error_handler_t *old = gsl_set_error_handler_off();
    int rc = tf->sign == 0 ? LW_OK : run(&fp, m, u, n);
    if (rc == LW_EAGAIN_SCAN) {
        m->ncross = m->nphase = m->mismatch = 0;
        rc = run(&fp, m, u, n);
    }
    gsl_set_error_handler(old);
    free(u);
    fform_free(&ff);
    if (rc == LW_OK)
        dc_point(tf, m);
    pick_best(m);
    if (rc == LW_ENOMEM)
        return lw_error_set(err, rc, "out of memory");
    if (rc)
        return lw_error_set(err, rc, "root refinement of a crossover did not converge");
    return LW_OK;
}

int margins_find(lgain *lg, const lg_tf *tf, double flo, double fhi, margins *m,
                 lw_error *err)
{
    return find(lg, tf, flo, fhi, 0, m, err);
}

int margins_find_exact(lgain *lg, const lg_tf *tf, double flo, double fhi, margins *m,
                       lw_error *err)
{
    return find(lg, tf, flo, fhi, 1, m, err);
}
