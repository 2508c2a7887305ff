/* variation: the margin over corners (every combination of the ends of the
 * params' corner ranges) and under random spread (Monte Carlo).
 *
 * Monte Carlo is deterministic for a given seed whatever the thread count:
 * sample i draws from a generator seeded by a hash of (seed, i), and every
 * result is stored by index before the statistics are taken.
 * Ownership: *_run fill results whose arrays *_free release. */
#ifndef LOOPWISE_VARIATION_H
#define LOOPWISE_VARIATION_H

#include <stdint.h>
#include <stdio.h>

#include "loopwise/design.h"

enum { CORNERS_MAX = 4096, MC_MAX_SAMPLES = 10000000 };

typedef struct corner_result {
    int nparams;
    int *params;            /* param indices with a corner range */
    int ncorners;
    double *values;         /* ncorners x nparams */
    design_point *pts;
    int *order;             /* corner indices, worst first */
} corner_result;

int corners_run(desc *d, const check_opts *o, design_goal g, corner_result *r, lw_error *err);
void corner_result_free(corner_result *r);

typedef struct mc_stats {
    int n;                  /* samples with the quantity defined */
    double mean, sigma, min, max, p1, p5, p50, p95, p99;
} mc_stats;

typedef struct mc_result {
    int nsamples, nparams;
    int *params;            /* param indices with a distribution */
    double *values;         /* nsamples x nparams */
    design_point *pts;
    unsigned char *valid;   /* 0 when the sampled values were not allowed (a negative R, ...) */
    int passes, invalid, worst;
    double yield, ci_lo, ci_hi, lower95;
    mc_stats pm, gm, fc;
} mc_result;

/* Parses its own copy of the description per thread from t (with the --set
 * overrides in sets[]); progress (may be NULL) gets a progress line. */
int montecarlo_run(const text_file *t, const char *path, const char *const *sets, int nsets,
                   int nsamples, uint64_t seed, design_goal g, const check_opts *o,
                   FILE *progress, mc_result *r, lw_error *err);
void mc_result_free(mc_result *r);

/* Clopper-Pearson interval for x successes in n trials at confidence 1 - alpha
 * (two-sided), and the one-sided lower bound at 1 - alpha. */
void mc_clopper_pearson(int x, int n, double alpha, double *lo, double *hi, double *lower1);

#endif
