/* figures_margin: the phase margin against a swept value or a load, with
 * the crossover frequency on the second axis, the goal line inside the
 * frame, the unstable stretches shaded, the smallest margin marked and each
 * crossing of the goal labelled clear of the goal line; and, for a node
 * outside the loop, the margin that no load moves beside the node's own
 * settling time. */
#include "loopwise/figures.h"

#include <math.h>
#include <string.h>

#include "loopwise/units.h"

#define TWO_PI 6.283185307179586

void figure_axis_label(FILE *s, const char *axis, const char *what, const char *unit)
{
    /* a value without a unit is labelled by its name alone, as the text's
     * tables head its column */
    char xl[160];
    if (*unit)
        snprintf(xl, sizeof xl, "%s (%s)", what, !strcmp(unit, "\xCE\xA9") ? "ohm" : unit);
    else
        snprintf(xl, sizeof xl, "%s", what);
    fprintf(s, "set %slabel ", axis);
    plot_quote(s, xl);
    fputs(" noenhanced\n", s);
}

/* A value with its SI prefix and unit, as the text's tables write it (a
 * value without a unit keeps the prefix: "10 m", as in the table). */
static const char *tic_text(double v, const char *unit, char *buf, size_t n)
{
    return si_format(v, unit, buf, n);
}

/* Tick labels that a reader can interpolate between: on a log axis 1-2-5
 * (or 1-1.5-2-3-5-7 over about a decade) per decade, every decade over
 * more than three; on a linear one steps of 1, 2 or 5 times a power of ten,
 * five to ten of them. Labels carry SI prefixes and the unit. */
void figure_value_tics(FILE *s, const char *axis, double lo, double hi, int lin,
                       const char *unit)
{
    static const double fine[] = { 1, 1.5, 2, 3, 5, 7 }, mid[] = { 1, 2, 5 }, one[] = { 1 };
    char a[32];
    int n = 0;
    fprintf(s, "set %stics (", axis);
    if (!lin) {
        double span = log10(hi / lo);
        const double *m = span <= 1.2 ? fine : span <= 3.5 ? mid : one;
        int nm = span <= 1.2 ? 6 : span <= 3.5 ? 3 : 1;
        int step = span > 8 ? 2 : 1;
        for (int e = (int)floor(log10(lo)); e <= (int)ceil(log10(hi)); e += step)
            for (int j = 0; j < nm; j++) {
                double v = m[j] * pow(10.0, e);
                if (v < lo * (1 - 1e-9) || v > hi * (1 + 1e-9))
                    continue;
                fprintf(s, "%s'%s' %.10g", n++ ? ", " : "", tic_text(v, unit, a, sizeof a), v);
            }
    } else {
        double raw = (hi - lo) / 8, p = pow(10.0, floor(log10(raw))), step = p;
        step = raw / p > 5 ? 10 * p : raw / p > 2 ? 5 * p : raw / p > 1 ? 2 * p : p;
        for (double v = step * ceil(lo / step); v <= hi * (1 + 1e-12) + 1e-300; v += step)
            fprintf(s, "%s'%s' %.10g", n++ ? ", " : "",
                    tic_text(fabs(v) < 1e-9 * step ? 0.0 : v, unit, a, sizeof a), v);
    }
    fputs(")\n", s);
}

/* The edge between points k and k+1: midway, in log or linear measure. */
static double edge(const sweep_result *sw, int k, int lin)
{
    double a = sw->pts[k].value, b = sw->pts[k + 1].value;
    return lin ? 0.5 * (a + b) : sqrt(a * b);
}

static void shade_unstable(FILE *s, const sweep_result *sw, int lin)
{
    for (int k = 0; k < sw->npts; k++) {
        if (sw->pts[k].stable)
            continue;
        int e = k;
        while (e + 1 < sw->npts && !sw->pts[e + 1].stable)
            e++;
        double x0 = k > 0 ? edge(sw, k - 1, lin) : sw->pts[0].value;
        double x1 = e + 1 < sw->npts ? edge(sw, e, lin) : sw->pts[sw->npts - 1].value;
        fprintf(s, "set object rect from %.10g, graph 0 to %.10g, graph 1 fc rgb '%s' "
                "fs solid 1.0 noborder behind\n", x0, x1, FIG_UNSTABLE_FILL);
        k = e;
    }
}

