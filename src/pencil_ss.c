/* pencil_ss: the reduced network as a state-space model, for the closed-loop
 * responses (response.c, step.c). See pencil.h. */
#include "loopwise/pencil.h"

#include <math.h>
#include <string.h>

#include "pencil_impl.h"

int pencil_state_space(const pencil *p, const pencil_io *io, double *A, double *b, double *c,
                       double *d, lw_error *err)
{
    int r = p->r;
    memcpy(A, p->M, sizeof(double) * (size_t)r * (size_t)r);
    *d = r || p->m ? pencil_io_vectors(p, io, b, c) : 0;
    if (isnan(*d))
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    return LW_OK;
}
