/* figures_roots: the roots of the loop in the s-plane (`roots -o`).
 *
 * The roots of an analog loop spread over many decades, almost all in the
 * left half-plane and most of them on or near the negative real axis. The
 * plane is therefore drawn with a logarithmic radius and the true angle: a
 * root s is drawn at rho·e^(j arg s), rho = log10(|s|/(2π f0)), f0 half a
 * decade below the smallest root, and only the upper half-plane is drawn
 * (the lower one mirrors it: a complex pair is drawn once, at +j). Then
 *   - the imaginary axis is still the vertical through the centre, so the
 *     right half-plane is still the right side, and stability reads as before;
 *   - a circle about the centre is one natural frequency |s|/2π (one per
 *     decade is drawn, its frequency on the axis where it meets the real axis);
 *   - a ray from the centre is one damping: a pair at angle φ from the
 *     negative real axis has ζ = cos φ and Q = 1/(2 cos φ) (the standard
 *     second-order form s² + (ω0/Q) s + ω0², from memory), so rays of
 *     constant Q are drawn and Q reads off them.
 * The frame holds the roots with a little room and the right half-plane
 * only as far as a root in it needs (a strip when it is empty). Open-loop
 * poles carry the numbers `check` gives them, placed where no label or mark
 * is (layout.h), and the key beside the plot says whose node each is; a
 * complex closed-loop pair carries its Q. */
#include "loopwise/figures.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/locus.h"
#include "loopwise/units.h"

#define TWO_PI 6.283185307179586
#define PI_ 3.14159265358979323846
/* The centre lies this many decades below the smallest root. */
#define INNER_DECADES 0.5
/* Room around the roots, decades of radius. */
#define ROOM 0.35
enum { CIRCLE_POINTS = 240, MAX_Q_LABELS = 6 };

static const double q_rays[] = { 0.707, 1, 2, 5 };
#define N_Q_RAYS ((int)(sizeof q_rays / sizeof *q_rays))

/* The drawn point of a root s (rad/s) for the centre frequency f0 (Hz). */
static double complex drawn(double complex s, double f0)
{
    double m = cabs(s) / TWO_PI;
    if (!(m > f0 * 1e-12))
        return 0; /* at the origin */
    double rho = log10(m / f0);
    return (rho > 0 ? rho : 0) * (s / cabs(s));
}

/* The first member of a conjugate pair (the lower one, sorted first), which
 * check's tables do not number. */
static int pair_lower(const double complex *v, int n, int k)
{
    return cimag(v[k]) < 0 && k + 1 < n && fabs(cimag(v[k]) + cimag(v[k + 1])) <= 1e-9 * cabs(v[k]);
}

typedef struct rootset {
    double complex *s;       /* every root: poles, zeros, closed-loop poles */
    int *kind;               /* 0 pole of T, 1 zero (left), 2 zero (right), 3 closed-loop pole */
    int n;
    double f0;
} rootset;

static int rootset_make(const check_result *r, rootset *rs)
{
    const lg_tf *tf = &r->tf;
    rs->n = tf->npoles + tf->nzeros + r->ncl;
    rs->s = malloc(sizeof *rs->s * (size_t)(rs->n + 1));
    rs->kind = malloc(sizeof *rs->kind * (size_t)(rs->n + 1));
    if (!rs->s || !rs->kind)
        return LW_ENOMEM;
    double lo = INFINITY;
    for (int k = 0; k < rs->n; k++) {
        double complex v = k < tf->npoles ? tf->poles[k]
                           : k < tf->npoles + tf->nzeros ? tf->zeros[k - tf->npoles]
                                                         : r->cl[k - tf->npoles - tf->nzeros];
        int kind = k < tf->npoles ? 0 : (k < tf->npoles + tf->nzeros ? 1 : 3);
        if (kind == 1 && creal(v) > 0)
            kind = 2;
        rs->s[k] = v;
        rs->kind[k] = kind;
        if (v != 0)
            lo = fmin(lo, cabs(v) / TWO_PI);
    }
    rs->f0 = isfinite(lo) ? lo * pow(10.0, -INNER_DECADES) : 1.0;
    return LW_OK;
}

