/* response_tf: what H is (its zeros, the closed-loop modes it cannot see,
 * its order at s = 0), the band, the peak of |H| and the bandwidth. The
 * zero candidates are sorted as loopgain.c sorts those of T: a candidate
 * away from every pole is a zero; one near a pole is a zero only when |H|
 * at it is far below |H| on a small circle around it, and otherwise a mode
 * H cannot see. */
#include "loopwise/bracket.h"
#include "loopwise/response.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/fform.h"
#include "loopwise/margins.h"
#include "loopwise/pencil.h"

#define TWO_PI 6.283185307179586
#define DEG (180.0 / 3.14159265358979323846)
/* Scan density (points per decade) for the peak and the bandwidth; every
 * pole's and zero's own frequencies are added, so a sharp resonance is
 * always bracketed. */
#define PER_DECADE 48

void response_result_free(response_result *res)
{
    if (!res)
        return;
    lg_tf_free(&res->tf);
}

/* As verify_zero in loopgain.c: for a zero of order k, |H| 1e-11 |z| from
 * it is about (1e-11/1e-3)^k of |H| on a circle of radius 1e-3 |z|. */
static int verify_zero(response *rs, double complex z)
{
    double mag = cabs(z);
    double hc = cabs(response_eval(rs, z + 1e-11 * mag * cexp(I * 0.7)));
    if (!isfinite(hc))
        return 0;
    for (int k = 0; k < 6; k++) {
        double h = cabs(response_eval(rs, z + 1e-3 * mag * cexp(I * (0.3 + k * 1.0471975511965976))));
        if (!isfinite(h) || !(hc < 1e-2 * h))
            return 0;
    }
    return 1;
}

/* A simple zero known to relative error e: |H(z)| / |H(z + 1e-4 |z| u)| is
 * about e / 1e-4 (as zero_accurate in loopgain.c). */
static int zero_accurate(response *rs, double complex z)
{
    double h0 = cabs(response_eval(rs, z));
    double h1 = cabs(response_eval(rs, z + 1e-4 * cabs(z) * cexp(I * 0.9)));
    return isfinite(h0) && isfinite(h1) && h0 < 1e-2 * h1;
}

/* Marks the closed-loop pole nearest z (within 1e-6 relative) as hidden. */
static void match_hidden(lg_tf *tf, double complex z)
{
    int best = -1;
    double bestd = INFINITY;
    for (int k = 0; k < tf->npoles; k++) {
        double dist = cabs(tf->poles[k] - z);
        if (!tf->hidden[k] && dist < bestd) {
            bestd = dist;
            best = k;
        }
    }
    if (best >= 0 && bestd <= 1e-6 * fmax(cabs(z), cabs(tf->poles[best])))
        tf->hidden[best] = 1;
}

static double complex tidy(double complex z)
{
    return fabs(cimag(z)) <= 1e-12 * cabs(z) ? creal(z) : z;
}

/* Returns 1 (sorting abandoned) when check_plain is set and a zero taken
 * without the circle test proves inaccurate: the caller retries by QZ. */
static int sort_candidates(response *rs, lg_tf *tf, const double complex *cand, int nc,
                           int check_plain, int zero_ok, int *z0)
{
    double scale = 0;
    for (int k = 0; k < tf->npoles; k++)
        scale = fmax(scale, cabs(tf->poles[k]));
    for (int k = 0; k < nc && scale == 0; k++)
        scale = fmax(scale, cabs(cand[k]));
    tf->origin_tol = 1e-9 * scale;
    *z0 = 0;
    for (int k = 0; k < nc; k++) {
        if (zero_ok && cabs(cand[k]) <= tf->origin_tol) {
            (*z0)++;
            continue;
        }
        int near_pole = 0;
        for (int j = 0; j < tf->npoles && !near_pole; j++)
            near_pole = cabs(tf->poles[j] - cand[k]) <=
                        1e-4 * fmax(cabs(cand[k]), cabs(tf->poles[j]));
        int plain = !near_pole && cabs(cand[k]) <= 100.0 * scale;
        if (plain && check_plain && !zero_accurate(rs, cand[k]))
            return 1;
        if (plain || verify_zero(rs, cand[k]))
            tf->zeros[tf->nzeros++] = tidy(cand[k]);
        else
            match_hidden(tf, cand[k]);
    }
    return 0;
}

/* Zeros, hidden modes and the order at s = 0: a root within SPEC 1's
 * origin_tol counts as at s = 0 only where s = 0 can be one (pole_ok,
 * zero_ok: response_origin_possible). */
