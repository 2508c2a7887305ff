/* report_design: outputs of the design commands. */
#include "loopwise/report_design.h"

#include <math.h>
#include <string.h>

#include "loopwise/report.h"
#include "loopwise/units.h"

#define TWO_PI 6.283185307179586

void report_shell_word(FILE *f, const char *w)
{
    size_t n = strlen(w);
    if (n && strspn(w, "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789"
                       "_./:=+,@%-") == n) {
        fputs(w, f);
        return;
    }
    fputc('\'', f);
    for (; *w; w++) {
        if (*w == '\'')
            fputs("'\\''", f);
        else
            fputc(*w, f);
    }
    fputc('\'', f);
}

const char *report_unit_of(expr_unit u)
{
    switch (u) {
    case UNIT_F: return "F";
    case UNIT_OHM: return "\xCE\xA9";
    case UNIT_S: return "S";
    default: return "";
    }
}

const char *report_unit_symbol(const desc *d, desc_target t)
{
    return report_unit_of(desc_target_shown_unit(d, t));
}

char *report_goal_text(design_goal g, char *buf, size_t n)
{
    int len = snprintf(buf, n, "phase margin %s %.4g\xC2\xB0", design_goal_word(g), g.pm_deg);
    if (!isnan(g.gm_db) && len >= 0 && (size_t)len < n)
        snprintf(buf + len, n - (size_t)len, ", gain margin target %.4g dB", g.gm_db);
    return buf;
}

const char *report_below_mark(design_goal g)
{
    return g.pm_given || !isnan(g.gm_db) ? "  < target" : "  < reference";
}

static const char *fmt_or(double v, const char *unit, char *buf, size_t n, const char *none)
{
    if (isnan(v)) {
        snprintf(buf, n, "%s", none);
        return buf;
    }
    return si_format(v, unit, buf, n);
}

void report_point_fields(FILE *f, const design_point *p)
{
    fputs("\"phase_margin_deg\": ", f);
    json_number(f, p->pm_deg);
    fputs(", \"crossover_hz\": ", f);
    json_number(f, p->crossover_hz);
    fputs(", \"gain_margin_db\": ", f);
    json_number(f, p->gm_db);
    fputs(", \"dc_loop_gain\": ", f);
    json_number(f, p->dc);
    fprintf(f, ", \"stable\": %s", p->stable ? "true" : "false");
}

static void json_point(FILE *f, const design_point *p, int probed)
{
    fputs("{\"value\": ", f);
    json_number(f, p->value);
    fputs(", ", f);
    report_point_fields(f, p);
    fputs(", \"dominant_pole_hz\": ", f);
    json_number(f, p->p1_hz);
    fputs(", \"second_pole_hz\": ", f);
    json_number(f, p->p2_hz);
    if (probed) {
        fputs(", \"overshoot_pct\": ", f);
        json_number(f, p->overshoot_pct);
        fputs(", \"settle_1pct_s\": ", f);
        json_number(f, p->settle1_s);
        fputs(", \"peak_db\": ", f);
        json_number(f, p->peak_db);
    }
    fputc('}', f);
}

/* An undefined or unbounded value is an empty field, as JSON's null. */
static void csv_num(FILE *f, double v, const char *sep)
{
    if (isfinite(v))
        fprintf(f, "%.17g%s", v, sep);
    else
        fputs(sep, f);
}

void report_pad(FILE *f, const char *s, int width)
{
    int chars = 0;
    for (const unsigned char *p = (const unsigned char *)s; *p; p++)
        chars += (*p & 0xC0) != 0x80;
    fputs(s, f);
    for (; chars < width; chars++)
        fputc(' ', f);
}

