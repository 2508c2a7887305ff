/* figures_polar: the polar plot of `polar -o`. T(j2πf) for f > 0 and its
 * mirror image for f < 0 (lighter, dashed) on the compressed radius of
 * polar.h; -1, the unit circle and a circle every 20 dB; arrows along
 * rising frequency; the arcs of the indentations around poles of T on the
 * imaginary axis (the origin first); the crossover and phase-crossing
 * points with their frequencies; and beside the plot the Nyquist count, the
 * margins and the radius mapping in words. */
#include "loopwise/figures.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/layout.h"
#include "loopwise/polar.h"
#include "loopwise/units.h"

#define PI_ 3.14159265358979323846
enum { ARC_POINTS = 90, CIRCLE_POINTS = 360, MAX_MARKS = 4 };

/* The drawn curve: the mapped points of f > 0 with NaN where it breaks
 * (an axis pole), and the indentations' arcs likewise. */
typedef struct drawing {
    double *x, *y;
    int n;
    double *ax, *ay;
    int na;
    double rho;              /* the outer radius: the curve's largest, at most POLAR_RHO_MAX */
    int clipped;             /* some |T| lies beyond it */
    int still;               /* T does not move: the curve is a point */
} drawing;

static void drawing_free(drawing *g)
{
    free(g->x);
    free(g->y);
    free(g->ax);
    free(g->ay);
}

/* An arc at radius rho from angle a0 turning clockwise by about turn
 * radians, ending exactly at angle a1. */
static void arc(drawing *g, double rho, double a0, double a1, double turn)
{
    double sweep = turn + remainder((a0 - a1) - turn, 2 * PI_);
    for (int k = 0; k <= ARC_POINTS; k++) {
        double a = a0 - sweep * k / ARC_POINTS;
        g->ax[g->na] = rho * cos(a);
        g->ay[g->na++] = rho * sin(a);
    }
    g->ax[g->na] = g->ay[g->na] = NAN;
    g->na++;
}

static int drawing_make(const polar_curve *c, drawing *g)
{
    memset(g, 0, sizeof *g);
    g->rho = 1.0;
    for (int k = 0; k < c->n; k++) {
        double r = polar_radius(cabs(c->t[k]), INFINITY);
        g->clipped |= r > POLAR_RHO_MAX;
        g->rho = fmax(g->rho, fmin(r, POLAR_RHO_MAX));
    }
    int narcs = c->origin_order > 0;
    for (int k = 0; k < c->n; k++)
        narcs += c->gap[k] > 0;
    g->x = malloc(sizeof *g->x * (size_t)(2 * c->n + 1));
    g->y = malloc(sizeof *g->y * (size_t)(2 * c->n + 1));
    g->ax = malloc(sizeof *g->ax * (size_t)(narcs * (ARC_POINTS + 2) + 1));
    g->ay = malloc(sizeof *g->ay * (size_t)(narcs * (ARC_POINTS + 2) + 1));
    if (!g->x || !g->y || !g->ax || !g->ay)
        return LW_ENOMEM;
    for (int k = 0; k < c->n; k++) {
        double complex p = polar_map(c->t[k], g->rho);
        if (c->gap[k] && k > 0) {
            g->x[g->n] = g->y[g->n] = NAN;
            g->n++;
            /* around a pole of order m on the axis the contour's half
             * circle turns T clockwise by m half turns, at |T| beyond the
             * frame: drawn on the outer circle */
            arc(g, g->rho, carg(c->t[k - 1]), carg(c->t[k]), c->gap[k] * PI_);
        }
        g->x[g->n] = creal(p);
        g->y[g->n++] = cimag(p);
    }
    double span = 0;
    for (int k = 1; k < g->n; k++)
        if (!isnan(g->x[k]))
            span = fmax(span, hypot(g->x[k] - g->x[0], g->y[k] - g->y[0]));
    g->still = c->n > 0 && span < 1e-6;
    if (c->origin_order > 0 && c->n > 0) {
        /* from f = 0- (the mirror's end) to 0+: the same turn at s = 0 */
        double complex p0 = polar_map(c->t[0], g->rho);
        arc(g, cabs(p0), -carg(c->t[0]), carg(c->t[0]), c->origin_order * PI_);
    }
    return LW_OK;
}

