/* pencil_impl: what the three files of the pencil module share (pencil.c:
 * the reduction, poles and owners; pencil_zeros.c: zero candidates;
 * pencil_hess.c: the Hessenberg evaluator). Not part of the library's
 * public interface. */
#ifndef LOOPWISE_PENCIL_IMPL_H
#define LOOPWISE_PENCIL_IMPL_H

#include <gsl/gsl_matrix.h>
#include <gsl/gsl_vector.h>

#include "loopwise/pencil.h"

struct pencil {
    int n, r, m;          /* m = n - r capacitance-free coordinates */
    double *d;            /* diagonal scaling */
    gsl_matrix *Q;        /* n x n: eigenvectors of D C D, descending */
    gsl_vector *lam;      /* their eigenvalues */
    gsl_matrix *M;        /* r x r reduced system matrix */
    gsl_matrix *Y2;       /* m x r: G22^-1 G21 */
    gsl_matrix *Z2;       /* r x m: G12 G22^-1 */
    gsl_matrix *G22inv;   /* m x m */
};

/* The input and output vectors of the reduced form of the transfer io:
 * b and c (rank values each); returns d0. */
double pencil_io_vectors(const pencil *p, const pencil_io *io, double *b, double *c);

/* An eigvals status as an lw_error: -1 out of memory, 1 no convergence. */
int pencil_eig_status(int st, const char *what, lw_error *err);

#endif
