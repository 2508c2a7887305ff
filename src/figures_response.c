/* figures_response: |H| with its phase, and the step response, as gnuplot
 * jobs. See figures_response.h. */
#include "loopwise/figures_response.h"

#include <math.h>
#include <string.h>

#include "loopwise/units.h"

enum { CURVE_POINTS = 600, STEP_POINTS = 1200 };

static void what(const response_report *rr, char *buf, size_t n)
{
    if (rr->from)
        snprintf(buf, n, "from input %s to %s", rr->from, rr->to);
    else
        snprintf(buf, n, "current into %s, read at %s", rr->inject, rr->to);
}

int figure_response(const figure_opts *fo, const desc *d, const response_report *rr,
                    response *rs, lw_error *err)
{
    const response_result *res = rr->res;
    plot_job *job;
    int rc = plot_begin(fo->path, fo->width, fo->height, &job, err);
    if (rc)
        return rc;
    FILE *f = plot_data(job, "h.dat", err);
    if (!f) {
        plot_abort(job);
        return LW_ENUMERIC;
    }
    double lo = log10(res->fmin_hz), hi = log10(res->fmax_hz), top = -INFINITY, bot = INFINITY;
    double phmin = INFINITY, phmax = -INFINITY;
    fputs("# hz db phase_deg\n", f);
    for (int k = 0; k < CURVE_POINTS; k++) {
        double hz = pow(10.0, lo + (hi - lo) * k / (CURVE_POINTS - 1)), mag;
        double ph = response_phase(rs, res, hz, &mag);
        if (!(mag > 0) || !isfinite(mag) || !isfinite(ph))
            continue;
        double v = 20.0 * log10(mag);
        fprintf(f, "%.10g %.10g %.10g\n", hz, v, ph);
        top = fmax(top, v);
        bot = fmin(bot, v);
        phmin = fmin(phmin, ph);
        phmax = fmax(phmax, ph);
    }
    fputs("1 ? ?\n", f); /* never empty: H may be zero everywhere */
    FILE *s = plot_script(job);
    char extra[200], a[32], b[32];
    what(rr, extra, sizeof extra);
    figure_style(s);
    fprintf(s, "set datafile missing '?'\nset multiplot layout 2,1\nset logscale x\n"
            "set format x '%%.0s%%c'\nset xrange [%.10g:%.10g]\nset lmargin 11\nset rmargin 4\n",
            res->fmin_hz, res->fmax_hz);
    figure_title(s, "Closed-loop response", d, extra);
    if (isfinite(top))
        fprintf(s, "set yrange [%.6g:%.6g]\n", fmax(bot, top - 160.0) - 5.0, top + 8.0);
    fprintf(s, "set ylabel '|H| (dB%s)'\nset xlabel ''\nset key bottom left\n",
            rr->from ? "" : " ohm");
    double adc = fabs(res->dc);
    if (adc > 0 && isfinite(adc))
        fprintf(s, "set arrow from graph 0, first %.10g to graph 1, first %.10g nohead lc rgb '%s' "
                "dt 3\n", 20 * log10(adc), 20 * log10(adc), PLOT_MUTED);
    if (res->peak_hz > 0 && res->peak_value > 0)
        fprintf(s, "set label 'peak %.1f dB at %s' at %.10g, %.10g point pt 7 ps 1.2 lc rgb '%s' "
                "offset 1,0.6 tc rgb '%s'\n", 20 * log10(res->peak_value),
                si_format(res->peak_hz, "Hz", a, sizeof a), res->peak_hz, 20 * log10(res->peak_value),
                PLOT_ACCENT, PLOT_INK);
    if (!isnan(res->bandwidth_hz))
        fprintf(s, "set arrow from %.10g, graph 0 to %.10g, graph 1 nohead lc rgb '%s' dt 2\n"
                "set label 'bandwidth %s' at %.10g, graph 0.1 offset 0.5,0 tc rgb '%s'\n",
                res->bandwidth_hz, res->bandwidth_hz, PLOT_ACCENT,
                si_format(res->bandwidth_hz, "Hz", b, sizeof b), res->bandwidth_hz, PLOT_ACCENT);
    fprintf(s, "plot '%s' using 1:2 with lines ls 1 title '|H|'%s\n", plot_path(job, "h.dat"),
            adc > 0 && isfinite(adc) ? ", 1/0 with lines ls 3 title 'DC value'" : "");
    fputs("unset title\nunset label\nunset arrow\nset xlabel 'frequency (Hz)'\n"
          "set ylabel 'phase (degrees)'\nset key top right\n", s);
    if (isfinite(phmin))
        fprintf(s, "set yrange [%.6g:%.6g]\nset ytics 90\n", 90.0 * floor((phmin - 20.0) / 90.0),
                90.0 * ceil((phmax + 20.0) / 90.0));
    fprintf(s, "plot '%s' using 1:3 with lines ls 2 title 'phase of H'\nunset multiplot\n",
            plot_path(job, "h.dat"));
    return plot_finish(job, fo->keep_dir, err);
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
    fputs("# t_s y\n", f);
    fprintf(f, "0 %.12g\n", st->initial);
    for (int k = 1; k <= STEP_POINTS; k++) {
        double t = tmax * k / STEP_POINTS;
        if (!isnan(st->peak_time) && st->peak_time > tmax * (k - 1) / STEP_POINTS &&
            st->peak_time < t)
            fprintf(f, "%.12g %.12g\n", st->peak_time, st->peak_value);
        fprintf(f, "%.12g %.12g\n", t, step_value(sf, st, t));
    }
    FILE *s = plot_script(job);
    char extra[200], a[32], b[32];
    what(rr, extra, sizeof extra);
    figure_style(s);
    figure_title(s, rr->from ? "Step response, 1 V step" : "Step response, 1 A step", d, extra);
    double base = st->final != 0 ? fabs(st->final) : fabs(st->peak_value);
    char yl[120];
    snprintf(yl, sizeof yl, "voltage at %s", rr->to);
    fprintf(s, "set xrange [0:%.10g]\nset format x '%%.3s%%cs'\nset format y '%%.3s%%cV'\n"
            "set xlabel 'time after the step'\nset key bottom right\nset ylabel ", tmax);
    plot_quote(s, yl);
    fputs(" noenhanced\n", s);
    fprintf(s, "set arrow from graph 0, first %.12g to graph 1, first %.12g nohead lc rgb '%s' "
            "dt 2\nset arrow from graph 0, first %.12g to graph 1, first %.12g nohead lc rgb '%s' "
            "dt 2\n", st->final + 0.01 * base, st->final + 0.01 * base, PLOT_MUTED,
            st->final - 0.01 * base, st->final - 0.01 * base, PLOT_MUTED);
    if (!isnan(st->peak_time))
        fprintf(s, "set label 'peak %s at %s (%.3g%% over)' at %.12g, %.12g point pt 7 ps 1.3 "
                "lc rgb '%s' offset 1,0.8 tc rgb '%s'\n", si_format(st->peak_value, "V", a, sizeof a),
                si_format(st->peak_time, "s", b, sizeof b), isnan(st->overshoot_pct) ? 0.0
                : st->overshoot_pct, st->peak_time, st->peak_value, PLOT_ACCENT, PLOT_INK);
    if (st->settle1 > 0)
        fprintf(s, "set arrow from %.12g, graph 0 to %.12g, graph 1 nohead lc rgb '%s' lw 1.5 "
                "dt 4\nset label 'within 1%% from %s' at %.12g, graph 0.06 offset 0.6,0 "
                "tc rgb '%s'\n", st->settle1, st->settle1, PLOT_ACCENT,
                si_format(st->settle1, "s", a, sizeof a), st->settle1, PLOT_ACCENT);
    fprintf(s, "plot '%s' using 1:2 with lines ls 1 title 'y(t)', %.12g with lines ls 3 "
            "dt 1 title 'final value', 1/0 with lines ls 3 title '1%% band'\n",
            plot_path(job, "y.dat"), st->final);
    return plot_finish(job, fo->keep_dir, err);
}
