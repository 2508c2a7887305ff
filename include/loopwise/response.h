/* response: a closed-loop transfer H(s) = v_to / u (SPEC section 6), from an
 * input's voltage (V/V) or a current injected into a node (ohm), with every
 * gm on; its exact evaluation, zeros, DC value, peak and bandwidth.
 *
 * With Y(s) v = b(s) u and b(s) = b0 + s b1 (a cap from the input stamps the
 * node's own capacitance, so b1 lies in the range of C), pick w with C w = b1;
 * then (G + sC)^-1 s C w = w - (G + sC)^-1 G w and
 *
 *   H(s) = e_to^T (G + sC)^-1 (b0 - G w) + w_to,
 *
 * a proper transfer with a constant term. The constant is folded into the
 * network by one capacitance-free read-out node y with g (v_y - v_to) =
 * g w_to u, so that H = v_y / u is a plain transfer v^T (G' + sC')^-1 u' of a
 * network one node larger: the pencil's evaluator, zero candidates and
 * state-space form (pencil.h) then serve it unchanged, constant included.
 *
 * Ownership: response_new allocates an evaluator for one read-out node of a
 * model, which must outlive it; response_free releases it (NULL accepted). response_analyse fills a
 * response_result whose arrays response_result_free releases. */
#ifndef LOOPWISE_RESPONSE_H
#define LOOPWISE_RESPONSE_H

#include <complex.h>

#include "loopwise/loopgain.h"
#include "loopwise/model.h"

typedef enum { RESP_INPUT, RESP_INJECT } response_kind;

typedef struct response_src {
    response_kind kind;
    int index;                 /* the input, or the node the current flows into */
} response_src;

typedef struct response response;

/* An evaluator of transfers to node `to` of the model with every gm on. */
int response_new(const model *m, int to, response **out, lw_error *err);
void response_free(response *rs);
/* Chooses the source; the evaluator then reads H from it. */
int response_source(response *rs, response_src src, lw_error *err);
/* H(s), s in rad/s: O(rank^2) through the Hessenberg form. NaN at a pole. */
double complex response_eval(response *rs, double complex s);
/* H(0) by an LU factorization of the whole G (full accuracy); inf when G is
 * singular (a pole at s = 0). */
double response_dc(response *rs);
/* H(infinity), the constant term. */
double response_hinf(const response *rs);
/* Whether s = 0 can be a root of H at all (as loopgain_tf.c asks of T):
 * *pole when G is singular to rounding, *zero when the bordered
 * [[G, b0], [e_to^T, 0]] is (H(0) = 0, or G singular). SPEC 1's magnitude
 * rule alone would take a real root ten decades below the largest for one
 * at the origin. For the source set last. */
void response_origin_possible(const response *rs, int *pole, int *zero);
/* 1 when some path of G or C leads from the source to `to`: otherwise H is
 * identically zero (structurally, whatever the values). */
int response_reaches(const response *rs);
/* The state-space form c^T (sI - A)^-1 b + d of H (pencil_state_space);
 * rank values in b and c, rank^2 in A. */
int response_rank(const response *rs);
int response_state(response *rs, double *A, double *b, double *c, double *d, lw_error *err);
/* For another source, with A and c unchanged (--inject each: one read-out,
 * many sources): its input vector b (rank values), H(infinity) in *d, H(0)
 * (by the LU of G) in *dc, and in *reach whether it reaches `to` at all. */
int response_input_vector(response *rs, response_src src, double *b, double *d, double *dc,
                          int *reach, lw_error *err);

/* The candidate zeros of H (pencil_zero_candidates on the network with y):
 * for response_tf.c, which sorts them into zeros and hidden modes. */
int response_zero_candidates(response *rs, int method, double complex *z, int *nz, int *used,
                             lw_error *err);

typedef struct response_opts {
    double fmin_hz, fmax_hz;   /* 0: automatic band */
} response_opts;

/* What H is, in rad/s: tf.poles are the closed-loop poles (all of them,
 * tf.hidden[k] = 1 for those H cannot see), tf.zeros its zeros (origin ones
 * included), tf.origin and tf.sign its behaviour as s -> 0 (H ~ K0 s^origin,
 * sign of K0), tf.dc = H(0). */
typedef struct response_result {
    lg_tf tf;
    int zero;                  /* 1: H is identically zero (no path from the source) */
    double dc, hinf;           /* H(0) (inf when unbounded) and H(infinity) */
    double fmin_hz, fmax_hz;   /* the band */
    double peak_hz;            /* NAN: |H| only approaches its largest value as f -> inf */
    double peak_value;         /* the largest |H| */
    double local_peak_hz;      /* the largest local maximum of |H| at 0 < f < the top of the
                                  scan (NAN when |H| has none: then local_peak_value is 0);
                                  where the peak is only approached as f -> inf, the
                                  largest |H| a finite frequency reaches on a hump */
    double local_peak_value;
    double bandwidth_hz;       /* NAN when |H| never falls to |H(0)|/sqrt(2), or H(0) is 0 or inf */
    int suspect;               /* the factored form disagrees with the exact H */
} response_result;

/* response_tf.c: structure, band, peak and bandwidth of the current source's H; cl are the
 * closed-loop poles (rad/s, sorted, as check_run reports them). */
int response_analyse(response *rs, const double complex *cl, int ncl, const response_opts *o,
                     response_result *res, lw_error *err);
void response_result_free(response_result *res);
/* |H| and the phase (degrees, unwrapped from the factored form and snapped
 * to the exact arg H) at f Hz. */
double response_phase(response *rs, const response_result *res, double hz, double *mag);

#endif
