/* pencil_zeros: candidate zeros of a transfer of the reduced form, from its
 * zero dynamics or the bordered pencil. See pencil.h. */
#include "loopwise/pencil.h"

#include <gsl/gsl_blas.h>
#include <gsl/gsl_eigen.h>
#include <gsl/gsl_linalg.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/eigvals.h"
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
    double nm = gsl_matrix_norm1(p->M), nb = 0, nc = 0;
    for (int a = 0; a < r; a++) {
        nb += b[a] * b[a];
        nc += c[a] * c[a];
    }
    nb = sqrt(nb);
    nc = sqrt(nc);
    if (!(nm > 0) || !(nb > 0) || !(nc > 0))
        return LW_OK;
    /* M scaled to unit norm: zeros scale back by nm */
    gsl_matrix *Ms = gsl_matrix_alloc((size_t)r, (size_t)r);
    gsl_matrix *W = gsl_matrix_alloc((size_t)r, (size_t)r);
    gsl_vector *tau = gsl_vector_alloc((size_t)r);
    double *v = malloc(sizeof(double) * (size_t)(5 * r));
    if (!Ms || !W || !tau || !v) {
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
        goto done;
    }
    gsl_matrix_memcpy(Ms, p->M);
    gsl_matrix_scale(Ms, 1.0 / nm);
    double *g = v, *t = v + r, *bb = v + 2 * r, *ga = v + 3 * r, *ta = v + 4 * r;
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
                gsl_matrix_set(W, (size_t)a, (size_t)q,
                               gsl_matrix_get(Ms, (size_t)a, (size_t)q) - kk * bb[a] * g[q]);
        if (eigvals_general(r, W->data, z) == 0) {
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
            for (int a = 0; a < r; a++)
                gsl_matrix_set(W, (size_t)a, (size_t)k, g[a]);
            k++;
            break;
        }
        for (int a = 0; a < r; a++)
            gsl_matrix_set(W, (size_t)a, (size_t)k, g[a]);
        /* g <- Ms^T g */
        gnorm = 0;
        for (int a = 0; a < r; a++) {
            double sacc = 0, sabs = 0;
            for (int q = 0; q < r; q++) {
                double mq = gsl_matrix_get(Ms, (size_t)q, (size_t)a);
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
    gsl_matrix *Q = gsl_matrix_alloc((size_t)r, (size_t)r), *R = gsl_matrix_alloc((size_t)r, (size_t)r);
    double *MN = malloc(sizeof(double) * (size_t)(r * nr + nr * nr + 1)), *Z = MN + r * nr;
    if (!Q || !R || !MN) {
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
    } else {
        for (int q = k; q < r; q++)
            for (int a = 0; a < r; a++)
                gsl_matrix_set(W, (size_t)a, (size_t)q, 0.0);
        gsl_linalg_QR_decomp(W, tau);
        gsl_linalg_QR_unpack(W, tau, Q, R);
        /* The Krylov rows are nearly parallel when the path gains lie far
         * below the largest pole; a basis this degenerate is not used. */
        double rmin = INFINITY, rmax = 0;
        for (int q = 0; q < k; q++) {
            double rq = fabs(gsl_matrix_get(R, (size_t)q, (size_t)q));
            rmin = fmin(rmin, rq);
            rmax = fmax(rmax, rq);
        }
        if (!(rmin >= ZD_SPREAD_MIN * rmax) || !(*quality >= ZD_QUALITY_MIN))
            goto basis_done; /* *done stays 0: the bordered pencil takes over */
        /* Z = N^T (I - bb g^T / gamma) Ms N, N = Q[:, k..r-1]; the matrices
         * were allocated r x r, so their rows are r apart */
        const double *ms = Ms->data, *qm = Q->data;
        for (int a = 0; a < r; a++)
            for (int q = 0; q < nr; q++) {
                double sacc = 0;
                for (int j = 0; j < r; j++)
                    sacc += ms[a * r + j] * qm[j * r + k + q];
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
                    sacc += qm[a * r + k + x] * MN[a * nr + q];
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
    gsl_matrix_free(Q);
    gsl_matrix_free(R);
    free(MN);
done:
    gsl_matrix_free(Ms);
    gsl_matrix_free(W);
    gsl_vector_free(tau);
    free(v);
    return rc;
}

int pencil_zero_candidates(const pencil *p, const pencil_io *io, int method, double complex *z,
                           int *nz, int *used, lw_error *err)
{
    int r = p->r, rc = LW_OK;
    *nz = 0;
    *used = PENCIL_ZEROS_QZ;
    if (r == 0)
        return LW_OK;
    if (method == PENCIL_ZEROS_AUTO) {
        double *bc = malloc(sizeof(double) * (size_t)(2 * r));
        if (!bc)
            return lw_error_set(err, LW_ENOMEM, "out of memory");
        double d0 = pencil_io_vectors(p, io, bc, bc + r);
        int done = 0;
        if (isnan(d0)) {
            free(bc);
            return lw_error_set(err, LW_ENOMEM, "out of memory");
        }
        double quality = 1.0;
        rc = zero_dynamics(p, bc, bc + r, d0, z, nz, &done, &quality, err);
        free(bc);
        if (!rc && done)
            *used = quality >= ZD_QUALITY_TRUST ? PENCIL_ZEROS_DYNAMICS
                                                : PENCIL_ZEROS_DYNAMICS_CHECK;
        if (rc || done)
            return rc;
        *nz = 0;
    }
    double *b = malloc(sizeof(double) * (size_t)(2 * r));
    gsl_matrix *A = gsl_matrix_calloc((size_t)r + 1, (size_t)r + 1);
    gsl_matrix *B = gsl_matrix_calloc((size_t)r + 1, (size_t)r + 1);
    gsl_vector_complex *alpha = gsl_vector_complex_alloc((size_t)r + 1);
    gsl_vector *beta = gsl_vector_alloc((size_t)r + 1);
    gsl_eigen_gen_workspace *w = gsl_eigen_gen_alloc((size_t)r + 1);
    if (!b || !A || !B || !alpha || !beta || !w) {
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
        goto done;
    }
    double *c = b + r;
    double d0 = pencil_io_vectors(p, io, b, c);
    if (isnan(d0)) {
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
        goto done;
    }
    double nm = gsl_matrix_norm1(p->M), nb = norm2(b, r), nc = norm2(c, r);
    if (nb == 0 || nc == 0)
        goto done; /* the transfer has no dynamics: no zeros */
    if (!(nm > 0))
        nm = 1;
    /* Scaling b by nm/nb and c by nm/nc leaves the zeros unchanged. */
    double sb = nm / nb, sc = nm / nc;
    for (int a = 0; a < r; a++) {
        for (int j = 0; j < r; j++)
            gsl_matrix_set(A, (size_t)a, (size_t)j, gsl_matrix_get(p->M, (size_t)a, (size_t)j));
        gsl_matrix_set(A, (size_t)a, (size_t)r, sb * b[a]);
        gsl_matrix_set(A, (size_t)r, (size_t)a, sc * c[a]);
        gsl_matrix_set(B, (size_t)a, (size_t)a, 1.0);
    }
    gsl_matrix_set(A, (size_t)r, (size_t)r, sb * sc * d0);
    if (gsl_eigen_gen(A, B, alpha, beta, w) != GSL_SUCCESS) {
        rc = lw_error_set(err, LW_ENUMERIC, "the eigenvalue iteration for the zeros did not "
                          "converge");
        goto done;
    }
    for (int k = 0; k <= r; k++) {
        double be = gsl_vector_get(beta, (size_t)k);
        gsl_complex a = gsl_vector_complex_get(alpha, (size_t)k);
        if (be == 0)
            continue;
        double complex v = (GSL_REAL(a) + I * GSL_IMAG(a)) / be;
        if (isfinite(creal(v)) && isfinite(cimag(v)) && *nz < r)
            z[(*nz)++] = v;
    }
done:
    free(b);
    gsl_matrix_free(A);
    gsl_matrix_free(B);
    gsl_vector_complex_free(alpha);
    gsl_vector_free(beta);
    gsl_eigen_gen_free(w);
    return rc;
}
