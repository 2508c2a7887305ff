/* report: the text report of 'check' and the tables of 'gain'. */
#include "loopwise/report.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/report_design.h"
#include "loopwise/units.h"

#define TWO_PI 6.283185307179586

static int right_half(double complex s, double tol)
{
    return creal(s) > tol;
}

int report_check_status(const check_result *r, report_target t)
{
    if (!r->stable)
        return 1;
    if (t.given && (r->mg.best_cross < 0 || r->mg.cross[r->mg.best_cross].value < t.pm_deg))
        return 1;
    if (t.gm_given && r->mg.best_phase >= 0 && r->mg.phase[r->mg.best_phase].value < t.gm_db)
        return 1;
    return 0;
}

/* "-1.2 MHz ± j2.3 MHz" for a root given in rad/s. */
static char *root_text(double complex s, char *buf, size_t size)
{
    char a[32], b[32];
    double re = creal(s) / TWO_PI, im = fabs(cimag(s)) / TWO_PI;
    if (im == 0)
        snprintf(buf, size, "%s", si_format(re, "Hz", a, sizeof a));
    else
        snprintf(buf, size, "%s \xC2\xB1 j%s", si_format(re, "Hz", a, sizeof a),
                 si_format(im, "Hz", b, sizeof b));
    return buf;
}

static double quality(double complex s)
{
    return cimag(s) != 0 && creal(s) != 0 ? cabs(s) / (2.0 * fabs(creal(s))) : NAN;
}

/* Skips the first of a conjugate pair (sorted: negative imaginary part first). */
static int pair_first(const double complex *v, int n, int k)
{
    return cimag(v[k]) < 0 && k + 1 < n && fabs(cimag(v[k]) + cimag(v[k + 1])) <=
                                                1e-9 * cabs(v[k]);
}

static void gain_text(double g, char *buf, size_t size)
{
    if (isinf(g))
        snprintf(buf, size, "unbounded (integrator)");
    else if (isnan(g))
        snprintf(buf, size, "none (shares every stage)");
    else if (g == 0)
        snprintf(buf, size, "0 V/V");
    else
        snprintf(buf, size, "%+.4g V/V (%.1f dB)", g, units_no_neg_zero(20.0 * log10(fabs(g)), 1));
}

static void section_loops(FILE *f, const desc *d, const model *m, const check_result *r)
{
    if (r->nloops == 0)
        return;
    fprintf(f, "\nDeclared loops\n  %-12s %-9s %-28s %-12s %s\n", "loop", "sign", "own DC gain",
            "measured at", "verdict");
    for (int l = 0; l < r->nloops; l++) {
        const check_loop *cl = &r->loops[l];
        char g[64];
        gain_text(cl->dc, g, sizeof g);
        const char *at = cl->hop_gm >= 0 ? d->elems[m->gm[cl->hop_gm].elem].name : "-";
        const char *verdict = cl->hop_gm < 0 ? "no private gm: sign not checked"
                                             : d->loops[l].negative ? "negative, as declared"
                                                                    : "positive, as declared";
        fprintf(f, "  %-12s %-9s %-28s %-12s %s\n", d->loops[l].name,
                d->loops[l].negative ? "negative" : "positive", g, at, verdict);
    }
    if (isfinite(r->dominance_db))
        fprintf(f, "  negative loops over positive loops at DC: %.1f dB%s\n",
                units_no_neg_zero(r->dominance_db, 1),
                r->dominance_db < 0 ? "  (below 0 dB: the positive loops are the stronger)"
                : r->dominance_db < 6 ? "  (less than 2x: the positive loop is strong)" : "");
}

/* The Nyquist count in one line: N, P and the Z they give, beside the
 * closed-loop poles' own count. */
static void nyquist_line(FILE *f, const check_result *r)
{
    const nyquist *q = &r->nq;
    if (!q->decided) {
        fprintf(f, "  Nyquist count   undecided: 1 + T passes through 0 on the imaginary axis "
                "(a closed-loop pole on it)\n");
        return;
    }
    fprintf(f, "  Nyquist count   %d clockwise encirclement%s of -1, %d open-loop pole%s in the "
            "right half-plane: %d closed-loop pole%s there%s\n",
            q->encirclements, abs(q->encirclements) == 1 ? "" : "s", q->open_loop_rhp,
            q->open_loop_rhp == 1 ? "" : "s", q->closed_loop_rhp,
            q->closed_loop_rhp == 1 ? "" : "s",
            r->nyquist_disagrees ? " (the closed-loop poles say otherwise: see the warning)"
                                 : ", as the closed-loop poles say");
}

