/* pencil: the generalized eigenproblems behind poles and zeros.
 *
 * The pencil G + sC is first scaled (D G D + s D C D, D diagonal, so that
 * every capacitive node has unit capacitance), then the null space of the
 * scaled C is split off with its symmetric eigendecomposition C' = Q L Q^T.
 * Eliminating the capacitance-free coordinates (a Schur complement on the
 * G22 block) leaves a standard r x r problem  s x = M x  whose eigenvalues are
 * exactly the finite natural frequencies: infinite eigenvalues never appear.
 * The same reduction gives the loop gain as a state-space form
 *   T(s) = -g d_i d_o (c^T (sI - M)^-1 b + d0),
 * whose invariant zeros come from the bordered pencil [[M, b],[c^T, d0]].
 *
 * Ownership: pencil_new allocates a reduction, pencil_free releases it
 * (NULL accepted). */
#ifndef LOOPWISE_PENCIL_H
#define LOOPWISE_PENCIL_H

#include <complex.h>

#include "loopwise/diag.h"

typedef struct pencil pencil;

/* Reduces G + sC (n x n row-major). Fails with LW_ENUMERIC when the
 * capacitance-free part of the network is singular. */
int pencil_new(int n, const double *G, const double *C, pencil **out, lw_error *err);
void pencil_free(pencil *p);

/* Number of finite natural frequencies (the rank of C). */
int pencil_rank(const pencil *p);

/* Finite eigenvalues (rad/s) into eig[rank]; when owner is not NULL, the
 * owner node of each (largest participation factor |l_k (C r)_k| among nodes
 * with capacitance, Perez-Arriaga, Verghese and Schweppe 1982) into owner[rank]. */
int pencil_eigen(const pencil *p, const double *C, double complex *eig, int *owner,
                 lw_error *err);

/* A transfer of the reduced network, v^T (G + sC)^-1 u: u is where a
 * current is injected, v what is read (node vectors, n values each). With
 * unit set, u = e_out and v = e_in without their scale factors: the form
 * the loop gain uses (T = -g d_in d_out times the transfer, see
 * pencil_scale), whose arithmetic touches only the two rows involved. */
typedef struct pencil_io {
    int unit;
    int in, out;               /* unit: node indices */
    const double *u, *v;       /* otherwise: node vectors */
} pencil_io;

/* How the zero candidates are found: PENCIL_ZEROS_AUTO takes the zero
 * dynamics (a standard eigenproblem of order rank minus the relative degree,
 * the fast path) where the relative degree is low and the network small,
 * the bordered pencil otherwise; PENCIL_ZEROS_QZ always takes the bordered
 * pencil (QZ, backward stable: the path to fall back on when the zero
 * dynamics, whose Krylov basis can be ill-conditioned, proves inaccurate). */
enum { PENCIL_ZEROS_AUTO, PENCIL_ZEROS_QZ, PENCIL_ZEROS_DYNAMICS, PENCIL_ZEROS_DYNAMICS_CHECK };

/* Candidate zeros (rad/s) of the transfer io: the finite eigenvalues of
 * the bordered pencil [[M, b], [c^T, d0]]. Candidates include modes the
 * transfer cannot see and, after rounding, spurious ones; the caller
 * verifies them. *nz gets the count (at most rank), *used the path taken
 * (PENCIL_ZEROS_QZ, PENCIL_ZEROS_DYNAMICS, or PENCIL_ZEROS_DYNAMICS_CHECK when the
 * zero dynamics was only moderately conditioned and each zero should be
 * checked against T). */
int pencil_zero_candidates(const pencil *p, const pencil_io *io, int method, double complex *z,
                           int *nz, int *used, lw_error *err);

/* The state-space form of the transfer io: c^T (sI - M)^-1 b + d0, with M
 * balanced and in controller Hessenberg form H = U^T D^-1 M D U, b and c
 * transformed alike (U^T D^-1 b = beta e_1), so that each evaluation costs
 * O(rank^2). */
typedef struct pencil_hess pencil_hess;
int pencil_hess_new(const pencil *p, const pencil_io *io, pencil_hess **out, lw_error *err);
/* The same without the real Schur form that pencil_hess_new adds from 1000
 * states on: for a caller that evaluates the transfer by other means
 * (loopgain.c's sparse LU of a large network). The evaluation then runs on
 * the Hessenberg form, and pencil_hess_eigen computes the eigenvalues
 * without the Schur vectors. */
int pencil_hess_new_plain(const pencil *p, const pencil_io *io, pencil_hess **out,
                          lw_error *err);
void pencil_hess_free(pencil_hess *h);
/* c^T (sI - H)^-1 b + d0; NaN when sI - H is singular. */
double complex pencil_hess_eval(pencil_hess *h, double complex s);
/* The same at a real s, in real arithmetic. */
double pencil_hess_eval_real(pencil_hess *h, double s);
/* pencil_zero_candidates with the evaluator h of the same transfer io at
 * hand: its controller Hessenberg form is the bordered pencil's
 * Hessenberg-triangular form, so QZ needs no reduction of its own. */
int pencil_hess_zero_candidates(const pencil *p, const pencil_hess *h, const pencil_io *io,
                                int method, double complex *z, int *nz, int *used,
                                lw_error *err);
/* Closed-loop poles as the eigenvalues of H - kappa b c^T, the loop closed
 * around the reduced form with T = gain (c^T (sI - H)^-1 b + d0). eig gets
 * rank values; *ok is 0 when the closed loop drops a degree (1 + gain d0 = 0),
 * and the caller must use the whole network's pencil instead. */
int pencil_hess_feedback_eigen(const pencil_hess *h, double gain, double complex *eig, int *ok,
                               lw_error *err);
/* The eigenvalues of H (the finite natural frequencies, rad/s) into eig[rank]:
 * the same values as pencil_eigen without owners, from the form already
 * reduced. */
int pencil_hess_eigen(const pencil_hess *h, double complex *eig, lw_error *err);
/* The state-space form of the transfer io (pencil_ss.c): v^T (G + sC)^-1 u
 * = c^T (sI - A)^-1 b + d, with A (rank x rank, row-major), b and c (rank
 * values each) in the reduced coordinates, before any Hessenberg reduction.
 * For a unit io the factors d_in d_out are left out, as above. */
int pencil_state_space(const pencil *p, const pencil_io *io, double *A, double *b, double *c,
                       double *d, lw_error *err);

/* The diagonal scaling factor d_k of node k. */
double pencil_scale(const pencil *p, int k);

#endif