/* The frame: every root of the upper half-plane with ROOM around it (the
 * lower half mirrors it), the centre, and the right half-plane as far as
 * its roots need or a strip of it. */
static void frame_of(const figure_opts *fo, const rootset *rs, layout_frame *fr, int *rhp_empty)
{
    double x0 = -1.0, x1 = 0, ym = 0.8;
    *rhp_empty = 1;
    for (int k = 0; k < rs->n; k++) {
        double complex p = drawn(rs->s[k], rs->f0);
        x0 = fmin(x0, creal(p));
        x1 = fmax(x1, creal(p));
        ym = fmax(ym, cimag(p));
        *rhp_empty &= !(creal(rs->s[k]) > 0);
    }
    x0 -= ROOM;
    ym += ROOM;
    x1 = *rhp_empty ? 0.09 * (x1 - x0) : x1 + ROOM;
    figure_frame_init(fo, fr);
    fr->left = 0.03;
    fr->right = figure_notes_left(fo, 0.66);
    fr->bottom = 0.10;
    fr->top = 0.91;
    fr->x0 = x0;
    fr->x1 = x1;
    fr->y0 = -0.6 * ROOM;
    fr->y1 = ym;
    layout_frame_equal(fr, LAYOUT_SHRINK_AREA);
    /* room gained in height goes above the roots, the real axis stays low */
    fr->y1 += -0.6 * ROOM - fr->y0;
    fr->y0 = -0.6 * ROOM;
}

static int write_roots(plot_job *job, const rootset *rs, int *kinds, lw_error *err)
{
    FILE *f = plot_data(job, "roots.dat", err);
    if (!f)
        return LW_ENUMERIC;
    fprintf(f, "# x y kind(0 open-loop pole, 1 zero, 2 right-half-plane zero, 3 closed-loop pole) "
            "re_hz im_hz; drawn at rho e^(j arg s), rho = log10(|s|/2pi / %.10g Hz)\n", rs->f0);
    *kinds = 0;
    for (int k = 0; k < rs->n; k++) {
        double complex p = drawn(rs->s[k], rs->f0);
        if (cimag(rs->s[k]) < 0)
            continue; /* the mirror image of its pair */
        fprintf(f, "%.10g %.10g %d %.10g %.10g\n", creal(p), cimag(p), rs->kind[k],
                creal(rs->s[k]) / TWO_PI, cimag(rs->s[k]) / TWO_PI);
        *kinds |= 1 << rs->kind[k];
    }
    fputs("0 0 9 0 0\n", f); /* never empty; kind 9 is never drawn */
    return LW_OK;
}

/* Decades between labelled circles: a label's width apart at least. */
static int decade_step(const layout_frame *fr)
{
    double per = layout_scale(fr), w = layout_text_w(fr, 7) + 10; /* "100 kHz" */
    int step = 1;
    while (step * per < w && step < 6)
        step++;
    return step;
}

/* The decade circles and the rays of constant Q, far enough to leave the frame. */
static int write_grid(plot_job *job, const layout_frame *fr, double f0, lw_error *err)
{
    int step = decade_step(fr);
    FILE *f = plot_data(job, "grid.dat", err);
    if (!f)
        return LW_ENUMERIC;
    double far = 2.0 * fmax(fmax(-fr->x0, fr->x1), fmax(-fr->y0, fr->y1));
    fputs("# x y kind (0 a circle of one natural frequency, a decade, labelled on the axis; "
          "3 one not labelled; 1 a ray of constant Q)\n", f);
    for (int e = (int)ceil(log10(f0)); log10(pow(10.0, e) / f0) < far; e++) {
        double rho = log10(pow(10.0, e) / f0);
        for (int k = 0; k <= CIRCLE_POINTS / 2; k++)
            fprintf(f, "%.8g %.8g %d\n", rho * cos(TWO_PI * k / CIRCLE_POINTS),
                    rho * sin(TWO_PI * k / CIRCLE_POINTS), e % step ? 3 : 0);
        fputs("\n", f);
    }
    for (int q = 0; q < N_Q_RAYS; q++) {
        double phi = acos(1.0 / (2.0 * q_rays[q]));
        fprintf(f, "0 0 1\n%.8g %.8g 1\n\n", -far * cos(phi), far * sin(phi));
    }
    return LW_OK;
}

