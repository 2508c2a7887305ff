/* netlu: the network matrix Y(s) = A + sB solved as the sparse matrix it is,
 * by SuiteSparse's KLU (Davis and Palamadai Natarajan, "Algorithm 907: KLU,
 * a direct sparse solver for circuit simulation problems", ACM TOMS 37(3),
 * 2010): the pattern ordered once (block triangular form, then AMD on each
 * block), the matrix factored with partial pivoting at each s. A node
 * touches a few elements, so a solve costs about the nonzeros of the
 * factors, where the dense LU costs n^3.
 *
 * Ownership: netlu_new copies the nonzeros of A and B (the caller keeps
 * its matrices); netlu_free releases everything (NULL accepted). One
 * netlu is for one thread at a time. */
#ifndef LOOPWISE_NETLU_H
#define LOOPWISE_NETLU_H

#include <complex.h>

#include "loopwise/diag.h"

typedef struct netlu netlu;

/* A and B are n x n, row-major; the pattern is the union of their nonzeros
 * and the diagonal. */
int netlu_new(int n, const double *A, const double *B, netlu **out, lw_error *err);
void netlu_free(netlu *lu);
/* Solves (A + sB) x = b in place: x holds b on entry and the solution on
 * return. Returns 0; 2 when the matrix is singular at s (a zero pivot) or
 * the solution is not finite (a pivot that small); -1 when out of memory;
 * 1 on another failure of the solver. A nearly singular matrix that still
 * gives finite numbers returns 0: the caller judges the answer. */
int netlu_solve(netlu *lu, double complex s, double complex *x);
/* The same at a real s, in real arithmetic. */
int netlu_solve_real(netlu *lu, double s, double *x);

#endif
