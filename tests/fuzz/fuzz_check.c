/* fuzz_check: a libFuzzer target over the whole 'check' path, as src/main.c
 * runs it:
 *   text_from_buffer -> desc_parse -> (desc_set) -> desc_eval -> model_new
 *   -> check_run -> design_node_table -> report_check_text/json, report_gain
 * with every report written to /dev/null, and input errors printed (caret
 * and all) to /dev/null too.
 *
 * The input is a .loop file. Comment lines the parser ignores may carry
 * extra requests for the target, so the fuzzer can reach the options too:
 *   #!set NAME=EXPR      a --set override (up to 4)
 *   #!band FMIN FMAX     --fmin / --fmax as lone numbers
 *
 * Built by 'make fuzz' with clang -fsanitize=fuzzer,address,undefined. */
#include <gsl/gsl_errno.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/design.h"
#include "loopwise/report.h"
#include "loopwise/text.h"

enum {
    FUZZ_MAX_INPUT = 64 << 10,  /* bigger inputs are not interesting, only slow */
    FUZZ_MAX_NODES = 64,        /* analysis is cubic in the nodes: keep it quick */
    FUZZ_TABLE_NODES = 12,      /* the node table runs two analyses per node */
    FUZZ_MAX_SETS = 4,
    FUZZ_BODE_POINTS = 16
};

static FILE *devnull;

int LLVMFuzzerInitialize(int *argc, char ***argv);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerInitialize(int *argc, char ***argv)
{
    (void)argc;
    (void)argv;
    gsl_set_error_handler_off();
    devnull = fopen("/dev/null", "w");
    if (!devnull)
        abort();
    return 0;
}

/* Collects the '#!' requests; sets[] point into the copy buf. */
static int directives(char *buf, const char **sets, check_opts *co)
{
    int nsets = 0;
    for (char *line = buf; line && *line;) {
        char *nl = strchr(line, '\n');
        if (nl)
            *nl = '\0';
        char *cr = strchr(line, '\r');
        if (cr)
            *cr = '\0';
        if (!strncmp(line, "#!set ", 6) && nsets < FUZZ_MAX_SETS) {
            sets[nsets++] = line + 6;
        } else if (!strncmp(line, "#!band ", 7)) {
            char *a = line + 7, *b = strchr(a, ' ');
            lw_error e;
            double lo, hi;
            if (b) {
                *b++ = '\0';
                if (expr_number(a, UNIT_HZ, &lo, &e) == LW_OK &&
                    expr_number(b, UNIT_HZ, &hi, &e) == LW_OK && lo > 0 && hi > 0) {
                    co->fmin_hz = lo;
                    co->fmax_hz = hi;
                }
            }
        }
        line = nl ? nl + 1 : NULL;
    }
    return nsets;
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (size > FUZZ_MAX_INPUT)
        return -1;  /* not added to the corpus */
    char *buf = malloc(size + 1);
    if (!buf)
        return 0;
    memcpy(buf, data, size);
    buf[size] = '\0';
    const char *sets[FUZZ_MAX_SETS];
    check_opts co = { 0, 0, 1, 1, 0 };
    int nsets = directives(buf, sets, &co);

    lw_error err;
    lw_error_clear(&err);
    text_file *t = NULL;
    desc *d = NULL;
    model *m = NULL;
    check_result r;
    memset(&r, 0, sizeof r);

    int rc = text_from_buffer((const char *)data, size, &t, &err);
    if (!rc)
        rc = desc_parse(t, "fuzz.loop", &d, &err);
    text_free(t);
    for (int k = 0; !rc && k < nsets; k++)
        rc = desc_set(d, sets[k], &err);
    if (!rc)
        rc = desc_eval(d, &err);
    if (!rc && d->nnodes > FUZZ_MAX_NODES)
        goto done;
    if (!rc)
        rc = model_new(d, &m, &err);
    if (!rc)
        rc = check_run(d, m, &co, &r, &err);
    if (!rc && d->nnodes <= FUZZ_TABLE_NODES)
        rc = design_node_table(d, &co, &r, &err);
    if (rc) {
        lw_error_print(&err, "fuzz.loop", devnull);
        goto done;
    }
    check_warn_gm_cycles(d, devnull);
    report_target tg = { .pm_deg = 60.0, .given = (int)(size & 1) };
    report_check_text(devnull, d, m, &r, tg);
    report_check_json(devnull, d, m, &r);
    (void)report_check_status(&r, tg);
    report_gain(devnull, d, &r, FUZZ_BODE_POINTS, GAIN_TEXT);
    report_gain(devnull, d, &r, FUZZ_BODE_POINTS, GAIN_CSV);
    report_gain(devnull, d, &r, FUZZ_BODE_POINTS, GAIN_JSON);
    fflush(devnull);
done:
    check_result_free(&r);
    model_free(m);
    desc_free(d);
    free(buf);
    return 0;
}
