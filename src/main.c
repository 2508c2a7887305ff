/* main: command-line options and dispatch. The work is done by the library
 * modules; this file only reads options, runs the pipeline
 *   text -> desc -> model -> check -> report
 * and maps statuses to exit codes (SPEC section 5). */
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

#define LOOPWISE_VERSION "0.2.0"

static const char usage_text[] =
    "usage: loopwise COMMAND FILE [options]      (FILE may be - for standard input)\n"
    "\n"
    "commands:\n"
    "  check   declared loops and their signs, DC loop gain, crossovers, phase and gain\n"
    "          margin, open-loop poles with owner nodes, zeros, closed-loop poles, verdict\n"
    "  gain    magnitude and phase of the loop gain over the band (table, --csv, --json)\n"
    "  size    --tune NAME --pm DEG [--within LO..HI] [--gm DB] [--density D]\n"
    "          the smallest value of NAME that meets the target margin;\n"
    "          --over corners [--levels K]: at every corner, naming the one that limits;\n"
    "          --over montecarlo --samples N --seed S --yield P: for a yield target;\n"
    "          --tune A --tune B: the smallest A for which some B meets the target,\n"
    "          B chosen there for the largest margin (the k-th --within is the k-th\n"
    "          --tune's range)\n"
    "  sweep   --vary NAME --from A --to B [--points N] [--lin] [--csv PATH]\n"
    "          margins and poles as one value changes, and where the margin crosses --pm;\n"
    "          --vary twice (each --from/--to after its --vary): a map over N x N\n"
    "          points with the boundary where the target is met\n"
    "          with --to NODE [--from INPUT | --inject NODE] also a response's overshoot,\n"
    "          1% settling time and peak at every value (a name after --from or --to\n"
    "          is an input or a node, a number a bound of the range)\n"
    "  load    --node N --cload LO..HI: whether N is inside the loop, the margin over\n"
    "          the added load and the largest load that still meets the target\n"
    "  roots   -o FILE: the s-plane picture of poles, zeros and closed-loop poles\n"
    "  polar   -o FILE: T(j2\xCF\x80" "f) in the complex plane for f from -inf to +inf, with -1,\n"
    "          the unit circle, the crossings and the Nyquist count\n"
    "  response --to NODE [--from INPUT | --inject NODE | --inject each] [--step]\n"
    "          the closed loop's response at NODE to an input or an injected current:\n"
    "          DC value and rejection, peak, bandwidth, poles and zeros, a table over\n"
    "          the band, and the exact step response (--step; always in --json)\n"
    "  corners [--levels K] the margin at every combination of the params' corner\n"
    "          ranges: their ends, or K evenly spaced values of each (ends included)\n"
    "  montecarlo --samples N --seed S [--yield P]: margin distributions and yield under\n"
    "          the params' distributions; -o draws the phase-margin histogram\n"
    "          (corners, montecarlo: a --set pins a param; it is neither combined nor drawn)\n"
    "\n"
    "options:\n"
    "  --set NAME=EXPR   override a param, an element value, or NODE.r / NODE.c (repeatable)\n"
    "  --pm DEG          target phase margin; without it, 60 is the reference the text\n"
    "                    measures against, never a reason to exit 1\n"
    "  --fmin F, --fmax F  analysis band in Hz (default: from the poles and zeros)\n"
    "  --json            machine-readable output on standard output\n"
    "  --csv PATH        gain, sweep, response: also write CSV to PATH (PATH may be -)\n"
    "  --points N        gain, response: frequencies (default 121); sweep: values (default\n"
    "                    25; a map: on each axis, at most 200)\n"
    "  --lin             sweep: linear spacing instead of logarithmic\n"
    "  --within LO..HI   size: the range searched (default: value/100 .. value*100)\n"
    "  --gm DB           target gain margin (every command; a loop whose phase never\n"
    "                    reaches -180 has an unbounded gain margin and meets it)\n"
    "  --yield P         montecarlo, size --over montecarlo: the one-sided 95% lower\n"
    "                    bound of the yield must reach P (0.99 or 99%)\n"
    "  --density D       size: capacitance per area, e.g. 2fF/um2, to report the area\n"
    "  -o PATH           draw a picture: gain, roots, polar, sweep, load, montecarlo,\n"
    "                    response\n"
    "                    (PATH ends in .png or .svg)\n"
    "  --each            gain -o: overlay each declared loop's own gain\n"
    "  --step            response: the step response (text and -o; JSON always has it)\n"
    "  --inject NODE     response: a current into NODE instead of an input; 'each': every node\n"
    "  --size WxH        plot size in pixels (default 960x720)\n"
    "  --keep-script DIR leave the plot's data and gnuplot script in DIR\n"
    "  -h, --help        this help;  --version  the version\n"
    "\n"
    "Numbers take SI prefixes and units as in the file: 2.2pF, 180k, 1e3k, 40uS.\n"
    "Exit codes: 0 done, every target given met; 1 a target given (--pm, --gm,\n"
    "--yield) is missed or the loop is unstable where the command looked (size: no\n"
    "value meets the target; montecarlo: only --yield counts); 2 bad usage or input,\n"
    "nothing computed; 3 numerical failure, or gnuplot missing.\n";



