/* loopwise.h: the loopwise library for programs that embed it.
 *
 * It reads a loop description (the .loop format, loopwise(5)) from a buffer
 * or a file, applies overrides as the command line's --set does, and runs
 * the analyses of 'loopwise check' (loop gain at the break, margins, poles,
 * zeros, closed-loop poles, declared loops), of 'loopwise response' (a
 * closed-loop transfer and its step response) and of one point of
 * 'loopwise sweep'. The figures are the command line's, to the last digit.
 * Everything it computes is a small-signal estimate of the network
 * described: confirm it with transistor-level simulation across corners.
 *
 * OWNERSHIP, the one rule: an object handed back through an out-pointer
 * (lw_loop **, lw_check **, lw_response **) belongs to the caller, who
 * releases it with its _free function (which accepts NULL). A pointer that
 * a reader returns (a name, an array of roots) belongs to the object it was
 * read from and stays valid until that object is freed. Results keep no
 * reference to the description: it may be changed or freed after.
 *
 * ERRORS: a function that can fail returns LW_OK (0) or a status below, and
 * fills *msg when msg is not NULL: the line the command line prints,
 * "NAME:LINE:COL: what is wrong, what was expected", with the line and
 * column apart (0 when the error is not about a place in the text).
 *
 * NUMBERS: frequencies in Hz (a root s is given as s/2pi), phases in
 * degrees, gains in dB or V/V. What is undefined (a margin without a
 * crossover) is NaN; an unbounded DC gain is +/-INFINITY (isnan, isinf).
 *
 * THREADS: objects are independent; one object must not be used by two
 * threads at once. While it runs, a call switches GSL's error handler off
 * (every GSL status is checked) and keeps OpenBLAS on one thread, as the
 * program does; it gives the caller's settings back. These are settings of
 * the whole process: do not call GSL or OpenBLAS from another thread
 * meanwhile. The analysis of a network of 1000 nodes or more runs its
 * dense eigenproblems on two OpenMP threads when OpenMP allows more than
 * one (not inside a parallel region of the caller's); the figures are the
 * same on one, which OMP_NUM_THREADS=1 or omp_set_num_threads(1) asks for.
 *
 * Link with `pkg-config --cflags --libs loopwise`. */
#ifndef LOOPWISE_LOOPWISE_H
#define LOOPWISE_LOOPWISE_H

#include <stddef.h>