int figure_margin(const figure_opts *fo, const desc *d, const char *what, const char *unit,
                  const sweep_result *sw, design_goal g, int lin, lw_error *err)
{
    plot_job *job;
    int rc = plot_begin(fo->path, fo->width, fo->height, &job, err);
    if (rc)
        return rc;
    FILE *f = plot_data(job, "margin.dat", err);
    if (!f) {
        plot_abort(job);
        return LW_ENUMERIC;
    }
    double ylo = g.pm_deg, yhi = g.pm_deg;
    int unstable = 0;
    fputs("# value phase_margin_deg crossover_hz\n", f);
    for (int k = 0; k < sw->npts; k++) {
        const design_point *p = &sw->pts[k];
        fprintf(f, "%.10g ", p->value);
        unstable |= !p->stable;
        if (isnan(p->pm_deg)) {
            fputs("? ?\n", f);
            continue;
        }
        fprintf(f, "%.10g %.10g\n", p->pm_deg, p->crossover_hz);
        ylo = fmin(ylo, p->pm_deg);
        yhi = fmax(yhi, p->pm_deg);
    }
    /* the goal line stays inside the frame, with room for the labels, and
     * a band on top keeps the key clear of the data */
    double pad = fmax(0.12 * (yhi - ylo), 5.0);
    ylo = 10.0 * floor((ylo - pad) / 10.0);
    yhi = 10.0 * ceil((yhi + pad) / 10.0);
    yhi += 10.0 * ceil(0.0035 * (yhi - ylo) * (unstable ? 5 : 4));
    FILE *s = plot_script(job);
    char extra[200], a[32], text[200];
    snprintf(extra, sizeof extra, "varying %s", what);
    figure_style(s);
    figure_title(s, "Phase margin", d, extra);
    double x0 = sw->pts[0].value, x1 = sw->pts[sw->npts - 1].value;
    fprintf(s, "set datafile missing '?'\nset yrange [%.6g:%.6g]\n", ylo, yhi);
    /* a hair wider than the data, so a tick or mark at an end is not lost
     * to rounding */
    if (sw->npts > 1)
        fprintf(s, "set xrange [%.12g:%.12g]\n", x0 - 1e-9 * fabs(x0), x1 + 1e-9 * fabs(x1));
    if (!lin)
        fputs("set logscale x\n", s);
    if (sw->npts > 1)
        figure_value_tics(s, "x", x0, x1, lin, unit);
    fputs("set logscale y2\nset format y2 '%.0s%cHz'\nset ytics nomirror\nset y2tics\n", s);
    figure_axis_label(s, "x", what, unit);
    fputs("set ylabel 'phase margin (degrees)'\nset y2label 'crossover (Hz)'\n", s);
    if (sw->npts > 1)
        shade_unstable(s, sw, lin);
    /* each crossing of the goal: a mark on the goal line, its label in a
     * quarter the curve leaves free (falling: lower left or upper right;
     * rising: lower right or upper left), the one with room for the text */
    for (int k = 0; k < sw->ncross; k++) {
        const design_crossing *c = &sw->cross[k];
        double at = lin ? (c->value - x0) / (x1 - x0) : log(c->value / x0) / log(x1 / x0);
        int below = c->rises ? at < 0.6 : at > 0.4;
        /* the k-th label one line further out, so that neighbours do not overlap */
        char where[64];
        snprintf(where, sizeof where, "%s offset %d,%.1f", (c->rises == below) ? "left" : "right",
                 (c->rises == below) ? 1 : -1, (below ? -1.3 : 1.3) * (1 + k));
        snprintf(text, sizeof text, "%s through %.4g\xC2\xB0 at %s",
                 c->rises ? "rises" : "falls", g.pm_deg, si_format(c->value, unit, a, sizeof a));
        fprintf(s, "set object circle at %.10g, first %.6g size screen 0.006 fc rgb '%s' "
                "fs solid front\n", c->value, g.pm_deg, PLOT_ACCENT);
        /* program-made text (numbers and units): no user text to quote */
        fprintf(s, "set label \"%s\" at %.10g, first %.6g %s noenhanced tc rgb '%s' front\n",
                text, c->value, g.pm_deg, where, PLOT_ACCENT);
    }
    /* the smallest margin: ringed, and said in words below it (the curve is
     * higher on both sides of a smallest value), towards the middle */
    int w = sweep_smallest_margin(sw);
    if (w >= 0) {
        const design_point *p = &sw->pts[w];
        double at = lin ? (p->value - x0) / (x1 - x0) : log(p->value / x0) / log(x1 / x0);
        /* below the goal line, a crossing's label may stand where this one
         * would (the smallest margin next to the goal): one line lower per such label */
        int under = 0;
        for (int k = 0; k < sw->ncross; k++) {
            const design_crossing *c = &sw->cross[k];
            double ca = lin ? (c->value - x0) / (x1 - x0) : log(c->value / x0) / log(x1 / x0);
            int below = c->rises ? ca < 0.6 : ca > 0.4;
            under += below && fabs(ca - at) < 0.35 && fabs(p->pm_deg - g.pm_deg) < 0.08 * (yhi - ylo);
        }
        snprintf(text, sizeof text, "smallest margin %.1f\xC2\xB0 at %s", p->pm_deg,
                 si_format(p->value, unit, a, sizeof a));
        fprintf(s, "set label \"%s\" at graph %.6f, first %.6g %s offset %d,%.1f noenhanced "
                "tc rgb '%s' front\n", text, fmin(fmax(at, 0.001), 0.999), p->pm_deg,
                at > 0.5 ? "right" : "left", at > 0.5 ? -2 : 2, -1.4 - 1.3 * under, PLOT_INK);
        fprintf(s, "set label 900 '' at %.10g, first %.6g point pt 12 ps 3 lw 2 lc rgb '%s' "
                "front\n", p->value, p->pm_deg, PLOT_ACCENT);
    }
    fprintf(s, "set key top right\nplot '%s' using 1:2 axes x1y1 with "
            "linespoints ls 1 pt 7 ps 0.6 title 'phase margin', '' using 1:3 axes x1y2 with lines "
            "ls 2 title 'crossover (right axis)', %.10g axes x1y1 with lines ls 3 title "
            "'%s %.4g\xC2\xB0'",
            plot_path(job, "margin.dat"), g.pm_deg, design_goal_word(g), g.pm_deg);
    if (unstable)
        fprintf(s, ", 1/0 with boxes fs solid 1.0 noborder fc rgb '%s' title 'unstable'",
                FIG_UNSTABLE_FILL);
    fputs("\n", s);
    return plot_finish(job, fo->keep_dir, err);
}

