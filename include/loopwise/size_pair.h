/* size_pair: two values sized together (size --tune A --tune B): the
 * smallest A (the value that costs area, named first) for which some B in
 * its range meets the goal, with B chosen at that A for the largest margin,
 * and how flat the margin is in B there.
 *
 * Ownership: size_pair_run fills a result without allocations of its own;
 * the desc is unchanged on return. */
#ifndef LOOPWISE_SIZE_PAIR_H
#define LOOPWISE_SIZE_PAIR_H

#include "loopwise/design.h"

enum { SIZE_PAIR_GRID_A = 25, SIZE_PAIR_GRID_B = 17 };

/* The flatness is read as the B range whose margin stays within
 * SIZE_PAIR_FLAT_DEG of the best at the answer, and the B range that meets
 * the goal when A is SIZE_PAIR_MORE_A times the answer. */
#define SIZE_PAIR_FLAT_DEG 1.0
#define SIZE_PAIR_MORE_A 1.1

typedef struct size_pair_result {
    int met;
    double a, b;            /* the answer (met), or the pair nearest the goal */
    design_point at;        /* the margins there */
    double alo, ahi, blo, bhi;   /* the ranges searched */
    double flat_lo, flat_hi;     /* B range at a within SIZE_PAIR_FLAT_DEG of the best */
    double more_a;               /* SIZE_PAIR_MORE_A times a (NAN above the range) */
    double more_lo, more_hi;     /* the B range meeting the goal at more_a (NAN: none) */
    int analyses;
} size_pair_result;

/* M(a) = the largest distance to the goal over B (a log grid of
 * SIZE_PAIR_GRID_B points, the best refined by Brent's minimiser on ln b)
 * is scanned on a log grid of SIZE_PAIR_GRID_A values of A; the first that
 * meets brackets the answer with the one below, and Brent's method on
 * M(ln a) finds it to a relative 1e-5. */
int size_pair_run(desc *d, desc_target ta, double alo, double ahi, desc_target tb, double blo,
                  double bhi, design_goal g, const check_opts *o, size_pair_result *r,
                  lw_error *err);

#endif
