/* fform: the factored form of T, for scanning. See fform.h. */
#include "loopwise/fform.h"

#include <math.h>
#include <stdlib.h>

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
static int fform_add(fform *ff, double complex r, double sign)
{
    double m2 = creal(r) * creal(r) + cimag(r) * cimag(r);
    ff->f[ff->n++] = (ffactor){ cimag(r) / m2, creal(r) / m2, sign };
    return 0;
}

/* The magnitudes are multiplied (one log at the end), renormalised with
 * frexp so that hundreds of factors cannot overflow. */
void fform_eval(const fform *ff, double w, double *logmag, double *phase)
{
    double num = 1, den = 1, ph = 0;
    int enum_ = 0, eden = 0;
    for (int k = 0; k < ff->n; k++) {
        double re = 1.0 - w * ff->f[k].c1, im = -w * ff->f[k].c2, m2 = re * re + im * im;
        /* a real root keeps re = 1: atan is enough */
        double a = ff->f[k].c1 == 0 ? scan_atan(im) : scan_atan2(im, re);
        if (ff->f[k].sign > 0) {
            num *= m2;
            ph += a;
        } else {
            den *= m2;
            ph -= a;
        }
        if ((k & 7) == 7) {
            int e;
            num = frexp(num, &e);
            enum_ += e;
            den = frexp(den, &e);
            eden += e;
        }
    }
    *logmag = ff->logk + ff->origin * log(w) + 0.5 * (log(num / den) + (enum_ - eden) * M_LN2_);
    *phase = ff->anchor + ph * DEG;
}

/* The slopes of fform_eval's log-magnitude and phase (degrees) per unit of
 * ln w, with the values: for a factor f = 1 - jw/r, d ln f / d ln w =
 * 1 - 1/f, whose real part is 1 - Re f/|f|^2 and imaginary part Im f/|f|^2. */
void fform_eval_d(const fform *ff, double w, double *logmag, double *phase,
                         double *dlogmag, double *dphase)
{
    double dm = ff->origin, dp = 0;
    for (int k = 0; k < ff->n; k++) {
        double re = 1.0 - w * ff->f[k].c1, im = -w * ff->f[k].c2, m2 = re * re + im * im;
        dm += ff->f[k].sign * (1.0 - re / m2);
        dp += ff->f[k].sign * (im / m2);
    }
    fform_eval(ff, w, logmag, phase);
    *dlogmag = dm;
    *dphase = dp * DEG;
}

/* Builds the factored form; returns 0 when K cannot be found (T is zero or
 * singular at the reference point), in which case the caller scans exactly. */
int fform_build(lgain *lg, const lg_tf *tf, double flo, double fhi, fform *ff)
{
    ff->n = 0;
    ff->origin = tf->origin;
    ff->anchor = (tf->sign < 0 ? -180.0 : 0.0) + 90.0 * tf->origin;
    ff->f = malloc(sizeof *ff->f * (size_t)(tf->npoles + tf->nzeros + 1));
    if (!ff->f)
        return 0;
    for (int k = 0; k < tf->nzeros; k++)
        if (tf->zeros[k] != 0)
            fform_add(ff, tf->zeros[k], 1.0);
    for (int k = 0; k < tf->npoles; k++)
        if (!tf->hidden[k] && tf->poles[k] != 0)
            fform_add(ff, tf->poles[k], -1.0);
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
    free(ff->f);
    ff->f = NULL;
    ff->n = 0;
}
