/* figures_bode: the Bode picture of the loop gain T. Three panels share the
 * frequency axis: the magnitude, the phase, and a thin strip with the poles
 * and zeros of T at their natural frequencies |s|/2π. Each margin is drawn
 * as the distance it measures, a dimension line with bar ends: the gain
 * margin from |T| up to 0 dB where the phase is -180°, the phase margin from
 * -180° to the phase where |T| = 1, each labelled in words. */
#include "loopwise/figures.h"

#include <math.h>
#include <string.h>

#include "loopwise/units.h"

#define TWO_PI 6.283185307179586
enum { BODE_POINTS = 600, BODE_MAX_MARKS = 4 };

/* Panel edges in screen fractions: magnitude, phase, strip. */
#define BODE_LEFT 0.09
#define BODE_RIGHT 0.97

typedef struct span {
    double lo, hi;
} span;

static int bode_data(plot_job *job, const char *name, lgain *lg, const lg_tf *tf, double lo,
                     double hi, span *db, span *ph, lw_error *err)
{
    FILE *f = plot_data(job, name, err);
    if (!f)
        return LW_ENUMERIC;
    for (int k = 0; k < BODE_POINTS; k++) {
        double hz = pow(10.0, lo + (hi - lo) * k / (BODE_POINTS - 1)), mag;
        double p = margin_phase(lg, tf, hz, &mag, NULL);
        if (mag > 0 && isfinite(mag)) {
            double v = 20.0 * log10(mag);
            fprintf(f, "%.10g %.10g %.10g\n", hz, v, p);
            db->lo = fmin(db->lo, v);
            db->hi = fmax(db->hi, v);
            ph->lo = fmin(ph->lo, p);
            ph->hi = fmax(ph->hi, p);
        }
    }
    return LW_OK;
}

/* Poles of T (those it can see) on the upper row of the strip, zeros on the
 * lower; a conjugate pair is one symbol. *kinds gets the kinds present:
 * bit 0 poles, 1 zeros, 2 right-half-plane zeros. */
static int strip_data(plot_job *job, const check_result *r, lw_error *err, int *kinds)
{
    FILE *f = plot_data(job, "strip.dat", err);
    if (!f)
        return LW_ENUMERIC;
    const lg_tf *tf = &r->tf;
    *kinds = 0;
    fputs("# hz row kind(0 pole, 1 zero, 2 right-half-plane zero)\n", f);
    for (int k = 0; k < tf->npoles; k++) {
        double complex p = tf->poles[k];
        if (tf->hidden[k] || p == 0 || cimag(p) > 0)
            continue;
        fprintf(f, "%.10g 0.7 0\n", cabs(p) / TWO_PI);
        *kinds |= 1;
    }
    for (int k = 0; k < tf->nzeros; k++) {
        double complex z = tf->zeros[k];
        if (z == 0 || cimag(z) > 0)
            continue;
        int rhp = creal(z) > 0;
        fprintf(f, "%.10g 0.3 %d\n", cabs(z) / TWO_PI, rhp ? 2 : 1);
        *kinds |= rhp ? 4 : 2;
    }
    fputs("1 -1 9\n", f); /* keeps the file non-empty for gnuplot; never drawn */
    return LW_OK;
}

/* Poles of T that coincide (within 1e-6, a repeated pole) share one symbol:
 * the count is written beside it. */
static void strip_repeats(FILE *s, const lg_tf *tf)
{
    for (int k = 0; k < tf->npoles; k++) {
        double complex p = tf->poles[k];
        if (tf->hidden[k] || p == 0 || cimag(p) > 0)
            continue;
        int n = 1, first = 1;
        for (int j = 0; j < tf->npoles; j++) {
            if (j == k || tf->hidden[j] || cimag(tf->poles[j]) > 0 ||
                cabs(tf->poles[j] - p) > 1e-6 * cabs(p))
                continue;
            n++;
            first &= j > k;
        }
        if (n > 1 && first)
            fprintf(s, "set label '%d' at %.10g, 0.7 offset 1.2,0.3 font ',9' tc rgb '%s'\n", n,
                    cabs(p) / TWO_PI, PLOT_INK);
    }
}

