/* eigvals: the dense eigenproblems of loopwise, on LAPACK through LAPACKE:
 * eigenvalues (dgebal, dgehrd, dhseqr), eigenvalues with left and right
 * eigenvectors (dgeev), the symmetric problem (dsyevd), the Hessenberg and
 * controller Hessenberg reductions (dgehrd, dormhr, dlarfg), and the
 * generalized problem of a Hessenberg-triangular pencil (dhgeqz, and the
 * multishift QZ dlaqz0 for large pencils).
 *
 * Matrices are row-major unless a function says otherwise. Nothing is kept
 * between calls: each call allocates and frees its own workspace, one block
 * per call. Every function returns 0 on success, -1 when out of memory and
 * 1 when LAPACK reports a failure (an iteration that did not converge). */
#ifndef LOOPWISE_EIGVALS_H
#define LOOPWISE_EIGVALS_H

#include <complex.h>

/* Keeps OpenBLAS on one thread in every call, outside the program's OpenMP
 * regions too, and leaves the program's own OpenMP thread count as it was.
 * Called once at start: a BLAS call split over threads sums in another
 * order, and results must not depend on the thread count (the Monte Carlo
 * points and sweep points are what runs in parallel). */
void eigvals_blas_one_thread(void);

/* Eigenvalues of the n x n row-major matrix A into ev[n], A balanced first
 * (Parlett and Reinsch). A is not changed. Returns 0 on success, -1 when out
 * of memory, 1 when the iteration did not converge. */
int eigvals_general(int n, const double *A, double complex *ev);

/* The same for an upper Hessenberg H (row-major; entries below the first
 * subdiagonal are ignored), without balancing or reduction. */
int eigvals_hessenberg(int n, const double *H, double complex *ev);

/* The same for an upper Hessenberg H, balanced first by a diagonal
 * similarity (dgebal, scaling only, which keeps the Hessenberg form): for
 * a Hessenberg matrix whose first row was changed, as the closed loop's. */
int eigvals_hessenberg_balanced(int n, const double *H, double complex *ev);

/* The real Schur form of an upper Hessenberg H (n x n row-major, entries
 * below the subdiagonal ignored), H = Z S Z^T (dhseqr with Schur vectors):
 * S replaces H (quasi-upper triangular: 1 x 1 and 2 x 2 blocks on the
 * diagonal, row-major), each of the nv vectors in v (n values each, one
 * after another) is replaced by Z^T v, and ev[n] gets the eigenvalues. */
int eigvals_schur(int n, double *H, double *v, int nv, double complex *ev);

/* Reduces the n x n row-major A in place to upper Hessenberg form
 * H = U^T A U (zeros below the subdiagonal) by Householder reflections, and
 * replaces each of the nv vectors stored one after another in v (n values
 * each) by U^T v. Returns 0, -1 when out of memory, 1 on a LAPACK error. */
int eigvals_hessenberg_form(int n, double *A, double *v, int nv);

/* The controller Hessenberg form of (A, b, c): A (n x n row-major) is
 * reduced to H = U^T A U, upper Hessenberg, with U's first column along b,
 * so that U^T b = beta e_1; c is replaced by U^T c and b by beta e_1. A, b,
 * c are overwritten. Returns 0, -1, or 1 as above. */
int eigvals_controller_form(int n, double *A, double *b, double *c);

/* Eigenvalues and eigenvectors of the n x n row-major A (dgeev, balanced):
 * ev[n]; xr and xl (n x n, column-major, either may be NULL) get the right
 * eigenvectors (A x = ev x) and the left ones (y^H A = ev y^H) in LAPACK's
 * packing: for a real eigenvalue column k is its vector; for a complex pair
 * ev[k], ev[k+1] = conj(ev[k]) with positive imaginary part first, columns
 * k and k+1 are the real and imaginary parts of the vector of ev[k] (that
 * of ev[k+1] is its conjugate). Each vector has unit Euclidean norm. */
int eigvals_vectors(int n, const double *A, double complex *ev, double *xr, double *xl);

/* Eigenvalues and orthonormal eigenvectors of the n x n symmetric A
 * (dsyevd, divide and conquer; only the lower triangle is read): w[n] in ascending order, the
 * vectors as the columns of A (column-major; for a symmetric matrix the
 * same storage either way). */
int eigvals_symmetric(int n, double *A, double *w);

/* Generalized eigenvalues of the pencil A - s B, A upper Hessenberg and B
 * upper triangular (n x n, column-major, both overwritten): QZ (dhgeqz, or
 * LAPACK's multishift QZ dlaqz0 from 64 on) without reduction. Eigenvalue
 * k is (alphar[k] + j alphai[k]) / beta[k]; beta[k] = 0 is infinite. */
int eigvals_pencil_ht(int n, double *A, double *B, double *alphar, double *alphai,
                      double *beta);

#endif
