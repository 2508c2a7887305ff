/* diag: error values that point into the input, and name suggestions. */
#include "loopwise/diag.h"

#include <stdarg.h>
#include <string.h>
#include <strings.h>

void lw_error_clear(lw_error *e)
{
    e->line = 0;
    e->col = 0;
    e->msg[0] = '\0';
    e->src[0] = '\0';
}

int lw_error_at(lw_error *e, int line, int col, const char *fmt, ...)
{
    va_list ap;
    e->line = line;
    e->col = col;
    va_start(ap, fmt);
    vsnprintf(e->msg, sizeof e->msg, fmt, ap);
    va_end(ap);
    return LW_EINPUT;
}

int lw_error_set(lw_error *e, int status, const char *fmt, ...)
{
    va_list ap;
    e->line = 0;
    e->col = 0;
    e->src[0] = '\0';
    va_start(ap, fmt);
    vsnprintf(e->msg, sizeof e->msg, fmt, ap);
    va_end(ap);
    return status;
}

/* Prints the source line and a caret under column col (columns count
 * characters, so skip UTF-8 continuation bytes when walking). */
static void print_caret(const lw_error *e, FILE *out)
{
    int chars = 0;
    fprintf(out, "  %s\n  ", e->src);
    for (const unsigned char *p = (const unsigned char *)e->src;
         *p && chars < e->col - 1; p++) {
        if ((*p & 0xC0) == 0x80)
            continue;
        fputc(*p == '\t' ? '\t' : ' ', out);
        chars++;
    }
    fputs("^\n", out);
}

void lw_error_print(const lw_error *e, const char *file, FILE *out)
{
    if (e->line > 0)
        fprintf(out, "%s:%d:%d: %s\n", file, e->line, e->col, e->msg);
    else
        fprintf(out, "loopwise: %s\n", e->msg);
    if (e->line > 0 && e->src[0] && e->col > 0)
        print_caret(e, out);
}

/* Levenshtein distance, bounded to names of the project's maximum length. */
static int edit_distance(const char *a, const char *b)
{
    enum { MAXL = 64 };
    int la = (int)strlen(a), lb = (int)strlen(b);
    int prev[MAXL + 1], cur[MAXL + 1];
    if (la > MAXL || lb > MAXL)
        return MAXL;
    for (int j = 0; j <= lb; j++)
        prev[j] = j;
    for (int i = 1; i <= la; i++) {
        cur[0] = i;
        for (int j = 1; j <= lb; j++) {
            int sub = prev[j - 1] + (a[i - 1] != b[j - 1]);
            int del = prev[j] + 1, ins = cur[j - 1] + 1;
            int m = sub < del ? sub : del;
            cur[j] = m < ins ? m : ins;
        }
        memcpy(prev, cur, sizeof(int) * (size_t)(lb + 1));
    }
    return prev[lb];
}

const char *lw_closest(const char *name, const char *const *cands, int ncands)
{
    const char *best = NULL;
    int bestd = 1 << 20;
    int len = (int)strlen(name);
    int limit = len <= 3 ? 1 : (len <= 6 ? 2 : 3);
    for (int k = 0; k < ncands; k++) {
        if (!strcasecmp(name, cands[k]))
            return cands[k]; /* the same name in other letter case: surely meant */
        int d = edit_distance(name, cands[k]);
        if (d < bestd) {
            bestd = d;
            best = cands[k];
        }
    }
    return bestd <= limit ? best : NULL;
}
