/* report_across: outputs of size --over, size with two --tune, and the map. */
#include "loopwise/report_across.h"

#include <math.h>
#include <string.h>

#include "loopwise/report.h"
#include "loopwise/units.h"

enum { SHOWN_CORNERS = 8 };

/* Params whose spread (a corner range, or a distribution) a --set pins:
 * they keep the value given and are left out of the combinations or draws. */
static int pinned(const desc_param *p, int ranges)
{
    int spread = ranges ? p->spread.has_range : p->spread.dist != DIST_NONE;
    return spread && p->override != DESC_NO_OVERRIDE;
}

void report_pinned_text(FILE *f, const desc *d, int ranges)
{
    int n = 0;
    char a[32];
    for (int k = 0; k < d->nparams; k++) {
        const desc_param *p = &d->params[k];
        if (!pinned(p, ranges))
            continue;
        fprintf(f, "%s %s = %s", n++ ? "," : ranges ? "  pinned by --set, not combined:"
                                                   : "  pinned by --set, not drawn:", p->name,
                si_format(p->value, report_unit_of(p->unit), a, sizeof a));
    }
    if (n)
        fputc('\n', f);
}

void report_held_text(FILE *f, const desc *d, int skip)
{
    int n = 0;
    char a[32];
    for (int k = 0; k < d->nparams; k++) {
        const desc_param *p = &d->params[k];
        if (k == skip || !p->spread.has_range || p->spread.dist != DIST_NONE)
            continue;
        fprintf(f, "%s %s = %s", n++ ? "," : "  held at their nominal value (a corner range, "
                "no distribution):", p->name,
                si_format(p->value, report_unit_of(p->unit), a, sizeof a));
    }
    if (n)
        fputc('\n', f);
}

void report_pinned_json(FILE *f, const desc *d, int ranges)
{
    int n = 0;
    fputs("\"pinned\": [", f);
    for (int k = 0; k < d->nparams; k++)
        if (pinned(&d->params[k], ranges)) {
            fputs(n++ ? ", " : "", f);
            json_string(f, d->params[k].name);
        }
    fputc(']', f);
}


static void margins_lines(FILE *f, const design_point *p, const char *where)
{
    char a[32];
    if (isnan(p->pm_deg))
        fprintf(f, "  phase margin    undefined (no crossover)%s\n", where);
    else
        fprintf(f, "  phase margin    %.2f\xC2\xB0 at crossover %s%s\n", p->pm_deg,
                si_format(p->crossover_hz, "Hz", a, sizeof a), where);
    if (isnan(p->gm_db))
        fprintf(f, "  gain margin     unbounded: the phase never reaches -180\xC2\xB0\n");
    else
        fprintf(f, "  gain margin     %.2f dB\n", units_no_neg_zero(p->gm_db, 2));
    if (!p->stable)
        fprintf(f, "  the closed loop is UNSTABLE there\n");
}

/* "temp = 233, ib = 11.5 µA" for one corner or sample. */
static void values_text(FILE *f, const desc *d, const int *params, int np, const double *v)
{
    char a[32];
    for (int j = 0; j < np; j++) {
        const desc_param *q = &d->params[params[j]];
        fprintf(f, "%s%s = %s", j ? ", " : "", q->name,
                si_format(v[j], report_unit_of(q->unit), a, sizeof a));
    }
}

static void values_json(FILE *f, const desc *d, const int *params, int np, const double *v)
{
    fputc('{', f);
    for (int j = 0; j < np; j++) {
        fputs(j ? ", " : "", f);
        json_string(f, d->params[params[j]].name);
        fputs(": ", f);
        json_number(f, v[j]);
    }
    fputc('}', f);
}

/* The area of a capacitor value at a density (F per square micrometre), for
 * a value shown in farads; NAN otherwise. */
static double area_um2(const desc *d, desc_target t, double value, double density)
{
    return desc_target_shown_unit(d, t) == UNIT_F && density > 0 ? value / density : NAN;
}

