/* report_response: outputs of 'response'. See report_response.h. */
#include "loopwise/report_response.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/units.h"

#define TWO_PI 6.283185307179586

static double db(double v)
{
    return v > 0 && isfinite(v) ? 20.0 * log10(v) : NAN;
}

/* The same for the text, where a level a hair below 0 dB prints as 0.00 */
static double db_text(double v)
{
    return units_no_neg_zero(db(v), 2);
}

/* "V/V" or "Ω": the unit of H, and of y for a unit step ("V" per 1 V or 1 A). */
static const char *h_unit(const response_report *rr)
{
    return rr->from ? "V/V" : "\xCE\xA9";
}

/* H values: a ratio as a plain number, an impedance with an SI prefix. */
static char *h_value(const response_report *rr, double v, char *buf, size_t n)
{
    if (rr->from && isfinite(v)) {
        snprintf(buf, n, "%.4g V/V", v);
        return buf;
    }
    return si_format(v, h_unit(rr), buf, n);
}

static void json_root(FILE *f, double complex p)
{
    fputs("{\"re_hz\": ", f);
    json_number(f, creal(p) / TWO_PI);
    fputs(", \"im_hz\": ", f);
    json_number(f, cimag(p) / TWO_PI);
}

static void json_step(FILE *f, const step_result *s)
{
    if (!s) {
        fputs("null", f);
        return;
    }
    const char *names[] = { "initial", "final", "peak_value", "peak_time_s", "overshoot_pct",
                            "undershoot_pct", "rise_time_s" };
    const double vals[] = { s->initial, s->final, s->peak_value, s->peak_time, s->overshoot_pct,
                            s->undershoot_pct, s->rise_time };
    fputc('{', f);
    for (int k = 0; k < 7; k++) {
        fprintf(f, "%s\"%s\": ", k ? ", " : "", names[k]);
        json_number(f, vals[k]);
    }
    fputs(",\n   \"settle_s\": {\"1\": ", f);
    json_number(f, s->settle1);
    fputs(", \"0.1\": ", f);
    json_number(f, s->settle01);
    fputs("},\n   \"slow_mode\": ", f);
    if (s->has_slow) {
        json_root(f, s->slow_pole);
        fputs(", \"amplitude\": ", f);
        json_number(f, s->slow_amplitude);
        fputs(", \"time_constant_s\": ", f);
        json_number(f, -1.0 / creal(s->slow_pole));
        fprintf(f, ", \"doublet\": %s}", s->slow_doublet ? "true" : "false");
    } else {
        fputs("null", f);
    }
    fputc('}', f);
}

static void json_response(FILE *f, const response_report *rr)
{
    const response_result *res = rr->res;
    double dc = res->dc, adc = fabs(dc);
    fputs("{\"to\": ", f);
    json_string(f, rr->to);
    fputs(", \"from\": ", f);
    rr->from ? json_string(f, rr->from) : (void)fputs("null", f);
    fputs(", \"inject\": ", f);
    rr->inject ? json_string(f, rr->inject) : (void)fputs("null", f);
    fprintf(f, ", \"unit\": \"%s\",\n \"dc\": ", rr->from ? "V/V" : "ohm");
    json_number(f, dc);
    fputs(", \"dc_db\": ", f);
    json_number(f, db(adc));
    fputs(", \"rejection_db\": ", f);
    json_number(f, rr->from ? -db(adc) : NAN);
    fputs(", \"hinf\": ", f);
    json_number(f, res->hinf);
    fputs(",\n \"peak\": {\"hz\": ", f);
    json_number(f, res->peak_hz);
    fputs(", \"value\": ", f);
    json_number(f, res->peak_value);
    fputs(", \"db\": ", f);
    json_number(f, db(res->peak_value));
    fputs(", \"over_dc_db\": ", f);
    json_number(f, adc > 0 && isfinite(adc) ? db(res->peak_value / adc) : NAN);
    fputs("},\n \"local_peak\": ", f);
    if (isnan(res->local_peak_hz)) {
        fputs("null", f);
    } else {
        fputs("{\"hz\": ", f);
        json_number(f, res->local_peak_hz);
        fputs(", \"value\": ", f);
        json_number(f, res->local_peak_value);
        fputs(", \"db\": ", f);
        json_number(f, db(res->local_peak_value));
        fputc('}', f);
    }
    fputs(",\n \"bandwidth_hz\": ", f);
    json_number(f, res->bandwidth_hz);
    fputs(", \"fmin_hz\": ", f);
    json_number(f, res->fmin_hz);
    fputs(", \"fmax_hz\": ", f);
    json_number(f, res->fmax_hz);
    fputs(",\n \"poles\": [", f);
    for (int k = 0; k < rr->ncl; k++) {
        fputs(k ? ", " : "", f);
        json_root(f, rr->cl[k]);
        fprintf(f, ", \"seen\": %s}", res->tf.hidden[k] ? "false" : "true");
    }
    fputs("],\n \"zeros\": [", f);
    for (int k = 0; k < res->tf.nzeros; k++) {
        fputs(k ? ", " : "", f);
        json_root(f, res->tf.zeros[k]);
        fputc('}', f);
    }
    fprintf(f, "],\n \"stable\": %s, \"accuracy_warning\": %s,\n \"points\": [",
            rr->stable ? "true" : "false", res->suspect ? "true" : "false");
    for (int k = 0; k < rr->tab.n; k++) {
        fputs(k ? ",\n  " : "\n  ", f);
        fputs("{\"hz\": ", f);
        json_number(f, rr->tab.hz[k]);
        fputs(", \"db\": ", f);
        json_number(f, rr->tab.db[k]);
        fputs(", \"phase_deg\": ", f);
        json_number(f, rr->tab.ph[k]);
        fputc('}', f);
    }
    fputs("],\n \"step\": ", f);
    json_step(f, rr->step);
    fputs("}\n", f);
}

