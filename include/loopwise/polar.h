/* polar: the curve of the polar (Nyquist) plot, T(j2πf) for f > 0 sampled
 * on the exact T, and the compressed radius the picture draws it on.
 *
 * The radius: a DC gain of 80 dB and the neighbourhood of -1 must both be
 * readable, so the plane is drawn as the point rho(|T|)·e^(j arg T) with
 *   rho = |T|                     for |T| <= 1 (the unit circle and -1 as they are),
 *   rho = 1 + (20 log10 |T|)/40   for |T| > 1  (half a unit per 20 dB),
 * continuous at |T| = 1 and keeping every angle, so the phase margin (the
 * angle where the curve meets the unit circle) and the gain margin (where it
 * meets the negative real axis inside it) are where they are on the true
 * plane, and so is every encirclement of -1.
 *
 * The sampling: a grid with points at every pole and zero frequency and on
 * either side of each resonance (margin_grid), then halved wherever the
 * drawn curve would leave its chord by more than a small tolerance (finer
 * near -1), wherever the phase turns by more than 10 degrees, or a chord
 * is long. Poles of T on the imaginary axis are stepped around: the curve
 * is broken there, and the picture closes it by the indentation's arc.
 *
 * Ownership: polar_curve_sample fills a polar_curve that owns its arrays;
 * polar_curve_free releases them. */
#ifndef LOOPWISE_POLAR_H
#define LOOPWISE_POLAR_H

#include <complex.h>

#include "loopwise/loopgain.h"

#define POLAR_DB_PER_UNIT 40.0
/* The largest radius drawn, |T| of 160 dB: more is drawn on that circle. */
#define POLAR_RHO_MAX 5.0
/* Sampling tolerance in the drawn plane (the unit circle's radius is 1):
 * far from -1, and within POLAR_NEAR of it. */
#define POLAR_TOL 2e-3
#define POLAR_TOL_NEAR 4e-4
#define POLAR_NEAR 0.6
enum { POLAR_MAX_POINTS = 40000 };

/* The compressed radius of |T| (mag >= 0), at most rho_max. */
double polar_radius(double mag, double rho_max);
/* The drawn point of T: polar_radius(|T|, rho_max)·e^(j arg T). */
double complex polar_map(double complex t, double rho_max);
/* |T| drawn at radius rho (the inverse of polar_radius below rho_max). */
double polar_unmap_radius(double rho);

typedef struct polar_curve {
    int n;                     /* points, rising frequency */
    double *hz;                /* f > 0 */
    double complex *t;         /* T(j2πf) */
    unsigned char *gap;        /* gap[k] > 0: between points k-1 and k the curve
                                  passes a pole of T on the axis of that order */
    int origin_order;          /* poles of T at s = 0 */
    int coarse;                /* 1 when POLAR_MAX_POINTS stopped the refinement */
} polar_curve;

/* Samples flo..fhi (Hz). */
int polar_curve_sample(lgain *lg, const lg_tf *tf, double flo, double fhi, polar_curve *c,
                       lw_error *err);
void polar_curve_free(polar_curve *c);

#endif