static void area_line(FILE *f, double um2, double density)
{
    char c[32];
    if (!isnan(um2))
        fprintf(f, "  area            %.4g \xC2\xB5m\xC2\xB2 (about %.3g \xC2\xB5m square) at "
                "%s/\xC2\xB5m\xC2\xB2\n", um2, sqrt(um2), si_format(density, "F", c, sizeof c));
}

static void pm_cell(char *buf, size_t n, const design_point *p)
{
    snprintf(buf, n, isnan(p->pm_deg) ? "none" : "%.2f\xC2\xB0", p->pm_deg);
}

/* The tuned param's own spread, left out because it is the value sized. */
static void tuned_spread(FILE *f, const desc *d, desc_target t, const char *name, int ranges)
{
    if (t.kind != TARGET_PARAM)
        return;
    const desc_spread *sp = &d->params[t.index].spread;
    if (ranges ? sp->has_range : sp->dist != DIST_NONE)
        fprintf(f, "  %s is the value sized: its own %s is not %s\n", name,
                ranges ? "corner range" : "distribution", ranges ? "combined" : "drawn");
}

void report_size_corners(FILE *f, const desc *d, const char *name, desc_target t,
                         const size_corners_result *r, design_goal g, const char *again,
                         double density, out_format fmt)
{
    double um2 = area_um2(d, t, r->value, density);
    const char *unit = report_unit_symbol(d, t);
    const corner_result *cr = &r->corners;
    int w = r->limiting;
    const design_point *p = &cr->pts[w];
    if (fmt == OUT_JSON) {
        fputs("{\"tune\": ", f);
        json_string(f, name);
        fprintf(f, ", \"over\": \"corners\", \"levels\": %d, \"value\": ", cr->levels);
        json_number(f, r->value);
        fputs(", ", f);
        report_point_fields(f, p);
        fprintf(f, ", \"met\": %s, \"met_at_low_end\": %s,\n \"limiting_corner\": ",
                r->met ? "true" : "false", r->met && r->at_lo ? "true" : "false");
        values_json(f, d, cr->params, cr->nparams, cr->values + w * cr->nparams);
        fprintf(f, ", \"limiting_index\": %d, \"analyses\": %d, \"area_um2\": ", w + 1,
                r->analyses);
        json_number(f, um2);
        fputs(",\n \"corners\": [", f);
        for (int k = 0; k < cr->ncorners; k++) {
            int c = cr->order[k];
            fprintf(f, "%s\n  {\"index\": %d, \"values\": ", k ? "," : "", c + 1);
            values_json(f, d, cr->params, cr->nparams, cr->values + c * cr->nparams);
            fputs(", ", f);
            report_point_fields(f, &cr->pts[c]);
            fputc('}', f);
        }
        fputs("],\n \"reproduce\": ", f);
        json_string(f, again);
        fputs("}\n", f);
        return;
    }
    char a[32], b[32], gt[160];
    fprintf(f, "loopwise size: %s  tune %s over %d corners, %s\n", d->path, name, cr->ncorners,
            report_goal_text(g, gt, sizeof gt));
    fprintf(f, "  searched %s to %s (log grid of %d points, each corner solved to 1e-7): "
            "%d analyses\n", si_format(r->lo, unit, a, sizeof a),
            si_format(r->hi, unit, b, sizeof b), SIZE_OVER_GRID, r->analyses);
    report_break_note(f, d, "  ");
    report_pinned_text(f, d, 1);
    tuned_spread(f, d, t, name, 1);
    fputc('\n', f);
    if (r->met && r->at_lo)
        fprintf(f, "  answer          %s = %s, the lower end of the range: every corner meets "
                "the %s there\n", name, si_format_digits(r->value, unit, 5, a, sizeof a),
                design_goal_word(g));
    else if (r->met)
        fprintf(f, "  answer          %s = %s: the smallest value at which every corner meets "
                "the %s\n", name, si_format_digits(r->value, unit, 5, a, sizeof a),
                design_goal_word(g));
    else
        fprintf(f, "  TARGET NOT REACHABLE in the range: the worst corner comes nearest at "
                "%s = %s\n", name, si_format_digits(r->value, unit, 5, a, sizeof a));
    fprintf(f, "  %s corner #%d: ", r->met ? "limiting" : "worst there,", w + 1);
    values_text(f, d, cr->params, cr->nparams, cr->values + w * cr->nparams);
    fputc('\n', f);
    /* the best worst case is often where two corners cross: name the other */
    if (!r->met && cr->ncorners > 1) {
        int c2 = cr->order[0] != w ? cr->order[0] : cr->order[1];
        double d1 = design_goal_distance(p, g), d2 = design_goal_distance(&cr->pts[c2], g);
        if (c2 != w && fabs(d2 - d1) < 0.01)
            fprintf(f, "  and corner #%d, as near: the two limit together there\n", c2 + 1);
    }
    margins_lines(f, p, " (at that corner)");
    area_line(f, um2, density);
    fprintf(f, "  search          at the file's value %s = %s the worst corner is #%d; the "
            "corner solved for changed %d time%s\n", name,
            si_format(r->nominal_value, unit, a, sizeof a), r->nominal_worst + 1, r->switches,
            r->switches == 1 ? "" : "s");
    fprintf(f, "\n  corners at %s = %s, worst first:\n  %-4s", name,
            si_format(r->value, unit, a, sizeof a), "#");
    for (int j = 0; j < cr->nparams; j++)
        fprintf(f, " %-11s", d->params[cr->params[j]].name);
    fprintf(f, " %-13s %-11s %-12s %s\n", "phase margin", "crossover", "gain margin", "stable");
    for (int k = 0; k < cr->ncorners && k < SHOWN_CORNERS; k++) {
        int c = cr->order[k];
        const design_point *q = &cr->pts[c];
        char pm[16], gm[16];
        fprintf(f, "  %-4d", c + 1);
        for (int j = 0; j < cr->nparams; j++) {
            const desc_param *pp = &d->params[cr->params[j]];
            fputc(' ', f);
            report_pad(f, si_format(cr->values[c * cr->nparams + j], report_unit_of(pp->unit), a,
                                    sizeof a), 11);
        }
        pm_cell(pm, sizeof pm, q);
        snprintf(gm, sizeof gm, isnan(q->gm_db) ? "unbounded" : "%.2f dB", units_no_neg_zero(q->gm_db, 2));
        fprintf(f, " %-14s %-11s %-12s %s%s\n", pm,
                isnan(q->crossover_hz) ? "none" : si_format(q->crossover_hz, "Hz", b, sizeof b),
                gm, q->stable ? "yes" : "NO", design_meets(q, g) ? "" : report_below_mark(g));
    }
    if (cr->ncorners > SHOWN_CORNERS)
        fprintf(f, "  ... and %d more corners, each with a larger margin\n",
                cr->ncorners - SHOWN_CORNERS);
    fprintf(f, "  reproduce it: %s\n", again);
    if (r->met && r->at_lo)
        fprintf(f, "\nVerdict: every corner already meets the %s at the lower end of the range, "
                "%s = %s: the smallest value that meets it lies below; widen --within (e.g. "
                "--within %s..%s).\n", design_goal_word(g), name, si_format(r->value, unit, a,
                sizeof a), si_word(r->lo / 100, b, sizeof b), si_word(r->hi, gt, sizeof gt));
    else if (r->met)
        fprintf(f, "\nVerdict: %s = %s meets the %s at every corner; corner #%d limits there.\n",
                name, si_format(r->value, unit, a, sizeof a), design_goal_word(g), w + 1);
    else if (isnan(p->pm_deg))
        fprintf(f, "\nVerdict: no value in the range meets the %s at every corner; widen "
                "--within or change another value.\n", design_goal_word(g));
    else
        fprintf(f, "\nVerdict: no value in the range meets the %s at every corner; the best "
                "worst case is %.2f\xC2\xB0 (corner #%d) at %s = %s; widen --within or change "
                "another value.\n", design_goal_word(g), p->pm_deg, w + 1, name,
                si_format(r->value, unit, a, sizeof a));
}

