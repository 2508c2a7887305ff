/* text: splits a .loop file into lines and tokens, keeping positions. */
#include "loopwise/text.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

int text_col(const char *raw, int off)
{
    int col = 1;
    for (int k = 0; k < off && raw[k]; k++)
        if (((unsigned char)raw[k] & 0xC0) != 0x80)
            col++;
    return col;
}

void text_error_source(lw_error *err, const char *raw)
{
    snprintf(err->src, sizeof err->src, "%s", raw ? raw : "");
}

static int is_space(char c)
{
    return c == ' ' || c == '\t';
}

void text_free(text_file *t)
{
    if (!t)
        return;
    for (int k = 0; k < t->nlines; k++)
        free(t->lines[k].tok);
    free(t->lines);
    free(t->store);
    free(t);
}

/* Tokenises one line in place: raw is the line (comment already cut), and
 * tokens are copied into the string arena at *arena. */
static int split_line(text_line *ln, char **arena, lw_error *err)
{
    const char *raw = ln->raw;
    int len = (int)strlen(raw);
    int cap = 8;
    ln->tok = malloc(sizeof *ln->tok * (size_t)cap);
    if (!ln->tok)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    for (int k = 0; k < len;) {
        if (is_space(raw[k])) {
            k++;
            continue;
        }
        int start = k;
        while (k < len && !is_space(raw[k]))
            k++;
        if (ln->ntok == TEXT_MAX_TOKENS) {
            text_error_source(err, raw);
            return lw_error_at(err, ln->number, text_col(raw, start),
                               "too many tokens on one line (limit %d)", TEXT_MAX_TOKENS);
        }
        if (ln->ntok == cap) {
            cap *= 2;
            text_token *t = realloc(ln->tok, sizeof *t * (size_t)cap);
            if (!t)
                return lw_error_set(err, LW_ENOMEM, "out of memory");
            ln->tok = t;
        }
        char *s = *arena;
        memcpy(s, raw + start, (size_t)(k - start));
        s[k - start] = '\0';
        *arena += k - start + 1;
        ln->tok[ln->ntok++] = (text_token){ s, text_col(raw, start), start };
    }
    return LW_OK;
}

/* Names of the C0 control characters, by code (ISO 6429). */
static const char *const c0_name[32] = {
    "NUL", "SOH", "STX", "ETX", "EOT", "ENQ", "ACK", "BEL", "BS", "HT", "LF",
    "VT", "FF", "CR", "SO", "SI", "DLE", "DC1", "DC2", "DC3", "DC4", "NAK",
    "SYN", "ETB", "CAN", "EM", "SUB", "ESC", "FS", "GS", "RS", "US"
};

/* Appends " 0xNN" for each of the n bytes at s. */
static void put_bytes(char *what, size_t size, const unsigned char *s, int n)
{
    size_t used = strlen(what);
    for (int k = 0; k < n && used < size; k++)
        used += (size_t)snprintf(what + used, size - used, " 0x%02X", s[k]);
}

/* One UTF-8 sequence at s (len bytes left), by Unicode 15.0, section 3.9,
 * table 3-7 (well-formed byte sequences): the lead byte fixes the length,
 * every other byte is 10xxxxxx, and the code point must need that length
 * (no overlong form), lie outside the surrogates D800..DFFF and not pass
 * 10FFFF. Returns the sequence's length, or 0 with what[] saying why not. */
