/* figures_map: the phase margin over two values as a shaded map, the
 * boundary of the goal drawn through it as refined, the unstable points
 * marked. The shading runs from dark (small margin) to light (large margin)
 * on both sides of the goal, warm below it and cool above, so it reads in
 * grayscale too; the boundary is a dark line on a light halo, visible on
 * either. */
#include "loopwise/figures.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/units.h"

/* Boundary polylines: the edges of consecutive grid lines of A joined in
 * order when both lines cross the goal the same number of times; a line
 * with another count starts new pieces. Blank lines separate the pieces. */
static void boundary_data(FILE *f, const map_result *r, double z)
{
    fputs("# b a z (pieces separated by blank lines)\n", f);
    /* each run of joined lines gives one piece per crossing index */
    int start = 0;
    while (start < r->nedge) {
        int row = r->edge[start].row, count = 0;
        while (start + count < r->nedge && r->edge[start + count].row == row)
            count++;
        int end = start + count;
        while (end < r->nedge) {
            int row2 = r->edge[end].row, c2 = 0;
            while (end + c2 < r->nedge && r->edge[end + c2].row == row2)
                c2++;
            if (row2 != r->edge[end - 1].row + 1 || c2 != count)
                break;
            end += c2;
        }
        for (int j = 0; j < count; j++) {
            for (int e = start + j; e < end; e += count)
                fprintf(f, "%.10g %.10g %.10g\n", r->edge[e].b, r->edge[e].a, z);
            fputs("\n\n", f);
        }
        start = end;
    }
}

int figure_map(const figure_opts *fo, const desc *d, const char *const names[2],
               const char *const units[2], const map_result *r, design_goal g, int lin,
               lw_error *err)
{
    plot_job *job;
    int rc = plot_begin(fo->path, fo->width, fo->height, &job, err);
    if (rc)
        return rc;
    FILE *f = plot_data(job, "map.dat", err);
    FILE *fb = f ? plot_data(job, "boundary.dat", err) : NULL;
    FILE *fu = fb ? plot_data(job, "unstable.dat", err) : NULL;
    if (!fu) {
        plot_abort(job);
        return LW_ENUMERIC;
    }
    int n = r->n, unstable = 0, undefined = 0;
    double lo = INFINITY, hi = -INFINITY;
    fputs("# b a phase_margin_deg (rows of a separated by blank lines)\n", f);
    fputs("# b a: unstable points\n", fu);
    for (int i = 0; i < n; i++) {
        for (int j = 0; j < n; j++) {
            const design_point *p = &r->pts[i * n + j];
            if (isnan(p->pm_deg)) {
                fprintf(f, "%.10g %.10g ?\n", r->vb[j], r->va[i]);
                undefined++;
            } else {
                fprintf(f, "%.10g %.10g %.6g\n", r->vb[j], r->va[i], p->pm_deg);
                lo = fmin(lo, p->pm_deg);
                hi = fmax(hi, p->pm_deg);
            }
            if (!p->stable) {
                fprintf(fu, "%.10g %.10g %.6g\n", r->vb[j], r->va[i], g.pm_deg);
                unstable++;
            }
        }
        fputc('\n', f);
    }
    if (!unstable)
        fprintf(fu, "? ? ?\n");
    boundary_data(fb, r, g.pm_deg);
    if (!r->nedge)
        fprintf(fb, "? ? ?\n");
    /* the shading spans the margins found and the goal, at most 90 degrees
     * either side of it; beyond, the ends of the scale */
    if (!(lo <= hi))
        lo = hi = g.pm_deg;
    lo = fmax(fmin(lo, g.pm_deg - 5), g.pm_deg - 90);
    hi = fmin(fmax(hi, g.pm_deg + 5), g.pm_deg + 90);
    lo = 5 * floor(lo / 5);
    hi = 5 * ceil(hi / 5);
    double at = (g.pm_deg - lo) / (hi - lo);
    FILE *s = plot_script(job);
    char extra[240];
    snprintf(extra, sizeof extra, "%s against %s", names[0], names[1]);
    figure_style(s);
    figure_title(s, "Phase margin", d, extra);
    /* the shading is interpolated between the grid points, so that the
     * colour changes where the margin crosses the goal: a filled contour */
    fprintf(s, "set datafile missing '?'\nset view map\nset pm3d map interpolate 0,0\n"
            "set xrange [%.12g:%.12g]\nset yrange [%.12g:%.12g]\nset cbrange [%.6g:%.6g]\n",
            r->vb[0], r->vb[n - 1], r->va[0], r->va[n - 1], lo, hi);
    if (!lin)
        fputs("set logscale xy\n", s);
    figure_value_tics(s, "x", r->vb[0], r->vb[n - 1], lin, units[1]);
    figure_value_tics(s, "y", r->va[0], r->va[n - 1], lin, units[0]);
    figure_axis_label(s, "x", names[1], units[1]);
    figure_axis_label(s, "y", names[0], units[0]);
    /* dark to light on both sides of the goal: warm below, cool above */
    fprintf(s, "set palette defined (0 '#2b1a0e', %.6f '#c8671b', %.6f '#9aaaba', 1 '#f3f5f7')\n"
            "set cblabel 'phase margin (degrees)'\nset cbtics add ('%s %.4g\xC2\xB0' %.6g)\n"
            "set grid front lc rgb '#ffffff' lw 0.6\n"
            "set bmargin 5\nset key at screen 0.5, screen 0.05 center horizontal maxrows 1 box "
            "lc rgb '#d5dbe1'\n",
            fmin(fmax(at, 0.0), 1.0), fmin(fmax(at + 1e-6, 0.0), 1.0),
            design_goal_word(g), g.pm_deg, g.pm_deg);
    fprintf(s, "splot '%s' using 1:2:3 with pm3d notitle", plot_path(job, "map.dat"));
    fprintf(s, ", '%s' using 1:2:3 with lines lw 5 lc rgb '#ffffff' notitle",
            plot_path(job, "boundary.dat"));
    fprintf(s, ", '' using 1:2:3 with linespoints lw 2 lc rgb '%s' pt %d ps 0.8 title "
            "'boundary, %.4g\xC2\xB0 %s'", PLOT_INK, FIG_PT_BOUNDARY, g.pm_deg,
            design_goal_word(g));
    /* unstable points: a light star on a dark one, seen on any shade */
    if (unstable)
        fprintf(s, ", '%s' using 1:2:3 with points pt %d ps %.2f lw 3 lc rgb '%s' title "
                "'unstable', '' using 1:2:3 with points pt %d ps %.2f lw 1 lc rgb '#ffffff' "
                "notitle", plot_path(job, "unstable.dat"), FIG_PT_UNSTABLE, fmin(1.6, 32.0 / n),
                PLOT_INK, FIG_PT_UNSTABLE, 0.8 * fmin(1.6, 32.0 / n));
    if (undefined)
        fputs(", 1/0 with points pt 4 ps 0 lc rgb '#ffffff' title 'blank: no crossover'", s);
    fputs("\n", s);
    return plot_finish(job, fo->keep_dir, err);
}