void report_break_note(FILE *f, const desc *d, const char *indent)
{
    /* said only where a node of the outer loop lies outside every such
     * bridge: in a loop of two nodes a capacitor across one stage spans the
     * whole loop, and no break leaves it closed */
    int chain[8], gm, n = desc_break_bridge(d, &gm, chain, 8), s = desc_break_suggest(d);
    if (n == 0 || s < 0)
        return;
    const desc_elem *g = &d->elems[gm];
    fprintf(f, "%snote: %s ", indent, n > 1 ? "a chain" : d->elems[chain[0]].kind == ELEM_CAP
            ? "a capacitor" : "a resistor");
    for (int k = 0; k < n; k++)
        fprintf(f, "%s'%s'", k ? " + " : "", d->elems[chain[k]].name);
    fprintf(f, " joins %s and %s across gm '%s', so opening the loop there opens that local "
            "loop too and the margin is not the outer loop's; ", d->nodes[g->a].name,
            d->nodes[g->b].name, g->name);
    fprintf(f, "add 'break %s' to open the outer loop at a node\n", d->nodes[s].name);
}

static void section_gain(FILE *f, const desc *d, const model *m, const check_result *r)
{
    const lg_tf *tf = &r->tf;
    const margins *mg = &r->mg;
    char a[32], b[32];
    if (m->brk_node >= 0) {
        /* break NODE: every gm it controls, taken together */
        fprintf(f, "\nLoop gain T, opened at node '%s' (", d->nodes[m->brk_node].name);
        for (int k = 0, first = 1; k < m->ngm; k++)
            if (m->gm[k].in == m->brk_node) {
                fprintf(f, "%sgm '%s' -> %s", first ? "" : ", ", d->elems[m->gm[k].elem].name,
                        d->nodes[m->gm[k].out].name);
                first = 0;
            }
        fprintf(f, ", taken together)\n");
    } else {
        const desc_elem *brk = &d->elems[m->gm[m->brk].elem];
        fprintf(f, "\nLoop gain T, opened at gm '%s' (%s -> %s)\n", brk->name,
                d->nodes[brk->a].name, d->nodes[brk->b].name);
    }
    report_break_note(f, d, "  ");
    if (tf->origin < 0)
        fprintf(f, "  DC gain         unbounded: T grows as 1/s^%d at low frequency (an "
                "integrator in the loop)\n", -tf->origin);
    else if (tf->origin > 0)
        fprintf(f, "  DC gain         0: T has %d zero%s at s = 0 (the loop is AC-coupled)\n",
                tf->origin, tf->origin > 1 ? "s" : "");
    else if (tf->sign == 0)
        fprintf(f, "  DC gain         0: the break gm is switched off\n");
    else
        fprintf(f, "  DC gain         %+.5g V/V (%.2f dB)%s\n", tf->dc,
                units_no_neg_zero(20.0 * log10(fabs(tf->dc)), 2), tf->dc < 0 ? "  (net positive feedback)" : "");
    if (mg->ncross == 0) {
        fprintf(f, "  crossover       none: |T| stays %s 1 from %s to %s, so the phase margin "
                "is undefined\n", mg->why == CROSS_ABOVE ? "above" : "below",
                si_format(mg->fmin_hz, "Hz", a, sizeof a), si_format(mg->fmax_hz, "Hz", b, sizeof b));
    }
    for (int k = 0; k < mg->ncross; k++)
        fprintf(f, "  crossover       %-12s phase margin %.2f\xC2\xB0%s\n",
                si_format(mg->cross[k].hz, "Hz", a, sizeof a), mg->cross[k].value,
                mg->ncross > 1 && k == mg->best_cross ? "  (smallest)" : "");
    if (mg->nphase == 0)
        fprintf(f, "  gain margin     unbounded: the phase never reaches -180\xC2\xB0 (mod 360\xC2\xB0) "
                "in the band\n");
    else if (mg->phase[mg->best_phase].hz == 0)
        fprintf(f, "  gain margin     %.2f dB, at DC: T(0) is negative, on -180\xC2\xB0 already "
                "(a loop gain %s by that much puts a closed-loop pole at s = 0)\n",
                units_no_neg_zero(mg->phase[mg->best_phase].value, 2),
                mg->phase[mg->best_phase].value >= 0 ? "higher" : "lower");
    else
        fprintf(f, "  gain margin     %.2f dB, where the phase reaches -180\xC2\xB0 (%s)\n",
                units_no_neg_zero(mg->phase[mg->best_phase].value, 2),
                si_format(mg->phase[mg->best_phase].hz, "Hz", a, sizeof a));
    fprintf(f, "  band            %s to %s\n", si_format(mg->fmin_hz, "Hz", a, sizeof a),
            si_format(mg->fmax_hz, "Hz", b, sizeof b));
    if (r->have_nyquist)
        nyquist_line(f, r);
}

