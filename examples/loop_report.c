/* loop_report: an example of a program that embeds loopwise.
 *
 *   loop_report FILE [--set NAME=EXPR]... [--point NAME=VALUE] [--response NODE]
 *
 * Reads a loop description, applies the overrides, and prints as JSON the
 * analysis of 'loopwise check' (margins, poles with their owner nodes,
 * zeros, closed-loop poles, the declared loops, the verdict against a 60
 * degree phase margin), the margins with one value changed (one point of
 * 'loopwise sweep'), and the closed loop's response at a node to the file's
 * only input (its DC value, peak, bandwidth and step). Numbers print with
 * 17 significant digits, the undefined ones as null.
 *
 * Build it against an installed loopwise:
 *   cc -o loop_report loop_report.c $(pkg-config --cflags --libs loopwise) */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <loopwise/loopwise.h>

static void num(const char *key, double v, const char *after)
{
    if (isfinite(v))
        printf("\"%s\": %.17g%s", key, v, after);
    else
        printf("\"%s\": null%s", key, after);
}

/* Names in the examples' files are plain identifiers: no escaping needed. */
static void str(const char *key, const char *s, const char *after)
{
    if (s)
        printf("\"%s\": \"%s\"%s", key, s, after);
    else
        printf("\"%s\": null%s", key, after);
}

static void roots(const char *key, const lw_root *r, int n)
{
    printf("\"%s\": [", key);
    for (int k = 0; k < n; k++) {
        printf("%s{", k ? ", " : "");
        num("re_hz", r[k].re_hz, ", ");
        num("im_hz", r[k].im_hz, "");
        if (r[k].node) { /* an owner: open-loop poles only */
            printf(", ");
            str("node", r[k].node, ", ");
            num("estimate_hz", r[k].estimate_hz, "");
        }
        printf("}");
    }
    printf("]");
}

static void check_json(const lw_check *c)
{
    lw_margins m = lw_check_margins(c);
    int n;
    printf("\"check\": {");
    str("break", lw_check_break(c), ", ");
    num("dc_loop_gain", m.dc_loop_gain, ", ");
    num("dc_loop_gain_db", m.dc_loop_gain_db, ", ");
    num("crossover_hz", m.crossover_hz, ", ");
    num("phase_margin_deg", m.phase_margin_deg, ", ");
    num("gain_margin_db", m.gain_margin_db, ", ");
    num("phase_crossover_hz", m.phase_crossover_hz, ", ");
    printf("\"crossovers\": %d, \"stable\": %s,\n  ", m.ncrossovers, m.stable ? "true" : "false");
    const lw_root *r = lw_check_roots(c, LW_OPEN_LOOP_POLES, &n);
    roots("open_loop_poles", r, n);
    printf(",\n  ");
    r = lw_check_roots(c, LW_OPEN_LOOP_ZEROS, &n);
    roots("open_loop_zeros", r, n);
    printf(",\n  ");
    r = lw_check_roots(c, LW_CLOSED_LOOP_POLES, &n);
    roots("closed_loop_poles", r, n);
    printf(",\n  \"loops\": [");
    const lw_loop_verdict *v = lw_check_loops(c, &n);
    for (int k = 0; k < n; k++) {
        printf("%s{", k ? ", " : "");
        str("name", v[k].name, ", ");
        str("sign", v[k].negative ? "negative" : "positive", ", ");
        num("dc_gain", v[k].dc_gain, ", ");
        str("measured_at", v[k].measured_at, "}");
    }
    printf("], ");
    num("dominance_db", lw_check_dominance_db(c), ", ");
    printf("\"verdict_pm60\": %d}", lw_check_verdict(c, 60.0, NAN));
}

