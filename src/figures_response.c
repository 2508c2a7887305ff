/* figures_response: the pictures of 'response', in the look of the Bode
 * picture (figures_bode.c): |H| over its phase over a strip with H's poles
 * and zeros, on one frequency axis; and y(t) after a unit step with its
 * final value, the 1% band, the peak and the 1% settling time marked. */
#include "loopwise/figures_response.h"

#include <math.h>
#include <string.h>

#include "loopwise/units.h"

#define TWO_PI 6.283185307179586
enum { CURVE_POINTS = 600, STEP_POINTS = 1500 };

#define PANEL_LEFT 0.10
#define PANEL_RIGHT 0.90

static void what(const response_report *rr, char *buf, size_t n)
{
    if (rr->from)
        snprintf(buf, n, "from input %s to %s", rr->from, rr->to);
    else
        snprintf(buf, n, "current into %s, read at %s", rr->inject, rr->to);
}

/* A label at x (a fraction of the axis) on the side where it fits. */
static const char *side(double frac)
{
    return frac > 0.62 ? "right offset -0.8,0.7" : "left offset 0.8,0.7";
}

static int curve(plot_job *job, response *rs, const response_result *res, double *top,
                 double *bot, double *plo, double *phi, lw_error *err)
{
    FILE *f = plot_data(job, "h.dat", err);
    if (!f)
        return LW_ENUMERIC;
    double lo = log10(res->fmin_hz), hi = log10(res->fmax_hz);
    fputs("# hz db phase_deg\n", f);
    for (int k = 0; k < CURVE_POINTS; k++) {
        double hz = pow(10.0, lo + (hi - lo) * k / (CURVE_POINTS - 1)), mag;
        double ph = response_phase(rs, res, hz, &mag);
        if (!(mag > 0) || !isfinite(mag) || !isfinite(ph))
            continue;
        double v = 20.0 * log10(mag);
        fprintf(f, "%.10g %.10g %.10g\n", hz, v, ph);
        *top = fmax(*top, v);
        *bot = fmin(*bot, v);
        *plo = fmin(*plo, ph);
        *phi = fmax(*phi, ph);
    }
    fputs("1 ? ?\n", f); /* never empty: H may be zero everywhere */
    return LW_OK;
}

/* H's poles (the closed-loop poles it sees) on the upper row, its zeros on
 * the lower; a conjugate pair is one symbol. */
static int strip(plot_job *job, const response_result *res, lw_error *err)
{
    FILE *f = plot_data(job, "strip.dat", err);
    if (!f)
        return LW_ENUMERIC;
    const lg_tf *tf = &res->tf;
    fputs("# hz row kind(0 pole, 1 zero, 2 right-half-plane zero)\n", f);
    for (int k = 0; k < tf->npoles; k++)
        if (!tf->hidden[k] && tf->poles[k] != 0 && cimag(tf->poles[k]) <= 0)
            fprintf(f, "%.10g 0.7 0\n", cabs(tf->poles[k]) / TWO_PI);
    for (int k = 0; k < tf->nzeros; k++)
        if (tf->zeros[k] != 0 && cimag(tf->zeros[k]) <= 0)
            fprintf(f, "%.10g 0.3 %d\n", cabs(tf->zeros[k]) / TWO_PI,
                    creal(tf->zeros[k]) > 0 ? 2 : 1);
    fputs("1 -1 9\n", f); /* never drawn */
    return LW_OK;
}