static void text_points(FILE *f, const sweep_result *r, const char *unit, const char *label,
                        design_goal g)
{
    /* with a response (sweep --to), its price replaces the two poles */
    fprintf(f, "  %-11s %-14s %-11s %-13s %-12s %-11s %-11s %s%s\n", label, "DC loop gain",
            "crossover", "phase margin", "gain margin", r->probed ? "overshoot" : "dominant",
            r->probed ? "settles 1%" : "second", r->probed ? "peak |H|   " : "",  "stable");
    for (int k = 0; k < r->npts; k++) {
        const design_point *p = &r->pts[k];
        char v[32], dc[32], fc[32], pm[16], gm[16], p1[32], p2[32];
        si_format(p->value, unit, v, sizeof v);
        if (isinf(p->dc))
            snprintf(dc, sizeof dc, "unbounded");
        else
            snprintf(dc, sizeof dc, "%.4g", p->dc);
        fmt_or(p->crossover_hz, "Hz", fc, sizeof fc, "none");
        snprintf(pm, sizeof pm, isnan(p->pm_deg) ? "-" : "%.2f\xC2\xB0", p->pm_deg);
        snprintf(gm, sizeof gm, isnan(p->gm_db) ? "unbounded" : "%.2f dB", units_no_neg_zero(p->gm_db, 2));
        fmt_or(p->p1_hz, "Hz", p1, sizeof p1, "-");
        fmt_or(p->p2_hz, "Hz", p2, sizeof p2, "-");
        char os[32], ts[32], pk[32];
        if (r->probed) {
            if (isnan(p->overshoot_pct))
                snprintf(os, sizeof os, "-");
            else
                pct_format(p->overshoot_pct, os, sizeof os);
            fmt_or(p->settle1_s, "s", ts, sizeof ts, "-");
            snprintf(pk, sizeof pk, isnan(p->peak_db) ? "-" : "%.2f dB", p->peak_db);
        }
        const char *cols[] = { v, dc, fc, pm, gm, r->probed ? os : p1, r->probed ? ts : p2, pk };
        const int widths[] = { 12, 15, 12, 14, 13, 12, 12, 12 };
        fputs("  ", f);
        for (int c = 0; c < 7 + r->probed; c++)
            report_pad(f, cols[c], widths[c]);
        fprintf(f, "%s%s\n", p->stable ? "yes" : "NO", design_meets(p, g) ? "" : report_below_mark(g));
    }
}

