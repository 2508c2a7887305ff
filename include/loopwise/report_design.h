/* report_design: text, JSON and CSV output of 'size', 'sweep' and 'load'. */
#ifndef LOOPWISE_REPORT_DESIGN_H
#define LOOPWISE_REPORT_DESIGN_H

#include <stdio.h>

#include "loopwise/design.h"
#include "loopwise/report.h"

typedef enum { OUT_TEXT, OUT_JSON, OUT_CSV } out_format;

/* The margin fields of a point as JSON members (no braces): phase_margin_deg,
 * crossover_hz, gain_margin_db, dc_loop_gain, stable. */
void report_point_fields(FILE *f, const design_point *p);

/* The unit symbol a target's value is shown with ("F", "Ω", "S" or ""). */
const char *report_unit_symbol(const desc *d, desc_target t);
const char *report_unit_of(expr_unit u);
/* "phase margin target 45°" or "phase margin reference 60°", and the gain
 * margin target when one is given; returns buf. */
char *report_goal_text(design_goal g, char *buf, size_t n);
/* The mark of a table row below the goal: "  < target" or "  < reference". */
const char *report_below_mark(design_goal g);
/* Writes w as one word for a POSIX shell: as it is when it holds no
 * character a shell treats specially, otherwise in single quotes (a quote
 * inside as '\'' ), so that a printed command line can be pasted. */
void report_shell_word(FILE *f, const char *w);
/* Prints s left-aligned in width characters (not bytes: units carry µ and Ω). */
void report_pad(FILE *f, const char *s, int width);

void report_sweep(FILE *f, const desc *d, const char *name, desc_target t,
                  const sweep_result *r, design_goal g, out_format fmt);
/* at: the full analysis at the answer (closed-loop poles, DC gain);
 * density: capacitance per square micrometre, or NAN. */
void report_size(FILE *f, const desc *d, const char *name, desc_target t, const size_result *r,
                 const check_result *at, design_goal g, double density, out_format fmt);
/* sets: the command line's --set values, repeated in the suggested size
 * command (a --set of the loaded node's c is replaced by its own value plus
 * the load). */
void report_load(FILE *f, const desc *d, const load_result *r, double lo, double hi,
                 design_goal g, const char *const *sets, int nsets, out_format fmt);

#endif