int figure_response(const figure_opts *fo, const desc *d, const response_report *rr,
                    response *rs, lw_error *err)
{
    const response_result *res = rr->res;
    plot_job *job;
    int rc = plot_begin(fo->path, fo->width, fo->height, &job, err);
    if (rc)
        return rc;
    double top = -INFINITY, bot = INFINITY, plo = INFINITY, phi = -INFINITY;
    rc = curve(job, rs, res, &top, &bot, &plo, &phi, err);
    if (!rc)
        rc = strip(job, res, err);
    if (rc) {
        plot_abort(job);
        return rc;
    }
    FILE *s = plot_script(job);
    char extra[200], a[32], b[32];
    double lo = log10(res->fmin_hz), hi = log10(res->fmax_hz);
    what(rr, extra, sizeof extra);
    if (!rr->stable)
        strncat(extra, ", the closed loop is UNSTABLE", sizeof extra - strlen(extra) - 1);
    figure_style(s);
    fprintf(s, "set datafile missing '?'\nset multiplot\nset logscale x\nset xrange [%.10g:%.10g]\n"
            "set lmargin at screen %.3f\nset rmargin at screen %.3f\n", res->fmin_hz,
            res->fmax_hz, PANEL_LEFT, PANEL_RIGHT);
    figure_title(s, "Closed-loop response H", d, extra);
    if (!isfinite(top))
        top = 0, bot = -20;
    double ytop = 10.0 * ceil((top + 6.0) / 10.0), ybot = 10.0 * floor((fmax(bot, top - 160) - 4) / 10.0);
    fprintf(s, "set tmargin at screen 0.92\nset bmargin at screen 0.55\nset format x ''\n"
            "set ylabel '|H| (%s)'\nset yrange [%.6g:%.6g]\nset key bottom left\n",
            rr->from ? "dB" : "dB ohm", ybot, ytop);
    if (rr->from && res->peak_value < 1)
        /* a disturbance (attenuated at every frequency): its rejection as
         * designers quote it, -20 log10 |H|, on the right */
        fputs("set link y2 via 0 - y inverse 0 - y\nset y2tics\nset ytics nomirror\n"
              "set y2label 'rejection (dB)'\n", s);
    double adc = fabs(res->dc);
    if (adc > 0 && isfinite(adc))
        fprintf(s, "set arrow from graph 0, first %.10g to graph 1, first %.10g nohead lc rgb '%s' "
                "lw 1.2\n", 20 * log10(adc), 20 * log10(adc), PLOT_MUTED);
    if (res->peak_hz > 0 && res->peak_value > 0) {
        double x = (log10(res->peak_hz) - lo) / (hi - lo);
        fprintf(s, "set object circle at %.10g, first %.10g size screen 0.005 fc rgb '%s' fs solid "
                "front\nset label 'peak %.1f dB at %s' at %.10g, first %.10g %s tc rgb '%s' front\n",
                res->peak_hz, 20 * log10(res->peak_value), PLOT_ACCENT, 20 * log10(res->peak_value),
                si_format(res->peak_hz, "Hz", a, sizeof a), res->peak_hz,
                20 * log10(res->peak_value), side(x), PLOT_ACCENT);
    }
    if (!isnan(res->bandwidth_hz)) {
        double x = (log10(res->bandwidth_hz) - lo) / (hi - lo), y = 20 * log10(adc / sqrt(2.0));
        fprintf(s, "set object circle at %.10g, first %.10g size screen 0.005 fc rgb '%s' fs solid "
                "front\nset label '3 dB below DC at %s' at %.10g, first %.10g %s font ',9' "
                "tc rgb '%s' front\n", res->bandwidth_hz, y, PLOT_INK,
                si_format(res->bandwidth_hz, "Hz", b, sizeof b), res->bandwidth_hz, y,
                x > 0.62 ? "right offset -0.8,-0.9" : "left offset 0.8,-0.9", PLOT_INK);
    }
    fprintf(s, "plot '%s' using 1:2 with lines ls 1 title '|H|'%s\n", plot_path(job, "h.dat"),
            adc > 0 && isfinite(adc) ? ", 1/0 with lines lc rgb '" PLOT_MUTED "' lw 1.2 "
            "title 'its DC value'" : "");

    fputs("unset title\nunset label\nunset arrow\nunset object\nunset key\nunset y2tics\n"
          "unset y2label\nunset link y2\nset ytics mirror\n", s);
    if (!isfinite(plo))
        plo = phi = 0;
    plo = 90.0 * floor((plo - 20.0) / 90.0);
    phi = 90.0 * ceil((phi + 20.0) / 90.0);
    fprintf(s, "set tmargin at screen 0.53\nset bmargin at screen 0.22\nset ylabel 'phase of H "
            "(degrees)'\nset yrange [%.6g:%.6g]\nset ytics %d\n", plo, phi,
            phi - plo > 720 ? 180 : 90);
    fprintf(s, "plot '%s' using 1:3 with lines ls 1 notitle\n", plot_path(job, "h.dat"));

    fputs("unset ytics\nunset ylabel\n", s);
    fprintf(s, "set tmargin at screen 0.19\nset bmargin at screen 0.10\nset yrange [0:1]\n"
            "set format x '%%.0s%%c'\nset xlabel 'frequency (Hz)'\nset grid xtics mxtics\n"
            "set label 'poles of H' at graph 0, 0.7 right offset -0.8,0 tc rgb '%s'\n"
            "set label 'zeros' at graph 0, 0.3 right offset -0.8,0 tc rgb '%s'\n",
            PLOT_INK, PLOT_ACCENT);
    fprintf(s, "plot '%s' using 1:($3==0 ? $2 : 1/0) with points pt %d ps 1.3 lc rgb '%s' "
            "notitle, '' using 1:($3==1 ? $2 : 1/0) with points pt %d ps 1.6 lw 1.6 lc rgb '%s' "
            "notitle, '' using 1:($3==2 ? $2 : 1/0) with points pt %d ps 1.6 lw 1.6 lc rgb '%s' "
            "notitle\nunset multiplot\n", plot_path(job, "strip.dat"), FIG_PT_CL_POLE, PLOT_INK,
            FIG_PT_ZERO, PLOT_ACCENT, FIG_PT_RHP_ZERO, PLOT_ACCENT);
    return plot_finish(job, fo->keep_dir, err);
}

/* An SI prefix for an axis: the scale that brings v into [1, 1000). */
static double axis_unit(double v, char *prefix, size_t n)
{
    static const char *const pre[] = { "f", "p", "n", "\xC2\xB5", "m", "", "k", "M", "G" };
    int e3 = v > 0 && isfinite(v) ? (int)floor(log10(v) / 3.0) : 0;
    e3 = e3 < -5 ? -5 : (e3 > 3 ? 3 : e3);
    snprintf(prefix, n, "%s", pre[e3 + 5]);
    return pow(10.0, -3 * e3);
}


