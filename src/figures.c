/* figures: Bode plot, pole-zero map and margin curves as gnuplot jobs. */
#include "loopwise/figures.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/units.h"

#define TWO_PI 6.283185307179586
enum { BODE_POINTS = 600 };

/* Common look: the project's palette, light grid, no enhanced-text surprises
 * in user strings (they are quoted and marked noenhanced). */
static void style(FILE *s)
{
    fprintf(s, "set border lc rgb '%s'\nset grid xtics ytics mxtics lc rgb '#d5dbe1' lw 1 dt 1\n"
            "set key top right box lc rgb '#d5dbe1' opaque\n"
            "set style line 1 lc rgb '%s' lw 2.2 dt 1\n"
            "set style line 2 lc rgb '%s' lw 1.8 dt 2\n"
            "set style line 3 lc rgb '%s' lw 1.2 dt 4\n"
            "set style line 4 lc rgb '%s' lw 1.6 dt 3\n",
            PLOT_INK, PLOT_INK, PLOT_ACCENT, PLOT_MUTED, PLOT_EXTRA);
}

static void title(FILE *s, const char *what, const desc *d, const char *extra)
{
    char buf[600];
    snprintf(buf, sizeof buf, "%s: %s%s%s", what, d->path, extra ? ", " : "", extra ? extra : "");
    fputs("set title ", s);
    plot_quote(s, buf);
    fputs(" noenhanced\n", s);
}

static double complex root_hz(double complex v)
{
    return v / TWO_PI;
}

/* ---- Bode ---------------------------------------------------------------- */

static int bode_data(plot_job *job, const char *name, lgain *lg, const lg_tf *tf, double lo,
                     double hi, double *phmin, double *phmax, lw_error *err)
{
    FILE *f = plot_data(job, name, err);
    if (!f)
        return LW_ENUMERIC;
    for (int k = 0; k < BODE_POINTS; k++) {
        double hz = pow(10.0, lo + (hi - lo) * k / (BODE_POINTS - 1)), mag;
        double ph = margin_phase(lg, tf, hz, &mag, NULL);
        if (mag > 0 && isfinite(mag)) {
            fprintf(f, "%.10g %.10g %.10g\n", hz, 20.0 * log10(mag), ph);
            *phmin = fmin(*phmin, ph);
            *phmax = fmax(*phmax, ph);
        }
    }
    return LW_OK;
}

/* Poles and zeros along the frequency axis: x for poles, o for left-half-
 * plane zeros, filled triangles for right-half-plane zeros. */
static int pz_data(plot_job *job, const check_result *r, lw_error *err)
{
    FILE *f = plot_data(job, "pz.dat", err);
    if (!f)
        return LW_ENUMERIC;
    const lg_tf *tf = &r->tf;
    fputs("# hz kind(0 pole, 1 lhp zero, 2 rhp zero)\n", f);
    for (int k = 0; k < tf->npoles; k++)
        if (!tf->hidden[k] && tf->poles[k] != 0 && cimag(tf->poles[k]) <= 0)
            fprintf(f, "%.10g 0\n", cabs(root_hz(tf->poles[k])));
    for (int k = 0; k < tf->nzeros; k++)
        if (tf->zeros[k] != 0 && cimag(tf->zeros[k]) <= 0)
            fprintf(f, "%.10g %d\n", cabs(root_hz(tf->zeros[k])), creal(tf->zeros[k]) > 0 ? 2 : 1);
    fputs("1 9\n", f); /* keeps the file non-empty for gnuplot; kind 9 is never drawn */
    return LW_OK;
}

static void bode_marks(FILE *s, const check_result *r)
{
    const margins *mg = &r->mg;
    char a[32];
    for (int k = 0; k < mg->ncross; k++) {
        fprintf(s, "set arrow from %.10g, graph 0 to %.10g, graph 1 nohead lc rgb '%s' dt 3\n",
                mg->cross[k].hz, mg->cross[k].hz, PLOT_MUTED);
        fprintf(s, "set label 'PM %.1f\xC2\xB0 at %s' at %.10g, graph %.2f offset 0.5,0 "
                "tc rgb '%s' noenhanced\n", mg->cross[k].value,
                si_format(mg->cross[k].hz, "Hz", a, sizeof a), mg->cross[k].hz,
                0.92 - 0.07 * k, PLOT_INK);
    }
    for (int k = 0; k < mg->nphase && k < 4; k++)
        fprintf(s, "set label 'GM %.1f dB at %s' at %.10g, graph %.2f offset 0.5,0 "
                "tc rgb '%s' noenhanced\n", mg->phase[k].value,
                si_format(mg->phase[k].hz, "Hz", a, sizeof a), mg->phase[k].hz,
                0.62 - 0.07 * k, PLOT_ACCENT);
}

