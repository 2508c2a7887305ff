/* sweep_map: the margin over two values at once (sweep with --vary twice):
 * an N x N grid of analyses, and the boundary where the goal is met traced
 * through it.
 *
 * Ownership: map_run fills a map_result whose arrays map_result_free
 * releases (NULL accepted). */
#ifndef LOOPWISE_SWEEP_MAP_H
#define LOOPWISE_SWEEP_MAP_H

#include "loopwise/design.h"

enum { MAP_MAX_POINTS = 200 };

/* A point of the boundary: on the grid line a = va[row], the value of B
 * where the distance to the goal changes sign, root-refined along B. */
typedef struct map_edge {
    int row;
    double a, b;
    int rises;              /* 1: the goal is met above b (larger B), 0: below */
} map_edge;

typedef struct map_result {
    int n;                  /* points per axis */
    double *va, *vb;        /* the axis values (n each) */
    design_point *pts;      /* n x n, row i (A = va[i]), column j (B = vb[j]) */
    map_edge *edge;
    int nedge;
    int missed;             /* some point misses the goal */
    int failed;             /* some point fails the exit-code rule (design_fails) */
    int analyses;
} map_result;

/* Where each thread gets its own copy of the description: the text it was
 * parsed from and the command line's --set (the map's points are
 * independent, so they run on every core; the answer does not depend on
 * the thread count). */
typedef struct map_source {
    const text_file *t;
    const char *path;
    const char *const *sets;
    int nsets;
} map_source;

/* Spacing as sweep's (SPEC 4): log, or linear with lin, on both axes. The
 * boundary is found along B for every grid line of A: between neighbouring
 * columns whose distances to the goal differ in sign, Brent's method on B
 * (ln B when log spaced) to a relative 1e-6. */
int map_run(const map_source *src, desc_target ta, double a0, double a1, desc_target tb,
            double b0, double b1, int n, int lin, design_goal g, const check_opts *o,
            map_result *r, lw_error *err);
void map_result_free(map_result *r);

#endif