static int write_data(plot_job *job, const polar_curve *c, const drawing *g, lw_error *err)
{
    FILE *f = plot_data(job, "polar.dat", err);
    if (!f)
        return LW_ENUMERIC;
    fprintf(f, "# f_hz re_T im_T x y: T(j2 pi f) and its drawn point (radius rho: |T| up to 1, "
            "1 + dB/%g beyond, at most %.6g)\n", POLAR_DB_PER_UNIT, g->rho);
    for (int k = 0, j = 0; k < c->n; k++, j++) {
        if (isnan(g->x[j])) {
            fputs("\n", f);
            j++;
        }
        fprintf(f, "%.10g %.12g %.12g %.10g %.10g\n", c->hz[k], creal(c->t[k]), cimag(c->t[k]),
                g->x[j], g->y[j]);
    }
    FILE *a = plot_data(job, "arcs.dat", err);
    if (!a)
        return LW_ENUMERIC;
    fputs("# x y: the indentations' arcs, f > 0 side (the mirror is y -> -y)\n", a);
    for (int k = 0; k < g->na; k++) {
        if (isnan(g->ax[k]))
            fputs("\n", a);
        else
            fprintf(a, "%.10g %.10g\n", g->ax[k], g->ay[k]);
    }
    FILE *o = plot_data(job, "circles.dat", err);
    if (!o)
        return LW_ENUMERIC;
    fputs("# x y kind (0 the unit circle, 1 |T| = 0.5, 2 a circle every 20 dB)\n", o);
    for (int kind = 0, m = 1; kind < 3; kind += kind < 2 ? 1 : 0, m += kind == 2) {
        double rho = kind == 0 ? 1.0 : kind == 1 ? 0.5 : polar_radius(pow(10.0, m), INFINITY);
        if (rho > g->rho + 1e-9)
            break;
        for (int k = 0; k <= CIRCLE_POINTS; k++)
            fprintf(o, "%.8g %.8g %d\n", rho * cos(2 * PI_ * k / CIRCLE_POINTS),
                    rho * sin(2 * PI_ * k / CIRCLE_POINTS), kind);
        fputs("\n", o);
    }
    return LW_OK;
}

/* Tick labels at the drawn places of the values of T on an axis, nearest
 * the origin first, each kept only where it leaves its neighbours room. */
static void tics(FILE *s, const layout_frame *fr, int yaxis)
{
    double lo = yaxis ? fr->y0 : fr->x0, hi = yaxis ? fr->y1 : fr->x1;
    double kept[24];
    int nk = 0;
    fprintf(s, "set %stics ('0' 0", yaxis ? "y" : "x");
    kept[nk++] = 0;
    for (int m = -1; m <= 8; m++) {
        double v = m < 0 ? 0.5 : pow(10.0, m), rho = polar_radius(v, INFINITY);
        for (int sg = -1; sg <= 1; sg += 2) {
            double at = sg * rho, px, py, qx, qy;
            if (at < lo || at > hi)
                continue;
            char t[32];
            if (v < 1e4)
                snprintf(t, sizeof t, "%g", sg * v);
            else
                snprintf(t, sizeof t, "%s1e%d", sg < 0 ? "-" : "", m);
            /* room: a label's width across, a line and a half up */
            double need = yaxis ? 1.5 * layout_text_h(fr) : layout_text_w(fr, (int)strlen(t)) + 8;
            layout_px(fr, yaxis ? 0 : at, yaxis ? at : 0, &px, &py);
            int clear = 1;
            for (int k = 0; k < nk; k++) {
                layout_px(fr, yaxis ? 0 : kept[k], yaxis ? kept[k] : 0, &qx, &qy);
                clear &= (yaxis ? fabs(py - qy) : fabs(px - qx)) >= need;
            }
            if (!clear || nk == 24)
                continue;
            kept[nk++] = at;
            fprintf(s, ", '%s' %.8g", t, at);
        }
    }
    fputs(")\n", s);
}

