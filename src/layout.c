/* layout: equal-scale frames and labels that never overlap. See layout.h. */
#include "loopwise/layout.h"

#include <math.h>
#include <stdlib.h>

/* Measured on gnuplot's Sans at 10 px (pngcairo) and 11 px (svg): digits
 * and lower case 7.3 to 8 px a character at 10 px, a line 13 px. */
#define CHAR_W 0.82
#define LINE_H 1.4
/* Rings of candidate places around a mark at most, and the room between a
 * mark and its label (pixels). */
#define MAX_RINGS 12
#define GAP 3.0

enum { BOX_MARK, BOX_LINE, BOX_FIRM_LINE, BOX_LABEL };

struct layout {
    layout_frame f;
    layout_box *b;
    int n, cap;
    int *kind;                /* per box: a BOX_* */
};

void layout_frame_equal(layout_frame *f, unsigned flags)
{
    double w = (f->right - f->left) * f->width, h = (f->top - f->bottom) * f->height;
    double dx = f->x1 - f->x0, dy = f->y1 - f->y0;
    if (!(dx > 0) || !(dy > 0) || !(w > 0) || !(h > 0))
        return;
    double sx = w / dx, sy = h / dy;
    if (sx > sy && (flags & LAYOUT_SHRINK_AREA)) {
        f->right = f->left + dx * sy / f->width;
    } else if (sx > sy) {
        double grow = w / sy - dx;
        if (flags & LAYOUT_GROW_LEFT)
            f->x0 -= grow;
        else {
            f->x0 -= 0.5 * grow;
            f->x1 += 0.5 * grow;
        }
    } else if (sy > sx) {
        double grow = h / sx - dy;
        f->y0 -= 0.5 * grow;
        f->y1 += 0.5 * grow;
    }
}

void layout_frame_write(FILE *s, const layout_frame *f)
{
    fprintf(s, "set lmargin at screen %.6f\nset rmargin at screen %.6f\n"
            "set bmargin at screen %.6f\nset tmargin at screen %.6f\n"
            "set xrange [%.10g:%.10g]\nset yrange [%.10g:%.10g]\n",
            f->left, f->right, f->bottom, f->top, f->x0, f->x1, f->y0, f->y1);
}

void layout_px(const layout_frame *f, double x, double y, double *px, double *py)
{
    *px = (f->left + (x - f->x0) / (f->x1 - f->x0) * (f->right - f->left)) * f->width;
    *py = (f->bottom + (y - f->y0) / (f->y1 - f->y0) * (f->top - f->bottom)) * f->height;
}

void layout_data(const layout_frame *f, double px, double py, double *x, double *y)
{
    *x = f->x0 + (px / f->width - f->left) / (f->right - f->left) * (f->x1 - f->x0);
    *y = f->y0 + (py / f->height - f->bottom) / (f->top - f->bottom) * (f->y1 - f->y0);
}

double layout_scale(const layout_frame *f)
{
    return (f->right - f->left) * f->width / (f->x1 - f->x0);
}

double layout_text_w(const layout_frame *f, int n)
{
    return CHAR_W * f->font_px * n;
}

double layout_text_h(const layout_frame *f)
{
    return LINE_H * f->font_px;
}

layout *layout_new(const layout_frame *f, int cap)
{
    layout *l = calloc(1, sizeof *l);
    if (!l)
        return NULL;
    l->f = *f;
    l->cap = cap > 16 ? cap : 16;
    l->b = malloc(sizeof *l->b * (size_t)l->cap);
    l->kind = malloc(sizeof *l->kind * (size_t)l->cap);
    if (!l->b || !l->kind) {
        layout_free(l);
        return NULL;
    }
    return l;
}

void layout_free(layout *l)
{
    if (!l)
        return;
    free(l->b);
    free(l->kind);
    free(l);
}

static int add_box(layout *l, layout_box b, int kind)
{
    if (l->n == l->cap) {
        int cap = 2 * l->cap;
        layout_box *nb = realloc(l->b, sizeof *nb * (size_t)cap);
        if (!nb)
            return 0;
        l->b = nb;
        int *ni = realloc(l->kind, sizeof *ni * (size_t)cap);
        if (!ni)
            return 0;
        l->kind = ni;
        l->cap = cap;
    }
    l->kind[l->n] = kind;
    l->b[l->n++] = b;
    return 1;
}

int layout_block_box(layout *l, layout_box b)
{
    return add_box(l, b, BOX_MARK);
}

int layout_block(layout *l, double x, double y, double r)
{
    double px, py;
    layout_px(&l->f, x, y, &px, &py);
    return add_box(l, (layout_box){ px - r, py - r, px + r, py + r }, BOX_MARK);
}

