/* nyquist: the second stability verdict, the Nyquist count (SPEC section 7).
 *
 * N, the net number of clockwise encirclements of -1 by T(j2πf) as f runs
 * from -inf to +inf, is the winding of 1 + T(s) around 0 along the contour
 * up the imaginary axis, indented to the right around the poles of T on the
 * axis (then closed by the large arc, where T is constant). It is found by
 * unwrapping arg(1 + T) on the exact T along rising frequency, in steps
 * small enough that the branch is never guessed, and doubling it for the
 * negative frequencies (T(-jw) is the conjugate of T(jw)); an indentation
 * around a pole of order k adds -k·180°. By the argument principle
 * (Nyquist 1932) the closed loop then has Z = N + P poles in the right
 * half-plane, P the poles of T there; modes T cannot see add their own.
 * Nothing here uses the closed-loop eigenvalues: the count is independent of
 * them, and check compares the two. */
#ifndef LOOPWISE_NYQUIST_H
#define LOOPWISE_NYQUIST_H

#include "loopwise/loopgain.h"

typedef struct nyquist {
    int decided;          /* 0 when 1 + T passes through 0 on the axis (a
                             closed-loop pole on it) or a step could not be
                             resolved: N and Z are then undefined */
    int encirclements;    /* N: net clockwise encirclements of -1 */
    int open_loop_rhp;    /* P: poles of T with re > 0 */
    int hidden_rhp;       /* open-loop poles with re > 0 that T cannot see */
    int closed_loop_rhp;  /* Z = N + P + hidden_rhp */
    int axis_poles;       /* poles of T on the imaginary axis, indented around
                             (the origin's counted by their order) */
} nyquist;

/* Counts along the band flo..fhi (Hz) of the margins, extended a decade on
 * either side. With trust_form (the margins found the factored form in
 * agreement with the exact T), a run of grid points where the factored form
 * puts |T| under one half is crossed in one step between its two ends,
 * evaluated exactly: 1 + T stays in the disc of radius 1 around 1 there and
 * cannot wind around 0. Without it every step is walked on the exact T. */
int nyquist_count(lgain *lg, const lg_tf *tf, double flo, double fhi, int trust_form,
                  nyquist *nq, lw_error *err);

#endif