static void notes(FILE *s, const check_result *r, const drawing *g, double x, double y, double dy,
                  int width)
{
    char t[256], a[32];
    const nyquist *q = &r->nq;
    figure_note(s, x, &y, dy, width, PLOT_INK, "Nyquist count (f from -inf to +inf):");
    if (!r->have_nyquist || !q->decided) {
        figure_note(s, x, &y, dy, width, PLOT_ACCENT, "undecided: 1 + T passes through 0 on the "
             "imaginary axis (a closed-loop pole on it)");
    } else {
        int n = q->encirclements;
        if (n >= 0)
            snprintf(t, sizeof t, "N = %d clockwise encirclement%s of -1", n, n == 1 ? "" : "s");
        else
            snprintf(t, sizeof t, "N = %d: %d counter-clockwise encirclement%s of -1", n, -n,
                     n == -1 ? "" : "s");
        figure_note(s, x, &y, dy, width, PLOT_INK, t);
        snprintf(t, sizeof t, "P = %d pole%s of T in the right half-plane", q->open_loop_rhp,
                 q->open_loop_rhp == 1 ? "" : "s");
        figure_note(s, x, &y, dy, width, PLOT_INK, t);
        if (q->hidden_rhp)
            snprintf(t, sizeof t, "Z = N + P + %d unseen by T = %d closed-loop poles there",
                     q->hidden_rhp, q->closed_loop_rhp);
        else
            snprintf(t, sizeof t, "Z = N + P = %d closed-loop pole%s there",
                     q->closed_loop_rhp, q->closed_loop_rhp == 1 ? "" : "s");
        figure_note(s, x, &y, dy, width, PLOT_INK, t);
        snprintf(t, sizeof t, "%s%s", q->closed_loop_rhp ? "UNSTABLE" : "stable",
                 r->nyquist_disagrees ? "; the closed-loop poles say otherwise (see check's "
                 "accuracy warning)" : ", as the closed-loop poles say");
        figure_note(s, x, &y, dy, width, q->closed_loop_rhp ? PLOT_ACCENT : PLOT_INK, t);
    }
    if (q->axis_poles) {
        snprintf(t, sizeof t, "%d pole%s of T on the imaginary axis, passed on the right: "
                 "half a turn clockwise each, at unbounded |T| (dotted)", q->axis_poles,
                 q->axis_poles == 1 ? "" : "s");
        figure_note(s, x, &y, dy, width, PLOT_INK, t);
    }
    y -= 0.5 * dy;
    /* the crossings and their margins, two columns */
    const margins *mg = &r->mg;
    figure_note(s, x, &y, dy, width, PLOT_INK, mg->ncross + mg->nphase ? "Where the curve crosses:"
         : "no crossing: the curve never meets the unit circle or the negative real axis");
    for (int k = 0; k < mg->ncross + mg->nphase; k++) {
        int cross = k < mg->ncross, i = cross ? k : k - mg->ncross;
        if (i >= MAX_MARKS)
            continue;
        const margin_point *pt = cross ? &mg->cross[i] : &mg->phase[i];
        if (width < 44) {
            /* no room for two columns: one line each, wrapped */
            double mag, ph = cross ? 0 : margin_phase(r->lg, &r->tf, pt->hz, &mag, NULL);
            margin_where(pt->hz, a, sizeof a);
            if (cross)
                snprintf(t, sizeof t, "|T| = 1 at %s: phase margin %.1f\xC2\xB0", a, pt->value);
            else
                snprintf(t, sizeof t, "%.0f\xC2\xB0 at %s: gain margin %.2f dB",
                         -180.0 + 360.0 * round((ph + 180.0) / 360.0), a, pt->value);
            figure_note(s, x, &y, dy, width, PLOT_INK, t);
            continue;
        }
        if (cross) {
            snprintf(t, sizeof t, "|T| = 1 at %s", margin_where(pt->hz, a, sizeof a));
        } else {
            double mag, ph = margin_phase(r->lg, &r->tf, pt->hz, &mag, NULL);
            snprintf(t, sizeof t, "%.0f\xC2\xB0 at %s", -180.0 + 360.0 * round((ph + 180.0) / 360.0),
                     margin_where(pt->hz, a, sizeof a));
        }
        fprintf(s, "set label \"%s\" at screen %.4f, screen %.4f left font ',9' tc rgb '%s' "
                "front\n", t, x, y, PLOT_INK);
        fprintf(s, cross ? "set label \"phase margin %.1f\xC2\xB0\" at screen 0.985, screen %.4f "
                "right font ',9' tc rgb '%s' front\n" : "set label \"gain margin %.2f dB\" at "
                "screen 0.985, screen %.4f right font ',9' tc rgb '%s' front\n", pt->value, y,
                PLOT_INK);
        y -= dy;
    }
    if (mg->ncross > MAX_MARKS || mg->nphase > MAX_MARKS)
        figure_note(s, x, &y, dy, width, PLOT_INK, "(more crossings: see loopwise check)");
    y -= 0.5 * dy;
    figure_note(s, x, &y, dy, width, PLOT_MUTED, "Radius: |T| inside the unit circle,");
    figure_note(s, x, &y, dy, width, PLOT_MUTED, "1 + dB/40 outside it (|T| in dB):");
    figure_note(s, x, &y, dy, width, PLOT_MUTED, "a circle every 20 dB. Angles are true.");
    if (g->still)
        figure_note(s, x, &y, dy, width, PLOT_INK, "T is the same at every frequency here (no "
             "capacitance in the loop): the curve is one point.");
    if (g->clipped)
        figure_note(s, x, &y, dy, width, PLOT_MUTED, "|T| above 160 dB is drawn on the outer circle.");
}

