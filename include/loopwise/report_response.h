/* report_response: text, JSON and CSV output of 'response' (SPEC section 6):
 * one transfer with its table and step response, or the table of
 * --inject each. Nothing here computes; every number arrives ready. */
#ifndef LOOPWISE_REPORT_RESPONSE_H
#define LOOPWISE_REPORT_RESPONSE_H

#include <stdio.h>

#include "loopwise/report_design.h"
#include "loopwise/step.h"

/* The frequency table: n points; db and ph are NAN where |H| = 0. */
typedef struct response_table {
    int n;
    double *hz, *db, *ph;
} response_table;

typedef struct response_report {
    const char *to;                 /* the read-out node */
    const char *from;               /* the input, or NULL */
    const char *inject;             /* the node a current flows into, or NULL */
    const response_result *res;
    const double complex *cl;       /* closed-loop poles, rad/s */
    int ncl, stable;
    const step_result *step;        /* NULL when the loop is unstable */
    int show_step;                  /* text: the step block (--step) */
    response_table tab;
} response_report;

void report_response(FILE *f, const desc *d, const response_report *rr, out_format fmt);

typedef struct each_report {
    const char *to;
    const step_each_item *items;    /* sorted */
    int n;
    const double complex *cl;
    int ncl, stable;
} each_report;

/* Sorts items by overshoot (ascending, undefined last), then by the 1%
 * settling time. */
void report_each_sort(step_each_item *items, int n);
void report_each(FILE *f, const desc *d, const each_report *er, out_format fmt);

#endif
