/* pencil_impl: what the three files of the pencil module share (pencil.c:
 * the reduction, poles and owners; pencil_zeros.c: zero candidates;
 * pencil_hess.c: the Hessenberg evaluator). Not part of the library's
 * public interface. */
#ifndef LOOPWISE_PENCIL_IMPL_H
#define LOOPWISE_PENCIL_IMPL_H

#include "loopwise/pencil.h"

/* Matrices are row-major arrays. D C D is block diagonal over the groups
 * of nodes that capacitors join (a node with capacitors to ground only is a
 * group of its own), so each eigenvector of it lives on one group: Q is
 * kept group by group, one small square block each. */
struct pencil {
    int n, r, m;          /* m = n - r capacitance-free coordinates */
    double *d;            /* diagonal scaling */
    double *lam;          /* eigenvalues of D C D, descending */
    double *M;            /* r x r reduced system matrix */
    double *Y2;           /* m x r: G22^-1 G21 */
    double *Z2;           /* r x m: G12 G22^-1 */
    double *G22inv;       /* m x m */
    int ngroup;
    int *group_start;     /* ngroup + 1 offsets into group_node and group_col */
    int *group_node;      /* the nodes of each group, ascending */
    int *group_col;       /* the columns of Q (eigenvectors) of each group */
    int *node_group, *node_pos;   /* group of each node, its place in it */
    int *col_group, *col_pos;     /* the same for each column of Q */
    int *blk_off;         /* start of each group's block in qblk */
    double *qblk;         /* block g: size x size, row = node, column = column */
};

/* The transfer c^T (sI - H)^-1 b + d0 in controller Hessenberg form:
 * H upper Hessenberg, b = beta e_1 (kept whole). */
struct pencil_hess {
    int r;
    double *H;             /* r x r upper Hessenberg, row-major */
    double *b, *c;
    double d0;
    double *work;          /* 2 (r x r + r): real and imaginary parts */
    /* From SCHUR_MIN states on, T is evaluated through the real Schur form
     * H = Z S Z^T instead: one back-substitution per point */
    double *S;             /* r x r quasi-upper triangular, row-major; NULL below */
    double *bs, *cs;       /* Z^T b and Z^T c */
    double complex *eig;   /* the eigenvalues of H, from the same form */
};

/* The entry (node a, column k) of Q. */
static inline double pencil_q(const struct pencil *p, int a, int k)
{
    int g = p->node_group[a];
    if (p->col_group[k] != g)
        return 0.0;
    int s = p->group_start[g + 1] - p->group_start[g];
    return p->qblk[p->blk_off[g] + p->node_pos[a] * s + p->col_pos[k]];
}

/* The input and output vectors of the reduced form of the transfer io:
 * b and c (rank values each); returns d0, NAN when out of memory. */
double pencil_io_vectors(const pencil *p, const pencil_io *io, double *b, double *c);

/* An eigvals status as an lw_error: -1 out of memory, 1 no convergence. */
int pencil_eig_status(int st, const char *what, lw_error *err);

#endif
