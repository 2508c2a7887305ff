/* text: a .loop file as lines of white-space separated tokens with positions.
 *
 * Every byte is checked before anything is split: the file must be UTF-8
 * text whose only control characters are tab and the line ends (LF, or CRLF);
 * the first byte that is not is refused with its line and column.
 *
 * Ownership: text_read/text_from_buffer allocate a text_file that owns every
 * line and token string; text_free releases it (NULL is accepted). Token
 * pointers stay valid until text_free. */
#ifndef LOOPWISE_TEXT_H
#define LOOPWISE_TEXT_H

#include <stddef.h>

#include "loopwise/diag.h"

enum {
    TEXT_MAX_FILE = 8 << 20,   /* bytes in one file */
    TEXT_MAX_LINE = 4096,      /* bytes in one line */
    TEXT_MAX_TOKENS = 512,     /* tokens on one line */
    TEXT_MAX_LINES = 200000
};

typedef struct text_token {
    const char *s;  /* NUL-terminated copy */
    int col;        /* 1-based column in characters */
    int off;        /* byte offset of the token in its line */
} text_token;

typedef struct text_line {
    int number;          /* 1-based line number in the file */
    const char *raw;     /* the line without comment or line end, NUL-terminated */
    text_token *tok;
    int ntok;
} text_line;

typedef struct text_file {
    text_line *lines;    /* only lines with at least one token */
    int nlines;
    int total_lines;     /* lines in the file, blank ones included */
    char *store;         /* backing storage */
} text_file;

/* Reads path ("-" is standard input). */
int text_read(const char *path, text_file **out, lw_error *err);
/* Splits an in-memory buffer (used by tests and the fuzzer). */
int text_from_buffer(const char *buf, size_t len, text_file **out, lw_error *err);
void text_free(text_file *t);

/* What kind of byte text_find_bad_byte found. */
enum { TEXT_BAD_CONTROL = 1, TEXT_BAD_UTF8 = 2 };

/* The first byte of text[0..len) that text may not hold: NUL, a control
 * character other than tab (C0, DEL, and C1 as U+0080..U+009F), or
 * malformed UTF-8 (overlong, a surrogate, beyond U+10FFFF, truncated, a
 * continuation byte without its lead byte, a byte never used in UTF-8).
 * Returns its byte offset, with *kind and what[size] saying what it is
 * ("NUL byte", "invalid UTF-8 sequence 0xC0 0xAF (an overlong encoding of
 * U+002F)"); cut names what ends the text, for a truncated sequence ("the
 * end of the line"). Returns -1 when every byte is good. A line's end (LF,
 * or CR before LF) is not part of text. */
long text_find_bad_byte(const char *text, size_t len, const char *cut, int *kind, char *what,
                        size_t size);

/* Column (1-based, in characters) of byte offset off within line raw. */
int text_col(const char *raw, int off);
/* Copies line raw into the error's source field. */
void text_error_source(lw_error *err, const char *raw);

#endif