void report_sweep(FILE *f, const desc *d, const char *name, desc_target t,
                  const sweep_result *r, design_goal g, out_format fmt)
{
    const char *unit = report_unit_symbol(d, t);
    if (fmt == OUT_CSV) {
        fputs("value,dc_loop_gain,crossover_hz,phase_margin_deg,gain_margin_db,"
              "dominant_pole_hz,second_pole_hz,stable", f);
        fputs(r->probed ? ",overshoot_pct,settle_1pct_s,peak_db\n" : "\n", f);
        for (int k = 0; k < r->npts; k++) {
            const design_point *p = &r->pts[k];
            csv_num(f, p->value, ",");
            csv_num(f, p->dc, ",");
            csv_num(f, p->crossover_hz, ",");
            csv_num(f, p->pm_deg, ",");
            csv_num(f, p->gm_db, ",");
            csv_num(f, p->p1_hz, ",");
            csv_num(f, p->p2_hz, ",");
            fprintf(f, "%s%s", p->stable ? "true" : "false", r->probed ? "," : "\n");
            if (r->probed) {
                /* undefined figures as empty fields, as JSON's null */
                const double v3[] = { p->overshoot_pct, p->settle1_s, p->peak_db };
                for (int j = 0; j < 3; j++) {
                    if (isfinite(v3[j]))
                        fprintf(f, "%.17g", v3[j]);
                    fputs(j < 2 ? "," : "\n", f);
                }
            }
        }
        return;
    }
    if (fmt == OUT_JSON) {
        fputs("{\"vary\": ", f);
        json_string(f, name);
        fputs(",\n \"target_pm_deg\": ", f);
        json_number(f, g.pm_deg);
        fputs(",\n \"points\": [", f);
        for (int k = 0; k < r->npts; k++) {
            fputs(k ? ",\n  " : "\n  ", f);
            json_point(f, &r->pts[k], r->probed);
        }
        fputs("],\n \"crossings\": [", f);
        for (int k = 0; k < r->ncross; k++) {
            fprintf(f, "%s{\"value\": ", k ? ", " : "");
            json_number(f, r->cross[k].value);
            fprintf(f, ", \"direction\": \"%s\", \"jump\": %s}", r->cross[k].rises ? "rises" : "falls",
                    r->cross[k].jump ? "true" : "false");
        }
        fputs("],\n \"stability_changes\": [", f);
        for (int k = 0; k < r->nedge; k++) {
            fprintf(f, "%s{\"value\": ", k ? ", " : "");
            json_number(f, r->edge[k].value);
            fprintf(f, ", \"becomes\": \"%s\"}", r->edge[k].rises ? "stable" : "unstable");
        }
        fprintf(f, "],\n \"met\": %s}\n", r->missed ? "false" : "true");
        return;
    }
    char a[32], gt[160];
    fprintf(f, "loopwise sweep: %s  vary %s, %s\n", d->path, name,
            report_goal_text(g, gt, sizeof gt));
    if (r->probed)
        fprintf(f, "  and at each value the closed loop's response at '%s' to %s '%s': the step's "
                "overshoot and 1%% settling time, and the peak of |H|\n",
                d->nodes[r->probe.to].name, r->probe.src.kind == RESP_INPUT ? "input" :
                "a current into", r->probe.src.kind == RESP_INPUT
                ? d->inputs[r->probe.src.index].name : d->nodes[r->probe.src.index].name);
    report_break_note(f, d, "  ");
    fputc('\n', f);
    text_points(f, r, unit, name, g);
    fputc('\n', f);
    if (r->ncross == 0)
        fprintf(f, "The phase margin does not cross %.4g\xC2\xB0 in this range: it is %s "
                "throughout.\n", g.pm_deg, r->missed ? "below the goal (or undefined)"
                                                      : "at or above the goal");
    for (int k = 0; k < r->ncross; k++) {
        const design_crossing *x = &r->cross[k];
        si_format(x->value, unit, a, sizeof a);
        if (!x->jump) {
            fprintf(f, "The margin %s through %.4g\xC2\xB0 at %s = %s.\n",
                    x->rises ? "rises" : "falls", g.pm_deg, name, a);
            continue;
        }
        char pa[32], pb[32];
        snprintf(pa, sizeof pa, isnan(x->before) ? "undefined" : "%.2f\xC2\xB0",
                 units_no_neg_zero(x->before, 2));
        snprintf(pb, sizeof pb, isnan(x->after) ? "undefined" : "%.2f\xC2\xB0",
                 units_no_neg_zero(x->after, 2));
        fprintf(f, "The margin jumps %s the goal at %s = %s, from %s to %s: a crossover "
                "appears or vanishes there (or the stability changes).\n",
                x->rises ? "up past" : "down past", name, a, pa, pb);
    }
    int worst = sweep_smallest_margin(r), unstable = 0;
    for (int k = 0; k < r->npts; k++)
        unstable += !r->pts[k].stable;
    if (worst >= 0)
        fprintf(f, "The smallest phase margin is %.2f\xC2\xB0, at %s = %s.\n",
                r->pts[worst].pm_deg, name, si_format(r->pts[worst].value, unit, a, sizeof a));
    if (unstable)
        fprintf(f, "%d of %d points are unstable (marked NO).\n", unstable, r->npts);
    for (int k = 0; k < r->nedge; k++)
        fprintf(f, "The closed loop turns %s as %s grows through %s.\n",
                r->edge[k].rises ? "stable" : "UNSTABLE", name,
                si_format(r->edge[k].value, unit, a, sizeof a));
}

static void text_cl_poles(FILE *f, const check_result *at)
{
    char re[32], im[32];
    fprintf(f, "  closed-loop poles");
    for (int k = 0; k < at->ncl && k < 6; k++) {
        if (cimag(at->cl[k]) > 0)
            continue;
        if (cimag(at->cl[k]) == 0)
            fprintf(f, "%s%s", k ? ", " : " ", si_format(creal(at->cl[k]) / TWO_PI, "Hz", re, sizeof re));
        else
            fprintf(f, "%s%s \xC2\xB1 j%s", k ? ", " : " ",
                    si_format(creal(at->cl[k]) / TWO_PI, "Hz", re, sizeof re),
                    si_format(-cimag(at->cl[k]) / TWO_PI, "Hz", im, sizeof im));
    }
    fprintf(f, "%s\n", at->ncl > 6 ? ", ..." : "");
}

