/* desc: the loop description as the user wrote it: params, nodes, elements,
 * declared loops and the break, each with its position in the file.
 *
 * Ownership: desc_parse returns a desc that owns its names, expressions and
 * values; desc_free releases it (NULL is accepted). The text_file it was
 * parsed from may be freed right after desc_parse. */
#ifndef LOOPWISE_DESC_H
#define LOOPWISE_DESC_H

#include "loopwise/diag.h"
#include "loopwise/expr.h"
#include "loopwise/text.h"

enum { DESC_MAX_NAME = 64, DESC_MAX_NODES = 4096, DESC_MAX_ELEMS = 65536,
       DESC_MAX_PARAMS = 65536, DESC_MAX_LOOPS = 256, DESC_MAX_INPUTS = 256 };

#define DESC_GND (-1)
#define DESC_NO_OVERRIDE (-1)
#define DESC_FIXED (-2)

/* Keep in step with desc_elem_kind_name in desc.c. */
typedef enum { ELEM_RES, ELEM_CAP, ELEM_GM } desc_elem_kind;

typedef struct desc_pos {
    int line, col;
} desc_pos;

/* A spread bound: a percentage of the nominal value, or an expression. */
typedef struct desc_bound {
    int is_pct;
    double pct;
    int expr;
} desc_bound;

/* Keep in step with spread_dist_names in desc_eval.c. */
typedef enum { DIST_NONE, DIST_NORMAL, DIST_UNIFORM } desc_dist;

/* The spread of a param: corners LO..HI, and normal SIGMA or uniform LO..HI. */
typedef struct desc_spread {
    int has_range;
    desc_bound lo, hi;
    desc_pos range_at;
    desc_dist dist;
    desc_bound a, b;        /* normal: a is sigma; uniform: a..b */
    desc_pos dist_at;
    double lo_v, hi_v;      /* after desc_eval */
    double a_v, b_v;
} desc_spread;

typedef struct desc_param {
    char name[DESC_MAX_NAME + 1];
    desc_pos at;
    int expr;          /* handle in the pool */
    int override;      /* DESC_NO_OVERRIDE, DESC_FIXED, or a --set expression handle */
    double fixed;      /* the value when override == DESC_FIXED */
    double value;      /* after desc_eval */
    desc_spread spread;
    expr_unit unit;    /* the unit of the fields it feeds (UNIT_F, UNIT_OHM, UNIT_S), or
                        * UNIT_ANY when it feeds none whole or fields of different units */
} desc_param;

typedef struct desc_node {
    char name[DESC_MAX_NAME + 1];
    desc_pos at, r_at, c_at;
    int r_expr, c_expr;          /* -1 when the field is absent (defaults) */
    int r_override, c_override;  /* --set NODE.r / NODE.c, as for params */
    double r_fixed, c_fixed;
    double r, c;                 /* after desc_eval; r may be inf */
} desc_node;

/* An input (SPEC section 6): a driven node, an ideal voltage source from gnd.
 * Every analysis of the loop sees it as AC ground: an element end on an input
 * is stored as DESC_GND, with the input's index beside it. */
typedef struct desc_input {
    char name[DESC_MAX_NAME + 1];
    desc_pos at;
} desc_input;

typedef struct desc_elem {
    desc_elem_kind kind;
    char name[DESC_MAX_NAME + 1];
    desc_pos at, a_at, b_at, v_at;
    int a, b;          /* node indices; b (or a) may be DESC_GND. gm: a = IN, b = OUT */
    int a_in, b_in;    /* the input on that end (a or b is then DESC_GND), or -1. A res or
                          cap keeps its node in a and its input in b_in; a gm may have an
                          input only as IN (a_in) */
    int expr, override;
    double fixed;
    double value;      /* after desc_eval */
} desc_elem;

typedef struct desc_loop {
    char name[DESC_MAX_NAME + 1];
    desc_pos at, sign_at;
    int negative;      /* 1 for 'negative', 0 for 'positive' */
    int *nodes;
    desc_pos *node_at;
    int nnodes;
    int **hops;        /* hops[j]: element indices for hop nodes[j] -> nodes[j+1] */
    int *nhops;
} desc_loop;

