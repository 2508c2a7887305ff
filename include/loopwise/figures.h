/* figures: the pictures: the Bode picture of the loop gain (figures_bode.c),
 * the roots in the s-plane and the Monte Carlo histogram (figures.c), the
 * margin against a swept value or a load (figures_margin.c), and the polar
 * plot (figures_polar.c).
 * Each writes its data and gnuplot script into a plot job (plot.h) and runs
 * it; the result is LW_ENUMERIC (exit 3) when gnuplot is missing or fails. */
#ifndef LOOPWISE_FIGURES_H
#define LOOPWISE_FIGURES_H

#include "loopwise/design.h"
#include "loopwise/layout.h"
#include "loopwise/plot.h"
#include "loopwise/sweep_map.h"
#include "loopwise/variation.h"

typedef struct figure_opts {
    const char *path;        /* .png or .svg */
    int width, height;
    const char *keep_dir;    /* --keep-script DIR, or NULL */
} figure_opts;

/* One symbol per meaning, in every picture (gnuplot point types): a zero in
 * the right half-plane adds phase lag like a pole, so it never looks like a
 * left-half-plane zero. */
#define FIG_PT_POLE     2    /* x: a pole of T (open loop) */
#define FIG_PT_ZERO     6    /* open circle: a zero of T in the left half-plane */
#define FIG_PT_RHP_ZERO 8    /* open triangle: a zero of T in the right half-plane */
#define FIG_PT_CL_POLE  5    /* filled square: a closed-loop pole */
/* Points of the loop gain's curve (the polar plot): */
#define FIG_PT_CROSSOVER      7    /* filled circle: |T| = 1 */
#define FIG_PT_PHASE_CROSSING 13   /* filled diamond: the phase at -180° + 360°·m */
#define FIG_UNSTABLE_FILL "#f3d9c6" /* shading of what is unstable */
#define FIG_PT_BOUNDARY 15   /* filled pentagon: a refined point of a map's goal boundary */
#define FIG_PT_UNSTABLE 3    /* asterisk: an unstable point of a map */

/* each: overlay every declared loop's own gain (needs check_opts.keep_loops). */
int figure_bode(const figure_opts *fo, const desc *d, const model *m, const check_result *r,
                int each, lw_error *err);
/* The roots in the s-plane (figures_roots.c), with the path of each
 * closed-loop pole from its open-loop pole (locus.h, on the model m). */
int figure_roots(const figure_opts *fo, const desc *d, const model *m, const check_result *r,
                 lw_error *err);
/* The polar plot of T (figures_polar.c); r needs the Nyquist count
 * (check_opts.want_nyquist) for the count written on it. */
int figure_polar(const figure_opts *fo, const desc *d, const model *m, const check_result *r,
                 lw_error *err);
/* Phase margin and crossover against the varied value (sweep and load). */
int figure_margin(const figure_opts *fo, const desc *d, const char *what, const char *unit,
                  const sweep_result *s, design_goal g, int lin, lw_error *err);
/* A node outside the loop: the loop's margin, the same at every load, and
 * the node's own first-order settling time against the load. */
int figure_load_outside(const figure_opts *fo, const desc *d, const load_result *r, double lo,
                        double hi, design_goal g, lw_error *err);

/* Histogram of the phase margin over Monte Carlo samples, with the goal,
 * the yield and the operating point (nominal: the analysis with the --set
 * values and no spread); yield_target is --yield as a fraction, or NAN. */
int figure_histogram(const figure_opts *fo, const desc *d, const mc_result *mc,
                     const check_result *nominal, const char *const *sets, int nsets,
                     design_goal g, double yield_target, lw_error *err);

/* The margin over two values (sweep with --vary twice): a shaded map with
 * the boundary of the goal drawn through it (figures_map.c); units are the
 * two values' unit symbols. */
int figure_map(const figure_opts *fo, const desc *d, const char *const names[2],
               const char *const units[2], const map_result *r, design_goal g, int lin,
               lw_error *err);

/* Shared by the picture files: the project's look (palette, grid, line
 * styles 1-4) and a title naming the file. */
void figure_style(FILE *s);
/* The image size and font of fo in a layout frame (layout.h); the plot area
 * and ranges are the caller's. */
void figure_frame_init(const figure_opts *fo, layout_frame *f);
/* A note beside the plot at screen (x, *y) in the 9-point font, wrapped at
 * spaces to width characters (the lines after the first indented), *y
 * moved down by dy a line; with s NULL only counts. Returns the lines.
 * For the program's own text only: it is written inside double quotes. */
int figure_note(FILE *s, double x, double *y, double dy, int width, const char *color,
                const char *text);
/* Where a plot area with notes beside it ends (screen fraction): at most
 * widest, leaving the notes 330 pixels or a third of the width (at most
 * half of it). */
double figure_notes_left(const figure_opts *fo, double widest);
void figure_title(FILE *s, const char *what, const desc *d, const char *extra);
/* The same title centred on the whole picture, for a plot area that leaves
 * room for notes beside it. */
void figure_title_canvas(FILE *s, const char *what, const desc *d, const char *extra);
/* figures_margin.c: an axis label "what (unit)" and tick labels a reader
 * can interpolate between (1-2-5 per decade on a log axis, steps of 1, 2 or
 * 5 times a power of ten on a linear one), with SI prefixes and the unit;
 * axis is "x" or "y". */
void figure_axis_label(FILE *s, const char *axis, const char *what, const char *unit);
void figure_value_tics(FILE *s, const char *axis, double lo, double hi, int lin,
                       const char *unit);

#endif
