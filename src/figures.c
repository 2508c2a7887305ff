/* figures: the project's look, the roots of the loop in the s-plane, and the
 * Monte Carlo histogram of the phase margin. */
#include "loopwise/figures.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/layout.h"
#include "loopwise/units.h"

#define TWO_PI 6.283185307179586

/* Common look: the project's palette, light grid, no enhanced-text surprises
 * in user strings (they are quoted and marked noenhanced). */
void figure_style(FILE *s)
{
    fprintf(s, "set border lc rgb '%s'\nset grid xtics ytics mxtics lc rgb '#d5dbe1' lw 1 dt 1\n"
            "set key top right box lc rgb '#d5dbe1' opaque\n"
            "set style line 1 lc rgb '%s' lw 2.2 dt 1\n"
            "set style line 2 lc rgb '%s' lw 1.8 dt 2\n"
            "set style line 3 lc rgb '%s' lw 1.2 dt 4\n"
            "set style line 4 lc rgb '%s' lw 1.6 dt 3\n",
            PLOT_INK, PLOT_INK, PLOT_ACCENT, PLOT_MUTED, PLOT_EXTRA);
}

void figure_frame_init(const figure_opts *fo, layout_frame *f)
{
    memset(f, 0, sizeof *f);
    f->width = fo->width;
    f->height = fo->height;
    /* plot_begin's fonts: Sans 11 in SVG, Sans 10 in PNG */
    const char *dot = strrchr(fo->path, '.');
    f->font_px = dot && !strcmp(dot, ".svg") ? 11.0 : 10.0;
}

static void title_text(char *buf, size_t n, const char *what, const desc *d, const char *extra)
{
    snprintf(buf, n, "%s: %s%s%s", what, d->path, extra ? ", " : "", extra ? extra : "");
}

void figure_title(FILE *s, const char *what, const desc *d, const char *extra)
{
    char buf[600];
    title_text(buf, sizeof buf, what, d, extra);
    fputs("set title ", s);
    plot_quote(s, buf);
    fputs(" noenhanced\n", s);
}

void figure_title_canvas(FILE *s, const char *what, const desc *d, const char *extra)
{
    char buf[600];
    title_text(buf, sizeof buf, what, d, extra);
    fputs("unset title\nset label ", s);
    plot_quote(s, buf);
    fputs(" at screen 0.5, screen 0.965 center noenhanced front\n", s);
}

static double complex root_hz(double complex v)
{
    return v / TWO_PI;
}

/* ---- roots in the s-plane ------------------------------------------------ */

/* Signed logarithmic scale so that poles six or more decades apart stay
 * readable: u = sign(v) log10(1 + |v| / 1 Hz). */
static double slog(double v)
{
    return copysign(log10(1.0 + fabs(v)), v);
}

static void slog_tics(FILE *s, const char *axis, double maxabs)
{
    int top = (int)ceil(log10(fmax(maxabs, 10.0)));
    char a[32];
    fprintf(s, "set %stics (", axis);
    fputs("'0' 0", s);
    int step = top > 8 ? 2 : 1;
    for (int k = step; k <= top; k += step) {
        double v = pow(10.0, k);
        fprintf(s, ", '%s' %.10g, '-%s' %.10g", si_format(v, "", a, sizeof a), slog(v),
                si_format(v, "", a, sizeof a), slog(-v));
    }
    fputs(")\n", s);
}

