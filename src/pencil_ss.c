/* pencil_ss: the reduced network as a state-space model, for the closed-loop
 * responses (response.c, step.c). See pencil.h. */
#include "loopwise/pencil.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "pencil_impl.h"

int pencil_state_space(const pencil *p, const pencil_io *io, double *A, double *b, double *c,
                       double *d, lw_error *err)
{
    int r = p->r;
    for (int i = 0; i < r; i++)
        for (int j = 0; j < r; j++)
            A[i * r + j] = gsl_matrix_get(p->M, (size_t)i, (size_t)j);
    *d = r || p->m ? pencil_io_vectors(p, io, b, c) : 0;
    if (isnan(*d))
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    return LW_OK;
}

/* C = D^-1 Q diag(lam) Q^T D^-1 (pencil.c), so on the range of C
 * w = D Q_r diag(lam_r)^-1 Q_r^T D b1: the solution whose scaled form has no
 * part in the null space of C. Any solution serves the caller (see pencil.h). */
int pencil_c_solve(const pencil *p, const double *b1, double *w, lw_error *err)
{
    int n = p->n, r = p->r;
    double *q = malloc(sizeof(double) * (size_t)(r + 1));
    if (!q)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    for (int k = 0; k < r; k++) {
        double s = 0;
        for (int j = 0; j < n; j++)
            s += gsl_matrix_get(p->Q, (size_t)j, (size_t)k) * p->d[j] * b1[j];
        q[k] = s / gsl_vector_get(p->lam, (size_t)k);
    }
    for (int j = 0; j < n; j++) {
        double s = 0;
        for (int k = 0; k < r; k++)
            s += gsl_matrix_get(p->Q, (size_t)j, (size_t)k) * q[k];
        w[j] = p->d[j] * s;
    }
    free(q);
    return LW_OK;
}