static void csv_num(FILE *f, double v, const char *sep)
{
    if (isfinite(v))
        fprintf(f, "%.17g%s", v, sep);
    else
        fputs(sep, f);
}

/* A closed-loop pole in the right half-plane, by check's rule (check.c):
 * beyond its own rounding, 1e-9 of its magnitude or 1e-13 of the largest. */
static int rhp_pole(double complex p, double scale)
{
    return creal(p) > fmax(1e-9 * cabs(p), 1e-13 * scale);
}

static int rhp_count(const double complex *v, int n)
{
    double scale = 0;
    int c = 0;
    for (int k = 0; k < n; k++)
        scale = fmax(scale, cabs(v[k]));
    for (int k = 0; k < n; k++)
        c += rhp_pole(v[k], scale);
    return c;
}

/* One line per closed-loop pole (a pair once), as 'check' lists them, a
 * pole in the right half-plane marked as check marks it. */
static void text_roots(FILE *f, const double complex *v, int n, const unsigned char *hidden)
{
    char re[32], im[32];
    int row = 0;
    double scale = 0;
    for (int k = 0; k < n; k++)
        scale = fmax(scale, cabs(v[k]));
    for (int k = 0; k < n; k++) {
        if (cimag(v[k]) < 0)
            continue;
        double complex p = v[k];
        if (cimag(p) == 0)
            fprintf(f, "  %-3d %-30s", ++row, si_format(creal(p) / TWO_PI, "Hz", re, sizeof re));
        else {
            char both[80];
            snprintf(both, sizeof both, "%s \xC2\xB1 j%s", si_format(creal(p) / TWO_PI, "Hz", re,
                     sizeof re), si_format(cimag(p) / TWO_PI, "Hz", im, sizeof im));
            fprintf(f, "  %-3d %-32s", ++row, both);
        }
        if (cimag(p) != 0 && creal(p) != 0)
            fprintf(f, "Q %.3g", cabs(p) / (2 * fabs(creal(p))));
        if (hidden && rhp_pole(p, scale))
            fprintf(f, "%sRIGHT HALF-PLANE", cimag(p) != 0 ? "  " : "");
        if (hidden && hidden[k])
            fprintf(f, "%snot seen by H", cimag(p) != 0 || rhp_pole(p, scale) ? "  " : "");
        if (!hidden && creal(p) > 0)
            fputs("right half-plane zero", f);
        fputc('\n', f);
    }
    if (row == 0)
        fputs("  none\n", f);
}