int figure_bode(const figure_opts *fo, const desc *d, const model *m, const check_result *r,
                int each, lw_error *err)
{
    plot_job *job;
    int rc = plot_begin(fo->path, fo->width, fo->height, &job, err);
    if (rc)
        return rc;
    double lo = log10(r->mg.fmin_hz), hi = log10(r->mg.fmax_hz);
    double phmin = INFINITY, phmax = -INFINITY;
    rc = bode_data(job, "net.dat", r->lg, &r->tf, lo, hi, &phmin, &phmax, err);
    for (int l = 0; !rc && each && r->loop_lg && l < r->nloops; l++) {
        char name[32];
        snprintf(name, sizeof name, "loop%d.dat", l);
        if (r->loop_lg[l])
            rc = bode_data(job, name, r->loop_lg[l], &r->loop_tf[l], lo, hi, &phmin, &phmax, err);
    }
    if (!rc)
        rc = pz_data(job, r, err);
    if (rc) {
        plot_abort(job);
        return rc;
    }
    FILE *s = plot_script(job);
    char extra[200];
    snprintf(extra, sizeof extra, "loop opened at gm %s", d->elems[m->gm[m->brk].elem].name);
    style(s);
    fprintf(s, "set multiplot layout 2,1\nset logscale x\nset format x '%%.0s%%c'\n"
            "set xrange [%.10g:%.10g]\nset lmargin 11\nset rmargin 4\n",
            r->mg.fmin_hz, r->mg.fmax_hz);
    title(s, "Loop gain", d, extra);
    /* keep the interesting part: 160 dB below the low-frequency gain at most */
    double top = r->tf.dc != 0 && isfinite(r->tf.dc) ? 20.0 * log10(fabs(r->tf.dc)) : 100.0;
    fprintf(s, "set ylabel 'magnitude (dB)'\nset xlabel ''\nset yrange [%.4g:*]\n"
            "set key bottom left\n", fmin(-40.0, top - 160.0));
    bode_marks(s, r);
    fprintf(s, "plot 0 with lines ls 3 notitle, '%s' using 1:2 with lines ls 1 title 'net loop gain T'",
            plot_path(job, "net.dat"));
    for (int l = 0; each && r->loop_lg && l < r->nloops; l++) {
        char name[32], t[100];
        snprintf(name, sizeof name, "loop%d.dat", l);
        if (!r->loop_lg[l])
            continue;
        snprintf(t, sizeof t, "loop %s (own gain)", d->loops[l].name);
        fprintf(s, ", '%s' using 1:2 with lines ls %d title ", plot_path(job, name), 2 + (l % 3));
        plot_quote(s, t);
        fputs(" noenhanced", s);
    }
    fprintf(s, ", '%s' using 1:($2==0 ? 0 : 1/0) axes x1y1 with points pt 2 ps 1.6 lc rgb '%s' "
            "title 'pole', '' using 1:($2==1 ? 0 : 1/0) with points pt 6 ps 1.6 lc rgb '%s' "
            "title 'zero (left half-plane)', '' using 1:($2==2 ? 0 : 1/0) with points pt 9 ps 1.8 "
            "lc rgb '%s' title 'zero (right half-plane)'\n", plot_path(job, "pz.dat"), PLOT_INK,
            PLOT_ACCENT, PLOT_ACCENT);
    fputs("unset title\nunset label\nunset arrow\nset xlabel 'frequency (Hz)'\n"
          "set ylabel 'phase (degrees)'\nset key top right\n", s);
    double ylo = 90.0 * floor((phmin - 20.0) / 90.0), yhi = 90.0 * ceil((phmax + 20.0) / 90.0);
    fprintf(s, "set yrange [%.6g:%.6g]\nset ytics 90\n", ylo, yhi);
    bode_marks(s, r);
    fprintf(s, "plot -180 with lines ls 3 title '-180\xC2\xB0 (mod 360\xC2\xB0)', 180 with lines ls 3 "
            "notitle, -540 with lines ls 3 notitle, '%s' using 1:3 with lines ls 1 title 'phase of T'",
            plot_path(job, "net.dat"));
    for (int l = 0; each && r->loop_lg && l < r->nloops; l++) {
        char name[32];
        snprintf(name, sizeof name, "loop%d.dat", l);
        if (r->loop_lg[l])
            fprintf(s, ", '%s' using 1:3 with lines ls %d notitle", plot_path(job, name), 2 + (l % 3));
    }
    fputs("\nunset multiplot\n", s);
    return plot_finish(job, fo->keep_dir, err);
}

