/* pencil: reduction of G + sC to a standard eigenproblem, poles and owners.
 * See pencil.h for the method. */
#include "loopwise/pencil.h"

#include <gsl/gsl_cblas.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/eigvals.h"
#include "loopwise/linalg.h"
#include "pencil_impl.h"

/* Relative size below which an eigenvalue of the scaled C counts as zero. */
#define RANK_TOL 1e-12
/* Relative size below which a singular value of G22 makes it singular. */
#define SINGULAR_TOL 1e-14

void pencil_free(pencil *p)
{
    if (!p)
        return;
    free(p->d);
    free(p->lam);
    free(p->M);
    free(p->Y2);
    free(p->Z2);
    free(p->G22inv);
    free(p->group_start);
    free(p->group_node);
    free(p->group_col);
    free(p->node_group);
    free(p->node_pos);
    free(p->col_group);
    free(p->col_pos);
    free(p->blk_off);
    free(p->qblk);
    free(p);
}

int pencil_rank(const pencil *p)
{
    return p->r;
}

static void make_scaling(int n, const double *G, const double *C, double *d)
{
    for (int k = 0; k < n; k++) {
        double c = C[k * n + k], g = 0;
        for (int j = 0; j < n; j++) {
            g = fmax(g, fabs(G[k * n + j]));
            g = fmax(g, fabs(G[j * n + k]));
        }
        d[k] = c > 0 ? 1.0 / sqrt(c) : (g > 0 ? 1.0 / sqrt(g) : 1.0);
    }
}

/* ---- the capacitance split ------------------------------------------------ */

static int root_of(int *parent, int a)
{
    while (parent[a] != a) {
        parent[a] = parent[parent[a]];
        a = parent[a];
    }
    return a;
}

/* The groups of nodes joined by capacitors (a nonzero off-diagonal entry
 * of C), each listed in ascending node order, groups in the order of their
 * first node. */
static int make_groups(pencil *p, const double *C)
{
    int n = p->n, *parent = malloc(sizeof(int) * (size_t)n);
    if (!parent)
        return -1;
    for (int a = 0; a < n; a++)
        parent[a] = a;
    for (int i = 0; i < n; i++)
        for (int j = i + 1; j < n; j++)
            if (C[i * n + j] != 0 || C[j * n + i] != 0) {
                int ri = root_of(parent, i), rj = root_of(parent, j);
                if (ri != rj)
                    parent[ri > rj ? ri : rj] = ri < rj ? ri : rj;
            }
    p->ngroup = 0;
    for (int a = 0; a < n; a++) {
        int ra = root_of(parent, a);
        p->node_group[a] = ra == a ? p->ngroup++ : p->node_group[ra];
    }
    free(parent);
    p->group_start = calloc((size_t)p->ngroup + 1, sizeof(int));
    p->blk_off = malloc(sizeof(int) * ((size_t)p->ngroup + 1));
    if (!p->group_start || !p->blk_off)
        return -1;
    for (int a = 0; a < n; a++)
        p->group_start[p->node_group[a] + 1]++;
    for (int g = 0; g < p->ngroup; g++)
        p->group_start[g + 1] += p->group_start[g];
    int *fill = calloc((size_t)p->ngroup + 1, sizeof(int));
    if (!fill)
        return -1;
    for (int a = 0; a < n; a++) {
        int g = p->node_group[a];
        p->node_pos[a] = fill[g]++;
        p->group_node[p->group_start[g] + p->node_pos[a]] = a;
    }
    free(fill);
    size_t off = 0;
    for (int g = 0; g < p->ngroup; g++) {
        size_t s = (size_t)(p->group_start[g + 1] - p->group_start[g]);
        p->blk_off[g] = (int)off;
        off += s * s;
    }
    p->blk_off[p->ngroup] = (int)off;
    p->qblk = malloc(sizeof(double) * (off + 1));
    return p->qblk ? 0 : -1;
}

typedef struct col_rec {
    double val;
    int entry;
} col_rec;

/* Descending eigenvalue; ties in group order, so the split is reproducible. */
static int cmp_col(const void *a, const void *b)
{
    const col_rec *x = a, *y = b;
    if (x->val != y->val)
        return x->val > y->val ? -1 : 1;
    return x->entry - y->entry;
}

