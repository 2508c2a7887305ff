/* api_impl: what the public entry points share (api.c, api_response.c). */
#ifndef LOOPWISE_API_IMPL_H
#define LOOPWISE_API_IMPL_H

#include <complex.h>

#include <gsl/gsl_errno.h>

#include "loopwise/desc.h"
#include "loopwise/loopwise.h"

struct lw_loop {
    desc *d;                  /* evaluated, with the --set overrides */
};

/* What an entry point changes for its time and gives back: GSL's error
 * handler (off), OpenBLAS's threads (one) and OpenMP's (OpenBLAS's OpenMP
 * variant sets both). */
typedef struct api_state {
    gsl_error_handler_t *gsl;
    int blas_threads, omp_threads;
} api_state;
api_state api_enter(void);
void api_leave(api_state st);

/* Fills msg (when not NULL) from e: "NAME:LINE:COL: message" with a place,
 * the message alone without one. */
void api_message(lw_message *msg, const char *name, const lw_error *e);
void api_message_clear(lw_message *msg);
/* Roots in rad/s as lw_root in Hz (no owner); NULL without memory. */
lw_root *api_roots(const double complex *v, int n);

#endif
