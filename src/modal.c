/* modal: block diagonalization of a state-space model for the step response.
 * See modal.h for the method. */
#include "loopwise/modal.h"

#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>
#include <gsl/gsl_matrix.h>
#include <lapacke.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* Two poles closer than this (relative) form one cluster, kept as one block:
 * a pole of multiplicity k comes out of any eigenvalue routine split by
 * about eps^(1/k) relative, 1e-3 for k = 5, and the partial-fraction
 * residues of such a split grow like 1/separation and cancel. */
#define CLUSTER_TOL 1e-3
/* The largest coupling |X| accepted when a block is split off by a Sylvester
 * equation; its rounding error is amplified about that much. Beyond it the
 * block is merged with the next (Bavely and Stewart). */
#define X_MAX 1e6

void modal_free(modal *mf)
{
    if (!mf)
        return;
    for (int k = 0; mf->modes && k < mf->nmodes; k++) {
        free(mf->modes[k].B);
        free(mf->modes[k].E);
    }
    free(mf->modes);
    free(mf->Sinv);
    free(mf->tmp);
    free(mf);
}

/* The 1x1 and 2x2 diagonal blocks of a real Schur form; returns their count. */
static int schur_blocks(int r, const double *T, int *start, int *size)
{
    int nb = 0;
    for (int i = 0; i < r;) {
        int s = i + 1 < r && T[(i + 1) * r + i] != 0 ? 2 : 1;
        start[nb] = i;
        size[nb++] = s;
        i += s;
    }
    return nb;
}

/* The eigenvalue of a diagonal block with the larger imaginary part (or
 * real part, for a 2x2 block with real eigenvalues). */
static double complex block_eig(int r, const double *T, int s, int sz)
{
    if (sz == 1)
        return T[s * r + s];
    double a = T[s * r + s], b = T[s * r + s + 1], c = T[(s + 1) * r + s], d = T[(s + 1) * r + s + 1];
    double m = 0.5 * (a + d), h = 0.5 * (a - d), disc = h * h + b * c;
    return disc < 0 ? m + I * sqrt(-disc) : m + sqrt(disc);
}

static int close_poles(double complex a, double complex b)
{
    return cabs(a - b) <= CLUSTER_TOL * fmax(cabs(a), cabs(b));
}

/* Cluster labels of the blocks (single linkage): label[k] is the smallest
 * block index of k's cluster. */
static void cluster(int nb, const double complex *ev, int *label)
{
    for (int k = 0; k < nb; k++)
        label[k] = k;
    for (int changed = 1; changed;) {
        changed = 0;
        for (int i = 0; i < nb; i++)
            for (int j = i + 1; j < nb; j++)
                if (label[i] != label[j] && close_poles(ev[i], ev[j])) {
                    int lo = label[i] < label[j] ? label[i] : label[j];
                    changed |= label[i] != lo || label[j] != lo;
                    label[i] = label[j] = lo;
                }
    }
}

/* Moves the blocks of every cluster next to each other (dtrsen keeps the
 * order of the blocks it does not move, so a cluster once gathered stays
 * gathered). A failed reordering only leaves the blocks apart: the
 * Sylvester step then merges what lies between them. */
static void gather_clusters(int r, double *T, double *Z, int *start, int *size,
                            double complex *ev, int *label, lapack_logical *sel, double *wr,
                            double *wi)
{
    for (int iter = 0; iter < r; iter++) {
        int nb = schur_blocks(r, T, start, size);
        for (int k = 0; k < nb; k++)
            ev[k] = block_eig(r, T, start[k], size[k]);
        cluster(nb, ev, label);
        int move = -1;
        for (int k = 0; k < nb && move < 0; k++) {
            int last = -1;
            for (int j = 0; j < nb; j++)
                if (label[j] == label[k]) {
                    if (last >= 0 && j != last + 1)
                        move = label[k];
                    last = j;
                }
        }
        if (move < 0)
            return;
        memset(sel, 0, sizeof *sel * (size_t)r);
        for (int k = 0; k < nb; k++)
            if (label[k] == move)
                for (int q = 0; q < size[k]; q++)
                    sel[start[k] + q] = 1;
        lapack_int m;
        double s, sep;
        if (LAPACKE_dtrsen(LAPACK_ROW_MAJOR, 'N', 'V', sel, r, T, r, Z, r, wr, wi, &m, &s, &sep))
            return;
    }
}

