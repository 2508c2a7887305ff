/* diag: error values that point into the input (file:line:col) and their printing. */
#ifndef LOOPWISE_DIAG_H
#define LOOPWISE_DIAG_H

#include <stdio.h>

/* One project-wide status, lw_status of the public header: LW_OK (0),
 * LW_EINPUT (bad usage or input: exit code 2), LW_ENUMERIC (a numerical
 * failure the program could not recover from: 3), LW_ENOMEM (reported as
 * 3). Every function that can fail returns one and fills an lw_error. */
#include "loopwise/loopwise.h"

enum { LW_MSG_MAX = 768, LW_SRC_MAX = 240 };

/* An error about the input. line/col are 1-based; line 0 means the error is
 * not about a position in the file (a command-line option, say). src holds a
 * copy of the offending source line (truncated) for the caret display. */
typedef struct lw_error {
    int line;
    int col;
    char msg[LW_MSG_MAX];
    char src[LW_SRC_MAX];
} lw_error;

void lw_error_clear(lw_error *e);
/* Sets position and message (printf-style); returns LW_EINPUT for chaining. */
int lw_error_at(lw_error *e, int line, int col, const char *fmt, ...)
    __attribute__((format(printf, 4, 5)));
/* Same without a position, with an explicit status. */
int lw_error_set(lw_error *e, int status, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));
/* Prints "FILE:LINE:COL: message" and, when known, the line and a caret. */
void lw_error_print(const lw_error *e, const char *file, FILE *out);

/* The closest candidate to name by edit distance, or NULL when none is close. */
const char *lw_closest(const char *name, const char *const *cands, int ncands);

#endif
