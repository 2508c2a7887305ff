/* locus: where each closed-loop pole comes from. The break's gm is scaled
 * by k from 0 (the loop open: the open-loop poles, those T cannot see
 * included) to 1 (the loop as it is: the closed-loop poles), and the roots
 * of det(G(k) + sC) are followed along k: each path joins an open-loop pole
 * to the closed-loop pole it becomes (the root locus of 1 + k T(s) = 0,
 * Evans 1948, here traced numerically rather than by its sketching rules).
 *
 * The roots are found afresh at each k (lg_natural_frequencies) and joined
 * to the previous ones by nearest relative distance; k runs on a log grid
 * from 1e-6, with steps halved wherever a root moves by more than 5%
 * of its magnitude, within a budget of solves.
 *
 * Ownership: locus_trace fills a locus that owns its arrays; locus_free
 * releases them. */
#ifndef LOOPWISE_LOCUS_H
#define LOOPWISE_LOCUS_H

#include <complex.h>

#include "loopwise/model.h"

typedef struct locus {
    int npaths;            /* 0 when the number of roots changes with k (a root
                              comes from or goes to infinity): no paths */
    int nk;                /* points along each path */
    double *k;             /* rising from 0 to 1 */
    double complex *s;     /* s[p * nk + i]: path p at k[i], rad/s */
    double max_step;       /* the largest step of a root between two k,
                              relative to its magnitude: beyond a few tenths
                              the joining is a guess */
} locus;

/* max_solves: the most eigenvalue problems to solve (at least 40). */
int locus_trace(const model *m, int max_solves, locus *L, lw_error *err);
void locus_free(locus *L);

#endif