void report_size_mc(FILE *f, const desc *d, const char *name, desc_target t,
                    const size_mc_result *r, design_goal g, double yield, uint64_t seed,
                    const char *again, double density, out_format fmt)
{
    double um2 = area_um2(d, t, r->value, density);
    const char *unit = report_unit_symbol(d, t);
    const mc_result *m = &r->mc;
    int lim = r->limiting;
    if (fmt == OUT_JSON) {
        fputs("{\"tune\": ", f);
        json_string(f, name);
        fputs(", \"over\": \"montecarlo\", \"value\": ", f);
        json_number(f, r->value);
        fprintf(f, ", \"met\": %s, \"samples\": %d, \"seed\": %llu, \"yield_target\": ",
                r->met ? "true" : "false", m->nsamples, (unsigned long long)seed);
        json_number(f, yield);
        fprintf(f, ", \"passes\": %d, \"passes_needed\": %d, \"yield\": ", m->passes, r->need);
        json_number(f, m->yield);
        fputs(", \"yield_lower95\": ", f);
        json_number(f, m->lower95);
        fputs(", \"value_below\": ", f);
        json_number(f, r->below);
        fprintf(f, ", \"runs\": %d, \"area_um2\": ", r->runs);
        json_number(f, um2);
        fputs(",\n \"limiting_corner\": ", f);
        if (lim >= 0) {
            values_json(f, d, m->params, m->nparams, m->values + (size_t)lim * (size_t)m->nparams);
            fprintf(f, ", \"limiting_sample\": %d, ", lim + 1);
            report_point_fields(f, &m->pts[lim]);
            fputs(", \"reproduce\": ", f);
            json_string(f, again);
        } else {
            fputs("null, \"limiting_sample\": null, \"reproduce\": null", f);
        }
        fputs("}\n", f);
        return;
    }
    char a[32], b[32], gt[160];
    fprintf(f, "loopwise size: %s  tune %s for a yield of %.4g%% (one-sided 95%% lower bound), "
            "%d samples, seed %llu, %s\n", d->path, name, 100 * yield, m->nsamples,
            (unsigned long long)seed, report_goal_text(g, gt, sizeof gt));
    fprintf(f, "  searched %s to %s (log grid of %d values, then bisection to 1e-4, the same "
            "draws at every value): %d Monte Carlo runs\n", si_format(r->lo, unit, a, sizeof a),
            si_format(r->hi, unit, b, sizeof b), SIZE_MC_GRID, r->runs);
    report_break_note(f, d, "  ");
    report_pinned_text(f, d, 0);
    report_held_text(f, d, t.kind == TARGET_PARAM ? t.index : -1);
    tuned_spread(f, d, t, name, 0);
    fputc('\n', f);
    if (r->met)
        fprintf(f, "  answer          %s = %s\n", name,
                si_format_digits(r->value, unit, 5, a, sizeof a));
    else
        fprintf(f, "  TARGET NOT REACHABLE in the range: the most passes are at %s = %s\n",
                name, si_format(r->value, unit, a, sizeof a));
    fprintf(f, "  yield there     %d of %d samples pass: %.3f%%; one-sided 95%% lower bound "
            "%.3f%% (the target takes %d passes)\n", m->passes, m->nsamples, 100 * m->yield,
            100 * m->lower95, r->need);
    area_line(f, um2, density);
    if (!isnan(r->below))
        fprintf(f, "  just below      %s = %s has fewer than %d passes\n", name,
                si_format_digits(r->below, unit, 5, a, sizeof a), r->need);
    if (lim >= 0) {
        fprintf(f, "  limiting sample #%d: ", lim + 1);
        values_text(f, d, m->params, m->nparams, m->values + (size_t)lim * (size_t)m->nparams);
        fputc('\n', f);
        margins_lines(f, &m->pts[lim], " (that sample)");
        fprintf(f, "  reproduce it: %s\n", again);
    }
    if (r->met)
        fprintf(f, "\nVerdict: %s = %s reaches the yield target.\n", name,
                si_format(r->value, unit, a, sizeof a));
    else
        fprintf(f, "\nVerdict: no value in the range reaches the yield target; widen --within "
                "or change another value.\n");
}