static int invert(int k, const double *B, double *Binv)
{
    gsl_matrix *lu = gsl_matrix_alloc((size_t)k, (size_t)k);
    gsl_permutation *perm = gsl_permutation_alloc((size_t)k);
    int sig, ok = lu && perm;
    if (ok) {
        memcpy(lu->data, B, sizeof(double) * (size_t)(k * k));
        gsl_matrix_view inv = gsl_matrix_view_array(Binv, (size_t)k, (size_t)k);
        ok = gsl_linalg_LU_decomp(lu, perm, &sig) == GSL_SUCCESS &&
             gsl_linalg_LU_invert(lu, perm, &inv.matrix) == GSL_SUCCESS;
        for (int q = 0; ok && q < k * k; q++)
            ok = isfinite(Binv[q]);
    }
    gsl_matrix_free(lu);
    gsl_permutation_free(perm);
    return ok;
}

/* One mode from rows s..e-1 of the block-diagonal T. */
static int make_mode(modal *mf, const double *T, const double *cv, int s, int e, int nblocks,
                     const double complex *ev, int woff, modal_mode *md)
{
    int r = mf->r, k = e - s;
    memset(md, 0, sizeof *md);
    md->off = s;
    md->size = k;
    md->woff = woff;
    double complex p = ev[0];
    for (int q = 1; q < nblocks; q++)
        if (creal(ev[q]) > creal(p))
            p = ev[q];
    md->p = p;
    if (k == 1) {
        md->kind = MODE_REAL;
        md->nw = 1;
        md->cp = cv[s];
        return 1;
    }
    if (k == 2 && nblocks == 1 && fabs(cimag(p)) > 0.5 * CLUSTER_TOL * cabs(p)) {
        /* right eigenvector v = (b, p - a), left l = (c, p - a); a standardized
         * block has a = d, so l.v = bc + (p - a)^2 = 2bc, never 0 */
        double a = T[s * r + s], b = T[s * r + s + 1], c = T[(s + 1) * r + s];
        double complex v0 = b, v1 = p - a, lv = c * v0 + (p - a) * v1;
        md->kind = MODE_PAIR;
        md->nw = 2;
        md->l0 = c;
        md->l1 = p - a;
        md->cp = (cv[s] * v0 + cv[s + 1] * v1) / lv;
        return cabs(lv) > 0;
    }
    md->kind = MODE_CLUSTER;
    md->nw = k;
    md->B = malloc(sizeof(double) * (size_t)(3 * k * k + 2 * k));
    md->E = malloc(sizeof(double) * (size_t)(2 * k * k));
    if (!md->B || !md->E)
        return 0;
    md->Binv = md->B + k * k;
    md->cc = md->Binv + k * k;
    md->ws = md->E + k * k;
    for (int i = 0; i < k; i++) {
        md->cc[i] = cv[s + i];
        for (int j = 0; j < k; j++)
            md->B[i * k + j] = T[(s + i) * r + s + j];
    }
    return invert(k, md->B, md->Binv);
}

/* Splits the groups off one at a time: for T = [[T11, T12], [0, T22]],
 * T11 X - X T22 = -T12 gives Y = [[I, X], [0, I]] with Y^-1 T Y block
 * diagonal; Sinv takes Y^-1 on the left and cv (= S^T c) Y^T. gs/ge are the
 * groups' row ranges, merged where X would be too large. Returns the final
 * number of groups, or -1 when out of memory. */
