/* figures_response: the pictures of 'response': |H| and its phase against
 * frequency, and the step response y(t) with its final value, 1% band, peak
 * and settling time marked. Drawn as plot jobs (plot.h), in the look of
 * figures.c. */
#ifndef LOOPWISE_FIGURES_RESPONSE_H
#define LOOPWISE_FIGURES_RESPONSE_H

#include "loopwise/figures.h"
#include "loopwise/report_response.h"

/* rs evaluates H for the curve (rr carries only the table). */
int figure_response(const figure_opts *fo, const desc *d, const response_report *rr,
                    response *rs, lw_error *err);
int figure_step(const figure_opts *fo, const desc *d, const response_report *rr, step_form *sf,
                lw_error *err);

#endif