static void text_summary(FILE *f, const response_report *rr)
{
    const response_result *res = rr->res;
    char a[48], b[48], c[48];
    double adc = fabs(res->dc);
    const char *dbu = rr->from ? "dB" : "dB\xCE\xA9"; /* dB of an impedance: dB ohm */
    if (res->zero) {
        fprintf(f, "  H is zero      no path of resistors, capacitors or gms leads from %s '%s' "
                "to '%s': the source does not reach it\n", rr->from ? "input" : "node",
                rr->from ? rr->from : rr->inject, rr->to);
        return;
    }
    if (isinf(res->dc))
        fprintf(f, "  DC             unbounded (a closed-loop pole at s = 0)\n");
    else if (res->dc == 0)
        fprintf(f, "  DC             H(0) = 0: no DC path from the source (a zero at s = 0)\n");
    else if (rr->from)
        fprintf(f, "  DC             H(0) = %s (%.2f dB): rejection %.2f dB\n",
                h_value(rr, res->dc, a, sizeof a), db_text(adc), db_text(1.0 / adc));
    else
        fprintf(f, "  DC             H(0) = %s (%.2f dB\xCE\xA9)\n", h_value(rr, res->dc, a, sizeof a),
                db_text(adc));
    fprintf(f, "  at high f      H(\xE2\x88\x9E) = %s%s\n", h_value(rr, res->hinf, a, sizeof a),
            res->hinf != 0 ? " (a direct path: resistive or capacitive)" : "");
    if (!(res->peak_value > 0))
        fprintf(f, "  peak           none: |H| is 0\n");
    else if (isnan(res->peak_hz)) {
        /* |H| rises to a direct path's level at f -> inf: the worst value a
         * designer meets is the largest below the top of his band */
        fprintf(f, "  peak           %.2f %s (%s), approached as f grows without bound: the "
                "largest |H| in your band\n                 depends on where it ends; give "
                "--fmax for it\n", db_text(res->peak_value), dbu,
                h_value(rr, res->peak_value, a, sizeof a));
        if (!isnan(res->local_peak_hz))
            fprintf(f, "  local peak     %.2f %s (%s) at %s, the largest hump of |H| at a finite "
                    "frequency\n", db_text(res->local_peak_value), dbu,
                    h_value(rr, res->local_peak_value, a, sizeof a),
                    si_format(res->local_peak_hz, "Hz", b, sizeof b));
        else
            fputs("  local peak     none: |H| has no hump at a finite frequency\n", f);
    }
    else if (res->peak_hz == 0)
        fprintf(f, "  peak           at DC: |H| never rises above |H(0)|\n");
    else
        fprintf(f, "  peak           %.2f %s (%s) at %s%s%s\n", db_text(res->peak_value), dbu,
                h_value(rr, res->peak_value, a, sizeof a), si_format(res->peak_hz, "Hz", b, sizeof b),
                adc > 0 && isfinite(adc) ? ", " : "",
                adc > 0 && isfinite(adc)
                    ? (snprintf(c, sizeof c, "%.2f dB over DC", db_text(res->peak_value / adc)), c) : "");
    if (!isnan(res->bandwidth_hz))
        fprintf(f, "  bandwidth      %s (|H| 3 dB below its DC value)\n",
                si_format(res->bandwidth_hz, "Hz", a, sizeof a));
    else if (adc > 0 && isfinite(adc))
        fprintf(f, "  bandwidth      none in the band: |H| does not fall 3 dB below its DC value\n");
    else
        fprintf(f, "  bandwidth      undefined: H(0) is %s\n", res->dc == 0 ? "0" : "unbounded");
    fprintf(f, "  band           %s to %s\n", si_format(res->fmin_hz, "Hz", a, sizeof a),
            si_format(res->fmax_hz, "Hz", b, sizeof b));
}

static void text_step(FILE *f, const response_report *rr)
{
    const step_result *s = rr->step;
    char a[48], b[48], c[48];
    const char *src = rr->from ? "V" : "A", *at = rr->from ? rr->from : rr->inject;
    fprintf(f, "\nStep response at '%s' to a 1 %s step %s '%s' (exact: poles and residues)\n",
            rr->to, src, rr->from ? "of input" : "of current into", at);
    fprintf(f, "  initial        y(0+) = %s\n", si_format(s->initial, "V", a, sizeof a));
    fprintf(f, "  final          y(\xE2\x88\x9E) = %s\n", si_format(s->final, "V", a, sizeof a));
    if (isnan(s->peak_time))
        fprintf(f, "  peak           none: y never passes its final value\n");
    else
        fprintf(f, "  peak           %s at %s%s\n", si_format(s->peak_value, "V", a, sizeof a),
                si_format(s->peak_time, "s", b, sizeof b), s->peak_time == 0 ? " (at once)" : "");
    if (isnan(s->overshoot_pct))
        fprintf(f, "  overshoot      undefined (the final value is 0)\n");
    else
        fprintf(f, "  overshoot      %s\n", pct_format(s->overshoot_pct, a, sizeof a));
    if (!isnan(s->undershoot_pct))
        fprintf(f, "  undershoot     %s%s\n", pct_format(s->undershoot_pct, a, sizeof a),
                s->undershoot_pct > 0 ? " (y swings past 0, away from its final value)" : "");
    if (isnan(s->rise_time))
        fprintf(f, "  rise time      undefined (%s)\n", s->final == 0 ? "the final value is 0"
                : "y starts beyond 10% of its final value");
    else
        fprintf(f, "  rise time      %s (10%% to 90%%)\n", si_format(s->rise_time, "s", a, sizeof a));
    fprintf(f, "  settling       %s to 1%%, %s to 0.1%%%s\n", si_format(s->settle1, "s", a, sizeof a),
            si_format(s->settle01, "s", b, sizeof b), s->final == 0 ? " (of the peak)" : "");
    if (!s->has_slow)
        return;
    double complex p = s->slow_pole;
    if (cimag(p) == 0)
        si_format(creal(p) / TWO_PI, "Hz", c, sizeof c);
    else
        snprintf(c, sizeof c, "%s \xC2\xB1 j%s", si_format(creal(p) / TWO_PI, "Hz", a, sizeof a),
                 si_format(cimag(p) / TWO_PI, "Hz", b, sizeof b));
    char pa[32];
    fprintf(f, "  slow mode      %s, time constant %s, %s of %s at 0+\n", c,
            si_format(-1.0 / creal(p), "s", a, sizeof a),
            pct_format(100 * s->slow_amplitude, pa, sizeof pa),
            s->final != 0 ? "the final value" : "the peak");
    if (s->slow_doublet)
        fprintf(f, "                 a doublet: a zero of H nearly cancels it, so the output "
                "looks settled early and then creeps for %s\n",
                si_format(s->settle01, "s", a, sizeof a));
}

