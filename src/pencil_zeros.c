/* pencil_zeros: candidate zeros of a transfer of the reduced form, from its
 * zero dynamics or the bordered pencil. See pencil.h. */
#include "loopwise/pencil.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/eigvals.h"
#include "loopwise/linalg.h"
#include "pencil_impl.h"

/* How far the zero dynamics is trusted. Its zeros lose about
 * 3e-13 / quality of relative accuracy, where quality is the first nonzero
 * Markov parameter over the norm of its Krylov row (the projection divides
 * by it; measured on the networks of tests/ref/family.py, whose paths run
 * through stages decades below the largest pole). Below ZD_QUALITY_MIN, or
 * with a Krylov basis whose R factor spans more than 1/ZD_SPREAD_MIN, the
 * bordered pencil is used instead; below ZD_QUALITY_TRUST each zero is
 * checked against T. */
#define ZD_QUALITY_MIN 1e-8
#define ZD_QUALITY_TRUST 1e-5
#define ZD_SPREAD_MIN 1e-12

/* The 1-norm (largest column sum) of the r x r row-major A. */
static double norm1(const double *A, int r)
{
    double best = 0;
    for (int j = 0; j < r; j++) {
        double s = 0;
        for (int i = 0; i < r; i++)
            s += fabs(A[(size_t)i * r + j]);
        best = fmax(best, s);
    }
    return best;
}

static double norm2(const double *v, int n)
{
    double s = 0;
    for (int k = 0; k < n; k++)
        s += v[k] * v[k];
    return sqrt(s);
}

/* Zeros as the eigenvalues of the zero dynamics, a standard eigenproblem of
 * order r - k where k is the relative degree (the first Markov parameter
 * c^T M^(k-1) b that is not zero to rounding). For x with c^T M^j x = 0,
 * j < k, the input u = -c^T M^k x / (c^T M^(k-1) b) holds the output at zero,
 * and x' = (I - b g^T) M x with g^T = c^T M^(k-1) / (c^T M^(k-1) b) maps that
 * subspace into itself: its eigenvalues there are the invariant zeros.
 * With a feedthrough d0 that matters, they are eig(M - b c^T / d0).
 * Returns 0 in *done when the caller should use the bordered pencil. */