/* Eigendecomposition of the scaled C, group by group (LAPACK's symmetric
 * divide and conquer on every group of two nodes or more); the columns
 * sorted by descending eigenvalue. Sets p->r. */
static int split_capacitance(pencil *p, const double *C, lw_error *err)
{
    int n = p->n, rc = LW_OK, smax = 1;
    if (make_groups(p, C))
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    for (int g = 0; g < p->ngroup; g++)
        if (p->group_start[g + 1] - p->group_start[g] > smax)
            smax = p->group_start[g + 1] - p->group_start[g];
    col_rec *rec = malloc(sizeof *rec * (size_t)n);
    double *w = malloc(sizeof(double) * (size_t)smax);
    if (!rec || !w) {
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
        goto done;
    }
    for (int g = 0; g < p->ngroup; g++) {
        int s = p->group_start[g + 1] - p->group_start[g], *nodes = p->group_node + p->group_start[g];
        double *blk = p->qblk + p->blk_off[g];
        if (s == 1) {
            int a = nodes[0];
            blk[0] = 1.0;
            rec[p->group_start[g]] = (col_rec){ p->d[a] * C[a * n + a] * p->d[a],
                                                p->group_start[g] };
            continue;
        }
        for (int i = 0; i < s; i++)
            for (int j = 0; j < s; j++)
                blk[i * s + j] = p->d[nodes[i]] * C[nodes[i] * n + nodes[j]] * p->d[nodes[j]];
        int st = eigvals_symmetric(s, blk, w);
        if (st) {
            rc = st < 0 ? lw_error_set(err, LW_ENOMEM, "out of memory")
                        : lw_error_set(err, LW_ENUMERIC, "eigendecomposition of the capacitance "
                                       "matrix failed");
            goto done;
        }
        /* the vectors are the columns of the symmetric block's storage read
         * column-major: row i of the block (node i) holds their i-th entries
         * once transposed */
        for (int i = 0; i < s; i++)
            for (int j = i + 1; j < s; j++) {
                double t = blk[i * s + j];
                blk[i * s + j] = blk[j * s + i];
                blk[j * s + i] = t;
            }
        for (int j = 0; j < s; j++)
            rec[p->group_start[g] + j] = (col_rec){ w[j], p->group_start[g] + j };
    }
    qsort(rec, (size_t)n, sizeof *rec, cmp_col);
    for (int k = 0; k < n; k++) {
        int e = rec[k].entry, g = p->node_group[p->group_node[e]];
        p->lam[k] = rec[k].val;
        p->col_group[k] = g;
        p->col_pos[k] = e - p->group_start[g];
        p->group_col[e] = k;
    }
    double lmax = n > 0 ? p->lam[0] : 0;
    p->r = 0;
    for (int k = 0; k < n; k++)
        if (lmax > 0 && p->lam[k] > RANK_TOL * lmax)
            p->r++;
    p->m = n - p->r;
done:
    free(rec);
    free(w);
    return rc;
}

/* Gq = Q^T X Q for X = D G D (scaled = 0: G is given) or X itself
 * (scaled = 1). Through the groups this costs O(n S), S the sum of the
 * squared group sizes (n when no capacitor joins two nodes), instead of
 * two dense products; for large groups the dense products are faster. */
