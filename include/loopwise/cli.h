/* cli: the parsed command line, shared by main and the command runners.
 * Each runner takes a loaded description and its model, writes its output,
 * and returns a status; *code gets the exit code when the run succeeds. */
#ifndef LOOPWISE_CLI_H
#define LOOPWISE_CLI_H

#include "loopwise/design.h"
#include "loopwise/response.h"

enum { MAX_SETS = 256, MAX_GAIN_POINTS = 100000, MAX_AXES = 2, MAX_LEVELS = 100,
       MAX_PARTS = 10000 };

typedef struct options {
    const char *command, *file, *csv;
    const char *plot, *keep_script;   /* -o PATH, --keep-script DIR */
    int width, height, each;
    int samples, seed_given;
    unsigned long long seed;
    /* size: --tune twice for two values sized together (the k-th --within is
     * the k-th --tune's range); sweep: --vary twice for a map, each --from
     * and --to belonging to the --vary before it */
    const char *tune[MAX_AXES], *within[MAX_AXES];
    int ntune, nwithin;
    const char *vary[MAX_AXES], *from[MAX_AXES], *to[MAX_AXES];
    int nvary;
    const char *node, *cload, *density;
    const char *over;                 /* size --over corners|montecarlo */
    int levels;                       /* corners --levels K (0: not given) */
    /* --from/--to with a name (an input, a node) rather than a number:
     * the response's ends (response, sweep --to NODE) */
    const char *from_node, *to_node, *inject;
    int step;
    int lin, gm_given;
    double gm;
    const char *sets[MAX_SETS];
    int nsets, json, points;
    double pm, fmin, fmax;
    int pm_given;
    double yield;                     /* montecarlo --yield, as a fraction */
    int yield_given;
    /* montecarlo in parts (SPEC section 8): --part K/M (0/0 when not given),
     * --samples-out PATH, --merge PART.csv ... */
    int part_k, part_m;
    const char *samples_out;
    const char *merge[MAX_PARTS];
    int nmerge;
} options;

/* The command line (cli_parse.c). cli_early answers what needs no FILE:
 * --help (the command's help when argv[1] names one), 'help [COMMAND]',
 * --version and --complete LINE (bash completion); it returns 1 with the
 * exit code in *code when it did, 0 otherwise. cli_arguments_check refuses
 * an argument that is not text by the file's byte rules (they reach
 * messages, reproduce lines and plot scripts). cli_parse fills o (which the
 * caller initialises with the defaults, see cli_options_init) and checks
 * which options go with the command, as the option table says. Each
 * returns 0 or the exit code 2 after printing the usage error. */
int cli_early(int argc, char **argv, int *code);
int cli_arguments_check(int argc, char **argv);
void cli_options_init(options *o);
int cli_parse(int argc, char **argv, options *o);

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
 * point the histogram marks). With --part, only that part's samples; with
 * --merge, the parts' samples (mc_parts.h). An error about a part's file is
 * printed here (it names that file): the status comes back with an empty
 * err->msg. */
int cmd_montecarlo(const options *o, desc *d, const text_file *t, const check_result *nominal,
                   int *code, lw_error *err);
int cmd_size(const options *o, desc *d, const text_file *t, int *code, lw_error *err);
int cmd_sweep(const options *o, desc *d, const text_file *t, int *code, lw_error *err);

/* cmd_across.c: size over corners or Monte Carlo, two values sized
 * together, and the two-value map of sweep. */
int cmd_size_over(const options *o, desc *d, const text_file *t, int *code, lw_error *err);
int cmd_size_pair(const options *o, desc *d, int *code, lw_error *err);
int cmd_sweep_map(const options *o, desc *d, const text_file *t, int *code, lw_error *err);

/* Shared by the command runners (cmd_design.c): an option's number or
 * range LO..HI (positive: LO > 0), a --set/--tune/--vary name, the checks
 * a sweep or sizing runs with, and the picture options. */
int cli_number(const char *opt, const char *text, expr_unit unit, double *v, lw_error *err);
int cli_range(const char *opt, const char *text, expr_unit unit, int positive, double *lo,
              double *hi, lw_error *err);
int cli_target(const desc *d, const char *opt, const char *name, desc_target *t, lw_error *err);
/* The range --tune searches: --within, or value/100 .. value*100. */
int cli_tune_range(const desc *d, desc_target t, const char *name, const char *within,
                   double *lo, double *hi, lw_error *err);
/* A sweep axis: --from and --to checked as sweep checks them. */
int cli_sweep_range(const desc *d, desc_target t, const char *from, const char *to, int lin,
                    double *lo, double *hi, lw_error *err);
check_opts cli_design_opts(const options *o);
/* density -> VALUE '/um2' (capacitance per square micrometre). */
int cli_density(const char *text, double *v, lw_error *err);
/* "loopwise check FILE [--fmin F] [--fmax F] --set ... [--set TUNE=VALUE]
 * --set P=V ...": the command that gives exactly the figures of one corner
 * or sample (cmd_variation.c); tune may be NULL. A string to free, or NULL
 * without memory. */
char *cli_reproduce(const options *o, const desc *d, const char *tune, double value,
                    const int *params, int np, const double *v);
int cmd_load(const options *o, desc *d, int *code, lw_error *err);
/* cmd_response.c: the response named by --to and --from / --inject (or the
 * file's only input); *each is set for --inject each. */
int cmd_response_source(const options *o, const desc *d, int *to, response_src *src, int *each,
                        lw_error *err);
/* Its exit code is check's (report_check_status): 1 when the loop is
 * unstable or a --pm/--gm given is missed. */
int cmd_response(const options *o, const desc *d, const model *m, const check_result *r,
                 lw_error *err);

#endif