static int decouple(int r, double *T, double *Sinv, double *cv, int *gs, int *ge, int ng)
{
    double *X = malloc(sizeof(double) * (size_t)(r * r + 1));
    if (!X)
        return -1;
    int g = 0;
    while (g < ng - 1) {
        int s = gs[g], e = ge[g], m = e - s, n2 = r - e;
        for (int i = 0; i < m; i++)
            for (int j = 0; j < n2; j++)
                X[i * n2 + j] = -T[(s + i) * r + e + j];
        double scale = 1, xmax = 0;
        lapack_int info = LAPACKE_dtrsyl(LAPACK_ROW_MAJOR, 'N', 'N', -1, m, n2, T + s * r + s, r,
                                         T + e * r + e, r, X, n2, &scale);
        for (int q = 0; q < m * n2; q++)
            xmax = fmax(xmax, fabs(X[q]));
        if (info != 0 || !(scale > 0) || !(xmax / scale <= X_MAX)) {
            ge[g] = ge[g + 1];
            memmove(gs + g + 1, gs + g + 2, sizeof *gs * (size_t)(ng - g - 2));
            memmove(ge + g + 1, ge + g + 2, sizeof *ge * (size_t)(ng - g - 2));
            ng--;
            continue;
        }
        for (int q = 0; q < m * n2; q++)
            X[q] /= scale;
        for (int i = 0; i < m; i++) {
            for (int j = 0; j < n2; j++)
                T[(s + i) * r + e + j] = 0;
            for (int col = 0; col < r; col++) {
                double acc = 0;
                for (int j = 0; j < n2; j++)
                    acc += X[i * n2 + j] * Sinv[(e + j) * r + col];
                Sinv[(s + i) * r + col] -= acc;
            }
        }
        for (int j = 0; j < n2; j++) {
            double acc = 0;
            for (int i = 0; i < m; i++)
                acc += X[i * n2 + j] * cv[s + i];
            cv[e + j] += acc;
        }
        g++;
    }
    free(X);
    return ng;
}

