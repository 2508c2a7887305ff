/* plot: runs gnuplot safely. A job is a private temporary directory holding
 * the data files and the script; gnuplot is started with fork/exec (never a
 * shell) on that script, and the image is moved into place only when gnuplot
 * succeeded. Text that comes from users only reaches the script through
 * plot_quote, which keeps it to a harmless character set inside a
 * single-quoted string (gnuplot does no substitution there).
 *
 * Ownership: plot_begin allocates a job; plot_finish or plot_abort releases
 * it (exactly one, once). */
#ifndef LOOPWISE_PLOT_H
#define LOOPWISE_PLOT_H

#include <stdio.h>

#include "loopwise/diag.h"

/* The project's own palette, told apart by lightness as well as hue so that
 * it survives grayscale and the common colour-vision deficiencies. */
#define PLOT_INK    "#1f2a44"  /* main curve: dark slate blue */
#define PLOT_ACCENT "#c8671b"  /* second axis, markers: burnt orange */
#define PLOT_MUTED  "#7f8c99"  /* targets and guides: grey blue */
#define PLOT_EXTRA  "#3c8d74"  /* overlays: muted green */

typedef struct plot_job plot_job;

/* The image type follows the extension of out_path (.png or .svg). */
int plot_begin(const char *out_path, int width, int height, plot_job **job, lw_error *err);
FILE *plot_script(plot_job *job);
/* Opens a data file NAME in the job's directory; the job closes it. */
FILE *plot_data(plot_job *job, const char *name, lw_error *err);
/* A job file's name as the script gives it: relative to the job directory,
 * where gnuplot runs (a program-made name, safe in a script), so that a
 * script kept with --keep-script runs in the directory it is kept in. */
const char *plot_path(plot_job *job, const char *name);
/* Whether --keep-script DIR can be written (an existing writable directory,
 * or a new one inside one), checked before anything is computed or written:
 * LW_EINPUT with a message that says what is wrong. */
int plot_keep_dir_check(const char *dir, lw_error *err);
/* Runs gnuplot, moves the image to out_path, copies data and script to
 * keep_dir when not NULL. LW_ENUMERIC (exit 3) when gnuplot is missing or
 * fails; the message names the package to install. */
int plot_finish(plot_job *job, const char *keep_dir, lw_error *err);
void plot_abort(plot_job *job);

/* Writes text as a single-quoted gnuplot string literal, every character
 * outside [A-Za-z0-9 ._,:=+()/-] replaced by '?'. */
void plot_quote(FILE *f, const char *text);

#endif