static int zero_dynamics(const pencil *p, const double *b, const double *c, double d0,
                         double complex *z, int *nz, int *done, double *quality, lw_error *err)
{
    int r = p->r, rc = LW_OK;
    *quality = 1.0;
    *done = 0;
    double nm = norm1(p->M, r), nb = 0, nc = 0;
    for (int a = 0; a < r; a++) {
        nb += b[a] * b[a];
        nc += c[a] * c[a];
    }
    nb = sqrt(nb);
    nc = sqrt(nc);
    if (!(nm > 0) || !(nb > 0) || !(nc > 0))
        return LW_OK;
    /* M scaled to unit norm (zeros scale back by nm), the Krylov rows as
     * the columns of W (column-major), and five vectors */
    size_t rr = (size_t)r * (size_t)r;
    double *Ms = malloc(sizeof(double) * (2 * rr + 5 * (size_t)r)), *W = Ms ? Ms + rr : NULL;
    if (!Ms) {
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
        goto done;
    }
    for (size_t a = 0; a < rr; a++)
        Ms[a] = p->M[a] / nm;
    double *v = W + rr, *g = v, *t = v + r, *bb = v + 2 * r, *ga = v + 3 * r, *ta = v + 4 * r;
    for (int a = 0; a < r; a++) {
        g[a] = c[a] / nc; /* g runs through c^T Ms^j, normalised */
        ga[a] = fabs(g[a]); /* and ga through |c|^T |Ms|^j */
        bb[a] = b[a] / nb;
    }
    double gnorm = 1.0;
    if (fabs(d0) * nm > 1e-8 * nb * nc) {
        /* feedthrough: zeros = eig(M - b c^T / d0), in the scaled units */
        double kk = nb * nc / (nm * d0);
        for (int a = 0; a < r; a++)
            for (int q = 0; q < r; q++)
                W[a * r + q] = Ms[a * r + q] - kk * bb[a] * g[q];
        if (eigvals_general(r, W, z) == 0) {
            for (int a = 0; a < r; a++)
                z[a] *= nm;
            *nz = r;
            *done = 1;
        }
        goto done;
    }
    /* relative degree: rows c^T Ms^j into W until c^T Ms^j b is not zero.
     * The Krylov rows lose accuracy as j grows, so beyond a small order (or a
     * large network) the bordered pencil decides instead. */
    if (r > 32)
        goto done;
    int k = 0;
    double gamma = 0;
    for (; k < r; k++) {
        double mk = 0, mbound = 0;
        for (int a = 0; a < r; a++) {
            mk += g[a] * bb[a];
            mbound += ga[a] * fabs(bb[a]);
        }
        if (k >= 6)
            goto done; /* *done stays 0: the bordered pencil takes over */
        /* The Markov parameter c^T Ms^k b is a sum over the paths of length k
         * from the break's output to its input. Its rounding error is bounded
         * by a small multiple of eps |c|^T |Ms|^k |b| (Higham, Accuracy and
         * Stability of Numerical Algorithms, 2002, section 3.5), so that sum
         * of magnitudes, not the norm of the Krylov row, decides whether it
         * is zero: a path through stages whose poles lie decades below the
         * largest one has a tiny but exact value (issue 16). The floor
         * against the row's norm keeps the rounding noise of a dense
         * reduction (floating capacitors mix the coordinates) from passing
         * for a path. */
        if (fabs(mk) > 1e-8 * mbound && fabs(mk) > 1e-13 * gnorm) {
            gamma = mk; /* relative degree k + 1: c^T x = ... = c^T M^k x = 0 on the subspace */
            /* the projection below divides by gamma: its size against the
             * Krylov row's norm is what the zeros' accuracy hangs on */
            *quality = fabs(mk) / gnorm;
            memcpy(W + (size_t)k * r, g, sizeof(double) * (size_t)r);
            k++;
            break;
        }
        memcpy(W + (size_t)k * r, g, sizeof(double) * (size_t)r);
        /* g <- Ms^T g */
        gnorm = 0;
        for (int a = 0; a < r; a++) {
            double sacc = 0, sabs = 0;
            for (int q = 0; q < r; q++) {
                double mq = Ms[q * r + a];
                sacc += mq * g[q];
                sabs += fabs(mq) * ga[q];
            }
            t[a] = sacc;
            ta[a] = sabs;
            gnorm += sacc * sacc;
        }
        gnorm = sqrt(gnorm);
        if (!(gnorm > 0)) {
            *done = 1; /* every Markov parameter vanishes: no dynamics seen, no zeros */
            goto done;
        }
        for (int a = 0; a < r; a++) {
            g[a] = t[a];
            ga[a] = ta[a];
        }
    }
    if (gamma == 0) {
        *done = 1;
        goto done;
    }
    int nr = r - k;
    if (nr == 0) {
        *done = 1;
        goto done;
    }
    /* N: orthonormal basis of the complement of span(W[:, 0..k-1]) from a QR */
    double *Q = malloc(sizeof(double) * (rr + (size_t)k + (size_t)(r * nr + nr * nr) + 1));
    double *rd = Q ? Q + rr : NULL, *MN = rd ? rd + k : NULL, *Z = MN ? MN + r * nr : NULL;
    if (!Q) {
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
    } else if (linalg_qr_basis(r, k, W, Q, rd) == 0) {
        /* The Krylov rows are nearly parallel when the path gains lie far
         * below the largest pole; a basis this degenerate is not used. */
        double rmin = INFINITY, rmax = 0;
        for (int q = 0; q < k; q++) {
            rmin = fmin(rmin, fabs(rd[q]));
            rmax = fmax(rmax, fabs(rd[q]));
        }
        if (!(rmin >= ZD_SPREAD_MIN * rmax) || !(*quality >= ZD_QUALITY_MIN))
            goto basis_done; /* *done stays 0: the bordered pencil takes over */
        /* Z = N^T (I - bb g^T / gamma) Ms N, N = Q[:, k..r-1] (column-major) */
        const double *qn = Q + (size_t)k * r;
        for (int a = 0; a < r; a++)
            for (int q = 0; q < nr; q++) {
                double sacc = 0;
                for (int j = 0; j < r; j++)
                    sacc += Ms[a * r + j] * qn[(size_t)q * r + j];
                MN[a * nr + q] = sacc;
            }
        for (int q = 0; q < nr; q++) {
            double gm = 0;
            for (int a = 0; a < r; a++)
                gm += g[a] * MN[a * nr + q];
            for (int a = 0; a < r; a++)
                MN[a * nr + q] -= bb[a] * gm / gamma;
        }
        for (int x = 0; x < nr; x++)
            for (int q = 0; q < nr; q++) {
                double sacc = 0;
                for (int a = 0; a < r; a++)
                    sacc += qn[(size_t)x * r + a] * MN[a * nr + q];
                Z[x * nr + q] = sacc;
            }
        if (eigvals_general(nr, Z, z) == 0) {
            for (int a = 0; a < nr; a++)
                z[a] *= nm;
            *nz = nr;
            *done = 1;
        }
    }
basis_done:
    free(Q);
done:
    free(Ms);
    return rc;
}