static int rotate_g(const pencil *p, const double *G, int scaled, double *Gq)
{
    int n = p->n;
    size_t un = (size_t)n, S = 0;
    for (int g = 0; g < p->ngroup; g++) {
        size_t s = (size_t)(p->group_start[g + 1] - p->group_start[g]);
        S += s * s;
    }
    double *W = malloc(sizeof(double) * un * un);
    if (!W)
        return -1;
    if (S * 8 > un * un) {
        double *Qd = calloc(un * un, sizeof(double));
        if (!Qd) {
            free(W);
            return -1;
        }
        for (int a = 0; a < n; a++)
            for (int k = 0; k < n; k++)
                Qd[a * n + k] = pencil_q(p, a, k);
        for (int a = 0; a < n; a++)
            for (int b = 0; b < n; b++)
                Gq[a * n + b] = scaled ? G[a * n + b] : p->d[a] * G[a * n + b] * p->d[b];
        cblas_dgemm(CblasRowMajor, CblasNoTrans, CblasNoTrans, n, n, n, 1.0, Gq, n, Qd, n, 0.0,
                    W, n);
        cblas_dgemm(CblasRowMajor, CblasTrans, CblasNoTrans, n, n, n, 1.0, Qd, n, W, n, 0.0, Gq,
                    n);
        free(Qd);
        free(W);
        return 0;
    }
    /* W = X Q: column k of Q lives on the nodes of its group */
    for (int a = 0; a < n; a++)
        for (int k = 0; k < n; k++) {
            int g = p->col_group[k], s = p->group_start[g + 1] - p->group_start[g];
            const int *nodes = p->group_node + p->group_start[g];
            const double *q = p->qblk + p->blk_off[g] + p->col_pos[k];
            double acc = 0;
            for (int i = 0; i < s; i++)
                acc += (scaled ? G[a * n + nodes[i]]
                               : p->d[a] * G[a * n + nodes[i]] * p->d[nodes[i]]) * q[i * s];
            W[a * n + k] = acc;
        }
    /* Gq = Q^T W */
    for (int i = 0; i < n; i++) {
        int g = p->col_group[i], s = p->group_start[g + 1] - p->group_start[g];
        const int *nodes = p->group_node + p->group_start[g];
        const double *q = p->qblk + p->blk_off[g] + p->col_pos[i];
        for (int k = 0; k < n; k++) {
            double acc = 0;
            for (int j = 0; j < s; j++)
                acc += q[j * s] * W[nodes[j] * n + k];
            Gq[i * n + k] = acc;
        }
    }
    free(W);
    return 0;
}

/* G11 - G12 G22^-1 G21 of the rotated coordinates, computed in node
 * coordinates when every capacitance-free coordinate is a node of its own
 * (a node without any capacitor, the usual case): the Schur complement
 * D G D - X_F G_FF^-1 Y_F over the nodes F then rotated by Q. A large
 * conductance the complement cancels (a feedback resistor of 1 ohm into a
 * node without capacitance, say) then cancels entry by entry, which is
 * rounding of the conductances themselves; cancelled after the rotation,
 * its rounding would spread over the rotated block and move a pole decades
 * below the others (the slow pole of a Miller stage). Returns 1 when not
 * applicable, with M untouched. */
static int complement_in_nodes(pencil *p, const double *G, lw_error *err, int *rc)
{
    int n = p->n, r = p->r, m = p->m;
    size_t un = (size_t)n, um = (size_t)m;
    for (int k = r; k < n; k++) {
        int g = p->col_group[k];
        if (p->group_start[g + 1] - p->group_start[g] != 1)
            return 1;
    }
    double *blk = malloc(sizeof(double) * (2 * un * un + 2 * un * um));
    int *fn = malloc(sizeof(int) * (um + 1));
    *rc = LW_OK;
    if (!blk || !fn) {
        free(blk);
        free(fn);
        *rc = lw_error_set(err, LW_ENOMEM, "out of memory");
        return 0;
    }
    double *Gs = blk, *Gq = Gs + un * un, *AF = Gq + un * un, *Y = AF + un * um;
    for (int j = 0; j < m; j++)
        fn[j] = p->group_node[p->group_start[p->col_group[r + j]]];
    for (int a = 0; a < n; a++)
        for (int b = 0; b < n; b++)
            Gs[a * n + b] = p->d[a] * G[a * n + b] * p->d[b];
    /* Y = G_FF^-1 (rows F of Gs), AF = columns F of Gs, Gs -= AF Y */
    for (int j = 0; j < m; j++)
        for (int a = 0; a < n; a++)
            AF[(size_t)a * um + j] = Gs[a * n + fn[j]];
    for (int j = 0; j < m; j++)
        memcpy(Gq + (size_t)j * un, Gs + (size_t)fn[j] * un, sizeof(double) * un);
    cblas_dgemm(CblasRowMajor, CblasNoTrans, CblasNoTrans, m, n, m, 1.0, p->G22inv, m, Gq, n,
                0.0, Y, n);
    cblas_dgemm(CblasRowMajor, CblasNoTrans, CblasNoTrans, n, n, m, -1.0, AF, m, Y, n, 1.0, Gs,
                n);
    if (rotate_g(p, Gs, 1, Gq)) {
        *rc = lw_error_set(err, LW_ENOMEM, "out of memory");
    } else {
        for (int i = 0; i < r; i++)
            memcpy(p->M + (size_t)i * r, Gq + (size_t)i * un, sizeof(double) * (size_t)r);
    }
    free(blk);
    free(fn);
    return 0;
}