static int usage_error(const char *fmt, const char *arg)
{
    fputs("loopwise: ", stderr);
    fprintf(stderr, fmt, arg);
    fputs("\nrun 'loopwise --help' for the commands and options\n", stderr);
    return 2;
}

/* Evaluates a numeric option with the file's number syntax. */
int option_number(const char *name, const char *text, expr_unit unit, double *v)
{
    expr_pool *p = expr_pool_new();
    lw_error err;
    lw_error_clear(&err);
    int h, rc = p ? expr_compile(p, text, unit, NULL, 1, 1, text, &h, &err) : LW_ENOMEM;
    if (!rc)
        rc = expr_eval(p, h, NULL, v, &err);
    expr_pool_free(p);
    if (!rc && !isfinite(*v))
        snprintf(err.msg, sizeof err.msg, "the value must be finite"), rc = LW_EINPUT;
    if (rc) {
        fprintf(stderr, "loopwise: %s '%s': %s\n", name, text, err.msg);
        return 2;
    }
    return 0;
}

/* Every argument must be text by the file's rules (text_find_bad_byte):
 * arguments reach messages, reproduce lines and plot scripts. */
static int check_arguments(int argc, char **argv)
{
    for (int k = 1; k < argc; k++) {
        char what[160];
        int kind;
        long off = text_find_bad_byte(argv[k], strlen(argv[k]), "the end of the argument", &kind,
                                      what, sizeof what);
        if (off < 0)
            continue;
        fprintf(stderr, "loopwise: argument %d", k);
        if (k > 1 && argv[k - 1][0] == '-')
            fprintf(stderr, " (after %s)", argv[k - 1]);
        fprintf(stderr, ", character %d: %s; expected UTF-8 text with no control character "
                "but tab\nrun 'loopwise --help' for the commands and options\n",
                text_col(argv[k], (int)off), what);
        return 2;
    }
    return 0;
}

/* NAME -> [A-Za-z_][A-Za-z0-9_]* (and not 'inf' or 'pi', which are numbers) */
static int plain_name(const char *s)
{
    if (!((*s >= 'A' && *s <= 'Z') || (*s >= 'a' && *s <= 'z') || *s == '_'))
        return 0;
    for (const char *p = s + 1; *p; p++)
        if (!((*p >= 'A' && *p <= 'Z') || (*p >= 'a' && *p <= 'z') || *p == '_' ||
              (*p >= '0' && *p <= '9')))
            return 0;
    return strcmp(s, "inf") && strcmp(s, "pi");
}

