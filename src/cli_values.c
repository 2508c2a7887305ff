/* cli_values: each option's value, read and checked where the parser
 * (cli_parse.c) meets it: numbers with the file's syntax, ranges kept as
 * text for the command, names of a response's ends told from numbers. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "loopwise/cli.h"
#include "loopwise/variation.h"

#include "cli_impl.h"

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

/* --part K/M: whole numbers with 1 <= K <= M */
static int part_option(const char *val, options *o, int cmd)
{
    char tail;
    long k, m;
    if (sscanf(val, "%ld/%ld%c", &k, &m, &tail) != 2 || k < 1 || m < 1 || k > m ||
        m > MC_MAX_SAMPLES || strspn(val, "0123456789/") != strlen(val))
        return cli_usage_error(cmd, "--part takes K/M, part K of M with 1 <= K <= M (e.g. 3/8), "
                              "got '%s'", val);
    o->part_k = (int)k;
    o->part_m = (int)m;
    return 0;
}

/* The value of one option; returns 0 or the exit code 2. */
int cli_option_value(const cli_option *opt, const char *a, const char *val, options *o,
                        int cmd)
{
    switch (opt->id) {
    case OPT_SET:
        if (o->nsets == MAX_SETS)
            return cli_usage_error(cmd, "too many --set options (limit %s)", "256");
        o->sets[o->nsets++] = val;
        return 0;
    case OPT_PM:
        o->pm_given = 1;
        return option_number(a, val, UNIT_NONE, &o->pm);
    case OPT_GM:
        o->gm_given = 1;
        return option_number(a, val, UNIT_NONE, &o->gm);
    case OPT_FMIN:
    case OPT_FMAX: {
        double *dst = opt->id == OPT_FMIN ? &o->fmin : &o->fmax;
        if (option_number(a, val, UNIT_HZ, dst))
            return 2;
        if (!(*dst > 0))
            return cli_usage_error(cmd, "%s must be a positive frequency", a);
        return 0;
    }
    case OPT_CSV:
        o->csv = val;
        return 0;
    case OPT_POINTS: {
        double v;
        if (option_number(a, val, UNIT_NONE, &v))
            return 2;
        if (v < 2 || v > MAX_GAIN_POINTS || v != floor(v))
            return cli_usage_error(cmd, "--points takes a whole number from 2 to 100000, got '%s'",
                                  val);
        o->points = (int)v;
        return 0;
    }
    case OPT_TUNE:
        if (o->ntune == MAX_AXES)
            return cli_usage_error(cmd, "%s", "size takes at most two --tune: the value that "
                                  "costs area first, then the one chosen for the largest margin");
        o->tune[o->ntune++] = val;
        return 0;
    case OPT_WITHIN:
        if (o->nwithin == MAX_AXES)
            return cli_usage_error(cmd, "%s", "--within given more than twice (one per --tune)");
        o->within[o->nwithin++] = val;
        return 0;
    case OPT_VARY:
        if (o->nvary == MAX_AXES)
            return cli_usage_error(cmd, "%s", "sweep varies at most two values (--vary twice "
                                  "draws a map)");
        o->vary[o->nvary++] = val;
        return 0;
    case OPT_FROM:
    case OPT_TO: {
        int to = opt->id == OPT_TO;
        if (plain_name(val)) {
            /* a name is a response's end (an input, a node: response, sweep
             * --to NODE); anything else a number of sweep's range: names
             * never parse as numbers here */
            const char **dst = to ? &o->to_node : &o->from_node;
            if (*dst)
                return cli_usage_error(cmd, "%s NODE given twice", a);
            *dst = val;
            return 0;
        }
        /* each --from/--to belongs to the --vary before it */
        if (o->nvary == 0 && cmd == CMD_RESPONSE)
            return cli_usage_error(cmd, to ? "response %s names a node, not a number"
                                          : "response %s names an input, not a number", a);
        if (o->nvary == 0)
            return cli_usage_error(cmd, "%s comes after the --vary it belongs to", a);
        const char **dst = to ? &o->to[o->nvary - 1] : &o->from[o->nvary - 1];
        if (*dst)
            return cli_usage_error(cmd, to ? "--to given twice for --vary %s"
                                          : "--from given twice for --vary %s",
                                  o->vary[o->nvary - 1]);
        *dst = val;
        return 0;
    }
    case OPT_OVER:
        if (strcmp(val, "corners") && strcmp(val, "montecarlo"))
            return cli_usage_error(cmd, "--over takes 'corners' or 'montecarlo', got '%s'", val);
        o->over = val;
        return 0;
    case OPT_LEVELS: {
        double v;
        if (option_number(a, val, UNIT_NONE, &v))
            return 2;
        if (v < 2 || v > MAX_LEVELS || v != floor(v))
            return cli_usage_error(cmd, "--levels takes a whole number from 2 to 100 (values of "
                                  "each range, ends included), got '%s'", val);
        o->levels = (int)v;
        return 0;
    }
    case OPT_INJECT:
        if (o->inject)
            return cli_usage_error(cmd, "%s given twice", a);
        o->inject = val;
        return 0;
    case OPT_STEP:
        o->step = 1;
        return 0;
    case OPT_NODE:
        o->node = val;
        return 0;
    case OPT_CLOAD:
        o->cload = val;
        return 0;
    case OPT_DENSITY:
        o->density = val;
        return 0;
    case OPT_PLOT:
        o->plot = val;
        return 0;
    case OPT_KEEP_SCRIPT:
        o->keep_script = val;
        return 0;
    case OPT_SIZE:
        if (sscanf(val, "%dx%d", &o->width, &o->height) != 2 || o->width < 100 ||
            o->height < 100 || o->width > 8000 || o->height > 8000)
            return cli_usage_error(cmd, "--size takes WIDTHxHEIGHT in pixels, 100 to 8000, got "
                                  "'%s'", val);
        return 0;
    case OPT_SAMPLES:
    case OPT_SEED: {
        double v;
        if (option_number(a, val, UNIT_NONE, &v))
            return 2;
        int is_samples = opt->id == OPT_SAMPLES;
        if (v != floor(v) || v < is_samples || v > (is_samples ? 1e7 : 1.8e19))
            return cli_usage_error(cmd, is_samples ? "--samples takes a whole number from 1 to "
                                  "10000000, got '%s'" : "--seed takes a whole number of 0 or "
                                  "more, got '%s'", val);
        if (is_samples)
            o->samples = (int)v;
        else {
            o->seed = (unsigned long long)v;
            o->seed_given = 1;
        }
        return 0;
    }
    case OPT_YIELD: {
        /* a fraction (0.99) or a percentage (99%) */
        char num[64];
        size_t l = strlen(val);
        int pct = l > 0 && val[l - 1] == '%';
        double v;
        if (l - (size_t)pct >= sizeof num)
            return cli_usage_error(cmd, "--yield '%s': too long", val);
        memcpy(num, val, l - (size_t)pct);
        num[l - (size_t)pct] = '\0';
        if (option_number(a, num, UNIT_NONE, &v))
            return 2;
        v = pct ? v / 100.0 : v;
        if (!(v > 0 && v < 1))
            return cli_usage_error(cmd, "--yield takes a fraction between 0 and 1 (0.99) or a "
                                  "percentage below 100%% (99%%), got '%s'", val);
        o->yield = v;
        o->yield_given = 1;
        return 0;
    }
    case OPT_PART:
        return part_option(val, o, cmd);
    case OPT_SAMPLES_OUT:
        o->samples_out = val;
        return 0;
    case OPT_EACH:
        o->each = 1;
        return 0;
    case OPT_LIN:
        o->lin = 1;
        return 0;
    case OPT_JSON:
        o->json = 1;
        return 0;
    case OPT_MERGE:   /* read by the loop: it takes several words */
    case OPT_HELP:    /* answered by cli_early */
    case OPT_VERSION:
    case OPT_COUNT:
        break;
    }
    return 0;
}

