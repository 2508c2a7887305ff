/* layout: where things go on a picture. An equal-scale frame (one data unit
 * is the same number of pixels across and up, so angles and circles drawn in
 * data units are true), and labels placed where they overlap neither each
 * other nor the marks and curves they were told to keep clear of.
 *
 * Geometry is worked in pixels from the frame: the plot area is set at
 * screen fractions (gnuplot's "set lmargin at screen"), so a data point's
 * pixel is known exactly before gnuplot runs. Text is measured with the
 * terminals' Sans font: a character about 0.82 of the font size wide, a line
 * 1.4 of it high (measured on gnuplot's pngcairo and svg output).
 *
 * Ownership: layout_new allocates room for a fixed number of boxes;
 * layout_free releases it (NULL accepted). A box past that room is not
 * kept, and a label that finds no room is not placed: both are reported to
 * the caller, never written over something else. */
#ifndef LOOPWISE_LAYOUT_H
#define LOOPWISE_LAYOUT_H

#include <stdio.h>

typedef struct layout_frame {
    int width, height;                 /* the image, pixels */
    double left, right, bottom, top;   /* the plot area, screen fractions */
    double x0, x1, y0, y1;             /* data ranges */
    double font_px;                    /* the font size, pixels */
} layout_frame;

/* Makes a data unit as many pixels across as up by widening [x0, x1] or
 * [y0, y1] about their middles; with LAYOUT_GROW_LEFT the x range grows to
 * the left only (its right end is a boundary to keep), and with
 * LAYOUT_SHRINK_AREA the plot area's right edge comes in instead of the x
 * range growing (room for notes beside it). */
enum { LAYOUT_GROW_LEFT = 1, LAYOUT_SHRINK_AREA = 2 };
void layout_frame_equal(layout_frame *f, unsigned flags);
/* The plot area's margins and the ranges, as gnuplot commands. */
void layout_frame_write(FILE *s, const layout_frame *f);
/* Data to pixels (y up) and back; pixels per data unit along x. */
void layout_px(const layout_frame *f, double x, double y, double *px, double *py);
void layout_data(const layout_frame *f, double px, double py, double *x, double *y);
double layout_scale(const layout_frame *f);
/* The size of a one-line text of n characters, pixels. */
double layout_text_w(const layout_frame *f, int n);
double layout_text_h(const layout_frame *f);

typedef struct layout_box {
    double x0, y0, x1, y1;             /* pixels, x0 <= x1, y0 <= y1 */
} layout_box;

typedef struct layout layout;

layout *layout_new(const layout_frame *f, int cap);
void layout_free(layout *l);
/* Something labels must keep clear of: a mark of half-size r pixels at the
 * data point (x, y), or a box in pixels. Returns 0 when there is no room
 * left to remember it. */
int layout_block(layout *l, double x, double y, double r);
int layout_block_box(layout *l, layout_box b);
/* A polyline through the data points (x[k], y[k]) (a box every few pixels
 * along it; NaN points break the line). Labels keep clear of it where they
 * can; where they cannot, a label may lie across it on an opaque box
 * (layout_label.opaque), never across a mark or another label. A firm line
 * (the picture's main curve) is crossed only when nothing else is left. */
int layout_block_line(layout *l, const double *x, const double *y, int n, int firm);

typedef struct layout_label {
    double x, y;                       /* data point of the text's left end,
                                          vertically centred */
    int leader;                        /* 1: away from its mark, draw a line */
    int opaque;                        /* 1: lies across a line: draw it on an
                                          opaque box */
    double lx, ly;                     /* the leader's end beside the text */
} layout_label;

/* Places a one-line label of n characters for the mark of half-size r
 * pixels at the data point (x, y): beside it in one of eight directions,
 * nearest first, then (rings > 1) up to rings - 1 text heights further out
 * with a leader line; always inside the plot area. Clear places come
 * first: up to three text heights out, then across a line that is not
 * firm (not right beside the mark, where the box would hide the line's way
 * through it), then the same further out, and last across a firm line.
 * Returns 1 and fills *out, or 0 when nowhere is free.
 * The label is then an obstacle for the labels after it. */
int layout_place(layout *l, double x, double y, double r, int n, int rings, layout_label *out);

#endif