/* Gq, then the Schur complement on the capacitance-free block:
 * M = -L^-1/2 (G11 - G12 G22^-1 G21) L^-1/2. */
static int eliminate(pencil *p, const double *G, lw_error *err)
{
    int n = p->n, r = p->r, m = p->m, rc = LW_OK;
    size_t un = (size_t)n, ur = (size_t)r, um = (size_t)m;
    double *Gq = malloc(sizeof(double) * un * un);
    p->M = malloc(sizeof(double) * (ur * ur + 1));
    if (!Gq || !p->M || rotate_g(p, G, 0, Gq)) {
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
        goto done;
    }
    if (m > 0) {
        p->G22inv = malloc(sizeof(double) * um * um);
        double *G22 = malloc(sizeof(double) * um * um);
        if (!p->G22inv || !G22) {
            free(G22);
            rc = lw_error_set(err, LW_ENOMEM, "out of memory");
            goto done;
        }
        for (int i = 0; i < m; i++)
            memcpy(G22 + (size_t)i * um, Gq + (size_t)(r + i) * un + r, sizeof(double) * um);
        int st = linalg_inverse_svd(m, G22, p->G22inv, SINGULAR_TOL);
        free(G22);
        if (st == 2) {
            rc = lw_error_set(err, LW_ENUMERIC, "the network is singular: the nodes without "
                              "capacitance do not have a well-defined voltage (check for a node "
                              "tied only to gm outputs, or an island of resistors with no path "
                              "to ground)");
            goto done;
        }
        if (st) {
            rc = st < 0 ? lw_error_set(err, LW_ENOMEM, "out of memory")
                        : lw_error_set(err, LW_ENUMERIC, "singular value decomposition failed");
            goto done;
        }
    }
    for (int i = 0; i < r; i++)
        memcpy(p->M + (size_t)i * ur, Gq + (size_t)i * un, sizeof(double) * ur);
    if (m > 0 && r > 0) {
        p->Y2 = malloc(sizeof(double) * um * ur);
        p->Z2 = malloc(sizeof(double) * ur * um);
        if (!p->Y2 || !p->Z2) {
            rc = lw_error_set(err, LW_ENOMEM, "out of memory");
            goto done;
        }
        const double *G21 = Gq + ur * un, *G12 = Gq + ur;
        cblas_dgemm(CblasRowMajor, CblasNoTrans, CblasNoTrans, m, r, m, 1.0, p->G22inv, m, G21,
                    n, 0.0, p->Y2, r);
        cblas_dgemm(CblasRowMajor, CblasNoTrans, CblasNoTrans, r, m, m, 1.0, G12, n, p->G22inv,
                    m, 0.0, p->Z2, m);
        if (complement_in_nodes(p, G, err, &rc))
            cblas_dgemm(CblasRowMajor, CblasNoTrans, CblasNoTrans, r, r, m, -1.0, G12, n, p->Y2,
                        r, 1.0, p->M, r);
        if (rc)
            goto done;
    }
    for (int i = 0; i < r; i++)
        for (int j = 0; j < r; j++)
            p->M[(size_t)i * ur + j] = -p->M[(size_t)i * ur + j] / sqrt(p->lam[i] * p->lam[j]);
done:
    free(Gq);
    return rc;
}