int figure_roots(const figure_opts *fo, const desc *d, const check_result *r, lw_error *err)
{
    plot_job *job;
    int rc = plot_begin(fo->path, fo->width, fo->height, &job, err);
    if (rc)
        return rc;
    FILE *f = plot_data(job, "roots.dat", err);
    if (!f) {
        plot_abort(job);
        return LW_ENUMERIC;
    }
    const lg_tf *tf = &r->tf;
    double maxabs = 1;
    int rhp_zero = 0, lhp_zero = 0;
    fputs("# u_re u_im kind(0 open-loop pole, 1 zero, 2 right-half-plane zero, "
          "3 closed-loop pole)\n", f);
    for (int k = 0; k < tf->npoles + tf->nzeros + r->ncl; k++) {
        double complex v = k < tf->npoles ? tf->poles[k]
                           : k < tf->npoles + tf->nzeros ? tf->zeros[k - tf->npoles]
                                                         : r->cl[k - tf->npoles - tf->nzeros];
        int kind = k < tf->npoles ? 0 : (k < tf->npoles + tf->nzeros ? 1 : 3);
        if (kind == 1 && creal(v) > 0)
            kind = 2, rhp_zero = 1;
        lhp_zero |= kind == 1;
        double complex h = root_hz(v);
        maxabs = fmax(maxabs, fmax(fabs(creal(h)), fabs(cimag(h))));
        fprintf(f, "%.10g %.10g %d\n", slog(creal(h)), slog(cimag(h)), kind);
    }
    FILE *s = plot_script(job);
    figure_style(s);
    figure_title(s, "Roots of the loop", d, r->stable ? NULL : "the closed loop is UNSTABLE");
    /* labels of neighbouring poles are staggered in height so they stay legible */
    for (int k = 0, n = 0; k < tf->npoles; k++) {
        int o = tf->owner ? tf->owner[k] : -1;
        if (o < 0 || cimag(tf->poles[k]) < 0)
            continue;
        double complex h = root_hz(tf->poles[k]);
        fprintf(s, "set label ");
        plot_quote(s, d->nodes[o].name);
        fprintf(s, " at %.10g, %.10g offset -1,%.1f tc rgb '%s' noenhanced\n", slog(creal(h)),
                slog(cimag(h)), n % 2 ? -1.2 - 1.1 * (n % 4 == 3) : 1.0 + 1.1 * (n % 4 == 2),
                PLOT_INK);
        n++;
    }
    double lim = slog(maxabs) * 1.08 + 0.3;
    fprintf(s, "set xrange [%.6g:%.6g]\nset yrange [%.6g:%.6g]\nset size ratio -1\n", -lim, lim,
            -lim, lim);
    slog_tics(s, "x", maxabs);
    slog_tics(s, "y", maxabs);
    fputs("set xlabel 'real part (Hz), signed log scale: sign(x) log10(1 + |x|/1 Hz)'\n"
          "set ylabel 'imaginary part (Hz), signed log scale'\n", s);
    /* the right half-plane, where a closed-loop pole means an unstable loop */
    fprintf(s, "set object rect from 0, graph 0 to graph 1, graph 1 fc rgb '%s' fs solid 0.55 "
            "noborder behind\nset label 'right half-plane' at graph 0.98, graph 0.03 right "
            "tc rgb '%s'\n", FIG_UNSTABLE_FILL, PLOT_ACCENT);
    fprintf(s, "set arrow from 0, graph 0 to 0, graph 1 nohead lc rgb '%s' lw 1.2\n"
            "set arrow from graph 0, first 0 to graph 1, first 0 nohead lc rgb '%s' lw 1.2\n",
            PLOT_MUTED, PLOT_MUTED);
    fputs("set key top left\n", s);
    const char *path = plot_path(job, "roots.dat");
    fprintf(s, "plot '%s' using 1:($3==0 ? $2 : 1/0) with points pt %d ps 2 lw 2 lc rgb '%s' "
            "title 'pole of T (open loop)'", path, FIG_PT_POLE, PLOT_INK);
    if (lhp_zero)
        fprintf(s, ", '' using 1:($3==1 ? $2 : 1/0) with points pt %d ps 2 lw 2 lc rgb '%s' "
                "title 'zero of T, left half-plane'", FIG_PT_ZERO, PLOT_ACCENT);
    if (rhp_zero)
        fprintf(s, ", '' using 1:($3==2 ? $2 : 1/0) with points pt %d ps 2 lw 2 lc rgb '%s' "
                "title 'zero of T, right half-plane (adds lag)'", FIG_PT_RHP_ZERO, PLOT_ACCENT);
    fprintf(s, ", '' using 1:($3==3 ? $2 : 1/0) with points pt %d ps 1.4 lc rgb '%s' "
            "title 'closed-loop pole'\n", FIG_PT_CL_POLE, PLOT_EXTRA);
    return plot_finish(job, fo->keep_dir, err);
}