/* The characters of a UTF-8 text (its continuation bytes are not counted). */
static int text_chars(const char *t)
{
    int n = 0;
    for (; *t; t++)
        n += ((unsigned char)*t & 0xC0) != 0x80;
    return n;
}

/* Labels the crossings of the f > 0 curve with their frequencies, clear of
 * the curve, the marks and each other. */
static void crossing_labels(FILE *s, layout *l, const check_result *r, double rho)
{
    const margins *mg = &r->mg;
    char t[96], a[32];
    for (int k = 0; k < mg->ncross + mg->nphase; k++) {
        int cross = k < mg->ncross, i = cross ? k : k - mg->ncross;
        if (i >= MAX_MARKS)
            continue;
        double hz = cross ? mg->cross[i].hz : mg->phase[i].hz, mag;
        double complex p = polar_map(lgain_eval(r->lg, I * 2 * PI_ * hz), rho);
        if (cross) {
            snprintf(t, sizeof t, "|T| = 1 at %s", si_format(hz, "Hz", a, sizeof a));
        } else {
            double ph = margin_phase(r->lg, &r->tf, hz, &mag, NULL);
            snprintf(t, sizeof t, "%.0f\xC2\xB0 at %s", -180.0 + 360.0 * round((ph + 180.0) / 360.0),
                     margin_where(hz, a, sizeof a));
        }
        layout_label lb;
        if (!layout_place(l, creal(p), cimag(p), 5, text_chars(t), 12, &lb))
            continue;
        fprintf(s, "set label \"%s\" at %.10g, %.10g left font ',9' tc rgb '%s' %sfront\n", t,
                lb.x, lb.y, PLOT_INK, lb.opaque ? "boxed " : "");
        if (lb.leader)
            fprintf(s, "set arrow from %.10g, %.10g to %.10g, %.10g nohead lw 1 lc rgb '%s' back\n",
                    creal(p), cimag(p), lb.lx, lb.ly, PLOT_MUTED);
    }
}

/* 1 when the drawn point (x, y) or its mirror image is within 20 pixels of
 * one of the marks (mark[k], on the f > 0 side). */
static int near_mark(const layout_frame *fr, double x, double y, const double complex *mark,
                     int nmark)
{
    double px, py, qx, qy, ny;
    layout_px(fr, x, y, &px, &py);
    layout_px(fr, x, -y, &px, &ny);
    for (int k = 0; k < nmark; k++) {
        layout_px(fr, creal(mark[k]), cimag(mark[k]), &qx, &qy);
        if (hypot(px - qx, py - qy) < 20 || hypot(px - qx, ny - qy) < 20)
            return 1;
    }
    return 0;
}

/* Arrows along rising frequency at a fifth, a half and four fifths of the
 * f > 0 curve's drawn length (moved on past a mark they would cover), and
 * the mirror's the other way. */
