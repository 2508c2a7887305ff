/* figures: the project's look and the Monte Carlo histogram of the phase
 * margin. */
#include "loopwise/figures.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/layout.h"
#include "loopwise/units.h"


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

double figure_notes_left(const figure_opts *fo, double widest)
{
    double w = fmin(0.5 * fo->width, fmax(330.0, 0.34 * fo->width)) / fo->width;
    return fmin(widest, 0.985 - w);
}

int figure_note(FILE *s, double x, double *y, double dy, int width, const char *color,
                const char *text)
{
    char line[256];
    const char *p = text;
    int lines = 0;
    if (width < 8)
        width = 8;
    for (int first = 1; *p; first = 0, lines++) {
        int room = first ? width : width - 2, len = (int)strlen(p), take = len;
        if (len > room) {
            take = room;
            while (take > 0 && p[take] != ' ')
                take--;
            if (take == 0) /* one long word: cut it, not inside a UTF-8 character */
                for (take = room; take > 1 && ((unsigned char)p[take] & 0xC0) == 0x80; take--)
                    ;
        }
        snprintf(line, sizeof line, "%s%.*s", first ? "" : "  ", take < 250 ? take : 250, p);
        if (s)
            fprintf(s, "set label \"%s\" at screen %.4f, screen %.4f left font ',9' tc rgb '%s' "
                    "front\n", line, x, *y, color);
        *y -= dy;
        p += take;
        while (*p == ' ')
            p++;
    }
    return lines;
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