/* ---- Monte Carlo histogram ------------------------------------------------- */

enum { HIST_BINS = 60 };

/* The text beside the histogram: the yield, the --yield verdict, and the
 * operating point (the --set values, user text: quoted). */
static void histogram_notes(FILE *s, const mc_result *mc, const char *const *sets, int nsets,
                            design_goal g, double yield_target, double x, const char *align)
{
    double y = 0.93, dy = 0.045;
    int unstable = 0, nocross = 0;
    for (int i = 0; i < mc->nsamples; i++) {
        unstable += mc->valid[i] && !mc->pts[i].stable;
        nocross += mc->valid[i] && isnan(mc->pts[i].pm_deg);
    }
    fprintf(s, "set label \"yield %.2f%%: %d of %d samples pass\" at graph %.3f, graph %.3f %s "
            "boxed tc rgb '%s' front\n", 100 * mc->yield, mc->passes, mc->nsamples, x, y, align,
            PLOT_INK);
    y -= dy;
    fprintf(s, "set label \"one-sided 95%% lower bound %.2f%%\" at graph %.3f, graph %.3f %s "
            "boxed tc rgb '%s' front\n", 100 * mc->lower95, x, y, align, PLOT_INK);
    y -= dy;
    if (!isnan(yield_target)) {
        fprintf(s, "set label \"yield target %.4g%%: %s\" at graph %.3f, graph %.3f %s "
                "boxed tc rgb '%s' front\n", 100 * yield_target,
                mc->lower95 >= yield_target ? "met" : "MISSED", x, y, align, PLOT_ACCENT);
        y -= dy;
    }
    if (!isnan(g.gm_db)) {
        fprintf(s, "set label \"pass also needs gain margin %.4g dB\" at graph %.3f, graph %.3f "
                "%s boxed tc rgb '%s' front\n", g.gm_db, x, y, align, PLOT_INK);
        y -= dy;
    }
    if (unstable || nocross) {
        fprintf(s, "set label \"failures: %d unstable, %d without a crossover (not drawn)\" at "
                "graph %.3f, graph %.3f %s boxed tc rgb '%s' front\n", unstable, nocross, x, y, align,
                PLOT_ACCENT);
        y -= dy;
    }
    fprintf(s, "set label \"shaded: below the %s, these samples fail\" at graph %.3f, graph %.3f %s "
            "boxed tc rgb '%s' front\n", design_goal_word(g), x, y, align, PLOT_INK);
    y -= dy;
    fprintf(s, "set label \"operating point:%s\" at graph %.3f, graph %.3f %s boxed tc rgb '%s' front\n",
            nsets ? "" : " the file's own values", x, y, align, PLOT_INK);
    for (int k = 0; k < nsets && k < 6; k++) {
        y -= dy;
        char line[300];
        snprintf(line, sizeof line, "  --set %s%s", sets[k], k == 5 && nsets > 6 ? " ..." : "");
        fputs("set label ", s);
        plot_quote(s, line);
        fprintf(s, " at graph %.3f, graph %.3f %s noenhanced boxed tc rgb '%s' front\n", x, y, align,
                PLOT_INK);
    }
}

