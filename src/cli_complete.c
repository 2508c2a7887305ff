/* cli_complete: the candidates of the bash completion (see cli_help.h),
 * from the option table and from the file named on the line.
 *
 * The shell passes the line up to the cursor; it is split into words here
 * (white space, with '...' "..." and backslash quoting), so a word holding
 * '=' or ':' stays whole whatever COMP_WORDBREAKS says. The file's names are
 * read from the first two words of its declaration lines, without the rest
 * of the grammar: a file being written, not yet complete or valid, still
 * offers the names it declares so far. */
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "loopwise/cli_help.h"
#include "loopwise/text.h"

enum { MAX_WORDS = 256, MAX_WORD = 1024 };

typedef struct words {
    char w[MAX_WORDS][MAX_WORD];
    int n;          /* words[n - 1] is the one under the cursor ("" after a space) */
} words;

/* Shell-like splitting of the line up to the cursor; an unclosed quote
 * runs to the end (the word being typed). */
static void split(const char *line, words *ws)
{
    ws->n = 0;
    const char *p = line;
    for (;;) {
        while (*p == ' ' || *p == '\t')
            p++;
        if (ws->n == MAX_WORDS)
            return;
        char *out = ws->w[ws->n++];
        size_t len = 0;
        char quote = 0;
        for (; *p && (quote || (*p != ' ' && *p != '\t')); p++) {
            char ch = *p;
            if (quote && ch == quote) {
                quote = 0;
                continue;
            }
            if (!quote && (ch == '\'' || ch == '"')) {
                quote = ch;
                continue;
            }
            if (ch == '\\' && quote != '\'' && p[1])
                ch = *++p;
            if (len + 1 < MAX_WORD)
                out[len++] = ch;
        }
        out[len] = '\0';
        if (!*p)
            return;
    }
}

static int starts(const char *s, const char *prefix)
{
    return !strncmp(s, prefix, strlen(prefix));
}

static void offer(FILE *f, const char *cand, const char *cur)
{
    if (starts(cand, cur))
        fprintf(f, "%s\n", cand);
}

/* The file's declared names of one kind. what: 'n' nodes, 'i' inputs, 't'
 * what --tune, --vary name (params, elements, NODE.r, NODE.c), 'a' the same
 * followed by '=' (for --set). */
static void file_names(FILE *f, const char *path, char what, const char *cur)
{
    struct stat st;
    text_file *t = NULL;
    lw_error err;
    /* only a regular file: never standard input, a pipe or a device */
    if (!path || !strcmp(path, "-") || stat(path, &st) || !S_ISREG(st.st_mode) ||
        text_read(path, &t, &err))
        return;
    for (int k = 0; k < t->nlines; k++) {
        const text_line *l = &t->lines[k];
        if (l->ntok < 2)
            continue;
        const char *kw = l->tok[0].s, *name = l->tok[1].s;
        int node = !strcmp(kw, "node"), input = !strcmp(kw, "input");
        int value = !strcmp(kw, "param") || !strcmp(kw, "res") || !strcmp(kw, "cap") ||
                    !strcmp(kw, "gm");
        char buf[TEXT_MAX_LINE + 4];
        if ((what == 'n' && node) || (what == 'i' && input)) {
            offer(f, name, cur);
        } else if ((what == 't' || what == 'a') && value) {
            snprintf(buf, sizeof buf, "%s%s", name, what == 'a' ? "=" : "");
            offer(f, buf, cur);
        } else if ((what == 't' || what == 'a') && node) {
            snprintf(buf, sizeof buf, "%s.r%s", name, what == 'a' ? "=" : "");
            offer(f, buf, cur);
            snprintf(buf, sizeof buf, "%s.c%s", name, what == 'a' ? "=" : "");
            offer(f, buf, cur);
        }
    }
    text_free(t);
}

/* The entry of option name for command c whose value is a name (sweep's
 * --from is a number or an input: the input is what can be completed). */
static const cli_option *value_entry(const char *name, int c)
{
    const cli_option *any = NULL;
    for (int k = 0; k < cli_noptions; k++) {
        const cli_option *o = &cli_options[k];
        if (strcmp(o->name, name) || !(o->commands & CMD_BIT(c)))
            continue;
        if (o->value != VAL_NUMBER && o->value != VAL_TEXT)
            return o;
        any = o;
    }
    return any;
}

static void complete_words(FILE *f, const words *ws);

void cli_complete(FILE *f, const char *line)
{
    words *wp = malloc(sizeof *wp);
    if (!wp)
        return;
    split(line, wp);
    complete_words(f, wp);
    free(wp);
}

static void complete_words(FILE *f, const words *ws)
{
    if (ws->n < 2)
        return;
    const char *cur = ws->w[ws->n - 1];
    if (ws->n == 2) {
        for (int c = 0; c < CMD_COUNT; c++)
            offer(f, cli_commands[c].name, cur);
        offer(f, "help", cur);
        offer(f, "--help", cur);
        offer(f, "--version", cur);
        return;
    }
    if (!strcmp(ws->w[1], "help")) {
        for (int c = 0; ws->n == 3 && c < CMD_COUNT; c++)
            offer(f, cli_commands[c].name, cur);
        return;
    }
    int c = cli_command_find(ws->w[1]);
    if (c < 0)
        return;
    /* the words before the cursor: FILE, and the option whose value this is */
    const char *file = NULL;
    const cli_option *pending = NULL;
    int in_merge = 0;
    for (int k = 2; k < ws->n - 1; k++) {
        const char *a = ws->w[k];
        const cli_option *o = a[0] == '-' && a[1] ? cli_option_find(a) : NULL;
        if (o) {
            in_merge = o->value == VAL_PATHS;
            if (o->metavar && !in_merge) {
                if (k + 1 == ws->n - 1) {
                    pending = value_entry(o->name, c); /* the cursor is on its value */
                    break;
                }
                k++;
            }
        } else if ((a[0] != '-' || !a[1]) && !in_merge && !file) {
            file = a;
        }
    }
    if (pending) {
        switch (pending->value) {
        case VAL_PATH:
        case VAL_PATHS:
            fputs("@files\n", f);
            break;
        case VAL_DIR:
            fputs("@dirs\n", f);
            break;
        case VAL_CHOICE:
        case VAL_NODE:
        case VAL_INPUT:
            if (pending->choices) {
                char buf[256];
                snprintf(buf, sizeof buf, "%s", pending->choices);
                for (char *w = strtok(buf, " "); w; w = strtok(NULL, " "))
                    offer(f, w, cur);
            }
            if (pending->value != VAL_CHOICE)
                file_names(f, file, pending->value == VAL_NODE ? 'n' : 'i', cur);
            break;
        case VAL_TARGET:
            file_names(f, file, 't', cur);
            break;
        case VAL_ASSIGN:
            if (!strchr(cur, '='))
                file_names(f, file, 'a', cur);
            break;
        case VAL_NONE:
        case VAL_NUMBER:
        case VAL_TEXT:
            break;
        }
        return;
    }
    if (cur[0] != '-' && (in_merge || !file)) {
        fputs("@files\n", f);
        return;
    }
    for (int k = 0; k < cli_noptions; k++) {
        const cli_option *o = &cli_options[k];
        if ((cli_option_commands(o->id) & CMD_BIT(c)) && cli_option_find(o->name) == o)
            offer(f, o->name, cur);
    }
}
