/* size_over: the smallest value of one param or element that meets the goal
 * at every corner (size --over corners), or whose Monte Carlo yield lower
 * bound reaches a target (size --over montecarlo), with what limits it at
 * the answer.
 *
 * Ownership: the *_run functions fill results whose arrays the matching
 * *_free releases (NULL-safe, as every _free). The desc is unchanged on
 * return. */
#ifndef LOOPWISE_SIZE_OVER_H
#define LOOPWISE_SIZE_OVER_H

#include "loopwise/variation.h"

enum { SIZE_OVER_GRID = 81, SIZE_MC_GRID = 9 };

typedef struct size_corners_result {
    int met;
    double value;            /* the answer when met; else the value where the worst
                                corner comes nearest the goal (max of the worst case) */
    double lo, hi;           /* the range searched */
    corner_result corners;   /* every corner analysed at value, worst first */
    int limiting;            /* the corner that limits: solved for last (met), or the
                                worst corner at value (not met) */
    double nominal_value;    /* the value the search started from */
    int nominal_worst;       /* the worst corner there */
    int analyses;            /* whole analyses the search ran */
    int switches;            /* times the corner being solved for changed */
    int at_lo;               /* every corner meets already at lo: the smallest value
                                lies below the range */
} size_corners_result;

/* The worst-case margin W(v) = min over corners of the distance to the goal
 * is piecewise smooth in v: each piece is one corner's margin, and the
 * corner that limits can change with v. The search brackets W: it follows
 * one corner on the log grid of size (SIZE_OVER_GRID points over lo..hi)
 * to where it meets the goal, checks every corner there and moves on to the
 * one that fails, until every corner meets at a grid point b with W < 0 at
 * the grid point below. Inside that bracket it solves the failing corner's
 * own margin for its root (Brent), checks every corner at the root, and
 * repeats with the corner that still fails; the answer is where all meet,
 * and the corner solved for last is the one that limits. When no value
 * meets, W is scanned on the whole grid and its largest value refined by
 * Brent's minimiser: the value where the worst case comes nearest. */
int size_corners_run(desc *d, desc_target t, double lo, double hi, int levels, design_goal g,
                     const check_opts *o, size_corners_result *r, lw_error *err);
void size_corners_free(size_corners_result *r);

typedef struct size_mc_result {
    int met;
    double value;            /* the smallest value whose yield lower bound reaches the
                                target (met); else the value with the most passes */
    double lo, hi;
    int need;                /* passes out of nsamples the target takes */
    mc_result mc;            /* the Monte Carlo run at value */
    int limiting;            /* the sample that passes at value and failed just below it
                                (-1 when none changed) */
    double below;            /* the value just below (NAN when value is lo) */
    int runs;                /* Monte Carlo runs */
} size_mc_result;

/* The fewest passes of n samples whose one-sided 95% Clopper-Pearson lower
 * bound reaches p; n + 1 when even n of n does not. */
int size_mc_passes_needed(int n, double p);

/* The same draws at every value (one seed): the pass count is a step
 * function of the value. A log grid of SIZE_MC_GRID points brackets the
 * first value that reaches `need` passes, and bisection on ln v narrows the
 * bracket to a relative 1e-4. tune is the --set name of t; sets the
 * command line's --set; progress (may be NULL) gets a line per run. */
int size_mc_run(const text_file *tf, const char *path, const char *const *sets, int nsets,
                const char *tune, double lo, double hi, int nsamples, uint64_t seed,
                double yield, design_goal g, const check_opts *o, FILE *progress,
                size_mc_result *r, lw_error *err);
void size_mc_free(size_mc_result *r);

#endif