#ifdef __cplusplus
extern "C" {
#endif

#define LOOPWISE_VERSION "0.3.1"

/* The entry points: the only symbols the installed library exports (the
 * library is built with hidden visibility; see the Makefile). */
#if defined(__GNUC__)
#define LW_API __attribute__((visibility("default")))
#else
#define LW_API
#endif

/* The statuses (the command line's exit codes 2 and 3 come from them). */
typedef enum {
    LW_OK = 0,
    LW_EINPUT = 2,   /* bad input: a wrong description, name or override */
    LW_ENUMERIC = 3, /* a numerical failure that could not be recovered from */
    LW_ENOMEM = 4    /* out of memory */
} lw_status;

typedef struct lw_message {
    int line, col;     /* 1-based place in the text; 0 when none */
    char text[1024];
} lw_message;

/* "0.3.1", the library's version (LOOPWISE_VERSION when it was built). */
LW_API const char *lw_version(void);

/* ---- the description ------------------------------------------------- */

typedef struct lw_loop lw_loop;

/* Parses text[0..len) (the .loop format); name labels the messages. */
LW_API int lw_loop_parse(const char *text, size_t len, const char *name, lw_loop **out,
                         lw_message *msg);
/* Reads and parses the file at path ("-" is standard input). */
LW_API int lw_loop_read(const char *path, lw_loop **out, lw_message *msg);
LW_API void lw_loop_free(lw_loop *l);
/* "NAME=EXPR" as --set takes it: a param (everything that depends on it
 * follows), an element's value, or NODE.r / NODE.c. Checked at once: on an
 * error the description is as it was. */
LW_API int lw_loop_set(lw_loop *l, const char *assignment, lw_message *msg);

/* ---- the analysis of 'check' ----------------------------------------- */

typedef struct lw_check lw_check;

/* The whole analysis; fmin_hz, fmax_hz: the band, or 0 for the automatic
 * one (--fmin, --fmax). */
LW_API int lw_check_run(const lw_loop *l, double fmin_hz, double fmax_hz, lw_check **out,
                        lw_message *msg);
LW_API void lw_check_free(lw_check *c);

typedef struct lw_margins {
    double dc_loop_gain;       /* T(0), signed (> 0: net negative feedback) */
    double dc_loop_gain_db;    /* NaN when T(0) is 0 or unbounded */
    double crossover_hz;       /* where the smallest phase margin is; NaN: none */
    double phase_margin_deg;   /* 180 + phase there, not normalised; NaN: no crossover */
    double gain_margin_db;     /* the smallest; NaN: the phase never reaches -180 + 360 m */
    double phase_crossover_hz; /* where it is; NaN likewise */
    int ncrossovers;           /* every frequency where |T| = 1 */
    int stable;                /* every closed-loop pole in the left half-plane */
} lw_margins;

LW_API lw_margins lw_check_margins(const lw_check *c);

typedef enum { LW_OPEN_LOOP_POLES, LW_OPEN_LOOP_ZEROS, LW_CLOSED_LOOP_POLES } lw_roots_kind;

typedef struct lw_root {
    double re_hz, im_hz;       /* s / 2pi */
    const char *node;          /* open-loop poles: the owner node; otherwise NULL */
    double estimate_hz;        /* its one-pole-per-node estimate; NaN when none */
} lw_root;

/* The roots of one kind, sorted by magnitude then imaginary part; *n gets
 * their number. */
LW_API const lw_root *lw_check_roots(const lw_check *c, lw_roots_kind kind, int *n);

typedef struct lw_loop_verdict {
    const char *name;          /* as on its 'loop' line */
    int negative;              /* declared negative (1) or positive (0); the sign was checked */
    double dc_gain;            /* its own DC gain; NaN when it shares every stage */
    const char *measured_at;   /* the gm where its own gain is measured, or NULL */
} lw_loop_verdict;

/* The declared loops in file order; *n gets their number. */
LW_API const lw_loop_verdict *lw_check_loops(const lw_check *c, int *n);
/* 20 log10 |negative over positive own DC gains|; NaN unless both kinds. */
LW_API double lw_check_dominance_db(const lw_check *c);
/* The break: a gm, or a node (every gm it controls). */
LW_API const char *lw_check_break(const lw_check *c);
/* The command line's exit code for these targets (NaN: none given): 1 when
 * the loop is unstable or a target is missed (a --pm given and no
 * crossover), else 0. */
LW_API int lw_check_verdict(const lw_check *c, double pm_deg, double gm_db);

/* ---- one point of 'sweep' --------------------------------------------- */

typedef struct lw_point {
    double value;
    double phase_margin_deg, crossover_hz, gain_margin_db, dc_loop_gain;
    int stable;
} lw_point;

/* The margins with NAME (as --vary names it) set to value; l is left as it
 * was. Non-const: l is changed for the time of the call. */
LW_API int lw_sweep_point(lw_loop *l, const char *name, double value, double fmin_hz,
                          double fmax_hz, lw_point *out, lw_message *msg);

/* ---- the analysis of 'response' --------------------------------------- */

typedef struct lw_response lw_response;

typedef struct lw_response_request {
    const char *to;            /* the node whose response is read */
    const char *from;          /* an input, or NULL */
    const char *inject;        /* a node a current flows into, or NULL; with both NULL,
                                * the file's only input */
    double fmin_hz, fmax_hz;   /* the band, 0: automatic */
} lw_response_request;

LW_API int lw_response_run(const lw_loop *l, const lw_response_request *q, lw_response **out,
                           lw_message *msg);
LW_API void lw_response_free(lw_response *r);

typedef struct lw_response_summary {
    double dc, dc_db;          /* H(0) (V/V from an input, ohm from a current); dB of |H(0)| */
    double hinf;               /* H(infinity) */
    double peak_hz, peak_value, peak_db; /* the largest |H|; peak_hz NaN: as f grows */
    double bandwidth_hz;       /* |H| down to |H(0)|/sqrt 2; NaN when never */
    int stable;
    int has_step;              /* 0 when the loop is unstable: no step figures */
    double step_initial, step_final, step_peak_value, step_peak_time_s;
    double overshoot_pct, undershoot_pct, rise_time_s, settle_1pct_s, settle_01pct_s;
} lw_response_summary;

LW_API lw_response_summary lw_response_figures(const lw_response *r);
/* The closed-loop poles (every one, H may not see some) and the zeros of
 * H, sorted as the check's; *n gets their number. */
LW_API const lw_root *lw_response_poles(const lw_response *r, int *n);
LW_API const lw_root *lw_response_zeros(const lw_response *r, int *n);

#ifdef __cplusplus
}
#endif

#endif