static int structure(response *rs, lg_tf *tf, int pole_ok, int zero_ok, lw_error *err)
{
    int r = response_rank(rs), nc = 0, used = PENCIL_ZEROS_QZ, method = PENCIL_ZEROS_AUTO;
    int z0 = 0, p0 = 0, rc = LW_OK;
    double complex *cand = malloc(sizeof *cand * (size_t)(r + 2));
    tf->zeros = malloc(sizeof *tf->zeros * (size_t)(r + 2));
    if (!cand || !tf->zeros) {
        free(cand);
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    for (;;) {
        if ((rc = response_zero_candidates(rs, method, cand, &nc, &used, err)))
            break;
        tf->nzeros = 0;
        memset(tf->hidden, 0, (size_t)tf->npoles + 1);
        if (!sort_candidates(rs, tf, cand, nc, used == PENCIL_ZEROS_DYNAMICS_CHECK, zero_ok,
                             &z0))
            break;
        method = PENCIL_ZEROS_QZ;
    }
    free(cand);
    if (rc)
        return rc;
    tf->zeros_qz = used == PENCIL_ZEROS_QZ;
    for (int k = 0; k < tf->npoles && pole_ok; k++)
        if (cabs(tf->poles[k]) <= tf->origin_tol)
            p0++;
    /* a mode at s = 0 that H cannot see pairs with an origin candidate */
    int cancel = p0 < z0 ? p0 : z0;
    for (int k = 0; k < tf->npoles && cancel > 0; k++)
        if (cabs(tf->poles[k]) <= tf->origin_tol && !tf->hidden[k]) {
            tf->hidden[k] = 1;
            cancel--;
        }
    tf->origin = z0 - p0;
    for (int k = 0; k < tf->origin; k++)
        tf->zeros[tf->nzeros++] = 0;
    lg_sort(tf->zeros, tf->nzeros);
    return LW_OK;
}

/* Sign of K0 in H ~ K0 s^origin, from H on the positive real axis well
 * below every root, and the slope there as a cross-check of the order. */
static void low_end(response *rs, lg_tf *tf)
{
    double lo = lg_tf_lowest_root(tf);
    double sigma = isfinite(lo) ? 1e-4 * lo : 1.0;
    double h1 = creal(response_eval(rs, sigma)), h2 = creal(response_eval(rs, sigma / 10));
    tf->sign = h1 > 0 ? 1 : (h1 < 0 ? -1 : 0);
    if (h1 != 0 && h2 != 0 && fabs(log10(fabs(h1 / h2)) - tf->origin) > 0.05)
        tf->suspect = 1;
    if (tf->origin > 0) {
        tf->dc = 0;
    } else if (tf->origin < 0) {
        tf->dc = tf->sign >= 0 ? INFINITY : -INFINITY;
    } else {
        tf->dc = response_dc(rs);
        if (tf->dc != 0 && isfinite(tf->dc))
            tf->sign = tf->dc > 0 ? 1 : -1;
    }
}

/* The factored form's ln|H| (less ln|K|) and its slope d ln|H| / d ln w: for
 * a factor f = 1 - jw/r, d ln|f| / d ln w = 1 - Re f / |f|^2 (as
 * fform_eval_d). O(roots) per frequency: the scan runs on it, and every
 * root it brackets is refined on the exact H. */
static double factored(const lg_tf *tf, double w, double *lm)
{
    double s = tf->origin, l = tf->origin * log(w);
    for (int k = 0; k < tf->nzeros + tf->npoles; k++) {
        int zero = k < tf->nzeros;
        double complex r = zero ? tf->zeros[k] : tf->poles[k - tf->nzeros];
        if (r == 0 || (!zero && tf->hidden[k - tf->nzeros]))
            continue;
        double m2 = creal(r) * creal(r) + cimag(r) * cimag(r);
        double re = 1.0 - w * cimag(r) / m2, im = -w * creal(r) / m2, f2 = re * re + im * im;
        s += (zero ? 1 : -1) * (1.0 - re / f2);
        l += (zero ? 0.5 : -0.5) * log(f2);
    }
    if (lm)
        *lm = l;
    return s;
}

static double slope(const lg_tf *tf, double w)
{
    return factored(tf, w, NULL);
}

typedef struct scan_ctx {
    response *rs;
    const lg_tf *tf;
    double level;      /* ln of the bandwidth level */
} scan_ctx;

static double slope_fn(double lnw, void *p)
{
    const scan_ctx *c = p;
    return slope(c->tf, exp(lnw));
}

static double level_fn(double lnw, void *p)
{
    scan_ctx *c = p;
    return log(cabs(response_eval(c->rs, I * exp(lnw)))) - c->level;
}


static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return x < y ? -1 : x > y;
}