int figure_load_outside(const figure_opts *fo, const desc *d, const load_result *r, double lo,
                        double hi, design_goal g, lw_error *err)
{
    plot_job *job;
    int rc = plot_begin(fo->path, fo->width, fo->height, &job, err);
    if (rc)
        return rc;
    FILE *f = plot_data(job, "settle.dat", err);
    if (!f) {
        plot_abort(job);
        return LW_ENUMERIC;
    }
    /* first-order settling of the node to 1% and 0.1%: t = R C ln(1/error) */
    int settles = isfinite(r->r_seen);
    fputs("# load_f settle_1pct_s settle_0p1pct_s\n", f);
    for (int k = 0; k <= 40; k++) {
        double cl = lo * pow(hi / lo, k / 40.0), tau = r->r_seen * (r->c_node + cl);
        if (settles)
            fprintf(f, "%.10g %.10g %.10g\n", cl, tau * log(100.0), tau * log(1000.0));
        else
            fprintf(f, "%.10g ? ?\n", cl);
    }
    FILE *s = plot_script(job);
    const char *node = d->nodes[r->node].name;
    char extra[200], text[200];
    snprintf(extra, sizeof extra, "load at %s, outside the loop", node);
    figure_style(s);
    figure_title(s, "Phase margin and settling", d, extra);
    double pm = r->nominal.pm_deg;
    double ylo = fmin(isnan(pm) ? g.pm_deg : pm, g.pm_deg), yhi = fmax(isnan(pm) ? g.pm_deg : pm, g.pm_deg);
    double pad = fmax(0.3 * (yhi - ylo), 10.0);
    fprintf(s, "set datafile missing '?'\nset logscale x\nset xrange [%.12g:%.12g]\n"
            "set yrange [%.6g:%.6g]\nset ytics nomirror\n", lo * (1 - 1e-9), hi * (1 + 1e-9),
            10.0 * floor((ylo - pad) / 10.0), 10.0 * ceil((yhi + pad) / 10.0));
    figure_value_tics(s, "x", lo, hi, 0, "F");
    char what[DESC_MAX_NAME + 16];
    snprintf(what, sizeof what, "load at %s", node);
    figure_axis_label(s, "x", what, "F");
    fputs("set ylabel 'phase margin of the loop (degrees)'\n", s);
    if (settles)
        fputs("set logscale y2\nset format y2 '%.0s%cs'\nset y2tics\n"
              "set y2label 'settling time of the node (first order)'\n", s);
    if (isnan(pm))
        snprintf(text, sizeof text, "outside the loop: no load moves it; the loop has no "
                 "crossover");
    else
        snprintf(text, sizeof text, "outside the loop: the margin, %.1f\xC2\xB0, is the same at "
                 "every load", pm);
    fprintf(s, "set label \"%s\" at graph 0.03, graph 0.94 left tc rgb '%s'\n", text, PLOT_INK);
    if (!settles) {
        fputs("set label ", s);
        snprintf(text, sizeof text, "no resistance to ground at %s: a load there integrates, "
                 "it does not settle", node);
        plot_quote(s, text);
        fprintf(s, " at graph 0.03, graph 0.88 left noenhanced tc rgb '%s'\n", PLOT_ACCENT);
    }
    char pmv[32];
    snprintf(pmv, sizeof pmv, isnan(pm) ? "1/0" : "%.10g", pm);
    fprintf(s, "set key bottom right\nplot %s axes x1y1 with lines ls 1 title 'phase margin', "
            "%.10g axes x1y1 with lines ls 3 title '%s %.4g\xC2\xB0'", pmv, g.pm_deg,
            design_goal_word(g), g.pm_deg);
    if (settles)
        fprintf(s, ", '%s' using 1:2 axes x1y2 with lines ls 2 title 'settling to 1%%', '' "
                "using 1:3 axes x1y2 with lines ls 4 title 'settling to 0.1%%'",
                plot_path(job, "settle.dat"));
    fputs("\n", s);
    return plot_finish(job, fo->keep_dir, err);
}
