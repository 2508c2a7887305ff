/* loopgain: the return ratio T(s) = -g [Y0(s)^-1]_(i,o) at the break, its
 * exact evaluation at any complex s, and its pole/zero structure.
 *
 * Ownership: lgain_new allocates an evaluator with its own workspace (no
 * allocation per frequency point); lgain_free releases it (NULL accepted).
 * lg_tf_analyse fills an lg_tf whose arrays lg_tf_free releases. */
#ifndef LOOPWISE_LOOPGAIN_H
#define LOOPWISE_LOOPGAIN_H

#include <complex.h>

#include "loopwise/diag.h"

typedef struct lgain lgain;

/* G0 is G with the break switched off; in/out are the break's nodes, g its value. */
int lgain_new(int n, const double *G0, const double *C, int in, int out, double g,
              lgain **out_lg, lw_error *err);
/* A break at node `in` that is several gms taken together (SPEC 1, 'break
 * NODE'): T(s) = -e_in^T Y0(s)^-1 u, u (n values) the sum of g e_OUT over
 * those gms, G0 with all of them switched off. With one gm this is the T of
 * lgain_new; that path is cheaper and is the one to take then. */
int lgain_new_vec(int n, const double *G0, const double *C, int in, const double *u,
                  lgain **out_lg, lw_error *err);
/* lgain_new (u NULL) or lgain_new_vec (u given; out and g unused). With
 * ahead, for an analysis that goes on to lg_tf_analyse with owners and to
 * lgain_closed_loop: from 1000 nodes, with more than one thread and
 * outside a parallel region, the dense eigenproblems those ask for are
 * computed here two at a time (loopgain_ahead.c), with the same results. */
int lgain_new_ahead(int n, const double *G0, const double *C, int in, int out, double g,
                    const double *u, int ahead, lgain **out_lg, lw_error *err);
void lgain_free(lgain *lg);
/* T(s) for s in rad/s, through the Hessenberg form of the reduced network:
 * O(rank^2) per point; from 1000 nodes on by the sparse LU of the whole
 * network (lgain_eval_full) from the start. NaN when Y0(s) is singular at s. */
double complex lgain_eval(lgain *lg, double complex s);
/* The same at a real s, in real arithmetic. */
double lgain_eval_real(lgain *lg, double s);
/* The same by a complex LU factorization of the whole Y0(s): an
 * independent path, used to cross-check the fast one. Dense, O(n^3), below
 * 200 nodes; from 200 nodes on the sparse LU of netlu.h, whose cost grows
 * with the nonzeros of the factors (about linearly on a network). */
double complex lgain_eval_full(lgain *lg, double complex s);
/* Makes lgain_eval use the LU path from now on: chosen when a spot check
 * finds the fast path inaccurate (poles spread over many decades make the
 * reduced form ill-conditioned far from them). */
void lgain_use_full(lgain *lg, int on);
int lgain_uses_full(const lgain *lg);
/* The last point (Hz, degrees) of a walk of the exact phase (margins.c),
 * kept with the evaluator so that a table of rising frequencies walks each
 * stretch once; recall returns 0 when there is none. */
void lgain_walk_store(lgain *lg, double hz, double ph);
int lgain_walk_recall(const lgain *lg, double *hz, double *ph);

/* The loop gain's structure. Frequencies in rad/s. */
typedef struct lg_tf {
    int npoles;               /* open-loop poles: every finite root of det Y0 */
    double complex *poles;    /* sorted by magnitude, then imaginary part */
    int *owner;               /* owner node per pole, -1 when none (NULL unless asked) */
    unsigned char *hidden;    /* 1 for a pole T cannot see (a decoupled mode) */
    int nzeros;               /* zeros of T, origin ones included, sorted likewise */
    double complex *zeros;
    int origin;               /* T ~ K0 s^origin as s -> 0 */
    int sign;                 /* sign of K0: +1, -1, or 0 when T is identically 0 */
    double dc;                /* T(0): inf when origin < 0, 0 when origin > 0 */
    int suspect;              /* 1 when the numbers failed an internal consistency check */
    double origin_tol;        /* magnitude below which a pole or zero counts as at s = 0 */
    int zeros_qz;             /* 1 when the zeros came from the bordered pencil (QZ) */
    int phase_exact;          /* 1: the factored form disagrees with T, so the phase is
                                 walked on the exact T (set with margins_find_exact) */
} lg_tf;

/* C is the network's capacitance matrix (for the owner nodes); the break and
 * the network are the ones lg was made for. */
int lg_tf_analyse(const double *C, lgain *lg, int want_owner, lg_tf *tf, lw_error *err);
void lg_tf_free(lg_tf *tf);
/* The smallest magnitude (rad/s) among the poles T sees and its zeros, the
 * origin left out; infinity when there is none. */
double lg_tf_lowest_root(const lg_tf *tf);
/* Finds the zeros of T again by the bordered pencil (QZ) when they came
 * from the zero dynamics: the second path, taken when the factored form
 * built from them disagrees with the exact T. Poles are kept. */
int lg_tf_zeros_again(lgain *lg, lg_tf *tf, lw_error *err);

/* Finite roots of det(G + sC) (closed-loop poles when G has the break on),
 * sorted. *roots is allocated; the caller frees it. */
int lg_natural_frequencies(int n, const double *G, const double *C, double complex **roots,
                           int *nroots, lw_error *err);

/* Closed-loop poles from the evaluator's reduced form (the loop closed
 * around it); falls back to the whole network G (break on) when the closed
 * loop loses a degree. */
int lgain_closed_loop(lgain *lg, int n, const double *G, const double *C, double complex **roots,
                      int *nroots, lw_error *err);

/* Sorts by magnitude, then imaginary part. */
void lg_sort(double complex *v, int n);

#endif