/* The frequency of each labelled decade circle where it meets the real axis. */
static void freq_tics(FILE *s, const layout_frame *fr, double f0)
{
    int step = decade_step(fr), n = 0;
    fputs("set xtics (", s);
    for (int e = (int)ceil(log10(f0)); n < 64; e++) {
        double f = pow(10.0, e), rho = log10(f / f0);
        if (rho > fmax(-fr->x0, fr->x1))
            break;
        if (e % step != 0 || rho < 0.05)
            continue;
        char a[32];
        si_format(f, "Hz", a, sizeof a);
        for (int sg = -1; sg <= 1; sg += 2)
            if (sg * rho >= fr->x0 && sg * rho <= fr->x1)
                fprintf(s, "%s'%s' %.8g", n++ ? ", " : "", a, sg * rho);
    }
    fputs(n ? ")\n" : "'' 0)\n", s);
}

static void put_label(FILE *s, const layout_label *lb, double mx, double my, const char *text,
                      const char *font, const char *color)
{
    fprintf(s, "set label \"%s\" at %.10g, %.10g left font '%s' tc rgb '%s' %sfront\n", text, lb->x,
            lb->y, font, color, lb->opaque ? "boxed " : "");
    if (lb->leader)
        fprintf(s, "set arrow from %.10g, %.10g to %.10g, %.10g nohead lw 1 lc rgb '%s' back\n", mx,
                my, lb->lx, lb->ly, PLOT_MUTED);
}

/* The labels on the plot: the open-loop poles' numbers (check's), the Q of
 * complex closed-loop pairs, the rays' Q; never over a mark or each other. */
static int plot_labels(FILE *s, const layout_frame *fr, const check_result *r, const rootset *rs,
                       int rhp_empty, int *unlabelled)
{
    layout *l = layout_new(fr, 4 * rs->n + 64);
    if (!l)
        return LW_ENOMEM;
    int ok = 1;
    for (int k = 0; k < rs->n; k++) {
        double complex p = drawn(rs->s[k], rs->f0);
        if (cimag(p) >= 0)
            ok &= layout_block(l, creal(p), cimag(p), rs->kind[k] == 3 ? 5 : 7);
    }
    double ax[5] = { fr->x0, fr->x1, NAN, 0, 0 }, ay[5] = { 0, 0, NAN, fr->y0, fr->y1 };
    ok &= layout_block_line(l, ax, ay, 5, 0);
    if (!ok) {
        layout_free(l);
        return LW_ENOMEM;
    }
    const lg_tf *tf = &r->tf;
    layout_label lb;
    char t[32];
    *unlabelled = 0;
    /* the right half-plane says its name in a free corner of it */
    double w = layout_text_w(fr, 16) / layout_scale(fr), h = layout_text_h(fr) / layout_scale(fr);
    if (!rhp_empty)
        for (int c = 0; c < 2; c++)
            if (layout_place(l, fr->x1 - w - 0.3 * h, c ? fr->y0 + h : fr->y1 - h, 0, 15, 1, &lb)) {
                fprintf(s, "set label 'right half-plane' at %.10g, %.10g left tc rgb '%s'\n", lb.x,
                        lb.y, PLOT_ACCENT);
                break;
            }
    for (int k = 0, idx = 1; k < tf->npoles; k++) {
        if (pair_lower(tf->poles, tf->npoles, k))
            continue;
        double complex p = drawn(tf->poles[k], rs->f0);
        snprintf(t, sizeof t, "%d", idx++);
        if (layout_place(l, creal(p), cimag(p), 7, (int)strlen(t), 3, &lb))
            put_label(s, &lb, creal(p), cimag(p), t, ",9", PLOT_INK);
        else
            (*unlabelled)++;
    }
    for (int k = 0, nq = 0; k < r->ncl && nq < MAX_Q_LABELS; k++) {
        double complex v = r->cl[k];
        if (!(cimag(v) > 0) || creal(v) == 0)
            continue;
        double complex p = drawn(v, rs->f0);
        snprintf(t, sizeof t, "Q %.3g", cabs(v) / (2 * fabs(creal(v))));
        if (layout_place(l, creal(p), cimag(p), 5, (int)strlen(t), 6, &lb))
            put_label(s, &lb, creal(p), cimag(p), t, ",9", PLOT_EXTRA);
        nq++;
    }
    /* each ray's Q near where it leaves the frame at the top */
    for (int q = 0; q < N_Q_RAYS; q++) {
        double phi = acos(1.0 / (2.0 * q_rays[q])), c = -cos(phi), sn = sin(phi);
        double t_exit = fmin(fr->x0 / c, fr->y1 / sn);
        snprintf(t, sizeof t, "Q %g", q_rays[q] == 0.707 ? 0.71 : q_rays[q]);
        for (double at = 0.9; at > 0.3; at -= 0.15)
            if (layout_place(l, at * t_exit * c, at * t_exit * sn, 1, (int)strlen(t), 1, &lb)) {
                put_label(s, &lb, 0, 0, t, ",8", PLOT_MUTED);
                break;
            }
    }
    layout_free(l);
    return LW_OK;
}