int figure_histogram(const figure_opts *fo, const desc *d, const mc_result *mc,
                     const check_result *nominal, const char *const *sets, int nsets,
                     design_goal g, double yield_target, lw_error *err)
{
    double lo = INFINITY, hi = -INFINITY, sum = 0;
    int n = 0;
    for (int i = 0; i < mc->nsamples; i++)
        if (mc->valid[i] && !isnan(mc->pts[i].pm_deg)) {
            lo = fmin(lo, mc->pts[i].pm_deg);
            hi = fmax(hi, mc->pts[i].pm_deg);
            sum += mc->pts[i].pm_deg;
            n++;
        }
    double op = nominal && nominal->mg.best_cross >= 0
                    ? nominal->mg.cross[nominal->mg.best_cross].value : NAN;
    plot_job *job;
    int rc = plot_begin(fo->path, fo->width, fo->height, &job, err);
    if (rc)
        return rc;
    FILE *f = plot_data(job, "hist.dat", err);
    if (!f) {
        plot_abort(job);
        return LW_ENUMERIC;
    }
    /* bins over the data; the axis also reaches the goal and the operating point */
    double w = n && hi > lo ? (hi - lo) / HIST_BINS : 1.0;
    int counts[HIST_BINS + 1] = { 0 };
    for (int i = 0; i < mc->nsamples; i++)
        if (mc->valid[i] && !isnan(mc->pts[i].pm_deg)) {
            int b = (int)((mc->pts[i].pm_deg - lo) / w);
            counts[b < 0 ? 0 : (b > HIST_BINS ? HIST_BINS : b)]++;
        }
    for (int b = 0; n && b <= HIST_BINS; b++)
        fprintf(f, "%.10g %d\n", lo + (b + 0.5) * w, counts[b]);
    fputs("0 0\n", f); /* never empty */
    double xlo = fmin(n ? lo : g.pm_deg, g.pm_deg), xhi = fmax(n ? hi : g.pm_deg, g.pm_deg);
    if (!isnan(op))
        xlo = fmin(xlo, op), xhi = fmax(xhi, op);
    double pad = 0.06 * (xhi - xlo) + 0.5;
    xlo -= pad;
    xhi += pad;
    FILE *s = plot_script(job);
    char extra[64];
    snprintf(extra, sizeof extra, "%d samples", mc->nsamples);
    figure_style(s);
    fputs("set style textbox opaque noborder margins 1,1\n", s);
    figure_title(s, "Phase margin spread", d, extra);
    /* the samples below the goal fail: that side is shaded */
    fprintf(s, "set xrange [%.10g:%.10g]\nset yrange [0:*]\nset offsets 0, 0, graph 0.45, 0\n"
            "set xlabel 'phase margin (degrees)'\nset ylabel 'samples'\nset boxwidth %.10g\n"
            "set style fill solid 0.55 border lc rgb '%s'\n", xlo, xhi, w * 0.9, PLOT_INK);
    if (g.pm_deg > xlo)
        fprintf(s, "set object rect from graph 0, graph 0 to first %.10g, graph 1 fc rgb '%s' "
                "fs solid 0.6 noborder behind\n", g.pm_deg, FIG_UNSTABLE_FILL);
    fprintf(s, "set arrow from %.10g, graph 0 to %.10g, graph 1 nohead lc rgb '%s' lw 2 dt 2\n"
            "set label '%s %.4g\xC2\xB0' at %.10g, graph 0.03 %s tc rgb '%s'\n", g.pm_deg, g.pm_deg,
            PLOT_ACCENT, design_goal_word(g), g.pm_deg, g.pm_deg,
            g.pm_deg > 0.5 * (xlo + xhi) ? "right offset -0.5,0" : "left offset 0.5,0", PLOT_ACCENT);
    /* the operating point: the analysis with the --set values and no spread */
    if (!isnan(op))
        fprintf(s, "set arrow from %.10g, graph 0 to %.10g, graph 0.72 nohead lc rgb '%s' lw 2 "
                "front\nset label 'operating point %.1f\xC2\xB0' at %.10g, graph 0.74 center "
                "boxed tc rgb '%s' front\n", op, op, PLOT_EXTRA, op, op, PLOT_EXTRA);
    /* the notes go on the side away from most samples */
    double mean = n ? sum / n : g.pm_deg;
    int right = (mean - xlo) / (xhi - xlo) < 0.5;
    histogram_notes(s, mc, sets, nsets, g, yield_target, right ? 0.98 : 0.02,
                    right ? "right" : "left");
    fprintf(s, "set key off\nplot '%s' using 1:2 with boxes lc rgb '%s' notitle\n",
            plot_path(job, "hist.dat"), PLOT_INK);
    return plot_finish(job, fo->keep_dir, err);
}
