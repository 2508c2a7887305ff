/* Unit tests for layout: equal-scale frames (one data unit as many pixels
 * across as up, worked out by hand) and labels that never overlap a mark,
 * a line they must keep clear of, or each other, checked box by box on
 * crowded random scenes. */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>

#include <math.h>
#include <stdlib.h>

#include "loopwise/layout.h"

#define assert_close(got, want, tol) assert_true(fabs((got) - (want)) <= (tol))

static layout_frame frame(void)
{
    /* 1000 x 800 pixels, the plot area 600 x 600 of them */
    layout_frame f = { 1000, 800, 0.1, 0.7, 0.125, 0.875, 0, 10, 0, 5, 10 };
    return f;
}

static void test_equal_scale(void **state)
{
    (void)state;
    /* x: 10 units on 600 px (60 px a unit), y: 5 units on 600 px: y grows
     * about its middle to 10 units */
    layout_frame f = frame();
    layout_frame_equal(&f, 0);
    assert_close(f.x0, 0, 1e-12);
    assert_close(f.x1, 10, 1e-12);
    assert_close(f.y0, -2.5, 1e-12);
    assert_close(f.y1, 7.5, 1e-12);
    double ax, ay, bx, by;
    layout_px(&f, 0, 0, &ax, &ay);
    layout_px(&f, 1, 1, &bx, &by);
    assert_close(bx - ax, 60, 1e-9);
    assert_close(by - ay, 60, 1e-9);
    /* the other way round: x has room; it grows to the left only, or the
     * plot area comes in (5 units at 120 px a unit: 600 -> 300 px) */
    f = frame();
    f.x1 = 5;
    f.y1 = 10;
    f.x0 = 0;
    layout_frame g = f;
    layout_frame_equal(&f, LAYOUT_GROW_LEFT);
    assert_close(f.x1, 5, 1e-12);
    assert_close(f.x0, -5, 1e-12);
    layout_frame_equal(&g, LAYOUT_SHRINK_AREA);
    assert_close(g.x0, 0, 1e-12);
    assert_close(g.x1, 5, 1e-12);
    assert_close((g.right - g.left) * g.width, 300, 1e-9);
    assert_close(layout_scale(&g), 60, 1e-9);
    /* pixels and back */
    double x, y;
    layout_px(&g, 1.25, 3.5, &ax, &ay);
    layout_data(&g, ax, ay, &x, &y);
    assert_close(x, 1.25, 1e-12);
    assert_close(y, 3.5, 1e-12);
}

/* The pixel box of a placed label, as layout.h defines its anchor: the
 * text's left end, vertically centred. */
static void label_box(const layout_frame *f, const layout_label *lb, int n, double *b)
{
    double px, py;
    layout_px(f, lb->x, lb->y, &px, &py);
    b[0] = px;
    b[1] = py - 0.5 * layout_text_h(f);
    b[2] = px + layout_text_w(f, n);
    b[3] = py + 0.5 * layout_text_h(f);
}

static int boxes_overlap(const double *a, const double *b)
{
    return a[0] < b[2] && b[0] < a[2] && a[1] < b[3] && b[1] < a[3];
}

/* A fixed pseudo-random sequence (a 64-bit linear congruential generator,
 * Knuth's MMIX constants, from memory) so that the scene is the same on
 * every run. */
static double next_uniform(unsigned long long *st)
{
    *st = *st * 6364136223846793005ULL + 1442695040888963407ULL;
    return (double)(*st >> 11) / 9007199254740992.0;
}

static void test_no_overlap(void **state)
{
    (void)state;
    layout_frame f = frame();
    f.y1 = 10;
    unsigned long long st = 15;
    enum { MARKS = 120 };
    double mx[MARKS], my[MARKS];
    layout *l = layout_new(&f, 8);
    assert_non_null(l);
    for (int k = 0; k < MARKS; k++) {
        /* half the marks crowd one corner */
        double spread = k % 2 ? 10 : 2;
        mx[k] = spread * next_uniform(&st);
        my[k] = spread * next_uniform(&st);
        assert_true(layout_block(l, mx[k], my[k], 5));
    }
    /* a line across the middle that labels keep clear of where they can */
    double lx[2] = { 0, 10 }, ly[2] = { 5, 5 };
    assert_true(layout_block_line(l, lx, ly, 2, 1));
    double boxes[MARKS][4];
    int nplaced = 0, clear_of_line = 0, n = 6;
    for (int k = 0; k < MARKS; k++) {
        layout_label lb;
        if (!layout_place(l, mx[k], my[k], 5, n, 6, &lb))
            continue;
        double *b = boxes[nplaced++];
        label_box(&f, &lb, n, b);
        /* inside the plot area */
        assert_true(b[0] >= f.left * f.width && b[2] <= f.right * f.width);
        assert_true(b[1] >= f.bottom * f.height && b[3] <= f.top * f.height);
        /* clear of every mark */
        for (int j = 0; j < MARKS; j++) {
            double px, py;
            layout_px(&f, mx[j], my[j], &px, &py);
            double m[4] = { px - 5, py - 5, px + 5, py + 5 };
            assert_false(boxes_overlap(b, m));
        }
        double py;
        layout_px(&f, 0, 5, &py, &py);
        clear_of_line += !lb.opaque;
        if (!lb.opaque)
            assert_true(b[3] <= py - 1.5 || b[1] >= py + 1.5);
        /* a label away from its mark has a leader */
        double px0, py0;
        layout_px(&f, mx[k], my[k], &px0, &py0);
        double gap = fmax(fmax(b[0] - px0, px0 - b[2]), fmax(b[1] - py0, py0 - b[3]));
        if (gap > 5 + 3 + 1.5)
            assert_true(lb.leader);
    }
    /* and of each other */
    for (int a = 0; a < nplaced; a++)
        for (int b = a + 1; b < nplaced; b++)
            assert_false(boxes_overlap(boxes[a], boxes[b]));
    /* the scene is crowded but not full: most labels find a place, most of
     * them clear of the line */
    assert_true(nplaced > MARKS / 2);
    assert_true(clear_of_line > nplaced / 2);
    layout_free(l);
}

/* With every place taken a label is refused, not written over a mark. */
static void test_full(void **state)
{
    (void)state;
    layout_frame f = frame();
    f.y1 = 10;
    layout *l = layout_new(&f, 4);
    for (int i = 0; i <= 100; i++)
        for (int j = 0; j <= 100; j++)
            assert_true(layout_block(l, i * 0.1, j * 0.1, 4));
    layout_label lb;
    assert_int_equal(layout_place(l, 5, 5, 4, 3, 12, &lb), 0);
    layout_free(l);
    layout_free(NULL);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_equal_scale),
        cmocka_unit_test(test_no_overlap),
        cmocka_unit_test(test_full),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
