/* report: the outputs people and scripts read: the text report and JSON of
 * 'check', and the frequency-response table, CSV and JSON of 'gain'. */
#ifndef LOOPWISE_REPORT_H
#define LOOPWISE_REPORT_H

#include <stdio.h>

#include "loopwise/check.h"

typedef struct report_target {
    double pm_deg;     /* target phase margin, or the default 60 as a reference */
    int given;         /* 1 when --pm was on the command line */
    double gm_db;      /* target gain margin when gm_given */
    int gm_given;      /* 1 when --gm was on the command line */
} report_target;

/* Exit status of 'check', 'gain' and 'roots' (SPEC section 5): 1 when the
 * loop is unstable, when --pm is given and missed or there is no margin to
 * compare with it, or when --gm is given and missed (a gain margin that is
 * unbounded, the phase never reaching -180 + 360 m, meets any --gm). */
int report_check_status(const check_result *r, report_target t);

/* One note line (after indent) when the break also opens a local loop
 * around its stage (desc_break_bridge), naming a node of the outer loop to
 * break at instead; nothing otherwise. */
void report_break_note(FILE *f, const desc *d, const char *indent);

void report_check_text(FILE *f, const desc *d, const model *m, const check_result *r,
                       report_target t);
void report_check_json(FILE *f, const desc *d, const model *m, const check_result *r);

typedef enum { GAIN_TEXT, GAIN_CSV, GAIN_JSON } gain_format;
/* npoints log-spaced over the analysis band. */
int report_gain(FILE *f, const desc *d, const check_result *r, int npoints, gain_format fmt);

/* JSON helpers shared by the commands: a double as %.17g, or null when not finite. */
void json_number(FILE *f, double v);
void json_string(FILE *f, const char *s);

#endif