static int parse_options(int argc, char **argv, options *o)
{
    for (int k = 1; k < argc; k++) {
        const char *a = argv[k];
        const char *val = k + 1 < argc ? argv[k + 1] : NULL;
        static const char *const with_value[] = { "--set", "--pm", "--fmin", "--fmax", "--csv",
            "--points", "--tune", "--within", "--vary", "--from", "--to", "--node", "--cload",
            "--density", "--gm", "-o", "--size", "--keep-script", "--samples", "--seed", "--yield",
            "--over", "--levels", "--inject" };
        int takes = 0;
        for (size_t j = 0; j < sizeof with_value / sizeof *with_value; j++)
            takes |= !strcmp(a, with_value[j]);
        if (takes && !val)
            return usage_error("option '%s' needs a value", a);
        if (!strcmp(a, "--set")) {
            if (o->nsets == MAX_SETS)
                return usage_error("too many --set options (limit %s)", "256");
            o->sets[o->nsets++] = val;
        } else if (!strcmp(a, "--pm")) {
            if (option_number(a, val, UNIT_NONE, &o->pm))
                return 2;
            o->pm_given = 1;
        } else if (!strcmp(a, "--fmin") || !strcmp(a, "--fmax")) {
            double *dst = a[3] == 'm' && a[4] == 'i' ? &o->fmin : &o->fmax;
            if (option_number(a, val, UNIT_HZ, dst))
                return 2;
            if (!(*dst > 0))
                return usage_error("%s must be a positive frequency", a);
        } else if (!strcmp(a, "--csv")) {
            o->csv = val;
        } else if (!strcmp(a, "--points")) {
            double v;
            if (option_number(a, val, UNIT_NONE, &v))
                return 2;
            if (v < 2 || v > MAX_GAIN_POINTS || v != floor(v))
                return usage_error("--points takes a whole number from 2 to 100000, got '%s'", val);
            o->points = (int)v;
        } else if (!strcmp(a, "--gm")) {
            if (option_number(a, val, UNIT_NONE, &o->gm))
                return 2;
            o->gm_given = 1;
        } else if (!strcmp(a, "--tune")) {
            if (o->ntune == MAX_AXES)
                return usage_error("%s", "size takes at most two --tune: the value that costs "
                                   "area first, then the one chosen for the largest margin");
            o->tune[o->ntune++] = val;
        } else if (!strcmp(a, "--within")) {
            if (o->nwithin == MAX_AXES)
                return usage_error("%s", "--within given more than twice (one per --tune)");
            o->within[o->nwithin++] = val;
        } else if (!strcmp(a, "--vary")) {
            if (o->nvary == MAX_AXES)
                return usage_error("%s", "sweep varies at most two values (--vary twice draws "
                                   "a map)");
            o->vary[o->nvary++] = val;
        } else if ((!strcmp(a, "--from") || !strcmp(a, "--to")) && plain_name(val)) {
            /* a name is a response's end (an input, a node: response, sweep
             * --to NODE); anything else a number of sweep's range: names never
             * parse as numbers here */
            const char **dst = a[2] == 't' ? &o->to_node : &o->from_node;
            if (*dst)
                return usage_error("%s NODE given twice", a);
            *dst = val;
        } else if (!strcmp(a, "--from") || !strcmp(a, "--to")) {
            /* each --from/--to belongs to the --vary before it */
            if (o->nvary == 0 && o->command && !strcmp(o->command, "response"))
                return usage_error(a[2] == 't' ? "response %s names a node, not a number"
                                               : "response %s names an input, not a number", a);
            if (o->nvary == 0)
                return usage_error("%s comes after the --vary it belongs to", a);
            const char **dst = a[2] == 't' ? &o->to[o->nvary - 1] : &o->from[o->nvary - 1];
            if (*dst)
                return usage_error(a[2] == 't' ? "--to given twice for --vary %s"
                                               : "--from given twice for --vary %s",
                                   o->vary[o->nvary - 1]);
            *dst = val;
        } else if (!strcmp(a, "--over")) {
            if (strcmp(val, "corners") && strcmp(val, "montecarlo"))
                return usage_error("--over takes 'corners' or 'montecarlo', got '%s'", val);
            o->over = val;
        } else if (!strcmp(a, "--levels")) {
            double v;
            if (option_number(a, val, UNIT_NONE, &v))
                return 2;
            if (v < 2 || v > MAX_LEVELS || v != floor(v))
                return usage_error("--levels takes a whole number from 2 to 100 (values of each "
                                   "range, ends included), got '%s'", val);
            o->levels = (int)v;
        } else if (!strcmp(a, "--inject")) {
            if (o->inject)
                return usage_error("%s given twice", a);
            o->inject = val;
        } else if (!strcmp(a, "--step")) {
            o->step = 1;
        } else if (!strcmp(a, "--node")) {
            o->node = val;
        } else if (!strcmp(a, "--cload")) {
            o->cload = val;
        } else if (!strcmp(a, "--density")) {
            o->density = val;
        } else if (!strcmp(a, "-o")) {
            o->plot = val;
        } else if (!strcmp(a, "--keep-script")) {
            o->keep_script = val;
        } else if (!strcmp(a, "--size")) {
            if (sscanf(val, "%dx%d", &o->width, &o->height) != 2 || o->width < 100 ||
                o->height < 100 || o->width > 8000 || o->height > 8000)
                return usage_error("--size takes WIDTHxHEIGHT in pixels, 100 to 8000, got '%s'", val);
        } else if (!strcmp(a, "--samples") || !strcmp(a, "--seed")) {
            double v;
            if (option_number(a, val, UNIT_NONE, &v))
                return 2;
            int is_samples = !strcmp(a, "--samples");
            if (v != floor(v) || v < is_samples || v > (is_samples ? 1e7 : 1.8e19))
                return usage_error(is_samples ? "--samples takes a whole number from 1 to "
                                   "10000000, got '%s'" : "--seed takes a whole number of 0 or "
                                   "more, got '%s'", val);
            if (is_samples)
                o->samples = (int)v;
            else {
                o->seed = (unsigned long long)v;
                o->seed_given = 1;
            }
        } else if (!strcmp(a, "--yield")) {
            /* a fraction (0.99) or a percentage (99%) */
            char num[64];
            size_t l = strlen(val);
            int pct = l > 0 && val[l - 1] == '%';
            double v;
            if (l - (size_t)pct >= sizeof num)
                return usage_error("--yield '%s': too long", val);
            memcpy(num, val, l - (size_t)pct);
            num[l - (size_t)pct] = '\0';
            if (option_number(a, num, UNIT_NONE, &v))
                return 2;
            v = pct ? v / 100.0 : v;
            if (!(v > 0 && v < 1))
                return usage_error("--yield takes a fraction between 0 and 1 (0.99) or a "
                                   "percentage below 100%% (99%%), got '%s'", val);
            o->yield = v;
            o->yield_given = 1;
        } else if (!strcmp(a, "--each")) {
            o->each = 1;
        } else if (!strcmp(a, "--lin")) {
            o->lin = 1;
        } else if (!strcmp(a, "--json")) {
            o->json = 1;
        } else if (a[0] == '-' && a[1]) {
            return usage_error("unknown option '%s'", a);
        } else if (!o->command) {
            o->command = a;
        } else if (!o->file) {
            o->file = a;
        } else {
            return usage_error("unexpected argument '%s'", a);
        }
        k += takes;
    }
    if (!o->command)
        return usage_error("%s", "missing COMMAND");
    static const char *const commands[] = { "check", "gain", "size", "sweep", "load", "roots",
                                            "polar", "corners", "montecarlo", "response" };
    int known = 0;
    for (size_t j = 0; j < sizeof commands / sizeof *commands; j++)
        known |= !strcmp(o->command, commands[j]);
    /* the names before issue 17 are refused, not aliased: a script that
     * still uses one should fail loudly and say what to write instead */
    if (!strcmp(o->command, "bode"))
        return usage_error("%s", "the command 'bode' is now called 'gain' (renamed in "
                           "version 0.2; see the README, history of interface changes)");
    if (!strcmp(o->command, "polemap"))
        return usage_error("%s", "the command 'polemap' is now called 'roots' (renamed in "
                           "version 0.2; see the README, history of interface changes)");
    if (!known)
        return usage_error("unknown command '%s'; expected check, gain, size, sweep, load, "
                           "roots, polar, response, corners or montecarlo", o->command);
    if (!o->file)
        return usage_error("missing FILE after '%s'", o->command);
    if (o->csv && strcmp(o->command, "gain") && strcmp(o->command, "sweep") &&
        strcmp(o->command, "response"))
        return usage_error("--csv goes with 'gain', 'sweep' or 'response', not '%s'", o->command);
    int resp = !strcmp(o->command, "response"), swp = !strcmp(o->command, "sweep");
    if ((o->to_node || o->from_node || o->inject) && !resp && !swp)
        return usage_error("--to NODE, --from INPUT and --inject go with 'response' or 'sweep', "
                           "not '%s'", o->command);
    if (o->step && !resp)
        return usage_error("%s", "--step goes with 'response'");
    if (resp && !o->to_node)
        return usage_error("%s", "response needs --to NODE: the node whose response is read");
    if (o->inject && o->from_node)
        return usage_error("%s", "--from INPUT and --inject NODE both name the source; give one");
    if (swp && o->inject && !strcmp(o->inject, "each"))
        return usage_error("%s", "sweep takes one source: --inject NODE, not each");
    if (swp && (o->from_node || o->inject) && !o->to_node)
        return usage_error("%s", "sweep --from INPUT or --inject NODE needs --to NODE as well");
    if (swp && o->to_node && o->nvary == MAX_AXES)
        return usage_error("%s", "sweep --to NODE reads a response along one --vary, not over a "
                           "map of two");
    if (o->plot && (!strcmp(o->command, "check") || !strcmp(o->command, "size") ||
                    !strcmp(o->command, "corners")))
        return usage_error("-o draws a picture with gain, roots, polar, sweep, load or "
                           "montecarlo, not '%s'", o->command);
    int size = !strcmp(o->command, "size"), mc_over = size && o->over && o->over[0] == 'm';
    if (o->yield_given && strcmp(o->command, "montecarlo") && !mc_over)
        return usage_error("--yield goes with 'montecarlo' or 'size --over montecarlo', not '%s'",
                           o->command);
    if (o->over && !size)
        return usage_error("--over goes with 'size', not '%s'", o->command);
    if (o->over && o->ntune > 1)
        return usage_error("%s", "--over sizes one value: give one --tune");
    if (mc_over && (o->samples < 1 || !o->yield_given))
        return usage_error("%s", "size --over montecarlo needs --samples N, --seed S and "
                           "--yield P");
    if (o->levels && strcmp(o->command, "corners") && !(size && o->over && o->over[0] == 'c'))
        return usage_error("%s", "--levels goes with 'corners' or 'size --over corners'");
    if (o->nwithin > o->ntune)
        return usage_error("%s", "more --within than --tune: the k-th --within is the range "
                           "of the k-th --tune");
    if (!strcmp(o->command, "montecarlo") && o->samples < 1)
        return usage_error("%s", "montecarlo needs --samples N (1 or more) and --seed S");
    if (o->plot) {
        const char *dot = strrchr(o->plot, '.');
        if (!dot || (strcmp(dot, ".png") && strcmp(dot, ".svg")))
            return usage_error("-o '%s': the plot file must end in .png or .svg", o->plot);
    }
    int picture = !strcmp(o->command, "roots") || !strcmp(o->command, "polar");
    if (picture && !o->plot)
        return usage_error("%s draws a picture: give -o FILE.png or FILE.svg", o->command);
    if (picture && o->json)
        return usage_error("--json goes with the commands that report numbers, not '%s' "
                           "(check --json gives the poles, the margins and the Nyquist count)",
                           o->command);
    if (o->each && strcmp(o->command, "gain"))
        return usage_error("%s", "--each goes with 'gain -o'");
    if (o->keep_script && !o->plot)
        return usage_error("%s", "--keep-script goes with -o");
    lw_error kerr;
    if (o->keep_script && plot_keep_dir_check(o->keep_script, &kerr))
        return usage_error("%s", kerr.msg);
    if (!strcmp(o->command, "size") && !o->ntune)
        return usage_error("%s", "size needs --tune NAME (and --pm DEG)");
    if (o->ntune && strcmp(o->command, "size"))
        return usage_error("--tune goes with 'size', not '%s'", o->command);
    if (!strcmp(o->command, "sweep") && (!o->nvary || !o->from[0] || !o->to[0]))
        return usage_error("%s", "sweep needs --vary NAME --from A --to B");
    if (!strcmp(o->command, "sweep") && o->nvary == 2 && (!o->from[1] || !o->to[1]))
        return usage_error("the second --vary %s needs its own --from and --to after it",
                           o->vary[1]);
    if (o->nvary && strcmp(o->command, "sweep"))
        return usage_error("--vary goes with 'sweep', not '%s'", o->command);
    if (!strcmp(o->command, "load") && (!o->node || !o->cload))
        return usage_error("%s", "load needs --node N --cload LO..HI");
    return 0;
}

static int exit_code(int rc)
{
    return rc == LW_EINPUT ? 2 : 3;
}

/* Loads, overrides and evaluates the description, and builds the model. */
static int load(const options *o, text_file **t, desc **d, model **m, lw_error *err)
{
    int rc = text_read(o->file, t, err);
    if (!rc)
        rc = desc_parse(*t, strcmp(o->file, "-") ? o->file : "<stdin>", d, err);
    for (int k = 0; !rc && k < o->nsets; k++)
        rc = desc_set(*d, o->sets[k], err);
    if (!rc)
        rc = desc_eval(*d, err);
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
    for (int k = 1; k < argc; k++) {
        if (!strcmp(argv[k], "-h") || !strcmp(argv[k], "--help")) {
            fputs(usage_text, stdout);
            return 0;
        }
        if (!strcmp(argv[k], "--version")) {
            printf("loopwise %s\n", LOOPWISE_VERSION);
            return 0;
        }
    }
    options o = { .pm = 60.0, .width = 960, .height = 720 };
    int code = check_arguments(argc, argv);
    if (!code)
        code = parse_options(argc, argv, &o);
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
