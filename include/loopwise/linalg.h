/* linalg: the dense linear algebra of loopwise that is not an eigenproblem,
 * on LAPACK through LAPACKE: the inverse of a block through its singular
 * value decomposition (dgesdd), the rank test of a matrix (singular values
 * of its equilibrated form), and one solve of a real or complex system by
 * LU with partial pivoting (dgetrf/dgetrs, zgetrf/zgetrs).
 *
 * Matrices are row-major. Each call allocates and frees its own workspace
 * unless it takes one. Return values: 0 on success, -1 when out of memory,
 * 1 when LAPACK reports a failure, and as each function says. */
#ifndef LOOPWISE_LINALG_H
#define LOOPWISE_LINALG_H

#include <complex.h>

/* The inverse of the m x m A into inv, through A = U S V^T: inv = V S^-1 U^T.
 * Returns 2, with inv untouched, when the smallest singular value is below
 * tol times the largest (or the largest is 0). */
int linalg_inverse_svd(int m, const double *A, double *inv, double tol);

/* 1 when the n x n A is singular to rounding: its rows, then its columns
 * scaled to unit largest entry (the test is about rank, not units), and the
 * smallest singular value then below tol times the largest (from order 1000
 * on: LAPACK's estimate of the reciprocal 1-norm condition number of its LU
 * below tol, or a zero pivot). 1 as well when it cannot be decided (out of
 * memory, no convergence). */
int linalg_singular(int n, const double *A, double tol);

/* linalg_singular of the bordered [[A, u], [e_row^T, 0]] ((n+1) x (n+1)),
 * the border scaled to A's largest entry: singular when v^T A^-1 u = 0 for
 * A invertible (a zero of that transfer at s = 0). u NULL: e_col. */
int linalg_bordered_singular(int n, const double *A, const double *u, int col, int row,
                             double tol);

/* An orthonormal basis Q (r x r, column-major) of R^r whose first k
 * columns span the k columns of W (r x k, column-major, overwritten), from
 * W's QR factorization (dgeqrf, dorgqr); rdiag[k] gets R's diagonal. */
int linalg_qr_basis(int r, int k, double *W, double *Q, double *rdiag);

/* Solves A x = rhs (n x n, row-major) in place of rhs; A is overwritten by
 * its LU factors, piv has n entries. Returns 2 when A is exactly singular
 * (a zero pivot). */
int linalg_solve_real(int n, double *A, int *piv, double *rhs);
int linalg_solve_complex(int n, double complex *A, int *piv, double complex *rhs);

#endif
