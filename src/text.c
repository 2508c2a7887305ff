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
    return c == ' ' || c == '\t' || c == '\f' || c == '\v';
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

/* Rejects bytes that cannot be text: NUL and other control characters. */
static int check_bytes(const char *line, int number, lw_error *err)
{
    for (int k = 0; line[k]; k++) {
        unsigned char c = (unsigned char)line[k];
        if (c < 0x20 && c != '\t' && c != '\f' && c != '\v') {
            text_error_source(err, "");
            return lw_error_at(err, number, text_col(line, k),
                               "control byte 0x%02x in the text; expected a UTF-8 text file", c);
        }
    }
    return LW_OK;
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
        size_t next = end + 1;
        if (end > pos && store[end - 1] == '\r')
            end--;
        store[end] = '\0';
        pos = next;
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
        if ((rc = check_bytes(line, number, err)) != LW_OK)
            break;
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
