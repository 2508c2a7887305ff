/* fuzz_check: a libFuzzer target over the whole program as a user runs it:
 * the argument checks and option parsing (cli_parse.c, from the option
 * table), then src/main.c (included below, its main renamed) with every
 * command's own option checks and analysis, with
 * the input as the .loop file:
 *   arguments -> text (every byte checked) -> desc -> (--set) -> desc_eval
 *   -> model -> check -> the command (check, the gain table, size, sweep,
 *   load, corners, montecarlo, response) -> text, JSON and CSV reports
 * Standard output and the messages go to /dev/null.
 *
 * Comment lines the parser ignores carry the command line, so the fuzzer
 * mutates the options together with the file:
 *   #!cmd WORD        the command (default: check; --json when the input's
 *                     size is odd)
 *   #!arg TEXT        one more argument after FILE, the rest of the line as
 *                     it is (any bytes, so the argument checks are reached)
 *   #!set NAME=EXPR   the same as '#!arg --set' '#!arg NAME=EXPR'
 *   #!band FMIN FMAX  '--fmin FMIN --fmax FMAX'
 *
 * What the harness refuses to run (after the options were parsed, so their
 * parsing is still fuzzed): pictures (-o starts gnuplot), files other than
 * the input, CSV other than standard output or /dev/null, more than
 * FUZZ_MAX_POINTS points or samples, and the design commands on more than
 * FUZZ_DESIGN_NODES nodes or FUZZ_MAX_CORNER_PARAMS ranged params (each
 * runs up to thousands of analyses). Inputs with more than FUZZ_MAX_NODES
 * node lines are only parsed (analysis is cubic in the nodes).
 *
 * Built by 'make fuzz' with clang -fsanitize=fuzzer,address,undefined. */
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

/* The program itself, its main callable here. */
int loopwise_main(int argc, char **argv);
#define main loopwise_main
#include "../../src/main.c"
#undef main

enum {
    FUZZ_MAX_INPUT = 64 << 10,  /* bigger inputs are not interesting, only slow */
    FUZZ_MAX_NODES = 64,
    FUZZ_DESIGN_NODES = 16,
    FUZZ_MAX_CORNER_PARAMS = 6, /* 64 corners */
    FUZZ_MAX_POINTS = 64,
    FUZZ_MAX_ARGS = 48
};

static FILE *devnull;
static char path[64];

int LLVMFuzzerInitialize(int *argc, char ***argv);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static void remove_input(void)
{
    unlink(path);
}

/* The program reads its FILE by name: each input is written to a file of
 * this process's own, removed at exit. */
int LLVMFuzzerInitialize(int *argc, char ***argv)
{
    (void)argc;
    (void)argv;
    gsl_set_error_handler_off();
    devnull = fopen("/dev/null", "w");
    snprintf(path, sizeof path, "/tmp/loopwise-fuzz-%ld.loop", (long)getpid());
    if (!devnull || atexit(remove_input))
        abort();
    return 0;
}

/* Counts the lines whose first word is w. */
static int count_lines(const char *buf, const char *w)
{
    int n = 0;
    size_t len = strlen(w);
    for (const char *line = buf; line; line = strchr(line, '\n'), line = line ? line + 1 : NULL) {
        while (*line == ' ' || *line == '\t')
            line++;
        n += !strncmp(line, w, len) && (line[len] == ' ' || line[len] == '\t');
    }
    return n;
}

/* Builds argv from the '#!' lines of buf (a NUL-terminated copy, cut into
 * lines in place). Returns argc. */