static void section_poles(FILE *f, const desc *d, const check_result *r)
{
    const lg_tf *tf = &r->tf;
    char s[80], a[32], e[32];
    int hidden = 0;
    fprintf(f, "\nOpen-loop poles (s/2\xCF\x80)\n  %-3s %-30s %-6s %-10s %s\n", "#", "pole", "Q",
            "node", "one-pole estimate");
    for (int k = 0, idx = 1; k < tf->npoles; k++) {
        if (pair_first(tf->poles, tf->npoles, k))
            continue;
        int o = tf->owner ? tf->owner[k] : -1;
        double q = quality(tf->poles[k]);
        if (isnan(q))
            a[0] = '\0';
        else
            snprintf(a, sizeof a, "%.3g", q);
        if (o >= 0 && isfinite(r->estimate_hz[o]))
            si_format(r->estimate_hz[o], "Hz", e, sizeof e);
        else
            snprintf(e, sizeof e, o < 0 ? "-" : isfinite(d->nodes[o].r) ? "- (no C to ground)"
                                                                        : "- (no R to ground)");
        hidden |= tf->hidden[k];
        fprintf(f, "  %-3d %-30s %-6s %-10s %s%s\n", idx++, root_text(tf->poles[k], s, sizeof s),
                a, o >= 0 ? d->nodes[o].name : "-", e, tf->hidden[k] ? "  (not seen by T)" : "");
    }
    if (tf->npoles == 0)
        fprintf(f, "  none: no node has capacitance\n");
    if (hidden)
        fprintf(f, "  poles marked 'not seen by T' belong to parts of the circuit outside the "
                "loop\n");
}

static void section_roots(FILE *f, const char *title, const double complex *v, int n, int zeros)
{
    char s[80], a[32];
    fprintf(f, "\n%s\n", title);
    if (n == 0)
        fprintf(f, "  none\n");
    double scale = 0;
    for (int k = 0; k < n; k++)
        scale = fmax(scale, cabs(v[k]));
    for (int k = 0, idx = 1; k < n; k++) {
        if (pair_first(v, n, k))
            continue;
        double q = quality(v[k]);
        if (isnan(q))
            a[0] = '\0';
        else
            snprintf(a, sizeof a, "Q %.3g", q);
        const char *note = "";
        if (right_half(v[k], 1e-12 * scale))
            note = zeros ? "  right half-plane zero: adds phase lag" : "  RIGHT HALF-PLANE";
        fprintf(f, "  %-3d %-30s %-8s%s\n", idx++, root_text(v[k], s, sizeof s), a, note);
    }
}

/* "+1.23°", "-" when undefined, and "0.00°" for a change that rounds to
 * zero (never "-0.00°"). */
static void change_text(double v, char *buf, size_t n)
{
    if (isnan(v))
        snprintf(buf, n, "-");
    else if (fabs(v) < 0.005)
        snprintf(buf, n, "0.00\xC2\xB0");
    else
        snprintf(buf, n, "%+.2f\xC2\xB0", v);
}

/* The compensation table: every node's capacitance to ground and every cap
 * and res element, largest effect first (design_table.c). */