static void range_text(char *buf, size_t n, double lo, double hi, const char *unit)
{
    char a[32], b[32];
    if (isnan(lo))
        snprintf(buf, n, "none");
    else
        snprintf(buf, n, "%s to %s", si_format(lo, unit, a, sizeof a),
                 si_format(hi, unit, b, sizeof b));
}

void report_size_pair(FILE *f, const desc *d, const char *const names[2],
                      const desc_target t[2], const size_pair_result *r, design_goal g,
                      double density, out_format fmt)
{
    double um2 = area_um2(d, t[0], r->a, density);
    const char *ua = report_unit_symbol(d, t[0]), *ub = report_unit_symbol(d, t[1]);
    if (fmt == OUT_JSON) {
        fputs("{\"tune\": [", f);
        json_string(f, names[0]);
        fputs(", ", f);
        json_string(f, names[1]);
        fputs("], \"values\": [", f);
        json_number(f, r->a);
        fputs(", ", f);
        json_number(f, r->b);
        fputs("], ", f);
        report_point_fields(f, &r->at);
        fprintf(f, ", \"met\": %s, \"flat_within_deg\": %g, \"b_flat\": [", r->met ? "true"
                                                                            : "false",
                SIZE_PAIR_FLAT_DEG);
        json_number(f, r->flat_lo);
        fputs(", ", f);
        json_number(f, r->flat_hi);
        fputs("], \"more_a\": ", f);
        json_number(f, r->more_a);
        fputs(", \"b_met_at_more_a\": ", f);
        if (isnan(r->more_lo)) {
            fputs("null", f);
        } else {
            fputc('[', f);
            json_number(f, r->more_lo);
            fputs(", ", f);
            json_number(f, r->more_hi);
            fputc(']', f);
        }
        fprintf(f, ", \"analyses\": %d, \"area_um2\": ", r->analyses);
        json_number(f, um2);
        fputs("}\n", f);
        return;
    }
    char a[32], b[32], c[32], e[32], gt[160], rb[96];
    fprintf(f, "loopwise size: %s  tune %s (the value that costs area) and %s together, %s\n",
            d->path, names[0], names[1], report_goal_text(g, gt, sizeof gt));
    fprintf(f, "  searched %s %s to %s (log grid of %d values, refined to 1e-5) and %s %s to "
            "%s (log grid of %d values, best refined): %d analyses\n", names[0],
            si_format(r->alo, ua, a, sizeof a), si_format(r->ahi, ua, b, sizeof b),
            SIZE_PAIR_GRID_A, names[1], si_format(r->blo, ub, c, sizeof c),
            si_format(r->bhi, ub, e, sizeof e), SIZE_PAIR_GRID_B, r->analyses);
    report_break_note(f, d, "  ");
    fputc('\n', f);
    if (r->met)
        fprintf(f, "  answer          %s = %s, %s = %s (%s chosen for the largest margin at "
                "this %s)\n", names[0], si_format_digits(r->a, ua, 5, a, sizeof a), names[1],
                si_format_digits(r->b, ub, 4, b, sizeof b), names[1], names[0]);
    else
        fprintf(f, "  TARGET NOT REACHABLE in the ranges: the best is %s = %s, %s = %s\n",
                names[0], si_format(r->a, ua, a, sizeof a), names[1],
                si_format(r->b, ub, b, sizeof b));
    margins_lines(f, &r->at, "");
    area_line(f, um2, density);
    range_text(rb, sizeof rb, r->flat_lo, r->flat_hi, ub);
    fprintf(f, "  flatness        at %s = %s the margin stays within %g\xC2\xB0 of its best "
            "for %s from %s\n", names[0], si_format(r->a, ua, a, sizeof a), SIZE_PAIR_FLAT_DEG,
            names[1], rb);
    if (!isnan(r->more_a)) {
        range_text(rb, sizeof rb, r->more_lo, r->more_hi, ub);
        fprintf(f, "  with %.0f%% more   %s = %s meets the %s for %s from %s\n",
                100 * (SIZE_PAIR_MORE_A - 1), names[0], si_format(r->more_a, ua, a, sizeof a),
                design_goal_word(g), names[1], rb);
    }
    if (r->met)
        fprintf(f, "\nVerdict: the target is met; at the smallest %s the margin peaks at the "
                "target, so %s must sit at %s there: a little more %s buys a range of %s.\n",
                names[0], names[1], si_format(r->b, ub, b, sizeof b), names[0], names[1]);
    else
        fprintf(f, "\nVerdict: no pair in the ranges meets the target; widen --within or "
                "change another value.\n");
}

