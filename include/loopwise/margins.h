/* margins: the unwrapped phase of T(j2πf), the gain crossovers with their
 * phase margins, and the phase crossings with their gain margins.
 *
 * The phase is taken from the factored form K s^m Π(1 - s/z)/Π(1 - s/p),
 * which is continuous in f by construction, and then snapped to the exact
 * arg T(j2πf) (from the LU evaluation) on the nearest 360° branch, so the
 * value is exact and the branch is never guessed from a sampled grid. */
#ifndef LOOPWISE_MARGINS_H
#define LOOPWISE_MARGINS_H

#include <complex.h>

#include "loopwise/loopgain.h"

enum { MARGIN_MAX_POINTS = 64, MARGIN_PER_DECADE = 10 };

typedef struct margin_point {
    double hz;           /* 0 for the gain margin of T(0) < 0, at DC (margins_find) */
    double value;        /* phase margin (deg) at a crossover, gain margin (dB) at a phase crossing */
} margin_point;

typedef enum { CROSS_FOUND, CROSS_BELOW, CROSS_ABOVE } margin_cross_kind;

typedef struct margins {
    double fmin_hz, fmax_hz;
    int ncross;
    margin_point cross[MARGIN_MAX_POINTS];
    int best_cross;      /* index of the smallest phase margin, -1 when none */
    margin_cross_kind why;
    int nphase;
    margin_point phase[MARGIN_MAX_POINTS];
    int best_phase;      /* index of the smallest gain margin, -1 when none */
    int mismatch;        /* points where the factored and exact phase disagreed */
    int exact;           /* 1: found by margins_find_exact */
} margins;

/* Unwrapped phase (degrees) of T at f (Hz); *mag gets |T|; *mismatch is set
 * when the factored form and the exact value disagree by more than 2°. */
double margin_phase(lgain *lg, const lg_tf *tf, double hz, double *mag, int *mismatch);

/* The automatic band: 1/1000 of the smallest to 1000 times the largest
 * nonzero magnitude among poles, zeros and closed-loop poles (Hz). */
void margin_band(const lg_tf *tf, const double complex *cl, int ncl, double *flo, double *fhi);

/* Scans the band on the factored form, brackets every crossover and phase
 * crossing there and polishes each on the exact T. When T(0) is finite and
 * negative (net positive feedback), the phase is -180 degrees at f = 0
 * itself: the first phase crossing is there, at hz = 0, with the gain
 * margin -20 log10 |T(0)| (a loop gain that much higher puts a closed-loop
 * pole at s = 0). Where the factored form
 * and the exact T disagree (spot checks in mid band and at every root found)
 * m->mismatch counts it. */
/* The scan grid (log10 f, rising, allocated; the caller frees it): a log
 * grid over the band, dense within a decade of the poles and zeros of T and
 * sparse outside, plus every pole and zero frequency and points on either
 * side of each resonance so that a narrow peak is not stepped over. */
double *margin_grid(const lg_tf *tf, double flo, double fhi, int per_decade, int *npts);

int margins_find(lgain *lg, const lg_tf *tf, double flo, double fhi, margins *m,
                 lw_error *err);
/* Where a margin point lies, for a person: "DC" at 0 Hz, else f with its
 * SI prefix and Hz (units.h). Returns buf. */
char *margin_where(double hz, char *buf, size_t size);

/* The same on the exact T alone, the phase unwrapped along an adaptive grid
 * (steps of at most 15 degrees) from the low-frequency anchor: slower, and
 * independent of the zeros; for when the factored form cannot be trusted. */
int margins_find_exact(lgain *lg, const lg_tf *tf, double flo, double fhi, margins *m,
                       lw_error *err);

#endif