typedef struct desc {
    char *path;        /* as given, for messages */
    desc_param *params; int nparams;
    double *pvals;     /* param values in index order, filled by desc_eval */
    desc_node *nodes;   int nnodes;
    desc_elem *elems;   int nelems;
    desc_loop *loops;   int nloops;
    desc_input *inputs; int ninputs;
    int brk;           /* element index of the break gm; -1 when the break is a node */
    int brk_node;      /* 'break NODE' (SPEC 1): the node whose gms are the break, else -1 */
    desc_pos brk_at;   /* position of the break line (or of the first loop line) */
    int brk_explicit;
    expr_pool *pool;
    char **lines;      /* source lines by number (1-based), for carets */
    int total_lines;
} desc;

/* What --set, --tune and --vary may name. */
typedef enum { TARGET_PARAM, TARGET_ELEM, TARGET_NODE_R, TARGET_NODE_C } desc_target_kind;
typedef struct desc_target {
    desc_target_kind kind;
    int index;
} desc_target;

int desc_parse(const text_file *t, const char *path, desc **out, lw_error *err);
void desc_free(desc *d);

/* Evaluates every value in file order, applying overrides, and checks each
 * against its allowed range. */
int desc_eval(desc *d, lw_error *err);

/* Fills every param's unit from the fields it feeds (desc_parse does). */
void desc_units_infer(desc *d);
/* The unit a target's value is shown with: a param's inferred unit (see
 * desc_param.unit), otherwise as desc_target_unit. */
expr_unit desc_target_shown_unit(const desc *d, desc_target t);

/* Finds NAME (a param, an element, or NODE.r / NODE.c). */
int desc_target_find(const desc *d, const char *name, desc_target *t, lw_error *err);
/* Applies "NAME=EXPR" from the command line as an override. */
int desc_set(desc *d, const char *assignment, lw_error *err);
/* Overrides a target with a plain number (for sweeps and sizing). */
int desc_target_set(desc *d, desc_target t, double value, lw_error *err);
/* Saves and restores a target's override (for temporary changes). */
typedef struct desc_saved {
    int override;
    double fixed;
} desc_saved;
desc_saved desc_target_save(desc *d, desc_target t);
void desc_target_restore(desc *d, desc_target t, desc_saved s);
/* The unit a target's value carries (UNIT_F for a cap, ...). */
expr_unit desc_target_unit(const desc *d, desc_target t);
/* The current value of a target (after desc_eval). */
double desc_target_value(const desc *d, desc_target t);
const char *desc_elem_kind_name(desc_elem_kind k);
/* Index of node, element or input by name, -1 if absent. */
int desc_find_node(const desc *d, const char *name);
int desc_find_input(const desc *d, const char *name);
int desc_find_elem(const desc *d, const char *name);
/* The name at one end of an element (b_end 0: a, the IN of a gm; 1: b):
 * the node, the input it is tied to, or "gnd". */
const char *desc_elem_end(const desc *d, const desc_elem *e, int b_end);
/* The break (desc_break.c). desc_break_name resolves the name on a 'break'
 * line among what is declared so far (a gm, or a node that controls one);
 * desc_break_choose picks the break when no line named it. */
int desc_break_name(desc *d, const char *name, int line, int col, const char *raw,
                    lw_error *err);
int desc_break_choose(desc *d, lw_error *err);
/* The gms whose IN is node (the break of 'break NODE'), in file order, into
 * gms (may be NULL); returns their count. */
int desc_break_gms(const desc *d, int node, int *gms);
/* A local loop the break opens too: a chain of res and cap elements (a
 * Miller capacitor, alone or with its nulling resistor, through nodes that
 * carry nothing else, none a hop of a declared loop) from the IN to the OUT
 * of a gm of the break. Its elements into chain (at most max) and the gm
 * into *gm; returns their count, 0 when the break opens no such loop. */
int desc_break_bridge(const desc *d, int *gm, int *chain, int max);
/* A node of the outer loop to break at instead: on every declared loop, the
 * input of a gm, and not bridged to that gm's output itself (the first in
 * the first loop's order); -1 when none. */
int desc_break_suggest(const desc *d);

/* Fills err->src with source line `line` for the caret display. */
void desc_error_source(const desc *d, lw_error *err);

#endif