/* How to read the plane, at the foot of the notes. */
static const char how_to_read[] =
    "Distance from the centre: |s|/2\xCF\x80 on a log scale, a circle per decade (its "
    "frequency where it meets the real axis). Angles are true: a pair on the ray Q has that "
    "Q; the real axis is Q = 0.5. The lower half-plane mirrors the upper: each complex pair "
    "is drawn once, at +j.";

/* Beside the plot, from y down: which node each numbered pole belongs to,
 * as many as there is room for; then how to read the plane. */
static void key_notes(FILE *s, const layout_frame *fr, const desc *d, const check_result *r,
                      double y, int unlabelled, int why_no_paths)
{
    const lg_tf *tf = &r->tf;
    double x = fr->right + 0.025, dy = 0.9 * layout_text_h(fr) / fr->height, yh = 0;
    int width = (int)((0.99 - x) * fr->width / (0.9 * layout_text_w(fr, 1)));
    int nhow = figure_note(NULL, x, &yh, dy, width, PLOT_MUTED, how_to_read);
    int rows = (int)((y - 0.10) / dy) - nhow - 5, hidden = 0, npairs = 0;
    for (int k = 0; k < tf->npoles; k++)
        npairs += pair_lower(tf->poles, tf->npoles, k);
    int nshown = tf->npoles - npairs;
    figure_note(s, x, &y, dy, width, PLOT_INK, "open-loop poles, as check numbers them:");
    char a[32], b[64];
    for (int k = 0, idx = 1; k < tf->npoles; k++) {
        if (pair_lower(tf->poles, tf->npoles, k))
            continue;
        if (idx > rows && nshown > rows + 1) {
            snprintf(b, sizeof b, "... and %d more (loopwise check lists them)", nshown - idx + 1);
            figure_note(s, x, &y, dy, width, PLOT_INK, b);
            break;
        }
        double complex p = tf->poles[k];
        if (cimag(p) != 0)
            snprintf(b, sizeof b, "%s, Q %.3g", si_format(cabs(p) / TWO_PI, "Hz", a, sizeof a),
                     cabs(p) / (2 * fabs(creal(p))));
        else
            snprintf(b, sizeof b, "%s", si_format(creal(p) / TWO_PI, "Hz", a, sizeof a));
        int o = tf->owner ? tf->owner[k] : -1;
        char name[32];
        snprintf(name, sizeof name, "%.24s", o >= 0 ? d->nodes[o].name : "-");
        hidden |= tf->hidden[k];
        if (tf->hidden[k])
            fprintf(s, "set label \"*\" at screen %.4f, screen %.4f left font ',9' tc rgb '%s'\n",
                    x + 0.035 + 0.9 * layout_text_w(fr, (int)strlen(name) + 1) / fr->width, y,
                    PLOT_INK);
        fprintf(s, "set label \"%d\" at screen %.4f, screen %.4f right font ',9' tc rgb '%s'\n",
                idx, x + 0.025, y, PLOT_INK);
        fputs("set label ", s);
        plot_quote(s, name);
        fprintf(s, " at screen %.4f, screen %.4f left font ',9' noenhanced tc rgb '%s'\n",
                x + 0.035, y, PLOT_INK);
        fprintf(s, "set label \"%s\" at screen 0.985, screen %.4f right font ',9' tc rgb '%s'\n", b,
                y, PLOT_INK);
        y -= dy;
        idx++;
    }
    if (tf->npoles == 0)
        figure_note(s, x, &y, dy, width, PLOT_INK, "none: no node has capacitance");
    if (hidden)
        figure_note(s, x, &y, dy, width, PLOT_INK, "* not seen by T (outside the loop)");
    if (unlabelled) {
        snprintf(b, sizeof b, "%d crowded pole%s not numbered on the plot", unlabelled,
                 unlabelled == 1 ? "" : "s");
        figure_note(s, x, &y, dy, width, PLOT_INK, b);
    }
    if (why_no_paths >= 2)
        figure_note(s, x, &y, dy, width, PLOT_INK, why_no_paths == 2
                    ? "(paths from the open-loop poles: up to 64 nodes)"
                    : "(paths not drawn: roots too close to follow)");
    yh = 0.10 + (nhow - 1) * dy;
    figure_note(s, x, &yh, dy, width, PLOT_MUTED, how_to_read);
}

