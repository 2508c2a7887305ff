/* cli_help: help texts and the manual's command section, from the table
 * (see cli_help.h). One walk over a command's options serves the terminal
 * and the manual; only the writer differs. */
#include "loopwise/cli_help.h"

#include <string.h>

enum { WIDTH = 79, LEFT = 22 };

static const char numbers_note[] =
    "Numbers take SI prefixes and units as in the file: 2.2pF, 180k, 1e3k, 40uS; every "
    "numeric option takes the file's expressions too.";
static const char exit_rest[] =
    "0 when done and every target given is met; 2 on bad usage or input (nothing computed, "
    "nothing written); 3 on a numerical failure, or gnuplot missing or failing.";

/* ---- terminal ----------------------------------------------------------- */

/* Writes text from column col (already reached), wrapping at WIDTH onto
 * lines indented by indent; words are never split. Returns the column
 * reached. Counts UTF-8 characters, not bytes. */
static int wrap(FILE *f, const char *text, int col, int indent)
{
    const char *p = text;
    while (*p) {
        while (*p == ' ')
            p++;
        if (!*p)
            break;
        const char *e = p;
        int chars = 0;
        while (*e && *e != ' ') {
            chars += ((unsigned char)*e & 0xC0) != 0x80;
            e++;
        }
        int lead = col > indent ? 1 : 0;
        if (col + lead + chars > WIDTH && col > indent) {
            fprintf(f, "\n%*s", indent, "");
            col = indent;
            lead = 0;
        }
        if (lead)
            fputc(' ', f);
        fwrite(p, 1, (size_t)(e - p), f);
        col += lead + chars;
        p = e;
    }
    return col;
}

static void paragraph(FILE *f, const char *text, int indent)
{
    fprintf(f, "%*s", indent, "");
    wrap(f, text, indent, indent);
    fputc('\n', f);
}

static int shown(const cli_option *o, cli_cmd c)
{
    return (o->commands & CMD_BIT(c)) != 0;
}

/* The first entry of an option every command takes, and --version (no
 * command's): what the general help and the manual's OPTIONS list. */
static int common(const cli_option *o)
{
    return (cli_option_commands(o->id) == CMDS_ALL && cli_option_find(o->name) == o) ||
           o->commands == 0;
}

/* "  --pm DEG" or "  -h, --help" */
static int option_left(FILE *f, const cli_option *o)
{
    int n = fprintf(f, "  %s%s%s", o->alias ? o->alias : "", o->alias ? ", " : "", o->name);
    if (o->metavar)
        n += fprintf(f, " %s", o->metavar);
    return n;
}

static void option_row(FILE *f, const cli_option *o)
{
    int col = option_left(f, o);
    if (col >= LEFT) {
        fprintf(f, "\n%*s", LEFT, "");
        col = LEFT;
    } else {
        fprintf(f, "%*s", LEFT - col, "");
        col = LEFT;
    }
    col = wrap(f, o->help, col, LEFT);
    if (o->deflt) {
        char d[256];
        snprintf(d, sizeof d, "(default: %s)", o->deflt);
        wrap(f, d, col, LEFT);
    }
    fputc('\n', f);
}

void cli_help_command(FILE *f, cli_cmd c)
{
    const cli_command *k = &cli_commands[c];
    fprintf(f, "usage: loopwise %s FILE%s%s [options]\n       (FILE may be - for standard "
            "input)\n\n", k->name, k->needs[0] ? " " : "", k->needs);
    paragraph(f, k->about, 0);
    fputs("\noptions:\n", f);
    for (int j = 0; j < cli_noptions; j++)
        if (shown(&cli_options[j], c))
            option_row(f, &cli_options[j]);
    fputc('\n', f);
    paragraph(f, numbers_note, 0);
    fputc('\n', f);
    char codes[1024];
    snprintf(codes, sizeof codes, "exit codes: 1 when %s; %s", k->exit1, exit_rest);
    paragraph(f, codes, 0);
    fprintf(f, "\nexample:\n  %s\n", k->example);
}

