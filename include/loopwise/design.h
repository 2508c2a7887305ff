/* design: the commands that answer "what value do I use?": the margin at a
 * changed value (the building block), sweeps of one value with the target
 * crossings root-refined, the smallest value meeting a margin (size), the
 * load an output tolerates (load), and the per-node capacitance table.
 *
 * Every evaluation re-evaluates the description with one value overridden
 * and restores the override afterwards, so the desc is unchanged on return.
 * Ownership: *_run functions fill result structs whose arrays the matching
 * *_free releases. */
#ifndef LOOPWISE_DESIGN_H
#define LOOPWISE_DESIGN_H

#include "loopwise/check.h"
#include "loopwise/response.h"

enum { DESIGN_MAX_POINTS = 100000 };

/* The margins of the loop at one value of the varied quantity. */
typedef struct design_point {
    double value;
    double dc;              /* T(0), inf when unbounded */
    double crossover_hz;    /* NAN when no crossover */
    double pm_deg;          /* NAN when no crossover */
    double gm_db;           /* NAN when the phase never reaches -180 + 360 m */
    double p1_hz, p2_hz;    /* magnitudes of the dominant and second pole of T; NAN if absent */
    int p2_node;            /* owner node of the second pole, -1 */
    int stable;
    /* sweep --to (design_probe.c): the closed-loop response's figures; NAN
     * when not measured, and the step's when the loop is unstable */
    double overshoot_pct, settle1_s, peak_db;
} design_point;

/* The margin a command measures against. pm_deg is always set: it is --pm,
 * or the default 60 degrees, which the text marks but which is never a
 * reason to exit 1 (SPEC section 5); pm_given says which. gm_db is --gm. */
typedef struct design_goal {
    double pm_deg;
    double gm_db;           /* NAN: no gain-margin requirement */
    int pm_given;           /* 1 when --pm was on the command line */
} design_goal;

/* 1 when the point is stable and meets the goal. A gain margin that is
 * undefined because the phase never reaches -180 + 360 m is unbounded and
 * meets any gm_db. */
int design_meets(const design_point *p, design_goal g);
/* 1 when the point makes a command exit 1 (SPEC section 5): it is unstable,
 * or misses a target given on the command line (--pm, --gm). */
int design_fails(const design_point *p, design_goal g);
/* "target" when --pm was given, "reference" for the default. */
const char *design_goal_word(design_goal g);

/* Fills a design point from a finished analysis. */
void design_point_from(const check_result *r, double value, design_point *pt);
/* Distance to the goal: positive when met (phase and, if asked, gain margin). */
double design_goal_distance(const design_point *p, design_goal g);

/* Margins with target t set to value (desc restored afterwards). */
int design_eval(desc *d, desc_target t, double value, const check_opts *o, design_point *pt,
                lw_error *err);
/* Same, and hands back the whole analysis (free with check_result_free). */
int design_eval_full(desc *d, desc_target t, double value, const check_opts *o,
                     check_result *r, model **m, lw_error *err);

/* Margins with two targets set at once (desc restored afterwards); the
 * point's value is a. */
int design_eval2(desc *d, desc_target ta, double a, desc_target tb, double b,
                 const check_opts *o, design_point *pt, lw_error *err);

typedef struct design_crossing {
    double value;
    int rises;              /* 1: the margin rises through the target as the value grows */
    int jump;               /* 1: it jumps there (a crossover appears or vanishes), from */
    double before, after;   /* the phase margin 'before' just below to 'after' just above */
} design_crossing;

/* A closed-loop response read at every point of a sweep (SPEC section 6):
 * from an input or a current into a node, to node `to`. */
typedef struct sweep_probe {
    int to;
    response_src src;
} sweep_probe;

typedef struct sweep_result {
    design_point *pts;
    int npts;
    design_crossing *cross;
    int ncross;
    design_crossing *edge;  /* where the closed loop turns stable (rises = 1) or unstable */
    int nedge;              /* as the value grows: bisected to 1e-7 between two points */
    int missed;             /* some point misses the goal */
    int failed;             /* some point fails the exit-code rule (design_fails) */
    int probed;             /* the points carry a response's figures (sweep --to) */
    sweep_probe probe;      /* which response, when probed */
} sweep_result;