int modal_new(int r, const double *A, const double *c, modal **out, lw_error *err)
{
    *out = NULL;
    size_t rr = (size_t)r * (size_t)r + 1;
    modal *mf = calloc(1, sizeof *mf);
    double *T = malloc(sizeof(double) * rr), *Z = malloc(sizeof(double) * rr);
    double *dv = malloc(sizeof(double) * (size_t)(4 * r + 4));
    int *iv = malloc(sizeof(int) * (size_t)(5 * r + 5));
    double complex *ev = calloc((size_t)r + 1, sizeof *ev);
    lapack_logical *sel = malloc(sizeof *sel * (size_t)(r + 1));
    int rc = LW_OK;
    if (mf) {
        mf->r = r;
        mf->Sinv = malloc(sizeof(double) * rr);
        mf->tmp = malloc(sizeof(double) * (size_t)(2 * r + 2));
        mf->modes = calloc((size_t)r + 1, sizeof *mf->modes);
    }
    if (!mf || !T || !Z || !dv || !iv || !ev || !sel || !mf->Sinv || !mf->tmp || !mf->modes) {
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
        goto done;
    }
    double *scl = dv, *wr = dv + r + 1, *wi = wr + r + 1, *cv = wi + r + 1;
    int *start = iv, *size = iv + r + 1, *label = size + r + 1, *gs = label + r + 1,
        *ge = gs + r + 1;
    memcpy(T, A, sizeof(double) * (size_t)(r * r));
    lapack_int ilo, ihi, sdim;
    if (r > 0 && (LAPACKE_dgebal(LAPACK_ROW_MAJOR, 'S', r, T, r, &ilo, &ihi, scl) ||
                  LAPACKE_dgees(LAPACK_ROW_MAJOR, 'V', 'N', NULL, r, T, r, &sdim, wr, wi, Z, r))) {
        rc = lw_error_set(err, LW_ENUMERIC, "the Schur form of the closed loop did not converge");
        goto done;
    }
    gather_clusters(r, T, Z, start, size, ev, label, sel, wr, wi);
    /* A = D Z T Z^T D^-1 (D the balancing scale): Sinv = Z^T D^-1, cv = Z^T D c */
    for (int i = 0; i < r; i++) {
        double acc = 0;
        for (int j = 0; j < r; j++) {
            mf->Sinv[i * r + j] = Z[j * r + i] / scl[j];
            acc += Z[j * r + i] * scl[j] * c[j];
        }
        cv[i] = acc;
    }
    int nb = schur_blocks(r, T, start, size), ng = 0;
    for (int k = 0; k < nb; k++)
        ev[k] = block_eig(r, T, start[k], size[k]);
    cluster(nb, ev, label);
    for (int k = 0; k < nb; k++) {
        if (ng > 0 && label[k] == label[k - 1]) {
            ge[ng - 1] += size[k];
            continue;
        }
        gs[ng] = start[k];
        ge[ng++] = start[k] + size[k];
    }
    if ((ng = decouple(r, T, mf->Sinv, cv, gs, ge, ng)) < 0) {
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
        goto done;
    }
    int kb = 0;
    for (int g = 0; g < ng; g++) {
        int first = kb;
        while (kb < nb && start[kb] < ge[g])
            kb++;
        modal_mode *md = &mf->modes[mf->nmodes++];
        if (!make_mode(mf, T, cv, gs[g], ge[g], kb - first, ev + first, mf->nw, md)) {
            rc = md->B || md->kind != MODE_CLUSTER
                     ? lw_error_set(err, LW_ENUMERIC, "a mode of the closed loop is singular "
                                    "(a pole at s = 0)")
                     : lw_error_set(err, LW_ENOMEM, "out of memory");
            goto done;
        }
        mf->nw += md->nw;
    }
done:
    free(T);
    free(Z);
    free(dv);
    free(iv);
    free(ev);
    free(sel);
    if (rc) {
        modal_free(mf);
        return rc;
    }
    *out = mf;
    return LW_OK;
}

void modal_weights(modal *mf, const double *b, double *w)
{
    int r = mf->r;
    double *bt = mf->tmp;
    for (int i = 0; i < r; i++) {
        double acc = 0;
        for (int j = 0; j < r; j++)
            acc += mf->Sinv[i * r + j] * b[j];
        bt[i] = acc;
    }
    for (int k = 0; k < mf->nmodes; k++) {
        const modal_mode *md = &mf->modes[k];
        double *wk = w + md->woff;
        if (md->kind == MODE_REAL) {
            wk[0] = bt[md->off] / creal(md->p);
        } else if (md->kind == MODE_PAIR) {
            double complex z = (md->l0 * bt[md->off] + md->l1 * bt[md->off + 1]) / md->p;
            wk[0] = creal(z);
            wk[1] = cimag(z);
        } else {
            for (int i = 0; i < md->size; i++) {
                double acc = 0;
                for (int j = 0; j < md->size; j++)
                    acc += md->Binv[i * md->size + j] * bt[md->off + j];
                wk[i] = acc;
            }
        }
    }
}

/* cc^T e^(Bt) into row (and times B into drow): GSL's matrix exponential of
 * the cluster's block. */