/* The scan frequencies (rad/s): PER_DECADE per decade over [wlo, whi] and
 * the magnitude and imaginary part of every visible root inside. */
static double *scan_grid(const lg_tf *tf, double wlo, double whi, int *n)
{
    int ndec = (int)ceil(PER_DECADE * log10(whi / wlo)) + 1;
    double *w = malloc(sizeof(double) * (size_t)(ndec + 2 * (tf->npoles + tf->nzeros) + 2));
    if (!w)
        return NULL;
    int m = 0;
    for (int k = 0; k < ndec; k++)
        w[m++] = wlo * pow(whi / wlo, (double)k / (ndec - 1));
    for (int k = 0; k < tf->nzeros + tf->npoles; k++) {
        int zero = k < tf->nzeros;
        double complex r = zero ? tf->zeros[k] : tf->poles[k - tf->nzeros];
        if (!zero && tf->hidden[k - tf->nzeros])
            continue;
        double a = cabs(r), b = fabs(cimag(r));
        if (a > wlo && a < whi)
            w[m++] = a;
        if (b > wlo && b < whi)
            w[m++] = b;
    }
    qsort(w, (size_t)m, sizeof *w, cmp_double);
    int k = 0;
    for (int j = 0; j < m; j++)
        if (k == 0 || w[j] > w[k - 1] * (1 + 1e-9))
            w[k++] = w[j];
    *n = k;
    return w;
}