void cli_help_general(FILE *f)
{
    fputs("usage: loopwise COMMAND FILE [options]   (FILE may be - for standard input)\n"
          "       loopwise COMMAND --help          a command's options, defaults, an example\n"
          "       loopwise help COMMAND            the same\n"
          "\ncommands:\n", f);
    for (int c = 0; c < CMD_COUNT; c++) {
        int col = fprintf(f, "  %-12s", cli_commands[c].name);
        wrap(f, cli_commands[c].summary, col, 14);
        fputc('\n', f);
    }
    fputs("\noptions every command takes:\n", f);
    for (int j = 0; j < cli_noptions; j++)
        if (common(&cli_options[j]))
            option_row(f, &cli_options[j]);
    fputc('\n', f);
    paragraph(f, numbers_note, 0);
    paragraph(f, "Exit codes: 0 done, every target given met; 1 a target given (--pm, --gm, "
              "--yield) is missed or the loop is unstable where the command looked (size: no "
              "value meets the target; montecarlo: only --yield counts); 2 bad usage or input, "
              "nothing computed; 3 numerical failure, or gnuplot missing.", 0);
    fputs("The manual: man loopwise; the file format: man 5 loopwise.\n", f);
}

/* ---- manual --------------------------------------------------------------- */

/* The characters beyond ASCII the table may hold, as roff escapes. */
static const struct {
    const char *utf8, *roff;
} specials[] = {
    { "\xC2\xB0", "\\(de" }, { "\xCF\x80", "\\(*p" }, { "\xCE\xA9", "\\(*W" },
    { "\xC2\xB5", "\\(mc" },
};

/* Writes text as roff body text: backslashes and hyphens escaped, a line
 * never starting with a control character. Returns -1 on a character
 * without an escape. */
static int roff_text(FILE *f, const char *text)
{
    int rc = 0;
    for (const char *p = text; *p;) {
        unsigned char ch = (unsigned char)*p;
        if (ch >= 0x80) {
            size_t k = 0, n = sizeof specials / sizeof *specials;
            while (k < n && strncmp(p, specials[k].utf8, strlen(specials[k].utf8)))
                k++;
            if (k == n) {
                fprintf(stderr, "cli_help_roff: no roff escape for byte 0x%02X in \"%s\"\n", ch,
                        text);
                rc = -1;
                p++;
                continue;
            }
            fputs(specials[k].roff, f);
            p += strlen(specials[k].utf8);
            continue;
        }
        if (ch == '\\')
            fputs("\\e", f);
        else if (ch == '-')
            fputs("\\-", f);
        else if (p == text && (ch == '.' || ch == '\''))
            fprintf(f, "\\&%c", ch);
        else
            fputc(ch, f);
        p++;
    }
    return rc;
}

static int roff_option(FILE *f, const cli_option *o)
{
    int rc = 0;
    fputs(".TP\n", f);
    if (o->alias) {
        fputs("\\fB", f);
        rc |= roff_text(f, o->alias);
        fputs("\\fR, ", f);
    }
    fputs("\\fB", f);
    rc |= roff_text(f, o->name);
    fputs("\\fR", f);
    if (o->metavar) {
        fputs(" \\fI", f);
        rc |= roff_text(f, o->metavar);
        fputs("\\fR", f);
    }
    fputc('\n', f);
    rc |= roff_text(f, o->help);
    if (o->deflt) {
        fputs(" (default: ", f);
        rc |= roff_text(f, o->deflt);
        fputc(')', f);
    }
    fputc('\n', f);
    return rc;
}

int cli_help_roff(FILE *f)
{
    int rc = 0;
    fputs(".SH OPTIONS\nEvery command takes these; each command's own options are listed with "
          "it under\n.BR COMMANDS .\n", f);
    for (int j = 0; j < cli_noptions; j++)
        if (common(&cli_options[j]))
            rc |= roff_option(f, &cli_options[j]);
    fputs(".SH COMMANDS\n", f);
    for (int c = 0; c < CMD_COUNT; c++) {
        const cli_command *k = &cli_commands[c];
        fprintf(f, ".SS %s\n.B loopwise %s\n.I FILE\n", k->name, k->name);
        if (k->needs[0]) {
            rc |= roff_text(f, k->needs);
            fputc('\n', f);
        }
        fputs("[\\fIoptions\\fR]\n.PP\n", f);
        rc |= roff_text(f, k->about);
        fputs("\n.PP\nOptions, besides those of\n.BR OPTIONS :\n.RS\n", f);
        for (int j = 0; j < cli_noptions; j++)
            if (shown(&cli_options[j], (cli_cmd)c) &&
                cli_option_commands(cli_options[j].id) != CMDS_ALL)
                rc |= roff_option(f, &cli_options[j]);
        fputs(".RE\n.PP\nExit code 1 when ", f);
        rc |= roff_text(f, k->exit1);
        fputs(".\n.PP\nExample:\n.PP\n.RS\n.EX\n", f);
        rc |= roff_text(f, k->example);
        fputs("\n.EE\n.RE\n", f);
    }
    return rc;
}