static int cluster_row(modal_mode *md, double t, double *row, double *drow)
{
    int k = md->size;
    for (int q = 0; q < k * k; q++)
        md->ws[q] = md->B[q] * t;
    gsl_matrix_view Bt = gsl_matrix_view_array(md->ws, (size_t)k, (size_t)k);
    gsl_matrix_view E = gsl_matrix_view_array(md->E, (size_t)k, (size_t)k);
    if (gsl_linalg_exponential_ss(&Bt.matrix, &E.matrix, GSL_PREC_DOUBLE) != GSL_SUCCESS)
        return LW_ENUMERIC;
    for (int j = 0; j < k; j++) {
        double acc = 0;
        for (int i = 0; i < k; i++)
            acc += md->cc[i] * md->E[i * k + j];
        row[j] = acc;
    }
    for (int j = 0; drow && j < k; j++) {
        double acc = 0;
        for (int i = 0; i < k; i++)
            acc += row[i] * md->B[i * k + j];
        drow[j] = acc;
    }
    return LW_OK;
}

int modal_rows(modal *mf, double t, double *ry, double *rd)
{
    for (int k = 0; k < mf->nmodes; k++) {
        modal_mode *md = &mf->modes[k];
        double *y = ry + md->woff, *dy = rd ? rd + md->woff : NULL;
        if (md->kind == MODE_REAL) {
            double p = creal(md->p), E = creal(md->cp) * exp(p * t);
            y[0] = E;
            if (dy)
                dy[0] = p * E;
        } else if (md->kind == MODE_PAIR) {
            double complex E = md->cp * cexp(md->p * t), F = md->p * E;
            y[0] = 2 * creal(E);
            y[1] = -2 * cimag(E);
            if (dy) {
                dy[0] = 2 * creal(F);
                dy[1] = -2 * cimag(F);
            }
        } else if (cluster_row(md, t, y, dy)) {
            return LW_ENUMERIC;
        }
    }
    return LW_OK;
}

double modal_amplitude(const modal *mf, int k, const double *w)
{
    const modal_mode *md = &mf->modes[k];
    const double *wk = w + md->woff;
    if (md->kind == MODE_REAL)
        return fabs(creal(md->cp) * wk[0]);
    if (md->kind == MODE_PAIR)
        return 2 * cabs(md->cp * (wk[0] + I * wk[1]));
    double s = 0;
    for (int i = 0; i < md->size; i++)
        s += fabs(md->cc[i] * wk[i]);
    return s;
}

double modal_term(modal *mf, int k, const double *w, double t)
{
    modal_mode *md = &mf->modes[k];
    const double *wk = w + md->woff;
    if (md->kind == MODE_REAL)
        return creal(md->cp) * exp(creal(md->p) * t) * wk[0];
    if (md->kind == MODE_PAIR)
        return 2 * creal(md->cp * cexp(md->p * t) * (wk[0] + I * wk[1]));
    double *row = mf->tmp, s = 0;
    if (cluster_row(md, t, row, NULL))
        return NAN;
    for (int i = 0; i < md->size; i++)
        s += row[i] * wk[i];
    return s;
}

double modal_value(modal *mf, const double *w, const double *lamp, double lfloor, double t,
                   double *dy)
{
    double y = 0, d = 0;
    for (int k = 0; k < mf->nmodes; k++) {
        modal_mode *md = &mf->modes[k];
        const double *wk = w + md->woff;
        if (md->kind != MODE_CLUSTER && lamp && lamp[k] + creal(md->p) * t < lfloor)
            continue; /* a term that small cannot move the sum */
        if (md->kind == MODE_REAL) {
            double e = creal(md->cp) * exp(creal(md->p) * t) * wk[0];
            y += e;
            d += creal(md->p) * e;
        } else if (md->kind == MODE_PAIR) {
            double complex e = md->cp * cexp(md->p * t) * (wk[0] + I * wk[1]);
            y += 2 * creal(e);
            d += 2 * creal(md->p * e);
        } else {
            double *row = mf->tmp, *drow = mf->tmp + md->size;
            if (cluster_row(md, t, row, drow))
                return NAN;
            for (int i = 0; i < md->size; i++) {
                y += row[i] * wk[i];
                d += drow[i] * wk[i];
            }
        }
    }
    if (dy)
        *dy = d;
    return y;
}