static int utf8_sequence(const unsigned char *s, size_t len, const char *cut, char *what,
                         size_t size, unsigned *cp)
{
    unsigned c = s[0];
    int need = c < 0x80 ? 1 : c < 0xC0 ? 0 : c < 0xE0 ? 2 : c < 0xF0 ? 3 : c < 0xF8 ? 4 : -1;
    if (need == 1) {
        *cp = c;
        return 1;
    }
    snprintf(what, size, "invalid UTF-8 sequence");
    if (need <= 0) {
        put_bytes(what, size, s, 1);
        size_t used = strlen(what);
        snprintf(what + used, size - used, need == 0 ? " (a continuation byte with no lead "
                 "byte before it)" : " (a byte that never occurs in UTF-8)");
        return 0;
    }
    int got = 1;
    while (got < need && (size_t)got < len && (s[got] & 0xC0) == 0x80)
        got++;
    put_bytes(what, size, s, got);
    size_t used = strlen(what);
    if (got < need) {
        if ((size_t)got == len)
            snprintf(what + used, size - used, " (truncated: %d bytes expected, %d before %s)",
                     need, got, cut);
        else
            snprintf(what + used, size - used, " (truncated: %d bytes expected, %d before "
                     "0x%02X)", need, got, s[got]);
        return 0;
    }
    static const unsigned lead_bits[5] = { 0, 0, 0x1F, 0x0F, 0x07 };
    static const unsigned shortest[5] = { 0, 0, 0x80, 0x800, 0x10000 };
    unsigned v = c & lead_bits[need];
    for (int k = 1; k < need; k++)
        v = v << 6 | (s[k] & 0x3Fu);
    if (v < shortest[need])
        snprintf(what + used, size - used, " (an overlong encoding of U+%04X)", v);
    else if (v >= 0xD800 && v <= 0xDFFF)
        snprintf(what + used, size - used, " (the UTF-16 surrogate U+%04X, not a character)", v);
    else if (v > 0x10FFFF)
        snprintf(what + used, size - used, " (U+%X, beyond the last code point U+10FFFF)", v);
    else {
        *cp = v;
        return need;
    }
    return 0;
}

long text_find_bad_byte(const char *text, size_t len, const char *cut, int *kind, char *what,
                        size_t size)
{
    const unsigned char *s = (const unsigned char *)text;
    for (size_t k = 0; k < len;) {
        unsigned cp = 0;
        int n = utf8_sequence(s + k, len - k, cut, what, size, &cp);
        if (n == 0) {
            *kind = TEXT_BAD_UTF8;
            return (long)k;
        }
        if (cp == 0 || (cp < 0x20 && cp != '\t') || cp == 0x7F) {
            if (cp == 0)
                snprintf(what, size, "NUL byte");
            else
                snprintf(what, size, "control character 0x%02X (%s)", cp,
                         cp == 0x7F ? "DEL" : c0_name[cp]);
            *kind = TEXT_BAD_CONTROL;
            return (long)k;
        }
        if (cp >= 0x80 && cp <= 0x9F) {
            snprintf(what, size, "control character U+%04X (bytes 0x%02X 0x%02X)", cp, s[k],
                     s[k + 1]);
            *kind = TEXT_BAD_CONTROL;
            return (long)k;
        }
        k += (size_t)n;
    }
    return -1;
}

/* Refuses a line holding a byte that is not text (text_find_bad_byte),
 * pointing at it; the caret line shows the good text before it. */
static int check_bytes(const char *line, size_t len, int number, int last, lw_error *err)
{
    char what[160];
    int kind;
    long off = text_find_bad_byte(line, len, last ? "the end of the file" : "the end of the line",
                                  &kind, what, sizeof what);
    if (off < 0)
        return LW_OK;
    size_t keep = (size_t)off < LW_SRC_MAX - 1 ? (size_t)off : LW_SRC_MAX - 1;
    while (keep > 0 && ((unsigned char)line[keep] & 0xC0) == 0x80)
        keep--; /* cut at a character boundary */
    memcpy(err->src, line, keep);
    err->src[keep] = '\0';
    int col = 1;
    for (long k = 0; k < off; k++)
        col += ((unsigned char)line[k] & 0xC0) != 0x80;
    if (line[off] == '\r')
        return lw_error_at(err, number, col, "carriage return not followed by a line feed; "
                           "expected LF or CRLF line ends");
    return lw_error_at(err, number, col, "%s; expected %s", what,
                       kind == TEXT_BAD_UTF8 ? "UTF-8 text (save the file as UTF-8)"
                                             : "text with no control character but tab");
}

