/* step: the exact response y(t) of a closed-loop transfer H to a unit step
 * (SPEC section 6) and its figures: initial and final value, peak,
 * overshoot, undershoot, rise time, settling times, and the slow mode.
 *
 * y(t) comes from the modal form of the reduced closed loop (modal.h): a sum
 * of exponentials (and matrix exponentials of clusters of nearly equal
 * poles), exact at any t, never stepped in time. It is sampled on a grid
 * fine enough for every mode that matters (logarithmic in t for the decays,
 * about 25 points per period for the oscillations, as long as each lasts);
 * the extrema between samples (roots of y') and every reported time are then
 * refined by Brent's method to a relative 1e-12 in t. A mode whose term
 * stays below 1e-7 of the response's scale is not followed in time, so an
 * overshoot or undershoot smaller than that is reported as none.
 *
 * Ownership: step_form_new allocates the modal form of one response's read-
 * out; step_form_free releases it (NULL accepted). */
#ifndef LOOPWISE_STEP_H
#define LOOPWISE_STEP_H

#include "loopwise/response.h"

typedef struct step_result {
    double initial, final;        /* y(0+) = H(inf), y(inf) = H(0) */
    double peak_value, peak_time; /* peak_time NAN when y never passes final */
    double overshoot_pct;         /* NAN when final = 0 */
    double undershoot_pct;        /* NAN when final = 0 */
    double rise_time;             /* 10% to 90%; NAN when final = 0 or y starts beyond 10% */
    double settle1, settle01;     /* last time |y - final| exceeds 1% (0.1%) */
    int has_slow;                 /* the slow mode below is set */
    double complex slow_pole;     /* rad/s, imaginary part >= 0 */
    double slow_amplitude;        /* its term's envelope at 0+ over |final| (over the peak
                                     when final = 0) */
    int slow_doublet;             /* amplitude < 0.05 and a zero of H within 10% */
    double t_end;                 /* the horizon sampled (seconds) */
    int npoints;                  /* samples taken */
} step_result;

typedef struct step_form step_form;

/* The modal form of H's read-out, and the weights of its current source.
 * Fails with LW_ENUMERIC when a closed-loop pole is not in the left
 * half-plane (the caller checks stability first). */
int step_form_new(response *rs, step_form **out, lw_error *err);
void step_form_free(step_form *sf);

/* The step response of the response's current source; zeros are H's (rad/s)
 * for the doublet flag. */
int step_run(step_form *sf, const response_result *res, step_result *out, lw_error *err);

/* y(t) at t (seconds) for the current source: for plots. */
double step_value(step_form *sf, const step_result *sr, double t);

/* --inject each: the step response at the read-out to a unit current into
 * each of the nodes[n], sharing one time grid and one set of modal rows. */
typedef struct step_each_item {
    int node;
    int reaches;                  /* 0: no path from the node to the read-out */
    double final, peak_value, overshoot_pct, undershoot_pct, settle1;
} step_each_item;

int step_each(response *rs, step_form *sf, const int *nodes, int n, step_each_item *out,
              lw_error *err);

#endif