void report_size(FILE *f, const desc *d, const char *name, desc_target t, const size_result *r,
                 const check_result *at, design_goal g, double density, out_format fmt)
{
    const char *unit = report_unit_symbol(d, t);
    const design_point *p = &r->best;
    /* a param that feeds only capacitances has an area; but it may also sit
     * inside other expressions, so only an element or node field is sure to
     * leave the DC gain alone */
    int is_cap = desc_target_shown_unit(d, t) == UNIT_F;
    int dc_fixed = is_cap && t.kind != TARGET_PARAM;
    if (fmt == OUT_JSON) {
        fputs("{\"tune\": ", f);
        json_string(f, name);
        fputs(", \"value\": ", f);
        json_number(f, p->value);
        fputs(", ", f);
        report_point_fields(f, p);
        fprintf(f, ", \"met\": %s, \"met_at_low_end\": %s, \"window_high\": ", r->met ? "true" : "false",
                r->met && r->at_lo ? "true" : "false");
        json_number(f, r->window ? r->hi_value : NAN);
        fputs(", \"area_um2\": ", f);
        json_number(f, is_cap && density > 0 ? p->value / density : NAN);
        fputs(", \"closed_loop_poles\": [", f);
        for (int k = 0; at && k < at->ncl; k++) {
            fprintf(f, "%s{\"re_hz\": ", k ? ", " : "");
            json_number(f, creal(at->cl[k]) / TWO_PI);
            fputs(", \"im_hz\": ", f);
            json_number(f, cimag(at->cl[k]) / TWO_PI);
            fputc('}', f);
        }
        fputs("]}\n", f);
        return;
    }
    char a[32], b[32], c[32];
    fprintf(f, "loopwise size: %s  tune %s for phase margin >= %.4g\xC2\xB0", d->path, name,
            g.pm_deg);
    if (!isnan(g.gm_db))
        fprintf(f, " and gain margin >= %.4g dB", g.gm_db);
    fprintf(f, "\n  searched %s to %s (log grid of 81 points, refined to 1e-6)\n",
            si_format(r->lo, unit, a, sizeof a), si_format(r->hi, unit, b, sizeof b));
    report_break_note(f, d, "  ");
    fputc('\n', f);
    if (r->met) {
        fprintf(f, "  answer          %s = %s%s\n", name, si_format(p->value, unit, a, sizeof a),
                r->at_lo ? ", the lower end of the range" : "");
        if (r->window && !isnan(r->hi_value))
            fprintf(f, "  note            the target is met only up to %s = %s: a window, not "
                    "a threshold\n", name, si_format(r->hi_value, unit, b, sizeof b));
    } else {
        fprintf(f, "  TARGET NOT REACHABLE in the range: the best is %s = %s\n", name,
                si_format(p->value, unit, a, sizeof a));
    }
    if (isnan(p->pm_deg))
        fprintf(f, "  phase margin    undefined (no crossover)\n");
    else
        fprintf(f, "  phase margin    %.2f\xC2\xB0 at crossover %s\n", p->pm_deg,
                si_format(p->crossover_hz, "Hz", a, sizeof a));
    if (isnan(p->gm_db))
        fprintf(f, "  gain margin     unbounded: the phase never reaches -180\xC2\xB0\n");
    else
        fprintf(f, "  gain margin     %.2f dB\n", units_no_neg_zero(p->gm_db, 2));
    if (isinf(p->dc))
        fprintf(f, "  DC loop gain    unbounded (integrator)%s\n", dc_fixed ? ", unchanged by a capacitor" : "");
    else
        fprintf(f, "  DC loop gain    %+.4g V/V%s\n", p->dc,
                dc_fixed ? ", unchanged by a capacitor" : "");
    if (at)
        text_cl_poles(f, at);
    if (is_cap && density > 0) {
        double um2 = p->value / density;
        fprintf(f, "  area            %.4g \xC2\xB5m\xC2\xB2 (about %.3g \xC2\xB5m square) at %s/\xC2\xB5m\xC2\xB2\n",
                um2, sqrt(um2), si_format(density, "F", c, sizeof c));
    }
    if (!r->met && !isnan(p->p2_hz) && !isnan(p->pm_deg))
        fprintf(f, "  limited by      the second pole at %s%s%s%s, near the crossover\n",
                si_format(p->p2_hz, "Hz", a, sizeof a), p->p2_node >= 0 ? " (node '" : "",
                p->p2_node >= 0 ? d->nodes[p->p2_node].name : "", p->p2_node >= 0 ? "')" : "");
    if (r->met && r->at_lo)
        fprintf(f, "\nVerdict: the target is already met at the lower end of the range, %s = %s: "
                "the smallest value that meets it lies below; widen --within (e.g. --within "
                "%s..%s).\n",
                name, si_format(r->lo, unit, a, sizeof a), si_word(r->lo / 100, b, sizeof b),
                si_word(r->hi, c, sizeof c));
    else
        fprintf(f, "\nVerdict: %s\n", r->met ? "the target is met." : "no value in the range meets "
                "the target; widen --within or change another value.");
}

