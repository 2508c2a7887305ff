/* modal: the block-diagonal (modal) form of a state-space model, for the
 * exact step response of step.c.
 *
 * A (r x r) is balanced, brought to real Schur form A = Z T Z^T (LAPACK
 * dgees), eigenvalues that nearly coincide are moved next to each other
 * (dtrsen) and the diagonal blocks are decoupled by Sylvester equations
 * (dtrsyl), after Bavely and Stewart, "An algorithm for computing reducing
 * subspaces by block diagonalization", SIAM J. Numer. Anal. 16 (1979):
 * A = S diag(B_1, ..., B_m) S^-1. Each block is a mode: a real pole, a
 * complex pair, or a cluster of nearly equal poles (a repeated pole, whose
 * residues in the partial fractions would be huge and cancel) kept whole.
 *
 * With b~ = S^-1 b and c~^T = c^T S, the step response of
 * c^T (sI - A)^-1 b + d is, for t > 0 (A stable, so every B_k invertible),
 *
 *   y(t) = y(inf) + sum_k c~_k^T e^(B_k t) B_k^-1 b~_k
 *
 * which is exact: a real pole p with residue r gives (r/p) e^(pt), a pair
 * 2 Re((r/p) e^(pt)), and a cluster the matrix exponential of its block
 * (GSL, gsl_linalg_exponential_ss). The read-out c is fixed when the form is
 * made; each input b gives a weight vector w (modal_weights), and then
 * y(t) - y(inf) = row_y(t) . w and y'(t) = row_d(t) . w, where the rows
 * depend on t alone (modal_rows): many inputs share one set of rows.
 *
 * Ownership: modal_new allocates, modal_free releases (NULL accepted). */
#ifndef LOOPWISE_MODAL_H
#define LOOPWISE_MODAL_H

#include <complex.h>

#include "loopwise/diag.h"

/* Keep in step with the mode construction in modal.c. */
typedef enum { MODE_REAL, MODE_PAIR, MODE_CLUSTER } modal_kind;

typedef struct modal_mode {
    modal_kind kind;
    int off, size;          /* rows of its block in the block-diagonal form */
    int woff, nw;           /* its weights: 1 (real), 2 (pair: re, im), size (cluster) */
    double complex p;       /* the pole, rad/s (a pair or cluster: the member with the
                               largest real part, imaginary part >= 0) */
    double complex cp;      /* real and pair: the read-out coefficient */
    double complex l0, l1;  /* pair: its left eigenvector in the block */
    double *B, *Binv, *cc;  /* cluster: the block, its inverse, the read-out row */
    double *E, *ws;         /* cluster: workspace for the exponential */
} modal_mode;

typedef struct modal {
    int r, nw;
    int nmodes;
    modal_mode *modes;
    double *Sinv;           /* r x r row-major: b~ = Sinv b */
    double *tmp;            /* 2 r values */
} modal;

int modal_new(int r, const double *A, const double *c, modal **out, lw_error *err);
void modal_free(modal *mf);

/* The weights of input b (r values) into w (mf->nw values). */
void modal_weights(modal *mf, const double *b, double *w);
/* The rows at time t > 0 (each mf->nw values; rd may be NULL). */
int modal_rows(modal *mf, double t, double *ry, double *rd);
/* Mode k's term at t = 0+ as an envelope: |r/p| for a real pole, 2 |r/p| for
 * a pair, and for a cluster the sum of its read-out entries times weights
 * (an upper bound of its term's size at 0+). */
double modal_amplitude(const modal *mf, int k, const double *w);
/* y(t) - y(inf) for weights w, and y'(t) in *dy (may be NULL), summed mode
 * by mode; with lamp (ln of each mode's modal_amplitude) a real or paired
 * term whose envelope lamp[k] + Re(p) t is below lfloor is left out. */
double modal_value(modal *mf, const double *w, const double *lamp, double lfloor, double t,
                   double *dy);
/* Mode k's term alone at time t (for a cluster's lifetime). */
double modal_term(modal *mf, int k, const double *w, double t);

#endif