/* The paths the closed-loop poles take from the open-loop poles as the loop
 * gain rises to its value; a root that does not move (a mode T cannot see)
 * has none. *why: 0 drawn, 1 none moved, 2 the network is too large to
 * follow its roots in good time, 3 the roots could not be followed surely
 * (some moved by more than PATH_STEP of their magnitude between two
 * gains, so which is which would be a guess). */
#define PATH_NODES 64
#define PATH_STEP 0.25

static int write_paths(plot_job *job, const model *m, double f0, int *why, lw_error *err)
{
    *why = 2;
    if (m->n > PATH_NODES)
        return LW_OK;
    locus L;
    int rc = locus_trace(m, 400, &L, err);
    if (rc)
        return rc;
    *why = L.npaths == 0 || L.max_step > PATH_STEP ? 3 : 1;
    FILE *f = plot_data(job, "paths.dat", err);
    if (!f) {
        locus_free(&L);
        return LW_ENUMERIC;
    }
    fputs("# x y k: each closed-loop pole's path from its open-loop pole, the break's gain "
          "scaled by k from 0 to 1\n", f);
    for (int p = 0; *why != 3 && p < L.npaths; p++) {
        const double complex *s = L.s + (size_t)p * L.nk;
        double moved = 0;
        for (int i = 1; i < L.nk; i++)
            moved = fmax(moved, cabs(s[i] - s[0]));
        if (!(moved > 1e-6 * cabs(s[0])))
            continue;
        for (int i = 0; i < L.nk; i++) {
            double complex q = drawn(s[i], f0);
            fprintf(f, "%.8g %.8g %.6g\n", creal(q), cimag(q), L.k[i]);
        }
        fputs("\n", f);
        *why = 0;
    }
    locus_free(&L);
    return LW_OK;
}

