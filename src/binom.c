/* binom: Clopper-Pearson bounds as bracketed roots of the regularized
 * incomplete beta function.
 *
 * Clopper and Pearson (1934) bound a proportion by the p at which the
 * observed count sits in a tail of given probability. The binomial tail is
 * an incomplete beta function (Abramowitz and Stegun 26.5.24):
 *   P(X >= k | n, p) = I_p(k, n - k + 1),
 * so each bound is the root of I_t(a, b) = level for t in (0, 1).
 *
 * GSL's beta quantile (gsl_cdf_beta_Pinv) gives up for about one count in
 * seventy on the grid n <= 2000 (a NaN, e.g. n = 2000, k = 1788 one-sided, or
 * n = 500, k = 16) and takes about 16 us a pair of bounds, so the root is
 * found here: Halley's method on GSL's I_t and the beta density, every step
 * kept inside the bracket that the signs already seen establish, to full
 * double precision. The root is sought in whichever of t and 1 - t is below
 * one half, so a bound close to 1 (or to 0) keeps its relative precision. */
#include "loopwise/binom.h"

#include <float.h>
#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_sf_gamma.h>
#include <math.h>

enum { ROOT_MAX_ITER = 400 };

/* I_t(a, b). GSL's continued fraction stops after 512 terms and reports
 * GSL_EMAXITER close to the mean when a and b are in the millions; the value
 * it still gives is good to a few parts in 10^7 there (its own error
 * estimate), which only steers the search: two standard deviations out,
 * where the bounds lie, the fraction converges. */
static double ibeta(double a, double b, double t, double *err)
{
    gsl_sf_result r;
    int s = gsl_sf_beta_inc_e(a, b, t, &r);
    *err = r.err;
    return s == GSL_SUCCESS || s == GSL_EMAXITER ? r.val : NAN;
}

/* A first guess at the t with I_t(a, b) = level, a, b >= 1. For a = 1 or
 * b = 1 the function is 1 - (1 - t)^b or t^a and the guess is the exact
 * root; otherwise the normal-deviate approximation of Abramowitz and Stegun
 * 26.5.22, with y the upper normal quantile of level. */
static double first_guess(double a, double b, double level)
{
    if (a == 1)
        return -expm1(log1p(-level) / b);
    if (b == 1)
        return exp(log(level) / a);
    double y = gsl_cdf_ugaussian_Qinv(level);
    double lam = (y * y - 3) / 6;
    double h = 2 / (1 / (2 * a - 1) + 1 / (2 * b - 1));
    double w = y * sqrt(h + lam) / h -
               (1 / (2 * b - 1) - 1 / (2 * a - 1)) * (lam + 5.0 / 6 - 2 / (3 * h));
    return a / (a + b * exp(2 * w));
}

/* The root of f(t) = I_t(a, b) - level in (0, 1) from the guess t.
 * Halley's step uses f' = t^(a-1) (1-t)^(b-1) / B(a, b) and
 * f''/f' = (a-1)/t - (b-1)/(1-t); a step that would leave the bracket
 * [lo, hi] (f(lo) < 0 < f(hi)) is replaced by bisection, geometric while
 * the bracket spans more than a factor 4, so roots of any size are reached
 * in a bounded number of steps. NAN when I_t cannot be evaluated. */
static double beta_root(double a, double b, double level, double t)
{
    double lo = 0, hi = 1, lnb = gsl_sf_lnbeta(a, b);
    if (!(t > 0 && t < 1))
        t = a / (a + b);
    for (int it = 0; it < ROOT_MAX_ITER; it++) {
        double ferr, f = ibeta(a, b, t, &ferr) - level;
        if (isnan(f))
            return NAN;
        if (f == 0)
            return t;
        if (f < 0)
            lo = t;
        else
            hi = t;
        double dens = exp((a - 1) * log(t) + (b - 1) * log1p(-t) - lnb);
        if (dens > 0 && isfinite(dens)) {
            double g = (a - 1) / t - (b - 1) / (1 - t);                     /* f''/f' */
            double dg = -(a - 1) / (t * t) - (b - 1) / ((1 - t) * (1 - t)); /* g' */
            double step = f / dens, c = 0.5 * step * g;
            int halley = fabs(c) < 0.5;
            if (halley)
                step /= 1 - c;
            double next = t - step;
            int inside = next > lo && next < hi;
            /* Done when the step is below what the error of I_t resolves, or
             * when the error left after this Halley step, |K| step^3 with
             * K = (f''/2f')^2 - f'''/6f' = g^2/12 - g'/6 (as f'''/f' = g^2 + g'),
             * is far below one rounding of t. */
            if (fabs(step) <= 4 * DBL_EPSILON * t + 2 * ferr / dens)
                return inside ? next : t;
            if (inside && halley && fabs(step) < 1e-3 * t &&
                fabs(g * g / 12 - dg / 6) * fabs(step) * step * step <= 0.01 * DBL_EPSILON * next)
                return next;
            if (inside) {
                t = next;
                continue;
            }
        }
        t = lo == 0 ? hi / 8 : hi / lo > 4 ? sqrt(lo * hi) : lo + 0.5 * (hi - lo);
        if (hi - lo <= 2 * DBL_EPSILON * hi)
            return t;
    }
    return NAN;
}

/* The t with I_t(a, b) = p, given p and q = 1 - p separately so that neither
 * loses digits: in t when the root is below one half, else as 1 - u with
 * I_u(b, a) = q (A&S 26.5.2: I_t(a, b) = 1 - I_(1-t)(b, a)). GSL's error
 * handler is switched off meanwhile (the program switches it off at start). */
static double beta_quantile(double a, double b, double p, double q)
{
    gsl_error_handler_t *old = gsl_set_error_handler_off();
    double t = first_guess(a, b, p), x;
    if (a == 1 || b == 1)
        x = t; /* exact; GSL's I_t(1, b) is only good to about 1e-10 for b near 1e7 */
    else if (t <= 0.5)
        x = beta_root(a, b, p, t);
    else
        x = 1 - beta_root(b, a, q, first_guess(b, a, q));
    gsl_set_error_handler(old);
    return x;
}

static int in_domain(int k, int n, double tail)
{
    return n >= 1 && k >= 0 && k <= n && tail > 0 && tail < 1;
}

double binom_lower_bound(int k, int n, double tail)
{
    if (!in_domain(k, n, tail))
        return NAN;
    return k == 0 ? 0.0 : beta_quantile(k, n - k + 1, tail, 1 - tail);
}

double binom_upper_bound(int k, int n, double tail)
{
    if (!in_domain(k, n, tail))
        return NAN;
    return k == n ? 1.0 : beta_quantile(k + 1, n - k, 1 - tail, tail);
}