int figure_step(const figure_opts *fo, const desc *d, const response_report *rr, step_form *sf,
                lw_error *err)
{
    const step_result *st = rr->step;
    plot_job *job;
    int rc = plot_begin(fo->path, fo->width, fo->height, &job, err);
    if (rc)
        return rc;
    FILE *f = plot_data(job, "y.dat", err);
    if (!f) {
        plot_abort(job);
        return LW_ENUMERIC;
    }
    /* long enough to see it settle: past the 1% time and the peak by half */
    double tmax = 1.5 * fmax(st->settle1, isnan(st->peak_time) ? 0 : st->peak_time);
    if (!(tmax > 0))
        tmax = st->t_end > 0 ? st->t_end : 1.0;
    double ymax = fmax(fabs(st->final), fabs(st->peak_value));
    char tp[8], yp[8];
    double ts = axis_unit(tmax, tp, sizeof tp), ys = axis_unit(ymax, yp, sizeof yp);
    fputs("# t y (scaled to the axis units)\n", f);
    fprintf(f, "0 %.12g\n", st->initial * ys);
    for (int k = 1; k <= STEP_POINTS; k++) {
        double t = tmax * k / STEP_POINTS;
        if (!isnan(st->peak_time) && st->peak_time > tmax * (k - 1) / STEP_POINTS && st->peak_time < t)
            fprintf(f, "%.12g %.12g\n", st->peak_time * ts, st->peak_value * ys);
        fprintf(f, "%.12g %.12g\n", t * ts, step_value(sf, st, t) * ys);
    }
    FILE *s = plot_script(job);
    char extra[200], a[32], b[32], c[32], lbl[160];
    what(rr, extra, sizeof extra);
    figure_style(s);
    figure_title(s, rr->from ? "Step response, 1 V step" : "Step response, 1 A step", d, extra);
    double base = st->final != 0 ? fabs(st->final) : fabs(st->peak_value), fin = st->final * ys;
    fprintf(s, "set xrange [0:%.10g]\nset xlabel 'time after the step (%ss)'\nset key top right\n"
            "set lmargin at screen %.3f\nset rmargin at screen 0.95\nset ylabel ", tmax * ts, tp,
            PANEL_LEFT);
    snprintf(lbl, sizeof lbl, "voltage at %s (%sV)", rr->to, yp);
    plot_quote(s, lbl);
    fputs(" noenhanced\n", s);
    /* the 1% band as a shaded strip: visible even when it is thin beside
     * the peak */
    fprintf(s, "set object rectangle from graph 0, first %.12g to graph 1, first %.12g "
            "fc rgb '#d5dbe1' fs solid 0.8 noborder behind\n", fin - 0.01 * base * ys,
            fin + 0.01 * base * ys);
    if (!isnan(st->peak_time)) {
        double x = st->peak_time / tmax;
        snprintf(lbl, sizeof lbl, "peak %s at %s%s%s%s", si_format(st->peak_value, "V", a, sizeof a),
                 si_format(st->peak_time, "s", b, sizeof b), isnan(st->overshoot_pct) ? "" : " (",
                 isnan(st->overshoot_pct) ? "" : pct_format(st->overshoot_pct, c, sizeof c),
                 isnan(st->overshoot_pct) ? "" : " over)");
        fprintf(s, "set object circle at %.12g, first %.12g size screen 0.006 fc rgb '%s' fs solid "
                "front\nset label '%s' at %.12g, first %.12g %s tc rgb '%s' front\n",
                st->peak_time * ts, st->peak_value * ys, PLOT_ACCENT, lbl, st->peak_time * ts,
                st->peak_value * ys, x > 0.62 ? "right offset -1,0.2" : "left offset 1,0.2",
                PLOT_ACCENT);
    }
    if (st->settle1 > 0) {
        fprintf(s, "set arrow from %.12g, graph 0 to %.12g, graph 1 nohead lc rgb '%s' lw 1.5 "
                "dt 4\nset label 'within 1%% from %s' at %.12g, graph 0.06 right offset -0.6,0 "
                "tc rgb '%s'\n", st->settle1 * ts, st->settle1 * ts, PLOT_ACCENT,
                si_format(st->settle1, "s", a, sizeof a), st->settle1 * ts, PLOT_ACCENT);
    }
    fprintf(s, "plot '%s' using 1:2 with lines ls 1 title 'y(t)', %.12g with lines lc rgb '%s' "
            "lw 1.2 title 'final value %s', 1/0 with boxes fs solid 0.8 lc rgb '#d5dbe1' "
            "title '1%% band, \xC2\xB1%s'\n", plot_path(job, "y.dat"), fin, PLOT_MUTED,
            si_format(st->final, "V", a, sizeof a), si_format(0.01 * base, "V", b, sizeof b));
    return plot_finish(job, fo->keep_dir, err);
}