int pencil_new(int n, const double *G, const double *C, pencil **out, lw_error *err)
{
    *out = NULL;
    pencil *p = calloc(1, sizeof *p);
    if (!p)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    size_t un = (size_t)n + 1;
    p->n = n;
    p->d = malloc(sizeof(double) * un);
    p->lam = malloc(sizeof(double) * un);
    p->group_node = malloc(sizeof(int) * un);
    p->group_col = malloc(sizeof(int) * un);
    p->node_group = malloc(sizeof(int) * un);
    p->node_pos = malloc(sizeof(int) * un);
    p->col_group = malloc(sizeof(int) * un);
    p->col_pos = malloc(sizeof(int) * un);
    if (!p->d || !p->lam || !p->group_node || !p->group_col || !p->node_group || !p->node_pos ||
        !p->col_group || !p->col_pos) {
        pencil_free(p);
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    make_scaling(n, G, C, p->d);
    int rc = split_capacitance(p, C, err);
    if (!rc)
        rc = eliminate(p, G, err);
    if (rc) {
        pencil_free(p);
        return rc;
    }
    *out = p;
    return LW_OK;
}

/* ---- poles and owners ------------------------------------------------------ */

/* Maps the reduced eigenvectors V (r x r, column-major, LAPACK's packing)
 * to node coordinates X (n x r, column-major):
 *   right:  x = D Q [L^-1/2 y; -Y2 L^-1/2 y],
 *   left:   l = D Q [L^-1/2 w; -Z2^T L^-1/2 w].
 * Z (n x r) is workspace. The map is real, so the packed real and imaginary
 * parts of a complex pair map to those of its node vector. */
static void to_nodes(const pencil *p, const double *V, int left, double *Z, double *X)
{
    int n = p->n, r = p->r, m = p->m;
    for (int col = 0; col < r; col++)
        for (int k = 0; k < r; k++)
            Z[(size_t)col * n + k] = V[(size_t)col * r + k] / sqrt(p->lam[k]);
    if (m > 0)
        cblas_dgemm(CblasColMajor, left ? CblasNoTrans : CblasTrans, CblasNoTrans, m, r, r, -1.0,
                    left ? p->Z2 : p->Y2, left ? m : r, Z, n, 0.0, Z + r, n);
    for (int a = 0; a < n; a++) {
        int g = p->node_group[a], s = p->group_start[g + 1] - p->group_start[g];
        const int *cols = p->group_col + p->group_start[g];
        const double *q = p->qblk + p->blk_off[g] + p->node_pos[a] * s;
        for (int col = 0; col < r; col++) {
            const double *z = Z + (size_t)col * n;
            double acc = 0;
            for (int j = 0; j < s; j++)
                acc += q[j] * z[cols[j]];
            X[(size_t)col * n + a] = p->d[a] * acc;
        }
    }
}

/* |v_a| of eigenvalue k from the packed node vectors X: a complex pair
 * (pair = 1 for its first, -1 for its second member) has the real and
 * imaginary parts in columns k and k+1. */
static double packed_abs(const double *X, int n, int k, int pair, int a)
{
    if (pair == 0)
        return fabs(X[(size_t)k * n + a]);
    int k0 = pair > 0 ? k : k - 1;
    return hypot(X[(size_t)k0 * n + a], X[(size_t)(k0 + 1) * n + a]);
}

/* Owner of each eigenvalue: the node with the largest participation factor
 * |l_a (C x)_a| among those with capacitance; the magnitude of a product
 * is the product of the magnitudes, and an eigenvector's scale (or its
 * conjugation) does not move the largest. Where no factor is a number, the
 * largest energy C_aa |x_a|^2 decides. C couples only nodes of one group. */
static int owners(const pencil *p, const double *C, const double complex *eig, const double *VR,
                  const double *VL, int *owner)
{
    int n = p->n, r = p->r;
    size_t nr = (size_t)n * (size_t)r;
    double *blk = malloc(sizeof(double) * 4 * nr);
    if (!blk)
        return -1;
    double *Z = blk, *X = Z + nr, *L = X + nr, *CX = L + nr;
    to_nodes(p, VR, 0, Z, X);
    to_nodes(p, VL, 1, Z, L);
    for (int a = 0; a < n; a++) {
        int g = p->node_group[a], s = p->group_start[g + 1] - p->group_start[g];
        const int *nodes = p->group_node + p->group_start[g];
        for (int col = 0; col < r; col++) {
            double acc = 0;
            for (int j = 0; j < s; j++)
                acc += C[a * n + nodes[j]] * X[(size_t)col * n + nodes[j]];
            CX[(size_t)col * n + a] = acc;
        }
    }
    for (int k = 0; k < r; k++) {
        int pair = cimag(eig[k]) > 0 && k + 1 < r ? 1 : (cimag(eig[k]) < 0 && k > 0 ? -1 : 0);
        int best = -1, best_fb = -1;
        double bestv = -1, bestfb = -1;
        for (int j = 0; j < n; j++) {
            if (!(C[j * n + j] > 0))
                continue;
            double xj = packed_abs(X, n, k, pair, j);
            double part = packed_abs(L, n, k, pair, j) * packed_abs(CX, n, k, pair, j);
            double energy = C[j * n + j] * xj * xj;
            if (isfinite(part) && part > bestv) {
                bestv = part;
                best = j;
            }
            if (isfinite(energy) && energy > bestfb) {
                bestfb = energy;
                best_fb = j;
            }
        }
        owner[k] = best >= 0 ? best : best_fb;
    }
    free(blk);
    return 0;
}

/* An eigvals status as an lw_error: -1 out of memory, 1 no convergence. */
int pencil_eig_status(int st, const char *what, lw_error *err)
{
    if (st < 0)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    if (st > 0)
        return lw_error_set(err, LW_ENUMERIC, "the eigenvalue iteration for %s did not converge",
                            what);
    return LW_OK;
}

int pencil_eigen(const pencil *p, const double *C, double complex *eig, int *owner,
                 lw_error *err)
{
    int r = p->r;
    if (r == 0)
        return LW_OK;
    if (!owner) /* values only: no Schur vectors */
        return pencil_eig_status(eigvals_general(r, p->M, eig), "the poles", err);
    size_t rr = (size_t)r * (size_t)r;
    double *V = malloc(sizeof(double) * 2 * rr);
    if (!V)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    int rc = pencil_eig_status(eigvals_vectors(r, p->M, eig, V, V + rr), "the poles", err);
    if (!rc && owners(p, C, eig, V, V + rr, owner))
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
    free(V);
    return rc;
}

/* ---- the transfer's vectors ------------------------------------------------ */

/* b = L^-1/2 (qo1 - Z2 qo2), c = L^-1/2 (qi1 - Y2^T qi2), d0 = qi2^T G22^-1 qo2
 * for qo = Q^T D u and qi = Q^T D v (u = e_o, v = e_i without their scale
 * factors in the unit form, which the caller applies). */
static double io_from(const pencil *p, const double *qo, const double *qi, double *b, double *c)
{
    int r = p->r, m = p->m;
    double d0 = 0;
    for (int k = 0; k < r; k++) {
        double sb = qo[k], sc = qi[k];
        for (int j = 0; j < m; j++) {
            sb -= p->Z2[(size_t)k * m + j] * qo[r + j];
            sc -= p->Y2[(size_t)j * r + k] * qi[r + j];
        }
        double s = sqrt(p->lam[k]);
        b[k] = sb / s;
        c[k] = sc / s;
    }
    for (int a = 0; a < m; a++)
        for (int j = 0; j < m; j++)
            d0 += qi[r + a] * p->G22inv[(size_t)a * m + j] * qo[r + j];
    return d0;
}

double pencil_io_vectors(const pencil *p, const pencil_io *io, double *b, double *c)
{
    int n = p->n;
    double *qo = calloc(2 * (size_t)n + 1, sizeof(double)), *qi = qo ? qo + n : NULL;
    if (!qo)
        return NAN;
    if (io->unit) {
        /* rows o and i of Q: nonzero only on the columns of their groups */
        for (int side = 0; side < 2; side++) {
            int a = side ? io->in : io->out, g = p->node_group[a];
            int s = p->group_start[g + 1] - p->group_start[g];
            for (int j = 0; j < s; j++) {
                int k = p->group_col[p->group_start[g] + j];
                (side ? qi : qo)[k] = pencil_q(p, a, k);
            }
        }
    } else {
        for (int k = 0; k < n; k++) {
            int g = p->col_group[k], s = p->group_start[g + 1] - p->group_start[g];
            const int *nodes = p->group_node + p->group_start[g];
            double su = 0, sv = 0;
            for (int j = 0; j < s; j++) {
                double q = pencil_q(p, nodes[j], k) * p->d[nodes[j]];
                su += q * io->u[nodes[j]];
                sv += q * io->v[nodes[j]];
            }
            qo[k] = su;
            qi[k] = sv;
        }
    }
    double d0 = io_from(p, qo, qi, b, c);
    free(qo);
    return d0;
}

double pencil_scale(const pencil *p, int k)
{
    return p->d[k];
}
