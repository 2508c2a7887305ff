/* cli: the parsed command line, shared by main and the command runners.
 * Each runner takes a loaded description and its model, writes its output,
 * and returns a status; *code gets the exit code when the run succeeds. */
#ifndef LOOPWISE_CLI_H
#define LOOPWISE_CLI_H

#include "loopwise/design.h"

enum { MAX_SETS = 256, MAX_GAIN_POINTS = 100000 };

typedef struct options {
    const char *command, *file, *csv;
    const char *plot, *keep_script;   /* -o PATH, --keep-script DIR */
    int width, height, each;
    int samples, seed_given;
    unsigned long long seed;
    const char *tune, *within, *vary, *from, *to, *node, *cload, *density;
    int lin, gm_given;
    double gm;
    const char *sets[MAX_SETS];
    int nsets, json, points;
    double pm, fmin, fmax;
    int pm_given;
    double yield;                     /* montecarlo --yield, as a fraction */
    int yield_given;
} options;

/* Evaluates a numeric option with the file's number syntax; prints the
 * error and returns 2 when it is not a finite number. */
int option_number(const char *name, const char *text, expr_unit unit, double *v);
/* The margin goal of the command line: --pm (or the default 60 degrees as a
 * reference), --gm when given. */
design_goal option_goal(const options *o);

/* Draws fig after the text output; a failed plot turns *code into 3. */
int cmd_roots(const options *o, const desc *d, const model *m, const check_result *r,
              lw_error *err);
/* r with the Nyquist count (check_opts.want_nyquist). */
int cmd_polar(const options *o, const desc *d, const model *m, const check_result *r,
              lw_error *err);
int cmd_corners(const options *o, desc *d, int *code, lw_error *err);
/* nominal: the analysis with the --set values and no spread (the operating
 * point the histogram marks). */
int cmd_montecarlo(const options *o, const desc *d, const text_file *t,
                   const check_result *nominal, int *code, lw_error *err);
int cmd_size(const options *o, desc *d, int *code, lw_error *err);
int cmd_sweep(const options *o, desc *d, int *code, lw_error *err);
int cmd_load(const options *o, desc *d, int *code, lw_error *err);

#endif