/* The user's --set NAME=EXPR that sets `what` itself (a NODE.c the
 * suggestion sets anew), compared by the name before '='. */
static int sets_name(const char *set, const char *what)
{
    size_t n = strlen(what);
    return !strncmp(set, what, n) && set[n] == '=';
}

/* The suggested size command: the user's own --set values, the load as
 * added capacitance on top of the node's own (NODE.c = own + load, both
 * in the file's number syntax), and the value the compensation table ranks
 * highest at that load. */
static void size_suggestion(FILE *f, const desc *d, const load_result *r,
                            const char *const *sets, int nsets, design_goal g)
{
    const char *name = d->nodes[r->node].name;
    char field[DESC_MAX_NAME + 8], own[32], load[32], tune[DESC_MAX_NAME + 8];
    snprintf(field, sizeof field, "%s.c", name);
    if (r->advice_index < 0)
        snprintf(tune, sizeof tune, "NAME");
    else if (r->advice_kind == ROW_NODE)
        snprintf(tune, sizeof tune, "%s.c", d->nodes[r->advice_index].name);
    else
        snprintf(tune, sizeof tune, "%s", d->elems[r->advice_index].name);
    fputs("    loopwise size ", f);
    report_shell_word(f, d->path);
    for (int k = 0; k < nsets; k++)
        if (!sets_name(sets[k], field)) {
            fputs(" --set ", f);
            report_shell_word(f, sets[k]);
        }
    si_word(r->worst_load, load, sizeof load);
    if (r->c_node > 0)
        fprintf(f, " --set %s=%s+%s", field, si_word(r->c_node, own, sizeof own), load);
    else
        fprintf(f, " --set %s=%s", field, load);
    fprintf(f, " --tune %s", tune);
    /* the goal the load was judged by, so the size command sizes for it */
    if (g.pm_given)
        fprintf(f, " --pm %.17g", g.pm_deg);
    if (!isnan(g.gm_db))
        fprintf(f, " --gm %.17g", g.gm_db);
    fputc('\n', f);
    if (r->advice_index >= 0) {
        const char *what = r->advice_kind == ROW_NODE ? "the capacitance to ground at"
                           : r->advice_kind == ROW_CAP ? "cap" : "res";
        char a[32];
        fprintf(f, "  (at %s the compensation table ranks %s '%s' first: %s it gains %+.2f\xC2\xB0)\n",
                si_format(r->worst_load, "F", a, sizeof a), what,
                r->advice_kind == ROW_NODE ? d->nodes[r->advice_index].name
                                           : d->elems[r->advice_index].name,
                r->advice_half ? "halving" : "doubling", r->advice_gain);
    } else if (d->nnodes > 64) {
        fputs("  (the compensation table, which would rank the values, is computed up to 64 "
              "nodes: NAME is the value to size)\n", f);
    } else {
        fputs("  (no value in the compensation table gains margin at that load: NAME is the "
              "value to size)\n", f);
    }
}

/* What to do when a load inside the loop costs too much margin depends on
 * what drives the node. A stage whose control node already drives other
 * gm (matched current sources, say) can be copied once more to feed the
 * load from outside the loop; an amplifier's own output cannot move, so it
 * is compensated for the load (the value the compensation table ranks
 * highest with that load in place is the one to size) or isolated by a
 * buffer. */
