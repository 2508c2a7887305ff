/* api_impl: what the public entry points share (api.c, api_response.c). */
#ifndef LOOPWISE_API_IMPL_H
#define LOOPWISE_API_IMPL_H

#include <complex.h>

#include "loopwise/desc.h"
#include "loopwise/loopwise.h"

struct lw_loop {
    desc *d;                  /* evaluated, with the --set overrides */
};

/* Fills msg (when not NULL) from e: "NAME:LINE:COL: message" with a place,
 * the message alone without one. */
void api_message(lw_message *msg, const char *name, const lw_error *e);
void api_message_clear(lw_message *msg);
/* Roots in rad/s as lw_root in Hz (no owner); NULL without memory. */
lw_root *api_roots(const double complex *v, int n);

#endif
