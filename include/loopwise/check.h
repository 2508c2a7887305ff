/* check: the whole stability analysis of one description: the loop gain at
 * the break, its poles and zeros, margins, closed-loop poles, and each
 * declared loop's own gain and sign.
 *
 * Ownership: check_run fills a check_result that owns its arrays and the
 * loop-gain evaluator; check_result_free releases them. */
#ifndef LOOPWISE_CHECK_H
#define LOOPWISE_CHECK_H

#include <stdio.h>

#include "loopwise/desc.h"
#include "loopwise/loopgain.h"
#include "loopwise/margins.h"
#include "loopwise/model.h"
#include "loopwise/nyquist.h"

typedef struct check_opts {
    double fmin_hz, fmax_hz;   /* 0: automatic band */
    int want_owner;            /* owner nodes of the open-loop poles */
    int want_loops;            /* each declared loop's own gain and sign check */
    int keep_loops;            /* keep each loop's own-gain evaluator (for plots) */
    int want_nyquist;          /* the Nyquist count and its cross-check */
    FILE *progress;            /* not NULL: a line on it names each stage as it starts,
                                  with the time so far (for a terminal; cleared at the end) */
} check_opts;

typedef struct check_loop {
    int hop_gm;                /* model gm index where its own gain is measured; -1: none */
    double dc;                 /* own DC gain; inf when unbounded; NAN when no own gain */
    int sign;                  /* sign of the lowest-order term of its own gain */
} check_loop;

typedef struct check_result {
    lg_tf tf;
    margins mg;
    double complex *cl;        /* closed-loop poles, rad/s, sorted */
    int ncl;
    int stable;                /* every closed-loop pole strictly in the left half-plane */
    int marginal;              /* a closed-loop pole on the jw axis (within rounding) */
    double *estimate_hz;       /* one-pole-per-node estimate per node, NAN when none */
    check_loop *loops;
    int nloops;
    double dominance_db;       /* NAN when not defined */
    lgain *lg;                 /* evaluator of T at the break */
    double *node_double;       /* phase-margin change per node when its capacitance to */
    double *node_half;         /* ground doubles / halves; NULL unless computed (design.h) */
    double *node_cg;           /* each node's capacitance to ground (with the table) */
    double *elem_double;       /* the same per element when its value doubles / halves: */
    double *elem_half;         /* every cap and res; NAN for a gm (design.h) */
    int have_nyquist;          /* with want_nyquist: */
    nyquist nq;                /* the Nyquist count */
    int nyquist_disagrees;     /* its Z differs from the closed-loop poles in the RHP */
    lgain **loop_lg;           /* with keep_loops: each loop's own-gain evaluator (or NULL) */
    lg_tf *loop_tf;            /* and its structure */
} check_result;

int check_run(const desc *d, const model *m, const check_opts *o, check_result *r,
              lw_error *err);
void check_result_free(check_result *r);

/* 1 when a number of the result failed an internal consistency check: the
 * report's accuracy warning. */
int check_accuracy_warning(const check_result *r);

/* Warns on stderr about directed cycles of gm elements that no declared loop
 * follows (at most a few). Returns the number found. */
int check_warn_gm_cycles(const desc *d, FILE *out);

#endif
