/* fform: the factored form of T, for scanning. See fform.h. */
#include "loopwise/fform.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#define TWO_PI 6.283185307179586
#define DEG (180.0 / 3.14159265358979323846)
#define M_LN2_ 0.69314718055994530942

/* arctangent to about 1e-8 rad for the scan only (every root it brackets is
 * polished on the exact T): Abramowitz and Stegun 4.4.49 on |x| <= 1, and
 * atan x = sign(x) pi/2 - atan(1/x) beyond. */
static double scan_atan(double x)
{
    double ax = fabs(x), t = ax > 1.0 ? 1.0 / ax : ax, t2 = t * t, p;
    if (t < 0.01) /* most factors are decades from w: the series t - t^3/3 + t^5/5 */
        p = t * (1.0 + t2 * (-1.0 / 3.0 + t2 * 0.2));
    else
        p = t * (1.0 + t2 * (-0.3333314528 + t2 * (0.1999355085 + t2 * (-0.1420889944 +
            t2 * (0.1065626393 + t2 * (-0.0752896400 + t2 * (0.0429096138 +
            t2 * (-0.0161657367 + t2 * 0.0028662257))))))));
    if (ax > 1.0)
        p = 1.5707963267948966 - p;
    return x < 0 ? -p : p;
}

/* atan2 for the scan, built on scan_atan. */
static double scan_atan2(double y, double x)
{
    if (x > 0)
        return scan_atan(y / x);
    if (x < 0)
        return scan_atan(y / x) + (y >= 0 ? 3.14159265358979323846 : -3.14159265358979323846);
    return y > 0 ? 1.5707963267948966 : (y < 0 ? -1.5707963267948966 : 0.0);
}

/* arg(1 - jw/r) in degrees: continuous in w for every r off the jw axis.
 * Only used to pick the branch of the exact phase (and to flag a
 * disagreement of 2 degrees), so the scan's arctangent is accurate enough. */
static double factor_arg(double w, double complex r)
{
    double m2 = creal(r) * creal(r) + cimag(r) * cimag(r);
    double re = 1.0 - w * cimag(r) / m2, im = -w * creal(r) / m2;
    return (cimag(r) == 0 ? scan_atan(im) : scan_atan2(im, re)) * DEG;
}

double fform_phase(const lg_tf *tf, double w)
{
    double ph = (tf->sign < 0 ? -180.0 : 0.0) + 90.0 * tf->origin;
    for (int k = 0; k < tf->nzeros; k++)
        if (tf->zeros[k] != 0)
            ph += factor_arg(w, tf->zeros[k]);
    for (int k = 0; k < tf->npoles; k++)
        if (!tf->hidden[k] && tf->poles[k] != 0)
            ph -= factor_arg(w, tf->poles[k]);
    return ph;
}

/* ---- the factored form, for scanning ------------------------------------- */

/* T(jw) = K (jw)^m prod(1 - jw/z) / prod(1 - jw/p): for a root r = a + jb,
 * 1 - jw/r = (1 - w b/|r|^2) - j w a/|r|^2, so each factor costs a few
 * flops. K comes from one exact evaluation. Scanning with it costs O(roots)
 * per frequency instead of an LU factorization; every root it brackets is
 * then polished on the exact T. */
/* Renormalises a running product (mantissa m, exponent e) every few
 * factors so that hundreds of them cannot overflow. */
static void renorm(double *m, int *e)
{
    int k;
    *m = frexp(*m, &k);
    *e += k;
}

/* The magnitudes are multiplied (one log at the end), renormalised with
 * frexp every eight factors. */
void fform_eval(const fform *ff, double w, double *logmag, double *phase)
{
    double prod[2] = { 1, 1 }, ph[2] = { 0, 0 }, w2 = w * w;
    int ex[2] = { 0, 0 };
    for (int side = 0; side < 2; side++) { /* 0: zeros, 1: poles */
        int r0 = side ? ff->nrz : 0, r1 = side ? ff->nrz + ff->nrp : ff->nrz;
        int p0 = side ? ff->npz : 0, p1 = side ? ff->npz + ff->npp : ff->npz;
        double m = 1, a = 0;
        for (int k = r0; k < r1; k++) {
            double im = -w * ff->kr[k]; /* re = 1: atan is enough */
            m *= 1.0 + im * im;
            a += scan_atan(im);
            if (((k - r0) & 7) == 7)
                renorm(&m, &ex[side]);
        }
        renorm(&m, &ex[side]);
        for (int k = p0; k < p1; k++) {
            double re = 1.0 - w2 * ff->pp[k], im = -w * ff->pq[k];
            m *= re * re + im * im;
            a += scan_atan2(im, re);
            if (((k - p0) & 3) == 3)
                renorm(&m, &ex[side]);
        }
        prod[side] = m;
        ph[side] = a;
    }
    for (int k = 0; k < ff->n; k++) {
        double re = 1.0 - w * ff->f[k].c1, im = -w * ff->f[k].c2;
        int side = ff->f[k].sign < 0;
        prod[side] *= re * re + im * im;
        ph[side] += scan_atan2(im, re);
        renorm(&prod[side], &ex[side]);
    }
    *logmag = ff->logk + ff->origin * log(w) +
              0.5 * (log(prod[0] / prod[1]) + (ex[0] - ex[1]) * M_LN2_);
    *phase = ff->anchor + (ph[0] - ph[1]) * DEG;
}

