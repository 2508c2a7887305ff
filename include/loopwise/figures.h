/* figures: the pictures: Bode plot, pole-zero map, margin against a value.
 * Each writes its data and gnuplot script into a plot job (plot.h) and runs
 * it; the result is LW_ENUMERIC (exit 3) when gnuplot is missing or fails. */
#ifndef LOOPWISE_FIGURES_H
#define LOOPWISE_FIGURES_H

#include "loopwise/design.h"
#include "loopwise/plot.h"
#include "loopwise/variation.h"

typedef struct figure_opts {
    const char *path;        /* .png or .svg */
    int width, height;
    const char *keep_dir;    /* --keep-script DIR, or NULL */
} figure_opts;

/* each: overlay every declared loop's own gain (needs check_opts.keep_loops). */
int figure_bode(const figure_opts *fo, const desc *d, const model *m, const check_result *r,
                int each, lw_error *err);
int figure_roots(const figure_opts *fo, const desc *d, const check_result *r, lw_error *err);
/* Phase margin and crossover against the varied value (sweep and load). */
int figure_margin(const figure_opts *fo, const desc *d, const char *what, const char *unit,
                  const sweep_result *s, design_goal g, int lin, lw_error *err);

/* Histogram of the phase margin over Monte Carlo samples, with the goal,
 * the yield and the operating point (the --set values); yield_target is
 * --yield as a fraction, or NAN. */
int figure_histogram(const figure_opts *fo, const desc *d, const mc_result *mc,
                     design_goal g, double yield_target, lw_error *err);

#endif