int layout_block_line(layout *l, const double *x, const double *y, int n, int firm)
{
    int kind = firm ? BOX_FIRM_LINE : BOX_LINE;
    const double step = 4.0, half = 1.5;
    double qx = NAN, qy = NAN;
    for (int k = 0; k < n; k++) {
        if (!isfinite(x[k]) || !isfinite(y[k])) {
            qx = qy = NAN;
            continue;
        }
        double px, py;
        layout_px(&l->f, x[k], y[k], &px, &py);
        if (isnan(qx)) {
            if (!add_box(l, (layout_box){ px - half, py - half, px + half, py + half }, kind))
                return 0;
            qx = px;
            qy = py;
            continue;
        }
        double len = hypot(px - qx, py - qy);
        if (len < step)
            continue; /* the box at (qx, qy) still covers this stretch */
        int m = (int)ceil(len / step);
        for (int j = 1; j <= m; j++) {
            double cx = qx + (px - qx) * j / m, cy = qy + (py - qy) * j / m;
            if (!add_box(l, (layout_box){ cx - half, cy - half, cx + half, cy + half }, kind))
                return 0;
        }
        qx = px;
        qy = py;
    }
    return 1;
}

static int overlaps(const layout_box *a, const layout_box *b)
{
    return a->x0 < b->x1 && b->x0 < a->x1 && a->y0 < b->y1 && b->y0 < a->y1;
}

static int inside_area(const layout *l, const layout_box *b)
{
    const layout_frame *f = &l->f;
    return b->x0 >= f->left * f->width + 2 && b->x1 <= f->right * f->width - 2 &&
           b->y0 >= f->bottom * f->height + 2 && b->y1 <= f->top * f->height - 2;
}

/* cross: 0 keeps clear of every line, 1 may cross the lines that are not
 * firm, 2 any line */
static int free_at(const layout *l, const layout_box *b, int cross)
{
    if (!inside_area(l, b))
        return 0;
    for (int k = 0; k < l->n; k++) {
        int line = l->kind[k] == BOX_LINE || l->kind[k] == BOX_FIRM_LINE;
        if (line && (cross == 2 || (cross == 1 && l->kind[k] == BOX_LINE)))
            continue;
        if (overlaps(b, &l->b[k]))
            return 0;
    }
    return 1;
}

/* A leader from the mark (px, py) to (ex, ey) must cross no label. */
static int leader_clear(const layout *l, double px, double py, double ex, double ey)
{
    double len = hypot(ex - px, ey - py);
    int m = (int)ceil(len / 2.0);
    for (int j = 1; j < m; j++) {
        double cx = px + (ex - px) * j / m, cy = py + (ey - py) * j / m;
        for (int k = 0; k < l->n; k++)
            if (l->kind[k] == BOX_LABEL && cx > l->b[k].x0 && cx < l->b[k].x1 && cy > l->b[k].y0 &&
                cy < l->b[k].y1)
                return 0;
    }
    return 1;
}

/* Tries the eight places at one distance; 1 when one was taken. */
static int try_ring(layout *l, double px, double py, double r, int n, int ring, int cross,
                    layout_label *out)
{
    /* east, north-east, north, south-east, south, west, north-west, south-west */
    static const double dir[8][2] = { { 1, 0 }, { 0.71, 0.71 }, { 0, 1 }, { 0.71, -0.71 },
                                      { 0, -1 }, { -1, 0 }, { -0.71, 0.71 }, { -0.71, -0.71 } };
    double w = layout_text_w(&l->f, n), h = layout_text_h(&l->f);
    double d = r + GAP + ring * 1.1 * h;
    for (int k = 0; k < 8; k++) {
        double ax = px + dir[k][0] * d, ay = py + dir[k][1] * d;
        /* the box touches the anchor with its side facing the mark */
        double bx0 = dir[k][0] > 0.1 ? ax : dir[k][0] < -0.1 ? ax - w : ax - 0.5 * w;
        double by0 = dir[k][1] > 0.1 ? ay : dir[k][1] < -0.1 ? ay - h : ay - 0.5 * h;
        layout_box b = { bx0 - 1, by0 - 1, bx0 + w + 1, by0 + h + 1 };
        if (!free_at(l, &b, cross))
            continue;
        /* the leader ends at the point of the box nearest the mark */
        double ex = fmin(fmax(px, b.x0), b.x1), ey = fmin(fmax(py, b.y0), b.y1);
        if (ring > 0 && !leader_clear(l, px, py, ex, ey))
            continue;
        if (!add_box(l, b, BOX_LABEL))
            return 0;
        layout_data(&l->f, bx0, by0 + 0.5 * h, &out->x, &out->y);
        layout_data(&l->f, ex, ey, &out->lx, &out->ly);
        out->leader = ring > 0;
        out->opaque = cross > 0;
        return 1;
    }
    return 0;
}

int layout_place(layout *l, double x, double y, double r, int n, int rings, layout_label *out)
{
    double px, py;
    layout_px(&l->f, x, y, &px, &py);
    if (rings > MAX_RINGS)
        rings = MAX_RINGS;
    /* (first ring, last ring, lines crossed) in the order tried */
    const int pass[5][3] = { { 0, 3, 0 }, { 1, 3, 1 }, { 4, MAX_RINGS, 0 }, { 4, MAX_RINGS, 1 },
                             { 1, MAX_RINGS, 2 } };
    for (int p = 0; p < 5; p++)
        for (int ring = pass[p][0]; ring <= pass[p][1] && ring < rings; ring++)
            if (try_ring(l, px, py, r, n, ring, pass[p][2], out))
                return 1;
    return 0;
}