/* The slopes of fform_eval's log-magnitude and phase (degrees) per unit of
 * ln w, with the values: for a factor f(w), d ln f / d ln w = w f'/f. For
 * 1 - jw/r that is 1 - 1/f: real part 1 - Re f/|f|^2, imaginary part
 * Im f/|f|^2; for a pair f = (1 - p w^2) - j q w, w f' = -2 p w^2 - j q w. */
void fform_eval_d(const fform *ff, double w, double *logmag, double *phase,
                  double *dlogmag, double *dphase)
{
    double dm = ff->origin, dp = 0, w2 = w * w;
    for (int k = 0; k < ff->nrz + ff->nrp; k++) {
        double sign = k < ff->nrz ? 1.0 : -1.0, im = -w * ff->kr[k], m2 = 1.0 + im * im;
        dm += sign * (1.0 - 1.0 / m2);
        dp += sign * (im / m2);
    }
    for (int k = 0; k < ff->npz + ff->npp; k++) {
        double sign = k < ff->npz ? 1.0 : -1.0;
        double re = 1.0 - w2 * ff->pp[k], im = -w * ff->pq[k], m2 = re * re + im * im;
        double ar = -2.0 * ff->pp[k] * w2, ai = -ff->pq[k] * w;
        dm += sign * (ar * re + ai * im) / m2;
        dp += sign * (ai * re - ar * im) / m2;
    }
    for (int k = 0; k < ff->n; k++) {
        double re = 1.0 - w * ff->f[k].c1, im = -w * ff->f[k].c2, m2 = re * re + im * im;
        dm += ff->f[k].sign * (1.0 - re / m2);
        dp += ff->f[k].sign * (im / m2);
    }
    fform_eval(ff, w, logmag, phase);
    *dlogmag = dm;
    *dphase = dp * DEG;
}

/* Sorts the roots of one kind (zeros or poles, those that count) into the
 * form's three lists. used[] marks the conjugates already paired. */
static void add_roots(fform *ff, const double complex *r, int n, const unsigned char *skip,
                      double sign, unsigned char *used)
{
    for (int k = 0; k < n; k++) {
        if ((skip && skip[k]) || r[k] == 0 || used[k])
            continue;
        double a = creal(r[k]), b = cimag(r[k]), m2 = a * a + b * b;
        if (b == 0) {
            ff->kr[sign > 0 ? ff->nrz++ : ff->nrz + ff->nrp++] = 1.0 / a;
            continue;
        }
        int mate = -1;
        for (int j = k + 1; j < n && mate < 0; j++)
            if (!(skip && skip[j]) && !used[j] && creal(r[j]) == a && cimag(r[j]) == -b)
                mate = j;
        if (mate < 0) {
            ff->f[ff->n++] = (ffactor){ b / m2, a / m2, sign };
            continue;
        }
        used[mate] = 1;
        int q = sign > 0 ? ff->npz++ : ff->npz + ff->npp++;
        ff->pp[q] = 1.0 / m2;
        ff->pq[q] = 2.0 * a / m2;
    }
}

/* Builds the factored form; returns 0 when K cannot be found (T is zero or
 * singular at the reference point), in which case the caller scans exactly. */
int fform_build(lgain *lg, const lg_tf *tf, double flo, double fhi, fform *ff)
{
    size_t nr = (size_t)(tf->npoles + tf->nzeros) + 1;
    memset(ff, 0, sizeof *ff);
    ff->origin = tf->origin;
    ff->anchor = (tf->sign < 0 ? -180.0 : 0.0) + 90.0 * tf->origin;
    ff->kr = malloc(sizeof(double) * 3 * nr);
    ff->f = malloc(sizeof *ff->f * nr);
    unsigned char *used = calloc(nr, 1);
    if (!ff->kr || !ff->f || !used) {
        free(used);
        return 0;
    }
    ff->pp = ff->kr + nr;
    ff->pq = ff->pp + nr;
    /* real zeros then real poles, pairs likewise: the poles' lists are
     * filled after the zeros', so both kinds are added zeros first */
    add_roots(ff, tf->zeros, tf->nzeros, NULL, 1.0, used);
    memset(used, 0, nr);
    add_roots(ff, tf->poles, tf->npoles, tf->hidden, -1.0, used);
    free(used);
    double w0 = TWO_PI * sqrt(flo * fhi), lm, ph;
    double complex t0 = lgain_eval(lg, I * w0);
    ff->logk = 0;
    fform_eval(ff, w0, &lm, &ph);
    if (!(cabs(t0) > 0) || !isfinite(cabs(t0)) || !isfinite(lm))
        return 0;
    ff->logk = log(cabs(t0)) - lm;
    return 1;
}

void fform_free(fform *ff)
{
    free(ff->kr);
    free(ff->f);
    memset(ff, 0, sizeof *ff);
}
