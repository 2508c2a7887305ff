/* mc_parts: Monte Carlo in parts (SPEC section 8). A part's samples are
 * written to a CSV file (--samples-out) whose '#' lines name the run it
 * belongs to; --merge reads any number of such files, in any order, checks
 * that they come from one run of this description and hold every index
 * exactly once, and gives back the result one run over all the samples
 * gives. That result is the same to the last digit: every number is written
 * with 17 significant digits, which read back as the same double, and the
 * statistics do not depend on the order the samples arrive in (each
 * quantity is sorted before it is summed).
 *
 * The file:
 *   # loopwise montecarlo samples, format 1
 *   # file PATH                  (the description, as given; not checked)
 *   # fingerprint HEX            (of the description's text, comments left out)
 *   # samples N                  (the whole run's)
 *   # seed S
 *   # part K/M
 *   # set NAME=EXPR              (each --set, in order)
 *   # fmin F / # fmax F          (when given)
 *   index,P1,...,Pn,phase_margin_deg,crossover_hz,gain_margin_db,stable,pass
 *   one row per sample: its index i (from 0), the drawn value of each varied
 *   param, the margins (empty when undefined), stable (empty when the drawn
 *   values are not allowed), pass (against the part run's targets)
 *
 * Ownership: mc_parts_merge fills an mc_result that mc_result_free
 * releases. */
#ifndef LOOPWISE_MC_PARTS_H
#define LOOPWISE_MC_PARTS_H

#include <stdint.h>

#include "loopwise/variation.h"

/* What makes samples of one run: the same description, draws and band. */
typedef struct mc_run_id {
    uint64_t fingerprint;        /* mc_parts_fingerprint of the description */
    int total;                   /* samples in the whole run; 0: read from the parts */
    uint64_t seed;
    int seed_given;              /* 0: read from the parts */
    int part_k, part_m;          /* the part written (1/1 for a whole run) */
    const char *const *sets;     /* the --set options, in order */
    int nsets;
    double fmin_hz, fmax_hz;     /* the band given; 0 when automatic */
} mc_run_id;

/* FNV-1a (64 bits) of the description's tokens, line by line: comments,
 * blank lines and spacing do not change it; any value or name does. */
uint64_t mc_parts_fingerprint(const text_file *t);

/* Writes the samples of r (a part, or a whole run) to path, whole or not
 * at all. file is the description's name for the '# file' line. */
int mc_parts_write(const char *path, const char *file, const desc *d, const mc_result *r,
                   const mc_run_id *id, design_goal g, lw_error *err);

/* Reads the parts paths[n] into r (every sample of the run, in index
 * order, then summarised against g), checking each file against *id (the
 * merge's own description, --set and band; total and seed are taken from
 * the parts when not given, and returned). The DC loop gain of the worst
 * sample is not in the files: the caller evaluates it. On an error about
 * a file, *where names it (err's line and column are in it); otherwise
 * *where is NULL. */
int mc_parts_merge(const char *const *paths, int n, const desc *d, mc_run_id *id, design_goal g,
                   mc_result *r, const char **where, lw_error *err);

#endif
