/* fform: the factored form of the loop gain,
 *   T(jw) = K (jw)^m prod(1 - jw/z) / prod(1 - jw/p),
 * built from the poles and zeros of an lg_tf with K from one exact
 * evaluation. It costs O(roots) per frequency instead of a solve, and its
 * phase is continuous in w by construction: margins scans and brackets
 * with it, then polishes every root on the exact T.
 *
 * Ownership: fform_build allocates the factor list, fform_free releases it. */
#ifndef LOOPWISE_FFORM_H
#define LOOPWISE_FFORM_H

#include <complex.h>

#include "loopwise/loopgain.h"

typedef struct ffactor {
    double c1, c2;       /* b/|r|^2 and a/|r|^2 */
    double sign;         /* +1 for a zero, -1 for a pole */
} ffactor;

/* The factors are kept by kind, so that evaluating them needs no branch:
 * a real root r gives 1 - jw/r; a conjugate pair a +- jb gives the one
 * factor (1 - w^2/|r|^2) - j w 2a/|r|^2, whose imaginary part keeps its
 * sign, so that one arctangent gives its continuous phase; a complex root
 * whose conjugate is not among the roots stays a factor of its own. */
typedef struct fform {
    double *kr;          /* real roots: 1/r; zeros first (nrz), then poles (nrp) */
    int nrz, nrp;
    double *pp, *pq;     /* pairs: 1/|r|^2 and 2a/|r|^2; zeros (npz), then poles (npp) */
    int npz, npp;
    ffactor *f;          /* lone complex roots */
    int n;
    int origin;
    double logk;         /* log|K| */
    double anchor;       /* phase at w -> 0, degrees */
} fform;

/* Builds the form for the band flo..fhi (Hz); K is taken at its geometric
 * middle. Returns 0 when K cannot be found (T is zero or singular there);
 * the caller then scans the exact T. */
int fform_build(lgain *lg, const lg_tf *tf, double flo, double fhi, fform *ff);
void fform_free(fform *ff);

/* log|T| and the unwrapped phase (degrees) at w (rad/s). */
void fform_eval(const fform *ff, double w, double *logmag, double *phase);
/* The same with their slopes per unit of ln w. */
void fform_eval_d(const fform *ff, double w, double *logmag, double *phase, double *dlogmag,
                  double *dphase);

/* The unwrapped phase (degrees) of the factored form at w (rad/s), from the
 * structure alone (no K needed). */
double fform_phase(const lg_tf *tf, double w);

#endif
