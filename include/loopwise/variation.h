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
    int levels;             /* values per range, ends included (2: the ends alone) */
    double *values;         /* ncorners x nparams */
    unsigned char *interior; /* 1 when some value of the corner is not a range end */
    design_point *pts;
    int *order;             /* corner indices, worst first */
} corner_result;

/* Every combination of `levels` values of each range (params pinned by --set
 * left out), evenly spaced on a linear scale with the ends included, at most
 * CORNERS_MAX: fills params, values and interior, nothing evaluated yet. */
int corners_setup(desc *d, int levels, corner_result *r, lw_error *err);
/* corners_setup, every corner analysed, and the order worst first. */
int corners_run(desc *d, const check_opts *o, design_goal g, int levels, corner_result *r,
                lw_error *err);
/* Fills order[] from pts[]: worst first by the distance to the goal
 * (undefined margins count as worst), ties by index. */
int corners_rank(corner_result *r, design_goal g, lw_error *err);
/* The worst corner when it has an interior value and is worse (by its
 * distance to the goal) than every corner made of range ends alone; -1
 * otherwise. */
int corners_worst_interior(const corner_result *r, design_goal g);

/* Sets params[j] = vals[j] (overrides), evaluates and analyses; restores the
 * overrides. *valid is 0 when the values are not allowed (the error says why;
 * the status is then LW_OK). */
int variation_eval_at(desc *d, int np, const int *params, const double *vals,
                      const check_opts *o, design_point *pt, int *valid, lw_error *err);
void corner_result_free(corner_result *r);

typedef struct mc_stats {
    int n;                  /* samples with the quantity defined */
    double mean, sigma, min, max, p1, p5, p50, p95, p99;
} mc_stats;

typedef struct mc_result {
    int nsamples, nparams;  /* nsamples: the samples evaluated (all, or one part's) */
    int total;              /* samples in the whole run (--samples N) */
    int *index;             /* each evaluated sample's index i, from 0 (rising) */
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
/* Part K of M (SPEC section 8): only the samples whose index i has
 * i mod M = K - 1, each drawn exactly as in the whole run; montecarlo_run
 * is part 1 of 1. */
int montecarlo_run_part(const text_file *t, const char *path, const char *const *sets,
                        int nsets, int nsamples, int part_k, int part_m, uint64_t seed,
                        design_goal g, const check_opts *o, FILE *progress, mc_result *r,
                        lw_error *err);
/* The params d draws (a distribution, not pinned by --set) in r->params,
 * and the arrays for nsamples samples (index[s] = s, total = nsamples);
 * for results put together elsewhere (mc_parts.c). */
int montecarlo_setup(const desc *d, int nsamples, mc_result *r, lw_error *err);
/* The yield, its interval, the statistics and the worst sample of the
 * samples in r (values, pts and valid filled). */
int montecarlo_summarise(mc_result *r, design_goal g, lw_error *err);
void mc_result_free(mc_result *r);

/* Clopper-Pearson interval for x successes in n trials at confidence 1 - alpha
 * (two-sided), and the one-sided lower bound at 1 - alpha. */
void mc_clopper_pearson(int x, int n, double alpha, double *lo, double *hi, double *lower1);

#endif