static void response_json(const lw_response *r, const char *to)
{
    lw_response_summary s = lw_response_figures(r);
    int n;
    printf(",\n \"response\": {");
    str("to", to, ", ");
    num("dc", s.dc, ", ");
    num("dc_db", s.dc_db, ", ");
    num("hinf", s.hinf, ", ");
    num("peak_hz", s.peak_hz, ", ");
    num("peak_value", s.peak_value, ", ");
    num("peak_db", s.peak_db, ", ");
    num("bandwidth_hz", s.bandwidth_hz, ", ");
    printf("\"stable\": %s,\n  ", s.stable ? "true" : "false");
    const lw_root *v = lw_response_poles(r, &n);
    roots("poles", v, n);
    printf(",\n  ");
    v = lw_response_zeros(r, &n);
    roots("zeros", v, n);
    printf(",\n  \"step\": ");
    if (!s.has_step) {
        printf("null}");
        return;
    }
    printf("{");
    num("initial", s.step_initial, ", ");
    num("final", s.step_final, ", ");
    num("peak_value", s.step_peak_value, ", ");
    num("peak_time_s", s.step_peak_time_s, ", ");
    num("overshoot_pct", s.overshoot_pct, ", ");
    num("undershoot_pct", s.undershoot_pct, ", ");
    num("rise_time_s", s.rise_time_s, ", ");
    num("settle_1pct_s", s.settle_1pct_s, ", ");
    num("settle_01pct_s", s.settle_01pct_s, "}}");
}

static int usage(void)
{
    fputs("usage: loop_report FILE [--set NAME=EXPR]... [--point NAME=VALUE] "
          "[--response NODE]\n", stderr);
    return 2;
}

int main(int argc, char **argv)
{
    if (argc < 2)
        return usage();
    lw_message msg;
    lw_loop *loop = NULL;
    lw_check *check = NULL;
    lw_response *resp = NULL;
    const char *point = NULL, *to = NULL;
    int rc = lw_loop_read(argv[1], &loop, &msg);
    for (int k = 2; !rc && k < argc; k += 2) {
        if (k + 1 >= argc)
            return usage();
        if (!strcmp(argv[k], "--set"))
            rc = lw_loop_set(loop, argv[k + 1], &msg);
        else if (!strcmp(argv[k], "--point"))
            point = argv[k + 1];
        else if (!strcmp(argv[k], "--response"))
            to = argv[k + 1];
        else
            return usage();
    }
    if (!rc)
        rc = lw_check_run(loop, 0, 0, &check, &msg);
    if (rc) {
        fprintf(stderr, "%s\n", msg.text);
        lw_loop_free(loop);
        return rc == LW_EINPUT ? 2 : 3;
    }
    printf("{\"version\": \"%s\",\n ", lw_version());
    check_json(check);
    if (point) {
        /* NAME=VALUE: the margins with NAME at VALUE (a plain number here) */
        char name[128];
        const char *eq = strchr(point, '=');
        lw_point p;
        if (!eq || (size_t)(eq - point) >= sizeof name)
            return usage();
        memcpy(name, point, (size_t)(eq - point));
        name[eq - point] = '\0';
        if ((rc = lw_sweep_point(loop, name, strtod(eq + 1, NULL), 0, 0, &p, &msg)))
            goto fail;
        printf(",\n \"point\": {");
        str("name", name, ", ");
        num("value", p.value, ", ");
        num("phase_margin_deg", p.phase_margin_deg, ", ");
        num("crossover_hz", p.crossover_hz, ", ");
        num("gain_margin_db", p.gain_margin_db, ", ");
        num("dc_loop_gain", p.dc_loop_gain, ", ");
        printf("\"stable\": %s}", p.stable ? "true" : "false");
    }
    if (to) {
        lw_response_request q = { to, NULL, NULL, 0, 0 };
        if ((rc = lw_response_run(loop, &q, &resp, &msg)))
            goto fail;
        response_json(resp, to);
    }
    printf("}\n");
fail:
    if (rc)
        fprintf(stderr, "%s\n", msg.text);
    lw_response_free(resp);
    lw_check_free(check);
    lw_loop_free(loop);
    return rc == LW_OK ? 0 : rc == LW_EINPUT ? 2 : 3;
}