static int arguments(char *buf, char **argv)
{
    static char loopwise[] = "loopwise", check[] = "check", set[] = "--set", fmin[] = "--fmin",
                fmax[] = "--fmax";
    int argc = 3;
    argv[0] = loopwise;
    argv[1] = check;
    argv[2] = path;
    for (char *line = buf; line && *line && argc < FUZZ_MAX_ARGS - 4;) {
        char *nl = strchr(line, '\n');
        if (nl)
            *nl = '\0';
        if (!strncmp(line, "#!cmd ", 6)) {
            argv[1] = line + 6;
        } else if (!strncmp(line, "#!arg ", 6)) {
            argv[argc++] = line + 6;
        } else if (!strncmp(line, "#!set ", 6)) {
            argv[argc++] = set;
            argv[argc++] = line + 6;
        } else if (!strncmp(line, "#!band ", 7)) {
            char *b = strchr(line + 7, ' ');
            if (b) {
                *b++ = '\0';
                argv[argc++] = fmin;
                argv[argc++] = line + 7;
                argv[argc++] = fmax;
                argv[argc++] = b;
            }
        }
        line = nl ? nl + 1 : NULL;
    }
    argv[argc] = NULL;
    return argc;
}

/* Whether the parsed options ask for something the harness does not run. */
static int too_much(const options *o, const char *buf)
{
    if (!o->file || strcmp(o->file, path) || o->plot || o->keep_script || o->samples_out ||
        o->nmerge)
        return 1;
    if (o->csv && strcmp(o->csv, "-") && strcmp(o->csv, "/dev/null"))
        return 1;
    if (o->points > FUZZ_MAX_POINTS || o->samples > FUZZ_MAX_POINTS)
        return 1;
    int design = !strcmp(o->command, "size") || !strcmp(o->command, "sweep") ||
                 !strcmp(o->command, "load") || !strcmp(o->command, "corners") ||
                 !strcmp(o->command, "montecarlo");
    if (design && count_lines(buf, "node") > FUZZ_DESIGN_NODES)
        return 1;
    int ranged = 0;
    for (const char *p = buf; (p = strstr(p, "corners")); p += 7)
        ranged++;
    return design && ranged > FUZZ_MAX_CORNER_PARAMS;
}

/* Parses only (inputs too big to analyse). */
static void parse_only(const uint8_t *data, size_t size)
{
    lw_error err;
    text_file *t = NULL;
    desc *d = NULL;
    lw_error_clear(&err);
    int rc = text_from_buffer((const char *)data, size, &t, &err);
    if (!rc)
        rc = desc_parse(t, "fuzz.loop", &d, &err);
    if (!rc)
        rc = desc_eval(d, &err);
    if (rc)
        lw_error_print(&err, "fuzz.loop", devnull);
    desc_free(d);
    text_free(t);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (size > FUZZ_MAX_INPUT)
        return -1; /* not added to the corpus */
    char *buf = malloc(size + 1), *lines = malloc(size + 1);
    char *argv[FUZZ_MAX_ARGS + 1];
    if (!buf || !lines)
        goto done;
    memcpy(buf, data, size);
    buf[size] = '\0';
    memcpy(lines, buf, size + 1);
    if (count_lines(buf, "node") > FUZZ_MAX_NODES) {
        parse_only(data, size);
        goto done;
    }
    int argc = arguments(lines, argv);
    if (argc == 3 && !strcmp(argv[1], "check") && (size & 1)) {
        static char json[] = "--json";
        argv[argc++] = json;
        argv[argc] = NULL;
    }
    FILE *out = fopen(path, "wb");
    if (!out)
        abort();
    if (fwrite(data, 1, size, out) != size || fclose(out))
        abort();
    /* stdout and stderr are variables in glibc: pointed at /dev/null while
     * the program runs (the sanitizers write to the descriptor directly) */
    FILE *so = stdout, *se = stderr;
    stdout = devnull;
    stderr = devnull;
    static options o; /* the --merge list makes it large */
    cli_options_init(&o);
    if (cli_arguments_check(argc, argv) == 0 && cli_parse(argc, argv, &o) == 0 &&
        !too_much(&o, buf))
        (void)loopwise_main(argc, argv);
    fflush(devnull);
    stdout = so;
    stderr = se;
done:
    free(lines);
    free(buf);
    return 0;
}