static void load_remedy(FILE *f, const desc *d, const load_result *r, const char *const *sets,
                        int nsets, design_goal g)
{
    int node = r->node;
    const char *name = d->nodes[node].name;
    int drv = -1, sib = -1, outside = 0;
    for (int e = 0; e < d->nelems && !outside; e++) {
        const desc_elem *x = &d->elems[e];
        if (x->kind != ELEM_GM || x->b != node)
            continue;
        for (int k = 0; k < d->nelems && !outside; k++) {
            const desc_elem *y = &d->elems[k];
            if (k == e || y->kind != ELEM_GM || y->a != x->a || y->b == node)
                continue;
            /* a copy that already feeds a node no declared loop passes is the model */
            int in_loop = 0;
            for (int l = 0; l < d->nloops; l++)
                for (int j = 0; j < d->loops[l].nnodes; j++)
                    in_loop |= d->loops[l].nodes[j] == y->b;
            if (sib < 0 || !in_loop) {
                drv = e;
                sib = k;
                outside = !in_loop;
            }
        }
        if (drv < 0)
            drv = e;
    }
    if (sib >= 0 && outside) {
        fprintf(f, "  Take the output from a matched copy of '%s' outside the loop, as '%s' "
                "already does for '%s'.\n", d->elems[drv].name, d->elems[sib].name,
                d->nodes[d->elems[sib].b].name);
        return;
    }
    if (sib >= 0) {
        fprintf(f, "  Take the output from a matched copy of '%s' (driven from '%s', as '%s' "
                "is) placed outside the loop.\n", d->elems[drv].name,
                d->nodes[d->elems[drv].a].name, d->elems[sib].name);
        return;
    }
    if (drv >= 0)
        fprintf(f, "  '%s' is the output of the loop's own stage '%s': it cannot leave the "
                "loop.\n", name, d->elems[drv].name);
    char a[32];
    fprintf(f, "  Compensate for the load: size the compensation with the load that costs the "
            "most margin (%s) in place, e.g.\n", si_format(r->worst_load, "F", a, sizeof a));
    size_suggestion(f, d, r, sets, nsets, g);
    fputs("  or isolate the load from the loop with a buffer.\n", f);
}

/* The verdict over the load ranges that meet the goal: the margin may rise
 * with the load as well as fall, so every range is named, and the side
 * where loads miss says which way the margin goes there. */
static void load_verdict(FILE *f, const load_result *r, double lo, double hi, design_goal g)
{
    char a[32], b[32];
    if (r->nmet == 0) {
        fprintf(f, "Verdict: no load from %s to %s meets the %.4g\xC2\xB0 %s.\n",
                si_format(lo, "F", a, sizeof a), si_format(hi, "F", b, sizeof b), g.pm_deg,
                design_goal_word(g));
        return;
    }
    fprintf(f, "Verdict: the %.4g\xC2\xB0 %s is met for loads", g.pm_deg, design_goal_word(g));
    for (int k = 0; k < r->nmet && k < 4; k++)
        fprintf(f, "%s from %s to %s", k == 0 ? "" : k + 1 == r->nmet ? " and" : ",",
                si_format(r->met_lo[k], "F", a, sizeof a), si_format(r->met_hi[k], "F", b, sizeof b));
    fprintf(f, "%s.\n", r->nmet > 4 ? ", and more (see the table)" : "");
    if (r->met_lo[0] > lo)
        fprintf(f, "  Loads below %s miss it: the margin rises as the load grows there.\n",
                si_format(r->met_lo[0], "F", a, sizeof a));
    if (r->max_load_f < hi)
        fprintf(f, "  The largest load that meets it is %s (below the %s asked for): the margin "
                "falls as the load grows beyond it.\n", si_format(r->max_load_f, "F", a, sizeof a),
                si_format(hi, "F", b, sizeof b));
    else
        fprintf(f, "  The largest load that meets it is the %s asked for.\n",
                si_format(hi, "F", a, sizeof a));
}