/* The panel a mark is drawn in: its axes (x in decades), and T to find
 * where the curve runs (column 0: |T| in dB, 1: the phase). */
typedef struct panel {
    double lo, hi, ylo, yhi;
    const check_result *r;
    int phase;
} panel;

static double curve_at(const panel *p, double hz)
{
    double mag, ph = margin_phase(p->r->lg, &p->r->tf, hz, &mag, NULL);
    return p->phase ? ph : 20.0 * log10(mag);
}

/* 1 when the net curve stays clear of a label of n characters at height y
 * written from hz towards the right (dir 1) or the left (dir -1): about a
 * character per 1/110 of the axis, half a line and a little per 1/28 of the
 * panel. */
static int clear_of_curve(const panel *p, double hz, double y, int n, int dir)
{
    double ch = (p->hi - p->lo) / 110.0, tall = (p->yhi - p->ylo) / 28.0;
    for (int k = 0; k <= 12; k++) {
        double x = log10(hz) + dir * ch * (1.5 + (n + 1) * k / 12.0);
        if (x < p->lo || x > p->hi)
            return 0;
        double v = curve_at(p, pow(10.0, x));
        if (isfinite(v) && fabs(v - y) < tall)
            return 0;
    }
    return 1;
}

/* A dimension line from (hz, y0) to (hz, y1) with bar ends, and its label
 * beside it at mid-height, on the first side where the curve leaves room
 * (the preferred one first); with no room on either side, the label goes
 * to the corner the curve does not reach (|T| and the phase fall with
 * frequency: the upper right of the magnitude, the lower left of the
 * phase), k-th mark k lines further in, joined to the line by a leader. */
static void dimension(FILE *s, const panel *p, double hz, double y0, double y1,
                      const char *text, int prefer_left, int k)
{
    fprintf(s, "set arrow from %.10g, first %.6g to %.10g, first %.6g heads size screen "
            "0.011,90 lw 2.6 lc rgb '%s' front\n", hz, y0, hz, y1, PLOT_ACCENT);
    int n = (int)strlen(text), first = prefer_left ? -1 : 1;
    double mid = 0.5 * (y0 + y1);
    const char *where = NULL;
    if (clear_of_curve(p, hz, mid, n, first))
        where = first < 0 ? "right offset -1.6,0" : "left offset 1.6,0";
    else if (clear_of_curve(p, hz, mid, n, -first))
        where = first < 0 ? "left offset 1.6,0" : "right offset -1.6,0";
    if (where) {
        fprintf(s, "set label \"%s\" at %.10g, first %.6g %s tc rgb '%s' front\n", text, hz, mid,
                where, PLOT_ACCENT);
        return;
    }
    double gx = p->phase ? 0.04 : 0.96, gy = p->phase ? 0.10 + 0.09 * k : 0.90 - 0.09 * k;
    fprintf(s, "set label \"%s\" at graph %.3f, graph %.3f %s tc rgb '%s' front\n", text, gx, gy,
            p->phase ? "left" : "right", PLOT_ACCENT);
    fprintf(s, "set arrow from graph %.3f, graph %.3f to %.10g, first %.6g nohead lw 1 "
            "lc rgb '%s' front\n", p->phase ? gx + 0.0095 * n + 0.01 : gx - 0.0095 * n - 0.01,
            gy, hz, mid,
            PLOT_ACCENT);
}

/* Where phase crossing k is drawn on the log frequency axis: a crossing at
 * DC (T(0) < 0) at the band's low end, where T is T(0) to the drawing's
 * accuracy (the band starts three decades below every root). */
static double mark_hz(const margins *mg, int k)
{
    return mg->phase[k].hz > 0 ? mg->phase[k].hz : mg->fmin_hz;
}