/* The peak of |H| over 0 <= f <= the top of the band, and the bandwidth. */
static int peak_and_bandwidth(response *rs, response_result *res, double wlo, double whi,
                              int auto_top, lw_error *err)
{
    int n;
    double *w = scan_grid(&res->tf, wlo, whi, &n);
    double *mag = w ? malloc(sizeof(double) * (size_t)n) : NULL, *sl = NULL;
    if (mag)
        sl = malloc(sizeof(double) * (size_t)n);
    if (!w || !mag || !sl) {
        free(w);
        free(mag);
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    scan_ctx ctx = { rs, &res->tf, 0 };
    /* |H| on the grid from the factored form, its K from one exact value in
     * mid band, spot-checked against the exact H every so often; where they
     * disagree (zeros off), the exact H at every point */
    double lm, w0 = sqrt(wlo * whi), h0 = cabs(response_eval(rs, I * w0));
    factored(&res->tf, w0, &lm);
    int ff = h0 > 0 && isfinite(h0);
    double logk = ff ? log(h0) - lm : 0;
    for (int k = 0; k < n; k++) {
        sl[k] = factored(&res->tf, w[k], &lm);
        mag[k] = exp(logk + lm);
    }
    /* (where |H| is a millionth of its largest value or less, a relative
     * error there cannot move the peak or the bandwidth) */
    double spot[10], top = h0;
    int kspot[10], ns = 0;
    for (int k = 0; ff && k < n && ns < 10; k += n / 8 + 1) {
        kspot[ns] = k;
        spot[ns] = cabs(response_eval(rs, I * w[k]));
        top = fmax(top, spot[ns++]);
    }
    for (int j = 0; ff && j < ns; j++)
        ff = fabs(spot[j] - mag[kspot[j]]) <= 1e-6 * fmax(spot[j], mag[kspot[j]]) ||
             fmax(spot[j], mag[kspot[j]]) < 1e-6 * top;
    for (int k = 0; !ff && k < n; k++)
        mag[k] = cabs(response_eval(rs, I * w[k]));
    double dc = fabs(res->dc);
    res->peak_value = dc;
    res->peak_hz = 0;
    res->local_peak_value = 0;
    res->local_peak_hz = NAN;
    for (int k = 0; k + 1 < n; k++) {
        if (!(sl[k] > 0 && sl[k + 1] <= 0))
            continue;
        double wp = exp(bracket_root(slope_fn, &ctx, log(w[k]), log(w[k + 1]), 1e-12, 0));
        double v = cabs(response_eval(rs, I * wp));
        if (!(v >= fmax(mag[k], mag[k + 1]) * (1 - 1e-9)))
            res->suspect = 1; /* the structure's slope disagrees with the exact H */
        if (isfinite(v) && v > res->local_peak_value) {
            res->local_peak_value = v;
            res->local_peak_hz = wp / TWO_PI;
        }
        if (isfinite(v) && v > res->peak_value * (1 + 1e-12)) {
            res->peak_value = v;
            res->peak_hz = wp / TWO_PI;
        }
    }
    if (sl[n - 1] > 0) {
        /* still rising at the top of the band */
        double v = auto_top ? fabs(res->hinf) : mag[n - 1];
        if (v > res->peak_value * (1 + 1e-12)) {
            res->peak_value = v;
            res->peak_hz = auto_top ? NAN : w[n - 1] / TWO_PI;
        }
    }
    res->bandwidth_hz = NAN;
    if (dc > 0 && isfinite(dc)) {
        ctx.level = log(dc / sqrt(2.0));
        for (int k = 1; k < n; k++)
            if (mag[k - 1] > dc / sqrt(2.0) && mag[k] <= dc / sqrt(2.0)) {
                /* the bracket from the scan, widened by a point each way
                 * when the exact H puts the crossing just outside it */
                int a = k - 1, b = k;
                if (level_fn(log(w[a]), &ctx) * level_fn(log(w[b]), &ctx) > 0) {
                    a = a > 0 ? a - 1 : a;
                    b = b + 1 < n ? b + 1 : b;
                }
                double lnw = bracket_root(level_fn, &ctx, log(w[a]), log(w[b]), 1e-12, 0);
                res->bandwidth_hz = exp(lnw) / TWO_PI;
                break;
            }
    }
    free(w);
    free(mag);
    free(sl);
    return LW_OK;
}

int response_analyse(response *rs, const double complex *cl, int ncl, const response_opts *o,
                     response_result *res, lw_error *err)
{
    memset(res, 0, sizeof *res);
    lg_tf *tf = &res->tf;
    tf->poles = malloc(sizeof *tf->poles * (size_t)(ncl + 1));
    tf->hidden = calloc((size_t)ncl + 1, 1);
    if (!tf->poles || !tf->hidden) {
        response_result_free(res);
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    memcpy(tf->poles, cl, sizeof *cl * (size_t)ncl);
    tf->npoles = ncl;
    res->zero = !response_reaches(rs);
    res->hinf = response_hinf(rs);
    int rc = LW_OK, pole_ok = 1, zero_ok = 1;
    if (!res->zero)
        response_origin_possible(rs, &pole_ok, &zero_ok);
    if (res->zero) {
        memset(tf->hidden, 1, (size_t)ncl);
        tf->zeros = malloc(sizeof *tf->zeros);
        if (!tf->zeros)
            rc = lw_error_set(err, LW_ENOMEM, "out of memory");
    } else if (!(rc = structure(rs, tf, pole_ok, zero_ok, err))) {
        low_end(rs, tf);
    }
    if (rc) {
        response_result_free(res);
        return rc;
    }
    for (int k = 0; k < ncl && pole_ok; k++)
        if (cabs(tf->poles[k]) <= tf->origin_tol)
            tf->poles[k] = 0;
    res->dc = tf->dc;
    res->suspect = tf->suspect;
    double flo, fhi;
    margin_band(tf, NULL, 0, &flo, &fhi);
    res->fmin_hz = o && o->fmin_hz > 0 ? o->fmin_hz : flo;
    res->fmax_hz = o && o->fmax_hz > 0 ? o->fmax_hz : fhi;
    if (!(res->fmax_hz > res->fmin_hz)) {
        response_result_free(res);
        return lw_error_set(err, LW_EINPUT, "the band is empty: --fmin must be below --fmax");
    }
    if (res->zero) {
        res->bandwidth_hz = NAN;
        res->local_peak_hz = NAN;
        return LW_OK;
    }
    /* the scan starts below every root whatever --fmin says: the peak is
     * over all f from 0 */
    double wlo = TWO_PI * fmin(flo, res->fmin_hz), whi = TWO_PI * res->fmax_hz;
    rc = peak_and_bandwidth(rs, res, wlo, whi, !(o && o->fmax_hz > 0), err);
    if (rc)
        response_result_free(res);
    return rc;
}

double response_phase(response *rs, const response_result *res, double hz, double *mag)
{
    double w = TWO_PI * hz;
    double complex h = response_eval(rs, I * w);
    *mag = cabs(h);
    if (res->zero)
        return NAN;
    double ff = fform_phase(&res->tf, w);
    if (!(*mag > 0) || !isfinite(*mag))
        return ff;
    double ex = carg(h) * DEG;
    return ex + 360.0 * round((ff - ex) / 360.0);
}