static void arrows(FILE *s, const layout_frame *fr, const drawing *g, const double complex *mark,
                   int nmark)
{
    double total = 0, *len = malloc(sizeof *len * (size_t)(g->n + 1));
    if (!len)
        return; /* the arrows are a help, not a result: the picture stands */
    len[0] = 0;
    for (int k = 1; k < g->n; k++) {
        double d = 0;
        if (!isnan(g->x[k]) && !isnan(g->x[k - 1])) {
            double ax, ay, bx, by;
            layout_px(fr, g->x[k - 1], g->y[k - 1], &ax, &ay);
            layout_px(fr, g->x[k], g->y[k], &bx, &by);
            d = hypot(bx - ax, by - ay);
        }
        total += d;
        len[k] = total;
    }
    for (int m = 1; total > 60 && m <= 3; m++) {
        double want = total * (m == 1 ? 0.2 : m == 2 ? 0.5 : 0.8);
        int i = 0;
        while (i + 1 < g->n && len[i] < want)
            i++;
        while (i + 1 < g->n && (isnan(g->x[i]) || near_mark(fr, g->x[i], g->y[i], mark, nmark)))
            i++;
        int j = i;
        while (j + 1 < g->n && !isnan(g->x[j + 1]) && len[j] - len[i] < 10)
            j++;
        if (j == i || isnan(g->x[i]))
            continue;
        fprintf(s, "set arrow from %.10g, %.10g to %.10g, %.10g size screen 0.013,28 filled "
                "lw 2 lc rgb '%s' front\n", g->x[i], g->y[i], g->x[j], g->y[j], PLOT_INK);
        fprintf(s, "set arrow from %.10g, %.10g to %.10g, %.10g size screen 0.011,28 filled "
                "lw 1.2 lc rgb '%s' front\n", g->x[j], -g->y[j], g->x[i], -g->y[i], PLOT_MUTED);
    }
    free(len);
}

/* The frame: the curve, its mirror, the arcs and the unit circle, with a
 * little room; a data unit as long across as up. */
static void frame_of(const figure_opts *fo, const drawing *g, layout_frame *fr)
{
    double x0 = -1.0, x1 = 1.0, ym = 1.0;
    for (int k = 0; k < g->n + g->na; k++) {
        double x = k < g->n ? g->x[k] : g->ax[k - g->n], y = k < g->n ? g->y[k] : g->ay[k - g->n];
        if (isnan(x))
            continue;
        x0 = fmin(x0, x);
        x1 = fmax(x1, x);
        ym = fmax(ym, fabs(y));
    }
    double pad = 0.06 * fmax(x1 - x0, 2 * ym);
    figure_frame_init(fo, fr);
    fr->left = 0.075;
    fr->right = figure_notes_left(fo, 0.635);
    fr->bottom = 0.10;
    fr->top = 0.91;
    fr->x0 = x0 - pad;
    fr->x1 = x1 + pad;
    fr->y0 = -ym - pad;
    fr->y1 = ym + pad;
    layout_frame_equal(fr, LAYOUT_SHRINK_AREA);
}