static void magnitude_marks(FILE *s, const panel *p)
{
    const margins *mg = &p->r->mg;
    char text[96];
    for (int k = 0; k < mg->nphase && k < BODE_MAX_MARKS; k++) {
        double gm = mg->phase[k].value;
        snprintf(text, sizeof text, "gain margin %.1f dB%s%s", gm, mg->phase[k].hz > 0 ? "" : " at DC",
                 mg->nphase > 1 && k == mg->best_phase ? " (smallest)" : "");
        if (mg->phase[k].hz > 0) {
            dimension(s, p, mg->phase[k].hz, 0.0, -gm, text, 0, k);
            continue;
        }
        /* at DC the curve runs flat at -gm beside the bar at the left edge:
         * the label sits on the other side of the 0 dB line */
        fprintf(s, "set arrow from %.10g, first 0 to %.10g, first %.6g heads size screen "
                "0.011,90 lw 2.6 lc rgb '%s' front\n", mark_hz(mg, k), mark_hz(mg, k), -gm,
                PLOT_ACCENT);
        fprintf(s, "set label \"%s\" at %.10g, first 0 left offset 1.6,%s tc rgb '%s' front\n",
                text, mark_hz(mg, k), gm >= 0 ? "0.9" : "-0.9", PLOT_ACCENT);
    }
    char a[32];
    for (int k = 0; k < mg->ncross; k++) {
        /* the curve arrives from the upper left: the lower left is free */
        fprintf(s, "set object circle at %.10g, first 0 size screen 0.005 fc rgb '%s' "
                "fs solid front\n", mg->cross[k].hz, PLOT_INK);
        if (k < BODE_MAX_MARKS)
            fprintf(s, "set label \"|T| = 1 at %s\" at %.10g, first 0 right offset -0.8,-0.9 "
                    "font ',9' tc rgb '%s' front\n", si_format(mg->cross[k].hz, "Hz", a, sizeof a),
                    mg->cross[k].hz, PLOT_INK);
    }
    if (mg->ncross == 0)
        fprintf(s, "set label \"no crossover: |T| stays %s 1 over the band, so there is no "
                "phase margin\" at graph 0.5, graph 0.92 center tc rgb '%s'\n",
                mg->why == CROSS_ABOVE ? "above" : "below", PLOT_ACCENT);
}

static void phase_marks(FILE *s, const panel *p)
{
    const check_result *r = p->r;
    const margins *mg = &r->mg;
    char text[96];
    for (int k = 0; k < mg->ncross && k < BODE_MAX_MARKS; k++) {
        double pm = mg->cross[k].value;
        snprintf(text, sizeof text, "phase margin %.1f\xC2\xB0%s", pm,
                 mg->ncross > 1 && k == mg->best_cross ? " (smallest)" : "");
        dimension(s, p, mg->cross[k].hz, -180.0, pm - 180.0, text, 1, k);
    }
    char a[32];
    for (int k = 0; k < mg->nphase; k++) {
        /* the phase there is -180 + 360 m: which m, the phase itself says;
         * the curve leaves to the lower right, so the upper right is free */
        double mag, ph = margin_phase(r->lg, &r->tf, mg->phase[k].hz, &mag, NULL);
        double y = -180.0 + 360.0 * round((ph + 180.0) / 360.0);
        /* a filled diamond: the phase-crossing mark of every picture */
        fprintf(s, "set label '' at %.10g, first %.6g point pt %d ps 1.8 lc rgb '%s' front\n",
                mark_hz(mg, k), y, FIG_PT_PHASE_CROSSING, PLOT_INK);
        if (k < BODE_MAX_MARKS)
            fprintf(s, "set label \"%.0f\xC2\xB0 at %s\" at %.10g, first %.6g left offset "
                    "0.8,0.9 font ',9' tc rgb '%s' front\n", y,
                    margin_where(mg->phase[k].hz, a, sizeof a), mark_hz(mg, k), y, PLOT_INK);
    }
    if (mg->nphase == 0)
        fprintf(s, "set label \"the phase never reaches -180\xC2\xB0: the gain margin is "
                "unbounded\" at graph 0.5, graph 0.08 center tc rgb '%s'\n", PLOT_ACCENT);
}