int figure_roots(const figure_opts *fo, const desc *d, const model *m, const check_result *r,
                 lw_error *err)
{
    rootset rs = { 0 };
    if (rootset_make(r, &rs)) {
        free(rs.s);
        free(rs.kind);
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    layout_frame fr;
    int rhp_empty, kinds = 0, unlabelled = 0, why_no_paths = 1;
    frame_of(fo, &rs, &fr, &rhp_empty);
    plot_job *job;
    int rc = plot_begin(fo->path, fo->width, fo->height, &job, err);
    if (rc)
        goto done;
    rc = write_roots(job, &rs, &kinds, err);
    if (!rc)
        rc = write_grid(job, &fr, rs.f0, err);
    if (!rc)
        rc = write_paths(job, m, rs.f0, &why_no_paths, err);
    FILE *s = plot_script(job);
    if (!rc) {
        figure_style(s);
        figure_title_canvas(s, "Roots of the loop", d,
                            r->stable ? NULL : "the closed loop is UNSTABLE");
        fputs("unset grid\nset style textbox opaque noborder margins 0.5,0.5\nunset ytics\n", s);
        layout_frame_write(s, &fr);
        freq_tics(s, &fr, rs.f0);
        fputs("set xlabel '|s|/2\xCF\x80 where each circle meets the real axis (log radius, true "
              "angle)'\n", s);
        /* the right half-plane, where a closed-loop pole means an unstable loop */
        fprintf(s, "set object rect from 0, graph 0 to graph 1, graph 1 fc rgb '%s' fs solid 0.55 "
                "noborder behind\n", FIG_UNSTABLE_FILL);
        if (rhp_empty)
            fprintf(s, "set label 'right half-plane: empty' at graph 0.985, graph 0.5 center "
                    "rotate by 90 font ',9' tc rgb '%s'\n", PLOT_ACCENT);
        fprintf(s, "set arrow from 0, graph 0 to 0, graph 1 nohead lc rgb '%s' lw 1.2\n"
                "set arrow from graph 0, first 0 to graph 1, first 0 nohead lc rgb '%s' lw 0.8\n",
                PLOT_MUTED, PLOT_MUTED);
        if (plot_labels(s, &fr, r, &rs, rhp_empty, &unlabelled))
            rc = lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    if (!rc) {
        int nkey = 2 + ((kinds & 2) != 0) + ((kinds & 4) != 0) + (why_no_paths == 0);
        double kx = fr.right + 0.025;
        fprintf(s, "set key at screen %.4f, screen 0.91 left top Left reverse samplen 1.5 "
                "spacing 1.1 noopaque nobox\n", kx);
        key_notes(s, &fr, d, r, 0.91 - (nkey + 0.8) * 1.25 * layout_text_h(&fr) / fr.height,
                  unlabelled, why_no_paths);
        fprintf(s, "plot '%s' using 1:($3==0 ? $2 : 1/0) with lines lc rgb '#ccd4dc' lw 0.9 "
                "notitle, '' using 1:($3==3 ? $2 : 1/0) with lines lc rgb '#e4e8ec' lw 0.7 "
                "notitle, '' using 1:($3==1 ? $2 : 1/0) with lines lc rgb '#b8c2cc' lw 0.8 dt 2 "
                "notitle", plot_path(job, "grid.dat"));
        if (!why_no_paths)
            fprintf(s, ", '%s' using 1:2 with lines lc rgb '%s' lw 1.1 notitle",
                    plot_path(job, "paths.dat"), PLOT_EXTRA);
        fprintf(s, ", '%s' using 1:($3==0 ? $2 : 1/0) with points pt %d ps 2 lw 2 lc rgb '%s' "
                "title 'pole of T (open loop)'", plot_path(job, "roots.dat"), FIG_PT_POLE,
                PLOT_INK);
        if (kinds & 2)
            fprintf(s, ", '' using 1:($3==1 ? $2 : 1/0) with points pt %d ps 2 lw 2 lc rgb '%s' "
                    "title 'zero of T, left half-plane'", FIG_PT_ZERO, PLOT_ACCENT);
        if (kinds & 4)
            fprintf(s, ", '' using 1:($3==2 ? $2 : 1/0) with points pt %d ps 2 lw 2 lc rgb '%s' "
                    "title 'zero of T, right half-plane (adds lag)'", FIG_PT_RHP_ZERO, PLOT_ACCENT);
        fprintf(s, ", '' using 1:($3==3 ? $2 : 1/0) with points pt %d ps 1.3 lc rgb '%s' "
                "title 'closed-loop pole'", FIG_PT_CL_POLE, PLOT_EXTRA);
        if (!why_no_paths)
            fprintf(s, ", 1/0 with lines lc rgb '%s' lw 1.1 title 'its path from an open-loop "
                    "pole'", PLOT_EXTRA);
        fputs("\n", s);
    }
    rc = rc ? (plot_abort(job), rc) : plot_finish(job, fo->keep_dir, err);
done:
    free(rs.s);
    free(rs.kind);
    return rc;
}