/* design_probe.c: the probe's figures at one point: the step's overshoot and
 * 1% settling time (when the loop is stable) and the peak of |H| in dB, over
 * the band of o's fmin_hz/fmax_hz (0: automatic) as 'response' reads it. */
int design_probe_point(const model *m, const check_result *r, const sweep_probe *p,
                       const check_opts *o, design_point *pt, lw_error *err);

int sweep_run(desc *d, desc_target t, double from, double to, int npts, int lin,
              design_goal g, const check_opts *o, sweep_result *r, lw_error *err);
/* The same over values v from..to, each evaluated as v + offset (a load
 * added to a node's own capacitance); the points and crossings carry v. */
int sweep_run_offset(desc *d, desc_target t, double from, double to, double offset, int npts,
                     int lin, design_goal g, const check_opts *o, sweep_result *r, lw_error *err);
/* sweep_run with a response read at every point (probe may be NULL). */
int sweep_run_probe(desc *d, desc_target t, double from, double to, int npts, int lin,
                    design_goal g, const check_opts *o, const sweep_probe *probe,
                    sweep_result *r, lw_error *err);
void sweep_result_free(sweep_result *r);
/* The point with the smallest phase margin (the first of equals; points
 * without a crossover left out), -1 when none has one. */
int sweep_smallest_margin(const sweep_result *r);

typedef struct size_result {
    int met;
    design_point best;      /* the answer when met; the best reachable otherwise */
    int window;             /* met only between lo_value and hi_value */
    double hi_value;        /* upper end of the window (NAN when none) */
    double lo, hi;          /* the range searched */
    int at_lo;              /* met already at lo: the smallest value lies below the range */
} size_result;

int size_run(desc *d, desc_target t, double lo, double hi, design_goal g, const check_opts *o,
             size_result *r, lw_error *err);

typedef struct load_result {
    int node;
    int inside;
    sweep_result sw;        /* margins over the load (inside) */
    double max_load_f;      /* largest load meeting the goal, NAN when none does */
    int met;                /* the whole range meets the goal */
    double *met_lo, *met_hi; /* the load ranges that meet the goal, ascending (inside);
                                their ends are the refined crossings */
    int nmet;
    /* when some load misses (inside): the load with the smallest margin, and
     * the compensation table's row that helps most there (-1: none helps);
     * advice_kind is a design_row_kind, advice_half 1 when halving helps */
    double worst_load;
    int advice_kind, advice_index, advice_half;
    double advice_gain;     /* degrees gained by that change */
    double r_seen;          /* resistance seen at the node (outside), inf when none */
    double c_node;          /* the node's own capacitance to ground */
    design_point nominal;   /* the margins without a load (outside: at every load) */
    int failed;             /* some load fails the exit-code rule (design_fails) */
} load_result;

int load_run(desc *d, int node, double lo, double hi, int npts, design_goal g, const check_opts *o,
             load_result *r, lw_error *err);
void load_result_free(load_result *r);

/* The compensation table (design_table.c). Fills r->node_double, node_half
 * and node_cg: the phase margin change (degrees) per node when its
 * capacitance to ground doubles and halves, NAN for nodes without
 * capacitance to ground or where a margin is undefined; and elem_double,
 * elem_half: the same per cap and res element when its value doubles and
 * halves (NAN for a gm). Left NULL beyond 64 nodes; the element rows are
 * NAN beyond 256 cap and res elements. */
int design_node_table(const desc *d, const check_opts *o, check_result *r, lw_error *err);

/* One row of the compensation table: a node's capacitance to ground, or a
 * cap or res element, with its value (F or ohm) and the margin changes. */
typedef enum { ROW_NODE, ROW_CAP, ROW_RES } design_row_kind;
typedef struct design_row {
    design_row_kind kind;
    int index;              /* node index (ROW_NODE) or element index */
    double value;
    double pm_double, pm_half;
    int order;              /* position before sorting */
} design_row;
/* The rows of the table, largest effect (either way) first, rows without a
 * figure last; *rows is allocated (free it). Returns the count, 0 when the
 * table was not computed, -1 without memory. */
int design_table_rows(const desc *d, const check_result *r, design_row **rows);

#endif
