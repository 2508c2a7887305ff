/* eigvals: the eigenvalues (values only) of small real matrices, by LAPACK's
 * Hessenberg QR iteration (dgebal, dgehrd, dhseqr through LAPACKE), and the
 * Hessenberg reduction itself (dgehrd, dormhr).
 *
 * Every pole, zero and closed-loop pole that needs no eigenvectors comes
 * through here. At the sizes of a loop (ten states) LAPACK's iteration was
 * measured about twice as fast as GSL's Francis implementation, which is
 * what a Monte Carlo run of three such problems per sample pays for.
 * Nothing is kept between calls: each call allocates and frees its own
 * workspace. */
#ifndef LOOPWISE_EIGVALS_H
#define LOOPWISE_EIGVALS_H

#include <complex.h>

/* Eigenvalues of the n x n row-major matrix A into ev[n], A balanced first
 * (Parlett and Reinsch). A is not changed. Returns 0 on success, -1 when out
 * of memory, 1 when the iteration did not converge. */
int eigvals_general(int n, const double *A, double complex *ev);

/* The same for an upper Hessenberg H (row-major; entries below the first
 * subdiagonal are ignored), without balancing or reduction. */
int eigvals_hessenberg(int n, const double *H, double complex *ev);

/* Reduces the n x n row-major A in place to upper Hessenberg form
 * H = U^T A U (zeros below the subdiagonal) by Householder reflections, and
 * replaces each of the nv vectors stored one after another in v (n values
 * each) by U^T v. Returns 0, -1 when out of memory, 1 on a LAPACK error. */
int eigvals_hessenberg_form(int n, double *A, double *v, int nv);

#endif