static int polar_script(FILE *s, plot_job *job, const figure_opts *fo, const desc *d,
                        const model *m, const check_result *r, const drawing *g, lw_error *err)
{
    layout_frame fr;
    frame_of(fo, g, &fr);
    layout *l = layout_new(&fr, 4 * g->n + 64);
    if (!l)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    figure_style(s);
    char extra[200];
    snprintf(extra, sizeof extra, "opened at %s %s%s", m->brk_node >= 0 ? "node" : "gm",
             m->brk_node >= 0 ? d->nodes[m->brk_node].name : d->elems[m->gm[m->brk].elem].name,
             r->stable ? "" : ", the closed loop is UNSTABLE");
    figure_title_canvas(s, "Polar plot of the loop gain T", d, extra);
    fputs("unset grid\nset size noratio\nset style textbox opaque noborder margins 0.5,0.5\n", s);
    layout_frame_write(s, &fr);
    tics(s, &fr, 0);
    tics(s, &fr, 1);
    fputs("set xlabel 'real part of T   (radius: |T| up to 1, then 1 + dB/40: a circle every "
          "20 dB)'\nset ylabel 'imaginary part of T'\n", s);
    fprintf(s, "set arrow from graph 0, first 0 to graph 1, first 0 nohead lc rgb '%s' lw 0.8 back\n"
            "set arrow from first 0, graph 0 to first 0, graph 1 nohead lc rgb '%s' lw 0.8 back\n",
            PLOT_MUTED, PLOT_MUTED);
    /* the curve, both branches, and the marks keep labels off them */
    int ok = layout_block_line(l, g->x, g->y, g->n, 1);
    double *ny = malloc(sizeof *ny * (size_t)(g->n + 1));
    if (ny) {
        for (int k = 0; k < g->n; k++)
            ny[k] = -g->y[k];
        ok &= layout_block_line(l, g->x, ny, g->n, 0);
        free(ny);
    } else {
        ok = 0;
    }
    ok &= layout_block_line(l, g->ax, g->ay, g->na, 0) && layout_block(l, -1, 0, 9);
    /* and the axes and the unit circle, which would strike through a label */
    double axx[5] = { fr.x0, fr.x1, NAN, 0, 0 }, axy[5] = { 0, 0, NAN, fr.y0, fr.y1 };
    double ux[CIRCLE_POINTS + 1], uy[CIRCLE_POINTS + 1];
    for (int k = 0; k <= CIRCLE_POINTS; k++) {
        ux[k] = cos(2 * PI_ * k / CIRCLE_POINTS);
        uy[k] = sin(2 * PI_ * k / CIRCLE_POINTS);
    }
    ok &= layout_block_line(l, axx, axy, 5, 0) && layout_block_line(l, ux, uy, CIRCLE_POINTS + 1, 0);
    const margins *mg = &r->mg;
    for (int k = 0; k < mg->ncross + mg->nphase; k++) {
        double hz = k < mg->ncross ? mg->cross[k].hz : mg->phase[k - mg->ncross].hz;
        double complex p = polar_map(lgain_eval(r->lg, I * 2 * PI_ * hz), g->rho);
        ok &= layout_block(l, creal(p), cimag(p), 5);
    }
    if (!ok) {
        layout_free(l);
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    layout_label lb;
    if (layout_place(l, -1, 0, 9, 2, 8, &lb)) {
        fprintf(s, "set label '-1' at %.10g, %.10g left tc rgb '%s' %sfront\n", lb.x, lb.y,
                PLOT_ACCENT, lb.opaque ? "boxed " : "");
        if (lb.leader)
            fprintf(s, "set arrow from -1, 0 to %.10g, %.10g nohead lw 1 lc rgb '%s' back\n",
                    lb.lx, lb.ly, PLOT_MUTED);
    }
    crossing_labels(s, l, r, g->rho);
    /* each 20 dB circle says its level where it is free, near its top */
    for (int k = 1; polar_radius(pow(10.0, k), INFINITY) <= g->rho + 1e-9; k++) {
        double rho = polar_radius(pow(10.0, k), INFINITY);
        char t[16];
        snprintf(t, sizeof t, "%d dB", 20 * k);
        static const double at[] = { 80, 100, 60, 120, 40, 140 };
        for (int j = 0; j < 6; j++) {
            double a = at[j] * PI_ / 180;
            if (layout_place(l, rho * cos(a), rho * sin(a), 1, (int)strlen(t), 1, &lb)) {
                fprintf(s, "set label '%s' at %.10g, %.10g left font ',8' tc rgb '%s' front\n", t,
                        lb.x, lb.y, PLOT_MUTED);
                break;
            }
        }
    }
    double complex mark[2 * MAX_MARKS + 1];
    int nmark = 0;
    mark[nmark++] = -1;
    for (int k = 0; k < mg->ncross + mg->nphase; k++) {
        int cross = k < mg->ncross, i = cross ? k : k - mg->ncross;
        if (i < MAX_MARKS)
            mark[nmark++] = polar_map(lgain_eval(r->lg, I * 2 * PI_ * (cross ? mg->cross[i].hz
                                                                              : mg->phase[i].hz)),
                                      g->rho);
    }
    arrows(s, &fr, g, mark, nmark);
    layout_free(l);

    /* beside the plot: the key, then the count and the margins */
    /* the notes in the 9-point font: 0.9 of the frame's */
    double nx = fr.right + 0.025, dy = 0.9 * layout_text_h(&fr) / fr.height;
    int width = (int)((0.99 - nx) * fr.width / (0.9 * layout_text_w(&fr, 1)));
    fprintf(s, "set key at screen %.4f, screen 0.91 left top Left reverse samplen 2.5 spacing 1.1 "
            "noopaque nobox\n", nx);
    /* a key entry takes about 1.25 lines of the 10-point font */
    int nkey = 4 + (mg->ncross > 0) + (mg->nphase > 0) + (g->na > 0);
    notes(s, r, g, nx, 0.91 - (nkey + 0.8) * 1.25 * layout_text_h(&fr) / fr.height, dy,
          width < 20 ? 20 : width);

    /* plot_path reuses one buffer: each path is printed before the next */
    fprintf(s, "plot '%s' using 1:($3==0 ? $2 : 1/0) with lines lc rgb '%s' lw 1.4 "
            "title 'unit circle, |T| = 1', '' using 1:($3>0 ? $2 : 1/0) with lines lc rgb "
            "'#c3ccd5' lw 0.8 notitle", plot_path(job, "circles.dat"), PLOT_MUTED);
    fprintf(s, ", '%s' using 4:(-$5) with lines lc rgb '%s' lw 1.5 dt 2 "
            "title 'T(j2\xCF\x80" "f), f < 0 (the mirror image)'", plot_path(job, "polar.dat"),
            PLOT_MUTED);
    fprintf(s, ", '' using 4:5 with %s lc rgb '%s' lw 2.2 title 'T(j2\xCF\x80" "f), f > 0'",
            g->still ? "linespoints pt 7 ps 1.2" : "lines", PLOT_INK);
    if (g->na > 0)
        fprintf(s, ", '%s' using 1:2 with lines lc rgb '%s' lw 1.4 dt 3 title 'around a pole on the "
                "axis, |T| unbounded', '' using 1:(-$2) with lines lc rgb '%s' lw 1.2 dt 3 notitle",
                plot_path(job, "arcs.dat"), PLOT_ACCENT, PLOT_ACCENT);
    fprintf(s, ", '%s' using 1:($3==2 ? $2 : 1/0) with points pt 1 ps 2.6 lw 2.5 lc rgb '%s' "
            "title '-1'", plot_path(job, "marks.dat"), PLOT_ACCENT);
    if (mg->ncross > 0)
        fprintf(s, ", '' using 1:($3==0 ? $2 : 1/0) with points pt %d ps 1.3 lc rgb '%s' "
                "title '|T| = 1 (crossover)'", FIG_PT_CROSSOVER, PLOT_INK);
    if (mg->nphase > 0)
        fprintf(s, ", '' using 1:($3==1 ? $2 : 1/0) with points pt %d ps 1.5 lc rgb '%s' "
                "title 'phase crossing'", FIG_PT_PHASE_CROSSING, PLOT_INK);
    fputs("\n", s);
    return LW_OK;
}

static int write_marks(plot_job *job, const check_result *r, double rho, lw_error *err)
{
    FILE *f = plot_data(job, "marks.dat", err);
    if (!f)
        return LW_ENUMERIC;
    fputs("# x y kind (0 crossover |T| = 1, 1 phase crossing, 2 the point -1) f_hz\n", f);
    const margins *mg = &r->mg;
    for (int k = 0; k < mg->ncross + mg->nphase; k++) {
        int cross = k < mg->ncross;
        double hz = cross ? mg->cross[k].hz : mg->phase[k - mg->ncross].hz;
        double complex p = polar_map(lgain_eval(r->lg, I * 2 * PI_ * hz), rho);
        fprintf(f, "%.10g %.10g %d %.10g\n", creal(p), cimag(p), !cross, hz);
    }
    fputs("-1 0 2 0\n", f);
    return LW_OK;
}

int figure_polar(const figure_opts *fo, const desc *d, const model *m, const check_result *r,
                 lw_error *err)
{
    polar_curve c;
    int rc = polar_curve_sample(r->lg, &r->tf, r->mg.fmin_hz, r->mg.fmax_hz, &c, err);
    if (rc)
        return rc;
    drawing g;
    if (drawing_make(&c, &g)) {
        drawing_free(&g);
        polar_curve_free(&c);
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    plot_job *job;
    rc = plot_begin(fo->path, fo->width, fo->height, &job, err);
    if (!rc) {
        rc = write_data(job, &c, &g, err);
        if (!rc)
            rc = write_marks(job, r, g.rho, err);
        if (!rc)
            rc = polar_script(plot_script(job), job, fo, d, m, r, &g, err);
        rc = rc ? (plot_abort(job), rc) : plot_finish(job, fo->keep_dir, err);
    }
    drawing_free(&g);
    polar_curve_free(&c);
    return rc;
}