int text_from_buffer(const char *buf, size_t len, text_file **out, lw_error *err)
{
    *out = NULL;
    if (len > TEXT_MAX_FILE)
        return lw_error_at(err, 1, 1, "file is larger than %d MiB", TEXT_MAX_FILE >> 20);
    if (len >= 3 && memcmp(buf, "\xEF\xBB\xBF", 3) == 0) {
        buf += 3;
        len -= 3;
    }
    text_file *t = calloc(1, sizeof *t);
    /* Lines (len+1) plus token copies (at most len+lines) fit in 3*len+16. */
    char *store = t ? malloc(3 * len + 16) : NULL;
    if (!store) {
        free(t);
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    t->store = store;
    char *arena = store + len + 1;
    memcpy(store, buf, len);
    store[len] = '\0';
    int rc = LW_OK, cap = 0, number = 0;
    size_t pos = 0;
    while (pos < len) {
        char *line = store + pos;
        size_t end = pos;
        while (end < len && store[end] != '\n')
            end++;
        number++;
        int last = end == len;
        size_t next = end + 1;
        if (!last && end > pos && store[end - 1] == '\r')
            end--; /* CRLF; a carriage return anywhere else is refused below */
        pos = next;
        if ((rc = check_bytes(line, end - (size_t)(line - store), number, last, err)) != LW_OK)
            break;
        store[end] = '\0';
        if (number > TEXT_MAX_LINES) {
            rc = lw_error_at(err, number, 1, "too many lines (limit %d)", TEXT_MAX_LINES);
            break;
        }
        if (end - (size_t)(line - store) > TEXT_MAX_LINE) {
            text_error_source(err, "");
            rc = lw_error_at(err, number, TEXT_MAX_LINE + 1,
                             "line longer than %d bytes", TEXT_MAX_LINE);
            break;
        }
        char *hash = strchr(line, '#');
        if (hash)
            *hash = '\0';
        text_line ln = { number, line, NULL, 0 };
        if ((rc = split_line(&ln, &arena, err)) != LW_OK) {
            free(ln.tok);
            break;
        }
        if (ln.ntok == 0) {
            free(ln.tok);
            continue;
        }
        if (t->nlines == cap) {
            cap = cap ? cap * 2 : 64;
            text_line *nl = realloc(t->lines, sizeof *nl * (size_t)cap);
            if (!nl) {
                free(ln.tok);
                rc = lw_error_set(err, LW_ENOMEM, "out of memory");
                break;
            }
            t->lines = nl;
        }
        t->lines[t->nlines++] = ln;
    }
    t->total_lines = number;
    if (rc != LW_OK) {
        text_free(t);
        return rc;
    }
    *out = t;
    return LW_OK;
}

int text_read(const char *path, text_file **out, lw_error *err)
{
    int is_stdin = strcmp(path, "-") == 0;
    FILE *f = is_stdin ? stdin : fopen(path, "rb");
    if (!f)
        return lw_error_set(err, LW_EINPUT, "cannot open '%s': %s", path, strerror(errno));
    size_t cap = 1 << 16, len = 0;
    char *buf = malloc(cap);
    int rc = buf ? LW_OK : lw_error_set(err, LW_ENOMEM, "out of memory");
    while (rc == LW_OK) {
        if (len == cap) {
            if (cap > TEXT_MAX_FILE) {
                rc = lw_error_at(err, 1, 1, "file is larger than %d MiB", TEXT_MAX_FILE >> 20);
                break;
            }
            char *nb = realloc(buf, cap * 2);
            if (!nb) {
                rc = lw_error_set(err, LW_ENOMEM, "out of memory");
                break;
            }
            buf = nb;
            cap *= 2;
        }
        size_t got = fread(buf + len, 1, cap - len, f);
        len += got;
        if (got == 0) {
            if (ferror(f))
                rc = lw_error_set(err, LW_EINPUT, "cannot read '%s': %s", path, strerror(errno));
            break;
        }
    }
    if (!is_stdin)
        fclose(f);
    if (rc == LW_OK)
        rc = text_from_buffer(buf, len, out, err);
    free(buf);
    return rc;
}