static void overlay(FILE *s, plot_job *job, const desc *d, const check_result *r, int each,
                    int column)
{
    for (int l = 0; each && r->loop_lg && l < r->nloops; l++) {
        char name[32], t[100];
        if (!r->loop_lg[l])
            continue;
        snprintf(name, sizeof name, "loop%d.dat", l);
        snprintf(t, sizeof t, "loop %s, its own gain", d->loops[l].name);
        fprintf(s, ", '%s' using 1:%d with lines ls %d ", plot_path(job, name), column, 2 + (l % 3));
        if (column == 2) {
            fputs("title ", s);
            plot_quote(s, t);
            fputs(" noenhanced", s);
        } else {
            fputs("notitle", s);
        }
    }
}

int figure_bode(const figure_opts *fo, const desc *d, const model *m, const check_result *r,
                int each, lw_error *err)
{
    plot_job *job;
    int rc = plot_begin(fo->path, fo->width, fo->height, &job, err);
    if (rc)
        return rc;
    const margins *mg = &r->mg;
    double lo = log10(mg->fmin_hz), hi = log10(mg->fmax_hz);
    span db = { INFINITY, -INFINITY }, ph = { INFINITY, -INFINITY };
    rc = bode_data(job, "net.dat", r->lg, &r->tf, lo, hi, &db, &ph, err);
    for (int l = 0; !rc && each && r->loop_lg && l < r->nloops; l++) {
        char name[32];
        snprintf(name, sizeof name, "loop%d.dat", l);
        if (r->loop_lg[l])
            rc = bode_data(job, name, r->loop_lg[l], &r->loop_tf[l], lo, hi, &db, &ph, err);
    }
    int kinds = 0;
    if (!rc)
        rc = strip_data(job, r, err, &kinds);
    if (rc) {
        plot_abort(job);
        return rc;
    }
    FILE *s = plot_script(job);
    figure_style(s);
    char extra[200];
    snprintf(extra, sizeof extra, "opened at %s %s%s", m->brk_node >= 0 ? "node" : "gm",
             m->brk_node >= 0 ? d->nodes[m->brk_node].name : d->elems[m->gm[m->brk].elem].name,
             r->stable ? "" : ", the closed loop is UNSTABLE");
    fprintf(s, "set multiplot\nset logscale x\nset xrange [%.10g:%.10g]\n"
            "set lmargin at screen %.3f\nset rmargin at screen %.3f\n",
            mg->fmin_hz, mg->fmax_hz, BODE_LEFT, BODE_RIGHT);

    /* magnitude: 160 dB below the low-frequency gain at most, 0 dB and every
     * gain-margin end inside */
    double top = isfinite(db.hi) ? db.hi : 100.0, bottom = fmax(db.lo, top - 160.0);
    for (int k = 0; k < mg->nphase && k < BODE_MAX_MARKS; k++)
        bottom = fmin(bottom, -mg->phase[k].value);
    bottom = 20.0 * floor((fmin(bottom, -20.0) - 5.0) / 20.0);
    top = 20.0 * ceil((fmax(top, 20.0) + 5.0) / 20.0);
    figure_title(s, "Loop gain T", d, extra);
    fprintf(s, "set tmargin at screen 0.92\nset bmargin at screen 0.55\nset format x ''\n"
            "set ylabel '|T| (dB)'\nset yrange [%.6g:%.6g]\n"
            "set arrow from graph 0, first 0 to graph 1, first 0 nohead lc rgb '%s' lw 1.2\n"
            "set key bottom left\n", bottom, top, PLOT_MUTED);
    panel pm = { lo, hi, bottom, top, r, 0 };
    magnitude_marks(s, &pm);
    fprintf(s, "plot '%s' using 1:2 with lines ls 1 title '|T|, the net loop gain'",
            plot_path(job, "net.dat"));
    overlay(s, job, d, r, each, 2);
    fprintf(s, ", 1/0 with points pt %d ps 1.4 lw 1.5 lc rgb '%s' title 'pole of T (strip below)'",
            FIG_PT_POLE, PLOT_INK);
    if (kinds & 2)
        fprintf(s, ", 1/0 with points pt %d ps 1.4 lw 1.5 lc rgb '%s' title 'zero, left half-plane'",
                FIG_PT_ZERO, PLOT_ACCENT);
    if (kinds & 4)
        fprintf(s, ", 1/0 with points pt %d ps 1.4 lw 1.5 lc rgb '%s' title 'zero, right "
                "half-plane (adds lag)'", FIG_PT_RHP_ZERO, PLOT_ACCENT);
    fputs("\n", s);

    /* phase: -180 + 360 m inside, and every phase-margin end */
    fputs("unset title\nunset label\nunset arrow\nunset object\nunset key\n", s);
    double plo = fmin(ph.lo, -180.0), phi = fmax(ph.hi, -90.0);
    for (int k = 0; k < mg->ncross && k < BODE_MAX_MARKS; k++)
        plo = fmin(plo, mg->cross[k].value - 180.0);
    plo = 90.0 * floor((plo - 20.0) / 90.0);
    phi = 90.0 * ceil((phi + 20.0) / 90.0);
    fprintf(s, "set tmargin at screen 0.53\nset bmargin at screen 0.22\nset ylabel 'phase of T "
            "(degrees)'\nset yrange [%.6g:%.6g]\nset ytics %d\n", plo, phi,
            phi - plo > 720 ? 180 : 90);
    for (double y = -180.0 + 360.0 * ceil((plo + 180.0) / 360.0); y <= phi; y += 360.0)
        fprintf(s, "set arrow from graph 0, first %.6g to graph 1, first %.6g nohead "
                "lc rgb '%s' lw 1.2\n", y, y, PLOT_MUTED);
    panel pp = { lo, hi, plo, phi, r, 1 };
    phase_marks(s, &pp);
    fprintf(s, "plot '%s' using 1:3 with lines ls 1 notitle", plot_path(job, "net.dat"));
    overlay(s, job, d, r, each, 3);
    fputs("\n", s);

    /* the strip of poles and zeros, with the frequency axis */
    fputs("unset label\nunset arrow\nunset object\nunset ytics\nunset ylabel\n", s);
    fprintf(s, "set tmargin at screen 0.19\nset bmargin at screen 0.10\nset yrange [0:1]\n"
            "set format x '%%.0s%%c'\nset xlabel 'frequency (Hz)'\nset grid xtics mxtics\n"
            "set label 'poles' at graph 0, 0.7 right offset -0.8,0 tc rgb '%s'\n"
            "set label 'zeros' at graph 0, 0.3 right offset -0.8,0 tc rgb '%s'\n",
            PLOT_INK, PLOT_ACCENT);
    /* a complex pair carries its Q beside its symbol, a repeated pole its count */
    const lg_tf *tf = &r->tf;
    strip_repeats(s, tf);
    for (int k = 0; k < tf->npoles; k++) {
        double complex p = tf->poles[k];
        if (tf->hidden[k] || cimag(p) >= 0 || creal(p) == 0)
            continue;
        fprintf(s, "set label 'Q %.2g' at %.10g, 0.7 offset 1.2,0 font ',8' tc rgb '%s'\n",
                cabs(p) / (2.0 * fabs(creal(p))), cabs(p) / TWO_PI, PLOT_INK);
    }
    const char *pz = plot_path(job, "strip.dat");
    fprintf(s, "plot '%s' using 1:($3==0 ? $2 : 1/0) with points pt %d ps 1.6 lw 1.6 lc rgb '%s' "
            "notitle, '' using 1:($3==1 ? $2 : 1/0) with points pt %d ps 1.6 lw 1.6 lc rgb '%s' "
            "notitle, '' using 1:($3==2 ? $2 : 1/0) with points pt %d ps 1.6 lw 1.6 lc rgb '%s' "
            "notitle\nunset multiplot\n", pz, FIG_PT_POLE, PLOT_INK, FIG_PT_ZERO, PLOT_ACCENT,
            FIG_PT_RHP_ZERO, PLOT_ACCENT);
    return plot_finish(job, fo->keep_dir, err);
}