/* ---- the two-value map --------------------------------------------------- */

/* A CSV number; a non-finite one is an empty field (as JSON's null). */
static void csv_cell(FILE *f, double v, const char *sep)
{
    if (isfinite(v))
        fprintf(f, "%.17g", v);
    fputs(sep, f);
}

static void map_point_json(FILE *f, const map_result *r, int i, int j)
{
    const design_point *p = &r->pts[i * r->n + j];
    fputs("{\"values\": [", f);
    json_number(f, r->va[i]);
    fputs(", ", f);
    json_number(f, r->vb[j]);
    fputs("], ", f);
    report_point_fields(f, p);
    fputs(", \"dominant_pole_hz\": ", f);
    json_number(f, p->p1_hz);
    fputs(", \"second_pole_hz\": ", f);
    json_number(f, p->p2_hz);
    fputc('}', f);
}

enum { MAP_TEXT_EDGES = 60 };

void report_map(FILE *f, const desc *d, const char *const names[2], const desc_target t[2],
                const map_result *r, design_goal g, out_format fmt)
{
    int n = r->n;
    const char *ua = report_unit_symbol(d, t[0]), *ub = report_unit_symbol(d, t[1]);
    if (fmt == OUT_CSV) {
        fprintf(f, "%s,%s,dc_loop_gain,crossover_hz,phase_margin_deg,gain_margin_db,"
                "dominant_pole_hz,second_pole_hz,stable\n", names[0], names[1]);
        for (int i = 0; i < n; i++)
            for (int j = 0; j < n; j++) {
                const design_point *p = &r->pts[i * n + j];
                csv_cell(f, r->va[i], ",");
                csv_cell(f, r->vb[j], ",");
                csv_cell(f, p->dc, ",");
                csv_cell(f, p->crossover_hz, ",");
                csv_cell(f, p->pm_deg, ",");
                csv_cell(f, p->gm_db, ",");
                csv_cell(f, p->p1_hz, ",");
                csv_cell(f, p->p2_hz, ",");
                fprintf(f, "%s\n", p->stable ? "true" : "false");
            }
        return;
    }
    if (fmt == OUT_JSON) {
        fputs("{\"vary\": [", f);
        json_string(f, names[0]);
        fputs(", ", f);
        json_string(f, names[1]);
        fputs("],\n \"target_pm_deg\": ", f);
        json_number(f, g.pm_deg);
        fputs(",\n \"points\": [", f);
        for (int i = 0; i < n; i++)
            for (int j = 0; j < n; j++) {
                fputs(i + j ? ",\n  " : "\n  ", f);
                map_point_json(f, r, i, j);
            }
        fputs("],\n \"boundary\": [", f);
        for (int k = 0; k < r->nedge; k++) {
            fputs(k ? ",\n  " : "\n  ", f);
            fputs("{\"values\": [", f);
            json_number(f, r->edge[k].a);
            fputs(", ", f);
            json_number(f, r->edge[k].b);
            fprintf(f, "], \"direction\": \"%s\"}", r->edge[k].rises ? "rises" : "falls");
        }
        fprintf(f, "],\n \"met\": %s}\n", r->missed ? "false" : "true");
        return;
    }
    char a[32], b[32], gt[160];
    fprintf(f, "loopwise sweep: %s  map of %s (rows) against %s (columns), %d x %d points, %s\n",
            d->path, names[0], names[1], n, n, report_goal_text(g, gt, sizeof gt));
    report_break_note(f, d, "  ");
    fputc('\n', f);
    fprintf(f, "  phase margin in degrees (* below the %s, NO unstable, - no crossover)\n",
            design_goal_word(g));
    fputs("  ", f);
    snprintf(gt, sizeof gt, "%s \\ %s", names[0], names[1]);
    report_pad(f, gt, 12);
    for (int j = 0; j < n; j++) {
        si_format(r->vb[j], ub, b, sizeof b);
        fputc(' ', f);
        report_pad(f, b, 8);
    }
    fputc('\n', f);
    for (int i = 0; i < n; i++) {
        fputs("  ", f);
        report_pad(f, si_format(r->va[i], ua, a, sizeof a), 12);
        for (int j = 0; j < n; j++) {
            const design_point *p = &r->pts[i * n + j];
            char c[16];
            if (!p->stable)
                snprintf(c, sizeof c, "NO");
            else if (isnan(p->pm_deg))
                snprintf(c, sizeof c, "-");
            else
                snprintf(c, sizeof c, "%.1f%s", p->pm_deg, design_meets(p, g) ? "" : "*");
            fprintf(f, " %-8s", c);
        }
        fputc('\n', f);
    }
    fputc('\n', f);
    int across = -1; /* a row meeting the goal throughout beside one missing it throughout */
    for (int i = 1; i < n && r->nedge == 0 && across < 0; i++) {
        int met0 = 0, met1 = 0;
        for (int j = 0; j < n; j++) {
            met0 += design_meets(&r->pts[(i - 1) * n + j], g);
            met1 += design_meets(&r->pts[i * n + j], g);
        }
        if ((met0 == n && met1 == 0) || (met0 == 0 && met1 == n))
            across = i;
    }
    if (across > 0)
        fprintf(f, "The phase margin does not cross %.4g\xC2\xB0 along %s at any %s: whole rows "
                "meet the goal and whole rows miss it, so the boundary runs across %s (between "
                "%s = %s and %s); give %s as the second --vary to trace it.\n", g.pm_deg,
                names[1], names[0], names[0], names[0],
                si_format(r->va[across - 1], ua, a, sizeof a), si_format(r->va[across], ua, b,
                                                                          sizeof b), names[0]);
    else if (r->nedge == 0)
        fprintf(f, "The phase margin does not cross %.4g\xC2\xB0 along %s at any %s: it is %s "
                "throughout.\n", g.pm_deg, names[1], names[0],
                r->missed ? "below the goal (or undefined) somewhere" : "at or above the goal");
    else
        fprintf(f, "The %.4g\xC2\xB0 boundary, refined along %s for each %s (met on the side "
                "named):\n", g.pm_deg, names[1], names[0]);
    for (int k = 0; k < r->nedge && k < MAP_TEXT_EDGES; k++)
        fprintf(f, "  %s = %-10s %s = %-10s met %s\n", names[0],
                si_format(r->edge[k].a, ua, a, sizeof a), names[1],
                si_format(r->edge[k].b, ub, b, sizeof b), r->edge[k].rises ? "above" : "below");
    if (r->nedge > MAP_TEXT_EDGES)
        fprintf(f, "  ... and %d more points (--json lists them all)\n", r->nedge - MAP_TEXT_EDGES);
    int w = -1, unstable = 0;
    for (int k = 0; k < n * n; k++) {
        unstable += !r->pts[k].stable;
        if (!isnan(r->pts[k].pm_deg) && (w < 0 || r->pts[k].pm_deg < r->pts[w].pm_deg))
            w = k;
    }
    if (w >= 0)
        fprintf(f, "The smallest phase margin is %.2f\xC2\xB0, at %s = %s, %s = %s.\n",
                r->pts[w].pm_deg, names[0], si_format(r->va[w / n], ua, a, sizeof a), names[1],
                si_format(r->vb[w % n], ub, b, sizeof b));
    if (unstable)
        fprintf(f, "%d of %d points are unstable (marked NO).\n", unstable, n * n);
}