void report_load(FILE *f, const desc *d, const load_result *r, double lo, double hi,
                 design_goal g, const char *const *sets, int nsets, out_format fmt)
{
    const char *node = d->nodes[r->node].name;
    char a[32], b[32], c[32];
    if (fmt == OUT_JSON) {
        fputs("{\"node\": ", f);
        json_string(f, node);
        fprintf(f, ", \"inside_loop\": %s,\n \"points\": [", r->inside ? "true" : "false");
        for (int k = 0; k < r->sw.npts; k++) {
            fputs(k ? ",\n  " : "\n  ", f);
            json_point(f, &r->sw.pts[k], 0);
        }
        fputs("],\n \"max_load_f\": ", f);
        json_number(f, r->inside ? r->max_load_f : NAN);
        fprintf(f, ", \"met\": %s", r->met ? "true" : "false");
        fputs(", \"met_ranges\": [", f);
        for (int k = 0; r->inside && k < r->nmet; k++) {
            fputs(k ? ", [" : "[", f);
            json_number(f, r->met_lo[k]);
            fputs(", ", f);
            json_number(f, r->met_hi[k]);
            fputc(']', f);
        }
        fputc(']', f);
        fputs(", \"resistance_seen_ohm\": ", f);
        json_number(f, r->inside ? NAN : r->r_seen);
        fputs(",\n \"settling\": [", f);
        for (int k = 0; !r->inside && isfinite(r->r_seen) && k < 5; k++) {
            double cl = lo * pow(hi / lo, k / 4.0), tau = r->r_seen * (r->c_node + cl);
            fprintf(f, "%s{\"load_f\": ", k ? ", " : "");
            json_number(f, cl);
            fputs(", \"pole_hz\": ", f);
            json_number(f, 1.0 / (TWO_PI * tau));
            fputs(", \"settle_1pct_s\": ", f);
            json_number(f, tau * log(100.0));
            fputs(", \"settle_0p1pct_s\": ", f);
            json_number(f, tau * log(1000.0));
            fputc('}', f);
        }
        fputs("]}\n", f);
        return;
    }
    char gt[160];
    fprintf(f, "loopwise load: %s  node '%s', load %s to %s, %s\n\n", d->path, node,
            si_format(lo, "F", a, sizeof a), si_format(hi, "F", b, sizeof b),
            report_goal_text(g, gt, sizeof gt));
    if (!r->inside) {
        fprintf(f, "Node '%s' is outside the loop: a load there does not move the loop margin.\n",
                node);
        if (isnan(r->nominal.pm_deg))
            fprintf(f, "The loop has no crossover (no phase margin) at any load%s.\n",
                    r->nominal.stable ? "" : "; the closed loop is not stable: run check for its poles");
        else
            fprintf(f, "The loop's phase margin is %.2f\xC2\xB0 at every load (%s the %.4g\xC2\xB0 "
                    "%s)%s.\n", r->nominal.pm_deg, design_meets(&r->nominal, g) ? "meets" : "below",
                    g.pm_deg, design_goal_word(g), r->nominal.stable ? "" : "; the closed loop is not stable: run check for its poles");
        if (!isfinite(r->r_seen)) {
            fprintf(f, "No resistance to ground is seen at '%s': a load there integrates, it "
                    "does not settle.\n", node);
            return;
        }
        fprintf(f, "Resistance seen at the node: %s; its own capacitance to ground %s.\n"
                "First-order estimate (t = R C ln(1/error)):\n"
                "  %-11s %-12s %-12s %s\n", si_format(r->r_seen, "\xCE\xA9", a, sizeof a),
                si_format(r->c_node, "F", b, sizeof b), "load", "pole", "settle 1%", "settle 0.1%");
        for (int k = 0; k < 5; k++) {
            double cl = lo * pow(hi / lo, k / 4.0), tau = r->r_seen * (r->c_node + cl);
            char p[32], s1[32], s2[32];
            fprintf(f, "  %-11s %-12s %-12s %s\n", si_format(cl, "F", c, sizeof c),
                    si_format(1.0 / (TWO_PI * tau), "Hz", p, sizeof p),
                    si_format(tau * log(100.0), "s", s1, sizeof s1),
                    si_format(tau * log(1000.0), "s", s2, sizeof s2));
        }
        fprintf(f, "\nVerdict: the output may stay where it is; the load sets only its own "
                "settling.\n");
        return;
    }
    fprintf(f, "Node '%s' is inside the loop: a load there changes the loop gain.\n\n", node);
    text_points(f, &r->sw, "F", "load", g);
    fputc('\n', f);
    int unstable = 0;
    for (int k = 0; k < r->sw.npts; k++)
        unstable += !r->sw.pts[k].stable;
    if (unstable)
        fprintf(f, "%d of %d loads leave the loop UNSTABLE (marked NO).\n", unstable, r->sw.npts);
    if (r->met) {
        fprintf(f, "Verdict: the margin stays at or above %.4g\xC2\xB0 up to %s: the output may "
                "stay inside the loop for this load.\n", g.pm_deg, si_format(hi, "F", a, sizeof a));
        return;
    }
    load_verdict(f, r, lo, hi, g);
    load_remedy(f, d, r, sets, nsets, g);
}
