/* main: dispatch. The work is done by the library modules; the options are
 * read by cli_parse.c from the option table; this file runs the pipeline
 *   text -> desc -> model -> check -> report
 * and maps statuses to exit codes (SPEC section 5). */
#include <ctype.h>
#include <gsl/gsl_errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "loopwise/eigvals.h"
#include "loopwise/cli.h"
#include "loopwise/design.h"
#include "loopwise/figures.h"
#include "loopwise/outfile.h"
#include "loopwise/report.h"

static int exit_code(int rc)
{
    return rc == LW_EINPUT ? 2 : 3;
}

/* 1 when the NAME of a --set NAME=EXPR stands as a word in the line src. */
static int set_on_line(const char *set, const char *src)
{
    size_t n = strcspn(set, "=");
    for (const char *p = src; n > 0 && *p; p++) {
        if (strncmp(p, set, n) != 0)
            continue;
        int before = p == src || !(isalnum((unsigned char)p[-1]) || p[-1] == '_');
        int after = !(isalnum((unsigned char)p[n]) || p[n] == '_');
        if (before && after)
            return 1;
    }
    return 0;
}

/* A value the file cannot take after --set: the message names the --set
 * values behind it (those named on the failing line, or else every one),
 * since the file itself may be fine. */
static void blame_sets(const options *o, lw_error *err)
{
    char add[LW_MSG_MAX] = "";
    int named = 0;
    for (int all = 0; all < 2 && !named; all++)
        for (int k = 0; k < o->nsets; k++)
            if (all || set_on_line(o->sets[k], err->src)) {
                size_t len = strlen(add);
                snprintf(add + len, sizeof add - len, "%s--set %s", named++ ? ", " : "",
                         o->sets[k]);
            }
    size_t len = strlen(err->msg);
    if (named)
        snprintf(err->msg + len, sizeof err->msg - len, " (from %s)", add);
}

/* Loads, overrides and evaluates the description, and builds the model. */
static int load(const options *o, text_file **t, desc **d, model **m, lw_error *err)
{
    int rc = text_read(o->file, t, err);
    if (!rc)
        rc = desc_parse(*t, strcmp(o->file, "-") ? o->file : "<stdin>", d, err);
    for (int k = 0; !rc && k < o->nsets; k++)
        rc = desc_set(*d, o->sets[k], err);
    if (!rc && (rc = desc_eval(*d, err)) == LW_EINPUT && o->nsets > 0 && err->line > 0)
        blame_sets(o, err); /* at a line of the file (a --set's own value is named already) */
    if (!rc)
        rc = model_new(*d, m, err);
    return rc;
}

static int run_gain(const options *o, const desc *d, const check_result *r, lw_error *err)
{
    /* the table is read far from the crossover too, where the reduced form
     * loses digits when the poles span many decades: take the LU path for
     * networks small enough that it costs nothing to notice */
    if (d->nnodes <= 64)
        lgain_use_full(r->lg, 1);
    int npoints = o->points ? o->points : 121;
    if (o->csv) {
        outfile *of;
        int rc = outfile_open(o->csv, &of, err);
        if (rc)
            return rc;
        report_gain(of->f, d, r, npoints, GAIN_CSV);
        if ((rc = outfile_commit(of, err)))
            return rc;
        if (!strcmp(o->csv, "-"))
            return LW_OK;
    }
    report_gain(stdout, d, r, npoints, o->json ? GAIN_JSON : GAIN_TEXT);
    return LW_OK;
}

int main(int argc, char **argv)
{
    int code;
    if (cli_early(argc, argv, &code))
        return code;
    options o;
    cli_options_init(&o);
    code = cli_arguments_check(argc, argv);
    if (!code)
        code = cli_parse(argc, argv, &o);
    if (code)
        return code;
    gsl_set_error_handler_off();
    eigvals_blas_one_thread();
    lw_error err;
    lw_error_clear(&err);
    desc *d = NULL;
    model *m = NULL;
    check_result r;
    memset(&r, 0, sizeof r);
    text_file *t = NULL;
    int rc = load(&o, &t, &d, &m, &err);
    check_opts co = { o.fmin, o.fmax, 1, 1, o.each, 0, NULL };
    co.want_nyquist = !strcmp(o.command, "check") || !strcmp(o.command, "polar");
    /* a check of this size takes a second or more: say what it is doing */
    co.progress = m && m->n >= 256 && isatty(fileno(stderr)) ? stderr : NULL;
    int design = !strcmp(o.command, "size") || !strcmp(o.command, "sweep") ||
                 !strcmp(o.command, "load") || !strcmp(o.command, "corners") ||
                 !strcmp(o.command, "montecarlo");
    if (!rc)
        rc = check_run(d, m, &co, &r, &err);
    if (!rc && !strcmp(o.command, "check") && d->nnodes <= 64)
        rc = design_node_table(d, &co, &r, &err);
    if (!rc && design) {
        rc = !strcmp(o.command, "size") ? cmd_size(&o, d, t, &code, &err)
             : !strcmp(o.command, "sweep") ? cmd_sweep(&o, d, t, &code, &err)
             : !strcmp(o.command, "load") ? cmd_load(&o, d, &code, &err)
             : !strcmp(o.command, "corners") ? cmd_corners(&o, d, &code, &err)
                                             : cmd_montecarlo(&o, d, t, &r, &code, &err);
        if (rc == LW_ENUMERIC && err.msg[0] && o.plot) {
            /* the analysis printed; only the picture failed */
            lw_error_print(&err, o.file, stderr);
            code = 3;
            goto done;
        }
    }
    if (rc) {
        if (err.msg[0]) /* empty: printed already by the command (a part's file, say) */
            lw_error_print(&err, strcmp(o.file, "-") ? o.file : "<stdin>", stderr);
        code = exit_code(rc);
        goto done;
    }
    check_warn_gm_cycles(d, stderr);
    report_target tg = { o.pm, o.pm_given, o.gm, o.gm_given };
    if (design) {
        /* output written by the command */
    } else if (!strcmp(o.command, "check")) {
        if (o.json)
            report_check_json(stdout, d, m, &r);
        else
            report_check_text(stdout, d, m, &r, tg);
        code = report_check_status(&r, tg);
    } else if (!strcmp(o.command, "roots")) {
        rc = cmd_roots(&o, d, m, &r, &err);
        code = report_check_status(&r, tg);
    } else if (!strcmp(o.command, "polar")) {
        rc = cmd_polar(&o, d, m, &r, &err);
        code = report_check_status(&r, tg);
    } else if (!strcmp(o.command, "response")) {
        rc = cmd_response(&o, d, m, &r, &err);
        code = report_check_status(&r, tg); /* unstable, or --pm/--gm missed */
    } else {
        if (!(rc = run_gain(&o, d, &r, &err)) && o.plot) {
            figure_opts fo = { o.plot, o.width, o.height, o.keep_script };
            rc = figure_bode(&fo, d, m, &r, o.each, &err);
        }
        code = report_check_status(&r, tg);
    }
    if (rc) {
        lw_error_print(&err, o.file, stderr);
        code = exit_code(rc);
    }
    if (fflush(stdout) != 0 || ferror(stdout)) {
        fputs("loopwise: writing standard output failed\n", stderr);
        code = 3;
    }
done:
    text_free(t);
    check_result_free(&r);
    model_free(m);
    desc_free(d);
    return code;
}