static void section_nodes(FILE *f, const desc *d, const check_result *r)
{
    design_row *w;
    int n = design_table_rows(d, r, &w);
    if (n <= 0)
        return;
    fprintf(f, "\nWhere to compensate: phase margin change when one value doubles or halves\n"
            "  %-12s %-24s %-10s %9s %10s\n", "name", "what", "value", "x2", "x1/2");
    int best = -1, best_half = 0;
    for (int k = 0; k < n; k++) {
        const design_row *x = &w[k];
        char what[160], v[32], a[16], b[16];
        const char *name;
        if (x->kind == ROW_NODE) {
            name = d->nodes[x->index].name;
            snprintf(what, sizeof what, "C to ground");
        } else {
            const desc_elem *e = &d->elems[x->index];
            name = e->name;
            snprintf(what, sizeof what, "%s %s-%s", x->kind == ROW_CAP ? "cap" : "res",
                     desc_elem_end(d, e, 0), desc_elem_end(d, e, 1));
        }
        si_format(x->value, x->kind == ROW_RES ? "\xCE\xA9" : "F", v, sizeof v);
        change_text(x->pm_double, a, sizeof a);
        change_text(x->pm_half, b, sizeof b);
        fputs("  ", f);
        report_pad(f, name, 13);
        report_pad(f, what, 25);
        report_pad(f, v, 10);
        fprintf(f, "%10s %11s\n", a, b);
        for (int h = 0; h < 2; h++) {
            double g = h ? x->pm_half : x->pm_double;
            double cur = best < 0 ? -INFINITY : best_half ? w[best].pm_half : w[best].pm_double;
            if (!isnan(g) && g > cur) {
                best = k;
                best_half = h;
            }
        }
    }
    if (best >= 0 && (best_half ? w[best].pm_half : w[best].pm_double) > 0.05) {
        const design_row *x = &w[best];
        fprintf(f, "  the largest gain: %s %s '%s' (%+.2f\xC2\xB0)\n",
                best_half ? "halving" : "doubling",
                x->kind == ROW_NODE ? "the capacitance to ground at" : x->kind == ROW_CAP
                                                                          ? "cap" : "res",
                x->kind == ROW_NODE ? d->nodes[x->index].name : d->elems[x->index].name,
                best_half ? x->pm_half : x->pm_double);
    }
    if (r->mg.ncross == 0)
        fprintf(f, "  (-: the loop has no crossover, so there is no phase margin to change)\n");
    free(w);
}

static void verdict(FILE *f, const check_result *r, report_target t)
{
    const margins *mg = &r->mg;
    double pm = mg->best_cross >= 0 ? mg->cross[mg->best_cross].value : NAN;
    const char *word = t.given ? "target" : "reference";
    int rhp = 0;
    for (int k = 0; k < r->ncl; k++)
        rhp += creal(r->cl[k]) > 0;
    fputc('\n', f);
    if (!r->stable && r->marginal && rhp == 0)
        fprintf(f, "Verdict: MARGINAL: a closed-loop pole sits on the imaginary axis.\n");
    else if (!r->stable)
        fprintf(f, "Verdict: UNSTABLE: %d closed-loop pole%s in the right half-plane.\n", rhp,
                rhp == 1 ? "" : "s");
    else if (isnan(pm))
        fprintf(f, "Verdict: stable; no crossover, so no phase margin to compare with the "
                "%.4g\xC2\xB0 %s.\n", t.pm_deg, word);
    else if (pm >= t.pm_deg)
        fprintf(f, "Verdict: stable; phase margin %.1f\xC2\xB0 meets the %.4g\xC2\xB0 %s.\n",
                pm, t.pm_deg, word);
    else
        fprintf(f, "Verdict: stable, but the phase margin %.1f\xC2\xB0 is below the %.4g\xC2\xB0 "
                "%s%s.\n", pm, t.pm_deg, word, t.given ? "" : " (give --pm to make it a target)");
    /* a phase margin can look ample while a phase crossing sits just below
     * unity gain (a resonance): 6 dB is the usual floor (common practice, no
     * source) */
    if (r->stable && !t.gm_given && mg->best_phase >= 0 && mg->phase[mg->best_phase].value >= 0 &&
        mg->phase[mg->best_phase].value < 6)
        fprintf(f, "Note: the gain margin is only %.2f dB (at %s): a loop gain that much higher "
                "reaches the edge of stability; give --gm to make it a target.\n",
                mg->phase[mg->best_phase].value,
                margin_where(mg->phase[mg->best_phase].hz, (char[32]){ 0 }, 32));
    if (t.gm_given && mg->best_phase < 0)
        fprintf(f, "Gain margin target %.4g dB: met; the gain margin is unbounded (the phase "
                "never reaches -180\xC2\xB0).\n", t.gm_db);
    else if (t.gm_given)
        fprintf(f, "Gain margin target %.4g dB: %s; the gain margin is %.2f dB.\n", t.gm_db,
                mg->phase[mg->best_phase].value >= t.gm_db ? "met" : "MISSED",
                mg->phase[mg->best_phase].value);
    if (r->stable && !isnan(pm) && pm < 0)
        fprintf(f, "Note: the closed loop is stable although the phase margin is negative: "
                "the loop is conditionally stable; check the margin over gain changes.\n");
    if (r->stable && mg->best_phase >= 0 && mg->phase[mg->best_phase].value < 0)
        fprintf(f, "Note: conditionally stable: the loop is stable, but its gain margin is "
                "negative (%.1f dB at %s): a gain %.1f dB lower would make it unstable.\n",
                mg->phase[mg->best_phase].value,
                margin_where(mg->phase[mg->best_phase].hz, (char[32]){ 0 }, 32),
                -mg->phase[mg->best_phase].value);
    int olrhp = 0;
    for (int k = 0; k < r->tf.npoles; k++)
        olrhp += creal(r->tf.poles[k]) > 0 && !r->tf.hidden[k];
    if (olrhp)
        fprintf(f, "Note: T has %d right half-plane pole%s (the loop is unstable when opened), "
                "so the phase margin alone does not decide stability; the closed-loop poles "
                "above do.\n", olrhp, olrhp == 1 ? "" : "s");
    else if (!r->stable && !isnan(pm) && pm > 0)
        fprintf(f, "Note: the phase margin is positive but the closed loop is unstable%s; "
                "the closed-loop poles decide.\n",
                olrhp ? " (T has a right half-plane pole)" : "");
    if (r->nyquist_disagrees)
        fprintf(f, "Note: accuracy warning: the Nyquist count gives %d closed-loop pole%s in "
                "the right half-plane and the closed-loop poles %d; one of the two verdicts is "
                "wrong here.\n", r->nq.closed_loop_rhp, r->nq.closed_loop_rhp == 1 ? "" : "s",
                rhp);
    if (mg->exact)
        fprintf(f, "Note: accuracy warning: the pole/zero form disagrees with the exact loop "
                "gain, so the crossovers and margins above were found on the exact loop gain "
                "alone; the poles and zeros listed may be inaccurate%s.\n",
                mg->mismatch ? ", and the exact evaluation itself failed a consistency check: "
                               "treat the margins with caution too" : "");
    else if (r->tf.suspect || mg->mismatch)
        fprintf(f, "Note: accuracy warning: an internal consistency check failed (%s); treat "
                "the margins with caution.\n",
                r->tf.suspect ? "low-frequency slope and pole/zero count disagree"
                              : "factored and exact phase disagree");
}