/* ---- pole-zero map -------------------------------------------------------- */

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
    fputs("# u_re u_im kind(0 open-loop pole, 1 zero, 2 closed-loop pole)\n", f);
    for (int k = 0; k < tf->npoles + tf->nzeros + r->ncl; k++) {
        double complex v = k < tf->npoles ? tf->poles[k]
                           : k < tf->npoles + tf->nzeros ? tf->zeros[k - tf->npoles]
                                                         : r->cl[k - tf->npoles - tf->nzeros];
        int kind = k < tf->npoles ? 0 : (k < tf->npoles + tf->nzeros ? 1 : 2);
        double complex h = root_hz(v);
        maxabs = fmax(maxabs, fmax(fabs(creal(h)), fabs(cimag(h))));
        fprintf(f, "%.10g %.10g %d\n", slog(creal(h)), slog(cimag(h)), kind);
    }
    FILE *s = plot_script(job);
    style(s);
    title(s, "Poles and zeros", d, NULL);
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
    fprintf(s, "set arrow from 0, graph 0 to 0, graph 1 nohead lc rgb '%s' dt 2\n"
            "set arrow from graph 0, first 0 to graph 1, first 0 nohead lc rgb '%s' dt 2\n",
            PLOT_MUTED, PLOT_MUTED);
    fprintf(s, "plot '%s' using 1:($3==0 ? $2 : 1/0) with points pt 2 ps 2 lw 2 lc rgb '%s' "
            "title 'open-loop pole', '' using 1:($3==1 ? $2 : 1/0) with points pt 6 ps 2 lw 2 "
            "lc rgb '%s' title 'zero of T', '' using 1:($3==2 ? $2 : 1/0) with points pt 5 ps 1.4 "
            "lc rgb '%s' title 'closed-loop pole'\n", plot_path(job, "roots.dat"), PLOT_INK,
            PLOT_ACCENT, PLOT_EXTRA);
    return plot_finish(job, fo->keep_dir, err);
}

/* ---- margin against a value ------------------------------------------------ */

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
    fputs("# value phase_margin_deg crossover_hz\n", f);
    for (int k = 0; k < sw->npts; k++) {
        const design_point *p = &sw->pts[k];
        fprintf(f, "%.10g ", p->value);
        if (isnan(p->pm_deg))
            fputs("? ?\n", f);
        else
            fprintf(f, "%.10g %.10g\n", p->pm_deg, p->crossover_hz);
    }
    FILE *s = plot_script(job);
    char extra[200], a[32];
    snprintf(extra, sizeof extra, "varying %s", what);
    style(s);
    title(s, "Phase margin", d, extra);
    fputs("set datafile missing '?'\n", s);
    if (sw->npts > 1)
        fprintf(s, "set xrange [%.10g:%.10g]\n", sw->pts[0].value, sw->pts[sw->npts - 1].value);
    if (!lin)
        fputs("set logscale x\n", s);
    fputs("set format x '%.0s%c'\nset logscale y2\nset format y2 '%.0s%cHz'\nset ytics nomirror\n"
          "set y2tics\n", s);
    fputs("set xlabel ", s);
    char xl[160];
    snprintf(xl, sizeof xl, "%s (%s)", what,
             !*unit ? "value" : !strcmp(unit, "\xCE\xA9") ? "ohm" : unit);
    plot_quote(s, xl);
    fputs(" noenhanced\nset ylabel 'phase margin (degrees)'\nset y2label 'crossover (Hz)'\n", s);
    for (int k = 0; k < sw->ncross; k++) {
        fprintf(s, "set arrow from %.10g, graph 0 to %.10g, graph 1 nohead lc rgb '%s' dt 3\n",
                sw->cross[k].value, sw->cross[k].value, PLOT_ACCENT);
        fprintf(s, "set label '%s %s' at %.10g, graph %.2f offset 0.5,0 tc rgb '%s' noenhanced\n",
                sw->cross[k].rises ? "rises through target at" : "falls through target at",
                si_format(sw->cross[k].value, unit, a, sizeof a), sw->cross[k].value,
                0.08 + 0.07 * k, PLOT_ACCENT);
    }
    fprintf(s, "plot '%s' using 1:2 axes x1y1 with linespoints ls 1 pt 7 ps 0.6 title 'phase margin', "
            "'' using 1:3 axes x1y2 with lines ls 2 title 'crossover', %.10g axes x1y1 with lines "
            "ls 3 title 'target %.4g\xC2\xB0'\n", plot_path(job, "margin.dat"), g.pm_deg, g.pm_deg);
    return plot_finish(job, fo->keep_dir, err);
}