/* The relative degree the structure forces: one more than the length of
 * the shortest walk in M's pattern from the support of b to that of c.
 * Every Markov parameter c^T M^j b of a shorter length is a sum of products
 * each with a zero factor, so it is exactly zero and the zeros at infinity
 * it makes are exact too. r + 1 when no walk exists (T has no dynamics). */
static int structural_degree(const pencil *p, const double *b, const double *c)
{
    int r = p->r, deg = r + 1;
    unsigned char *seen = calloc((size_t)r + 1, 1);
    int *front = malloc(sizeof(int) * 2 * ((size_t)r + 1)), *next = front ? front + r + 1 : NULL;
    if (!seen || !front) {
        free(seen);
        free(front);
        return 1; /* nothing forced */
    }
    int nf = 0;
    for (int a = 0; a < r; a++)
        if (b[a] != 0) {
            seen[a] = 1;
            front[nf++] = a;
        }
    for (int len = 0; nf > 0 && len < r; len++) {
        for (int q = 0; q < nf; q++)
            if (c[front[q]] != 0) {
                deg = len + 1;
                goto done;
            }
        int nn = 0;
        for (int q = 0; q < nf; q++)
            for (int a = 0; a < r; a++)
                if (!seen[a] && p->M[(size_t)a * r + front[q]] != 0) {
                    seen[a] = 1;
                    next[nn++] = a;
                }
        memcpy(front, next, sizeof(int) * (size_t)nn);
        nf = nn;
    }
done:
    free(seen);
    free(front);
    return deg;
}

/* The bordered pencil in Hessenberg-triangular form: with b = beta e_1,
 * moving the input's column and the output's row to the front of
 * [[H - sI, b], [c^T, d0]] gives A - sB with A = [[d0, c^T], [beta e_1, H]]
 * upper Hessenberg and B = diag(0, I), which QZ takes as it stands (Moler
 * and Stewart, 1973), without a reduction. When d0 = 0 and the structure
 * forces a relative degree k (c^T H^j e_1 = 0 for j < k - 1, so that c's
 * first k - 1 entries are rounding of exact zeros), the first k zeros at
 * infinity are split off exactly: the rows of H that fix u and x_0 ..
 * x_(k-2) go, and A = [c(k-1..)^T; H(k.., k-1..)], B = diag(0, I) of order
 * r - k + 1 remains, with one zero at infinity for QZ to find. Left in,
 * those rounding residues would turn the exact zeros at infinity into large
 * finite ones. Scaling the input's column by nm/|b| and the output's row by
 * nm/|c| leaves the zeros unchanged. */