void report_check_text(FILE *f, const desc *d, const model *m, const check_result *r,
                       report_target t)
{
    fprintf(f, "loopwise check: %s  (%d nodes, %d elements)\n", d->path, d->nnodes, d->nelems);
    section_loops(f, d, m, r);
    section_gain(f, d, m, r);
    section_poles(f, d, r);
    section_roots(f, "Zeros of T (s/2\xCF\x80)", r->tf.zeros, r->tf.nzeros, 1);
    section_roots(f, "Closed-loop poles (s/2\xCF\x80)", r->cl, r->ncl, 0);
    section_nodes(f, d, r);
    verdict(f, r, t);
}

int report_gain(FILE *f, const desc *d, const check_result *r, int npoints, gain_format fmt)
{
    double lo = log10(r->mg.fmin_hz), hi = log10(r->mg.fmax_hz);
    char a[32];
    if (fmt == GAIN_TEXT)
        fprintf(f, "loopwise gain: %s\n  %-14s %12s %12s\n", d->path, "frequency", "|T| (dB)",
                "phase (\xC2\xB0)");
    else if (fmt == GAIN_CSV)
        fputs("freq_hz,mag_db,phase_deg\n", f);
    else
        fputs("{\"points\": [", f);
    for (int k = 0; k < npoints; k++) {
        double hz = pow(10.0, npoints > 1 ? lo + (hi - lo) * k / (npoints - 1) : lo), mag;
        double ph = margin_phase(r->lg, &r->tf, hz, &mag, NULL);
        double db = 20.0 * log10(mag);
        if (fmt == GAIN_TEXT) {
            /* T = 0 or a pole on the axis has no level in dB: said in words */
            fprintf(f, "  %-14s", si_format(hz, "Hz", a, sizeof a));
            if (isfinite(db))
                fprintf(f, " %12.3f", db);
            else
                fprintf(f, " %12s", db < 0 ? "T = 0" : db > 0 ? "unbounded" : "undefined");
            if (isfinite(ph))
                fprintf(f, " %12.3f\n", ph);
            else
                fprintf(f, " %12s\n", "undefined");
        } else if (fmt == GAIN_CSV) {
            fprintf(f, "%.17g,", hz); /* undefined: an empty field, as JSON's null */
            if (isfinite(db))
                fprintf(f, "%.17g", db);
            fputc(',', f);
            if (isfinite(ph))
                fprintf(f, "%.17g", ph);
            fputc('\n', f);
        } else {
            fprintf(f, "%s\n  {\"hz\": ", k ? "," : "");
            json_number(f, hz);
            fputs(", \"mag_db\": ", f);
            json_number(f, db);
            fputs(", \"phase_deg\": ", f);
            json_number(f, ph);
            fputc('}', f);
        }
    }
    if (fmt == GAIN_JSON)
        fputs("]}\n", f);
    return LW_OK;
}