/* ---- Monte Carlo histogram ------------------------------------------------- */

int figure_histogram(const figure_opts *fo, const desc *d, const mc_result *mc,
                     design_goal g, double yield_target, lw_error *err)
{
    (void)yield_target;
    double *pm = malloc(sizeof(double) * (size_t)(mc->nsamples + 1));
    if (!pm)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    int n = 0;
    for (int i = 0; i < mc->nsamples; i++)
        if (mc->valid[i] && !isnan(mc->pts[i].pm_deg))
            pm[n++] = mc->pts[i].pm_deg;
    plot_job *job;
    int rc = plot_begin(fo->path, fo->width, fo->height, &job, err);
    if (rc)
        return rc;
    double lo = INFINITY, hi = -INFINITY;
    for (int k = 0; k < n; k++) {
        lo = fmin(lo, pm[k]);
        hi = fmax(hi, pm[k]);
    }
    /* bins over the data; the axis also reaches the target */
    double xlo = fmin(lo, g.pm_deg), xhi = fmax(hi, g.pm_deg), pad = 0.03 * (xhi - xlo + 1e-9);
    int nb = 60;
    double w = hi > lo ? (hi - lo) / nb : 1.0;
    int counts[61] = { 0 };
    for (int k = 0; k < n; k++) {
        int b = (int)((pm[k] - lo) / w);
        counts[b < 0 ? 0 : (b > nb ? nb : b)]++;
    }
    FILE *f = plot_data(job, "hist.dat", err);
    if (!f) {
        plot_abort(job);
        return LW_ENUMERIC;
    }
    for (int b = 0; b <= nb; b++)
        fprintf(f, "%.10g %d\n", lo + (b + 0.5) * w, counts[b]);
    FILE *s = plot_script(job);
    char extra[64];
    snprintf(extra, sizeof extra, "%d samples", n);
    style(s);
    title(s, "Phase margin spread", d, extra);
    fprintf(s, "set xrange [%.10g:%.10g]\n", xlo - pad, xhi + pad);
    fprintf(s, "set xlabel 'phase margin (degrees)'\nset ylabel 'samples'\nset boxwidth %.10g\n"
            "set style fill solid 0.55 border lc rgb '%s'\nset yrange [0:*]\n"
            "set arrow from %.10g, graph 0 to %.10g, graph 1 nohead lc rgb '%s' lw 2 dt 2\n"
            "set label 'target %.4g\xC2\xB0' at %.10g, graph 0.95 %s tc rgb '%s'\n",
            w * 0.9, PLOT_INK, g.pm_deg, g.pm_deg, PLOT_ACCENT, g.pm_deg, g.pm_deg,
            g.pm_deg > hi ? "right offset -0.5,0" : "left offset 0.5,0", PLOT_ACCENT);
    fprintf(s, "set key top left\nplot '%s' using 1:2 with boxes lc rgb '%s' title 'samples per bin'\n",
            plot_path(job, "hist.dat"), PLOT_INK);
    return plot_finish(job, fo->keep_dir, err);
}
