/* model: the numeric network built from an evaluated description:
 * Y(s) = G + sC (n x n, real), and the list of gm elements with their stamps.
 *
 * Ownership: model_new allocates; model_free releases (NULL accepted). The
 * model copies what it needs and does not refer back to the desc. */
#ifndef LOOPWISE_MODEL_H
#define LOOPWISE_MODEL_H

#include "loopwise/desc.h"

typedef struct model_gm {
    int elem;      /* element index in the desc */
    int in, out;   /* node indices */
    double g;
} model_gm;

/* An element with one end on an input (SPEC section 6): it stamps G and C
 * as if the input were gnd, and drives the network when the input moves. */
typedef struct model_in {
    int input, node;   /* the node is the res or cap's other end, or the gm's OUT */
    desc_elem_kind kind;
    double value;
} model_in;

typedef struct model {
    int n;
    double *Gp;    /* n x n row-major: conductances only, no gm */
    double *C;     /* n x n row-major */
    model_gm *gm;
    int ngm;
    int brk;       /* index into gm[] of the break; -1 when the break is a node */
    int brk_node;  /* the node of a 'break NODE' (its gms taken together), else -1 */
    model_in *ins; /* elements on inputs; a gm driven by an input is here, not in gm[] */
    int nins, ninputs;
} model;

int model_new(const desc *d, model **out, lw_error *err);
void model_free(model *m);

/* Fills G (n x n) = Gp + every gm stamp, leaving out the gms whose off[k] is
 * nonzero (off may be NULL). A gm current g·v(IN) flows into OUT, so
 * G[OUT][IN] -= g. */
void model_fill_g(const model *m, const unsigned char *off, double *G);

/* Marks the gms of the break in off[] (ngm values; one gm, or every gm
 * controlled by the break node) and returns how many; *in gets the node that
 * controls them. */
int model_break_mark(const model *m, unsigned char *off, int *in);

/* The right-hand side of Y(s) v = (b0 + s b1) u for a unit voltage u on
 * input x: each res R from x to node k adds 1/R to b0[k], each cap C adds C
 * to b1[k], each gm g from x into k adds g to b0[k]. b0, b1 have n values. */
void model_input_fill(const model *m, int x, double *b0, double *b1);

/* Adds the two-terminal stamp of admittance y between a and b (b may be
 * DESC_GND) to the n x n row-major A. */
void model_stamp2(double *A, int n, int a, int b, double y);

/* Index into gm[] of element e, or -1. */
int model_gm_of_elem(const model *m, int e);

#endif