static void text_response(FILE *f, const desc *d, const response_report *rr)
{
    const response_result *res = rr->res;
    if (rr->from)
        fprintf(f, "loopwise response: %s  from input '%s' to node '%s' (V/V), loop closed\n\n",
                d->path, rr->from, rr->to);
    else
        fprintf(f, "loopwise response: %s  current into '%s', read at '%s' (ohm), loop closed\n\n",
                d->path, rr->inject, rr->to);
    /* an unstable loop is said first: every figure below is of a steady
     * state the circuit never reaches */
    int rhp = rhp_count(rr->cl, rr->ncl);
    if (!rr->stable && rhp)
        fprintf(f, "The closed loop is UNSTABLE: %d pole%s in the right half-plane (marked "
                "below), so y(t) grows without bound and there is no step response. The "
                "figures and the table are H on the j\xCF\x89 axis, a steady state the circuit "
                "never reaches.\n\n", rhp, rhp > 1 ? "s lie" : " lies");
    else if (!rr->stable)
        fputs("The closed loop is MARGINAL: a pole sits on the j\xCF\x89 axis (within "
              "rounding), so y(t) does not settle and there is no step response.\n\n", f);
    text_summary(f, rr);
    fputs("\nClosed-loop poles (s/2\xCF\x80)\n", f);
    text_roots(f, rr->cl, rr->ncl, res->tf.hidden);
    fputs("Zeros of H (s/2\xCF\x80)\n", f);
    text_roots(f, res->tf.zeros, res->tf.nzeros, NULL);
    if (rr->step && rr->show_step)
        text_step(f, rr);
    fprintf(f, "\n  %-16s |H| (dB)    phase (\xC2\xB0)\n", "frequency");
    for (int k = 0; k < rr->tab.n; k++) {
        char a[32];
        fprintf(f, "  %-16s ", si_format(rr->tab.hz[k], "Hz", a, sizeof a));
        if (isnan(rr->tab.db[k]))
            fputs("   H = 0   undefined\n", f);
        else
            fprintf(f, "%9.3f  %11.3f\n", rr->tab.db[k], rr->tab.ph[k]);
    }
    if (res->suspect)
        fputs("\nAccuracy warning: the poles and zeros found do not reproduce the exact H "
              "everywhere; confirm the peak with a finer --fmin/--fmax band.\n", f);
    if (!rr->stable)
        fprintf(f, "\nVerdict: the closed loop is %s (see the top): no step response.\n",
                rhp ? "UNSTABLE" : "MARGINAL");
}

void report_response(FILE *f, const desc *d, const response_report *rr, out_format fmt)
{
    if (fmt == OUT_JSON) {
        json_response(f, rr);
    } else if (fmt == OUT_CSV) {
        fputs("freq_hz,mag_db,phase_deg\n", f);
        for (int k = 0; k < rr->tab.n; k++) {
            csv_num(f, rr->tab.hz[k], ",");
            csv_num(f, rr->tab.db[k], ",");
            csv_num(f, rr->tab.ph[k], "\n");
        }
    } else {
        text_response(f, d, rr);
    }
}

/* ---- --inject each ------------------------------------------------------ */