static int bordered_qz(const pencil_hess *h, int k, double complex *z, int *nz, lw_error *err)
{
    int r = h->r, rc = LW_OK;
    double nm = norm1(h->H, r), nb = fabs(h->b[0]), nc = norm2(h->c, r);
    if (nb == 0 || nc == 0 || k > r)
        return LW_OK; /* the transfer has no dynamics: no zeros */
    if (!(nm > 0))
        nm = 1;
    for (int i = 1; i < k && h->d0 == 0; i++)
        if (h->H[(size_t)i * r + i - 1] == 0)
            k = 0; /* a zero subdiagonal: no exact split */
    if (h->d0 != 0)
        k = 0;
    /* k = 0: the whole bordered pencil; k >= 1: the split one, first column k - 1 */
    int N = k == 0 ? r + 1 : r - k + 1, c0 = k == 0 ? 0 : k - 1;
    double sb = nm / nb, sc = nm / nc;
    size_t NN = (size_t)N * (size_t)N;
    double *A = calloc(2 * NN + 3 * (size_t)N, sizeof(double));
    if (!A)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    double *B = A + NN, *ar = B + NN, *ai = ar + N, *be = ai + N;
    if (k == 0) {
        A[0] = sb * sc * h->d0;
        A[1] = sb * h->b[0];
    }
    /* column j of the pencil (past the input's column when k = 0) is
     * column c0 + j' of H with row 0 the output's */
    for (int j = k == 0 ? 1 : 0; j < N; j++) {
        int hc = c0 + j - (k == 0), h0 = k == 0 ? 0 : k; /* H column, first H row */
        double *col = A + (size_t)j * N;
        col[0] = sc * h->c[hc];
        for (int i = h0; i <= hc + 1 && i < r; i++)
            col[1 + i - h0] = h->H[(size_t)i * r + hc];
        B[(size_t)j * N + j] = j > 0;
    }
    int st = eigvals_pencil_ht(N, A, B, ar, ai, be);
    if (st) {
        rc = st < 0 ? lw_error_set(err, LW_ENOMEM, "out of memory")
                    : lw_error_set(err, LW_ENUMERIC, "the eigenvalue iteration for the zeros did "
                                   "not converge");
    } else {
        for (int q = 0; q < N; q++) {
            if (be[q] == 0)
                continue;
            double complex v = (ar[q] + I * ai[q]) / be[q];
            if (isfinite(creal(v)) && isfinite(cimag(v)) && *nz < r)
                z[(*nz)++] = v;
        }
    }
    free(A);
    return rc;
}

int pencil_hess_zero_candidates(const pencil *p, const pencil_hess *h, const pencil_io *io,
                                int method, double complex *z, int *nz, int *used, lw_error *err)
{
    int r = p->r, rc = LW_OK;
    *nz = 0;
    *used = PENCIL_ZEROS_QZ;
    if (r == 0)
        return LW_OK;
    double *bc = malloc(sizeof(double) * (size_t)(2 * r));
    if (!bc)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    double d0 = pencil_io_vectors(p, io, bc, bc + r);
    if (isnan(d0)) {
        free(bc);
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    if (method == PENCIL_ZEROS_AUTO) {
        int done = 0;
        double quality = 1.0;
        rc = zero_dynamics(p, bc, bc + r, d0, z, nz, &done, &quality, err);
        if (!rc && done)
            *used = quality >= ZD_QUALITY_TRUST ? PENCIL_ZEROS_DYNAMICS
                                                : PENCIL_ZEROS_DYNAMICS_CHECK;
        if (rc || done) {
            free(bc);
            return rc;
        }
        *nz = 0;
    }
    int k = d0 == 0 ? structural_degree(p, bc, bc + r) : 0;
    free(bc);
    return bordered_qz(h, k, z, nz, err);
}

int pencil_zero_candidates(const pencil *p, const pencil_io *io, int method, double complex *z,
                           int *nz, int *used, lw_error *err)
{
    pencil_hess *h = NULL;
    *nz = 0;
    *used = PENCIL_ZEROS_QZ;
    if (p->r == 0)
        return LW_OK;
    int rc = pencil_hess_new(p, io, &h, err);
    if (!rc)
        rc = pencil_hess_zero_candidates(p, h, io, method, z, nz, used, err);
    pencil_hess_free(h);
    return rc;
}