static int cmp_item(const void *pa, const void *pb)
{
    const step_each_item *a = pa, *b = pb;
    int na = isnan(a->overshoot_pct), nb = isnan(b->overshoot_pct);
    if (na != nb)
        return na - nb;
    if (!na && a->overshoot_pct != b->overshoot_pct)
        return a->overshoot_pct < b->overshoot_pct ? -1 : 1;
    if (a->settle1 != b->settle1)
        return a->settle1 < b->settle1 ? -1 : 1;
    return a->node - b->node;
}

void report_each_sort(step_each_item *items, int n)
{
    qsort(items, (size_t)n, sizeof *items, cmp_item);
}

void report_each(FILE *f, const desc *d, const each_report *er, out_format fmt)
{
    if (fmt == OUT_CSV) {
        fputs("node,final,peak_value,overshoot_pct,undershoot_pct,settle_1pct_s\n", f);
        for (int k = 0; k < er->n; k++) {
            const step_each_item *it = &er->items[k];
            fprintf(f, "%s,", d->nodes[it->node].name);
            csv_num(f, it->final, ",");
            csv_num(f, it->peak_value, ",");
            csv_num(f, it->overshoot_pct, ",");
            csv_num(f, it->undershoot_pct, ",");
            csv_num(f, it->settle1, "\n");
        }
        return;
    }
    if (fmt == OUT_JSON) {
        fputs("{\"to\": ", f);
        json_string(f, er->to);
        fprintf(f, ", \"stable\": %s,\n \"poles\": [", er->stable ? "true" : "false");
        for (int k = 0; k < er->ncl; k++) {
            fputs(k ? ", " : "", f);
            json_root(f, er->cl[k]);
            fputc('}', f);
        }
        if (!er->items) {
            fputs("],\n \"injections\": null}\n", f); /* unstable: no step settles */
            return;
        }
        fputs("],\n \"injections\": [", f);
        for (int k = 0; k < er->n; k++) {
            const step_each_item *it = &er->items[k];
            fputs(k ? ",\n  " : "\n  ", f);
            fputs("{\"node\": ", f);
            json_string(f, d->nodes[it->node].name);
            const char *names[] = { "final", "peak_value", "overshoot_pct", "undershoot_pct",
                                    "settle_1pct_s" };
            const double v[] = { it->final, it->peak_value, it->overshoot_pct, it->undershoot_pct,
                                 it->settle1 };
            for (int j = 0; j < 5; j++) {
                fprintf(f, ", \"%s\": ", names[j]);
                json_number(f, v[j]);
            }
            fputc('}', f);
        }
        fputs("]}\n", f);
        return;
    }
    fprintf(f, "loopwise response: %s  a 1 A current step into each node, read at '%s'\n",
            d->path, er->to);
    fprintf(f, "  (ranked by overshoot, then by the time to settle within 1%%)\n\n");
    fprintf(f, "  %-4s %-14s %-12s %-12s %-10s %-10s %s\n", "rank", "node", "final", "peak",
            "overshoot", "undershoot", "settles (1%)");
    int rank = 0, best = -1;
    for (int k = 0; k < er->n; k++) {
        const step_each_item *it = &er->items[k];
        char a[32], b[32], c[32], o[16], u[16];
        if (!it->reaches) {
            fprintf(f, "  %-4s %-14s no path to '%s': a current here does not move it\n", "-",
                    d->nodes[it->node].name, er->to);
            continue;
        }
        if (best < 0 && !isnan(it->overshoot_pct))
            best = k;
        if (isnan(it->overshoot_pct))
            snprintf(o, sizeof o, "-");
        else
            pct_format(it->overshoot_pct, o, sizeof o);
        if (isnan(it->undershoot_pct))
            snprintf(u, sizeof u, "-");
        else
            pct_format(it->undershoot_pct, u, sizeof u);
        fprintf(f, "  %-4d %-14s %-12s %-12s %-10s %-10s %s%s\n", ++rank, d->nodes[it->node].name,
                si_format(it->final, "V", a, sizeof a), si_format(it->peak_value, "V", b, sizeof b),
                o, u, si_format(it->settle1, "s", c, sizeof c),
                it->final == 0 ? "  (returns to 0: a coupling path)" : "");
    }
    if (best >= 0) {
        const step_each_item *it = &er->items[best];
        char a[32];
        char o[32];
        fprintf(f, "\nThe gentlest place for a kick: a current into '%s' reaches its final value "
                "at '%s' with %s overshoot and settles within 1%% in %s.\n",
                d->nodes[it->node].name, er->to, pct_format(it->overshoot_pct, o, sizeof o),
                si_format(it->settle1, "s", a, sizeof a));
    }
}
