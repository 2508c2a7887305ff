/* pencil_hess: the Hessenberg form of the reduced network, for O(rank^2)
 * evaluation of a transfer and the closed-loop poles. See pencil.h. */
#include "loopwise/pencil.h"

#include <gsl/gsl_linalg.h>
#include <gsl/gsl_vector.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/eigvals.h"
#include "pencil_impl.h"

/* ---- O(rank^2) evaluation through the Hessenberg form ------------------------ */

void pencil_hess_free(pencil_hess *h)
{
    if (!h)
        return;
    free(h->H);
    free(h->b);
    free(h->work);
    free(h->S);
    free(h->bs);
    free(h->eig);
    free(h);
}

/* From this many states on, the evaluator works on the real Schur form: its
 * back-substitution costs about a quarter of the Hessenberg elimination
 * (no copy, no elimination step, real times complex), which pays for the
 * Schur vectors once a check evaluates T a few hundred times; and the poles
 * come with it. */
#define SCHUR_MIN 1000

static int schur_form(pencil_hess *h, lw_error *err)
{
    size_t r = (size_t)h->r;
    h->S = malloc(sizeof(double) * r * r);
    h->bs = malloc(sizeof(double) * 2 * r);
    h->eig = malloc(sizeof *h->eig * r);
    if (!h->S || !h->bs || !h->eig)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    h->cs = h->bs + r;
    memcpy(h->S, h->H, sizeof(double) * r * r);
    memcpy(h->bs, h->b, sizeof(double) * r);
    memcpy(h->cs, h->c, sizeof(double) * r);
    return pencil_eig_status(eigvals_schur(h->r, h->S, h->bs, 2, h->eig), "the poles", err);
}

/* c^T (sI - S)^-1 b + d0 by back-substitution on the quasi-triangular S: a
 * 2 x 2 block on the diagonal (a complex pair) is solved by Cramer's rule.
 * NaN when sI - S is singular. */
static double complex schur_eval(pencil_hess *h, double complex s)
{
    int r = h->r;
    const double *S = h->S;
    double *xr = h->work, *xi = xr + r;
    double complex sum = 0;
    for (int k = r - 1; k >= 0;) {
        int two = k > 0 && S[(size_t)k * r + k - 1] != 0, k0 = two ? k - 1 : k;
        double complex rhs[2];
        for (int q = k0; q <= k; q++) {
            const double *row = S + (size_t)q * r;
            double ar = h->bs[q], ai = 0;
            for (int j = k + 1; j < r; j++) {
                ar += row[j] * xr[j];
                ai += row[j] * xi[j];
            }
            rhs[q - k0] = ar + I * ai;
        }
        double complex x0, x1 = 0;
        if (two) {
            double complex a = s - S[(size_t)k0 * r + k0], b = -S[(size_t)k0 * r + k],
                           c = -S[(size_t)k * r + k0], d = s - S[(size_t)k * r + k];
            double complex det = a * d - b * c;
            if (det == 0)
                return NAN;
            x0 = (rhs[0] * d - b * rhs[1]) / det;
            x1 = (a * rhs[1] - c * rhs[0]) / det;
            xr[k] = creal(x1);
            xi[k] = cimag(x1);
        } else {
            double complex piv = s - S[(size_t)k * r + k];
            if (piv == 0)
                return NAN;
            x0 = rhs[0] / piv;
        }
        xr[k0] = creal(x0);
        xi[k0] = cimag(x0);
        sum += h->cs[k0] * x0 + (two ? h->cs[k] * x1 : 0);
        k = k0 - 1;
    }
    return sum + h->d0;
}

static int hess_make(const pencil *p, const pencil_io *io, int schur, pencil_hess **out,
                     lw_error *err)
{
    *out = NULL;
    int r = p->r, rc = LW_OK;
    pencil_hess *h = calloc(1, sizeof *h);
    if (h) {
        h->r = r;
        h->H = malloc(sizeof(double) * (size_t)(r * r + 1));
        h->b = malloc(sizeof(double) * (size_t)(2 * r + 2));
        h->work = malloc(sizeof(double) * 2 * (size_t)(r * r + r + 1));
    }
    if (!h || !h->H || !h->b || !h->work) {
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
        goto done;
    }
    h->c = h->b + r;
    h->d0 = r || p->m ? pencil_io_vectors(p, io, h->b, h->c) : 0;
    if (isnan(h->d0)) {
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
        goto done;
    }
    if (r > 0) {
        /* balanced first (a diagonal similarity D^-1 M D, Parlett and
         * Reinsch): the Householder steps then keep the small entries of a
         * matrix whose rows span many decades, which the evaluation needs
         * near s = 0. GSL's balancing, not LAPACK's dgebal: on the 512-node
         * benchmark chain T from dgebal's scaling was off by 2e-9 at the
         * crossover (GSL's: 3e-11), enough for the spot check to send every
         * evaluation to the O(n^3) LU. Then the controller Hessenberg form, b = beta e_1
         * (Van Dooren and Verhaegen, 1985): closing the loop changes the
         * first row only, and the zeros' pencil is Hessenberg-triangular
         * as it stands. */
        memcpy(h->H, p->M, sizeof(double) * (size_t)r * (size_t)r);
        gsl_matrix_view A = gsl_matrix_view_array(h->H, (size_t)r, (size_t)r);
        gsl_vector *bal = gsl_vector_alloc((size_t)r);
        if (!bal) {
            rc = lw_error_set(err, LW_ENOMEM, "out of memory");
            goto done;
        }
        gsl_linalg_balance_matrix(&A.matrix, bal);
        for (int a = 0; a < r; a++) {
            h->b[a] /= gsl_vector_get(bal, (size_t)a);
            h->c[a] *= gsl_vector_get(bal, (size_t)a);
        }
        gsl_vector_free(bal);
        int st = eigvals_controller_form(r, h->H, h->b, h->c);
        if (st)
            rc = st < 0 ? lw_error_set(err, LW_ENOMEM, "out of memory")
                        : lw_error_set(err, LW_ENUMERIC, "Hessenberg reduction failed");
        if (!rc && schur && r >= SCHUR_MIN)
            rc = schur_form(h, err);
    }
done:
    if (rc) {
        pencil_hess_free(h);
        return rc;
    }
    *out = h;
    return LW_OK;
}

int pencil_hess_new(const pencil *p, const pencil_io *io, pencil_hess **out, lw_error *err)
{
    return hess_make(p, io, 1, out, err);
}

int pencil_hess_new_plain(const pencil *p, const pencil_io *io, pencil_hess **out,
                          lw_error *err)
{
    return hess_make(p, io, 0, out, err);
}

/* Gaussian elimination of the Hessenberg system (sI - H) x = b: each column
 * has one entry below the diagonal, so each step compares two rows and
 * swaps them when the lower one is larger (partial pivoting). O(r^2), on
 * separate real and imaginary parts (the operands are scaled, so the
 * overflow guards of the library's complex arithmetic are not needed).
 * Entries below the subdiagonal are never read, so they are not filled. */
double complex pencil_hess_eval(pencil_hess *h, double complex s)
{
    int r = h->r;
    if (r == 0)
        return h->d0;
    if (h->S)
        return schur_eval(h, s);
    double *ar = h->work, *ai = ar + r * r, *xr = ai + r * r, *xi = xr + r;
    double sr = creal(s), si = cimag(s);
    for (int a = 0; a < r; a++) {
        int k0 = a > 0 ? a - 1 : 0;
        for (int k = k0; k < r; k++) {
            ar[a * r + k] = -h->H[a * r + k];
            ai[a * r + k] = 0.0;
        }
        ar[a * r + a] += sr;
        ai[a * r + a] = si;
        xr[a] = h->b[a];
        xi[a] = 0.0;
    }
    for (int k = 0; k < r - 1; k++) {
        double *pr = ar + k * r, *pi = ai + k * r, *nr = ar + (k + 1) * r, *ni = ai + (k + 1) * r;
        if (fabs(nr[k]) + fabs(ni[k]) > fabs(pr[k]) + fabs(pi[k])) {
            for (int j = k; j < r; j++) {
                double tr = pr[j], ti = pi[j];
                pr[j] = nr[j];
                pi[j] = ni[j];
                nr[j] = tr;
                ni[j] = ti;
            }
            double tr = xr[k], ti = xi[k];
            xr[k] = xr[k + 1];
            xi[k] = xi[k + 1];
            xr[k + 1] = tr;
            xi[k + 1] = ti;
        }
        double nk = pr[k] * pr[k] + pi[k] * pi[k];
        if (nk == 0)
            return NAN;
        /* f = n_k / p_k */
        double fr = (nr[k] * pr[k] + ni[k] * pi[k]) / nk, fi = (ni[k] * pr[k] - nr[k] * pi[k]) / nk;
        if (fr != 0 || fi != 0) {
            for (int j = k + 1; j < r; j++) {
                nr[j] -= fr * pr[j] - fi * pi[j];
                ni[j] -= fr * pi[j] + fi * pr[j];
            }
            xr[k + 1] -= fr * xr[k] - fi * xi[k];
            xi[k + 1] -= fr * xi[k] + fi * xr[k];
        }
    }
    double sumr = 0, sumi = 0;
    for (int k = r - 1; k >= 0; k--) {
        const double *pr = ar + k * r, *pi = ai + k * r;
        double vr = xr[k], vi = xi[k];
        for (int j = k + 1; j < r; j++) {
            vr -= pr[j] * xr[j] - pi[j] * xi[j];
            vi -= pr[j] * xi[j] + pi[j] * xr[j];
        }
        double nk = pr[k] * pr[k] + pi[k] * pi[k];
        if (nk == 0)
            return NAN;
        xr[k] = (vr * pr[k] + vi * pi[k]) / nk;
        xi[k] = (vi * pr[k] - vr * pi[k]) / nk;
        sumr += h->c[k] * xr[k];
        sumi += h->c[k] * xi[k];
    }
    return sumr + h->d0 + I * sumi;
}

/* pencil_hess_eval at a real s, in real arithmetic: the same elimination
 * at about a third of the cost (the zero checks of loopgain.c evaluate at
 * real zeros). */
double pencil_hess_eval_real(pencil_hess *h, double s)
{
    int r = h->r;
    if (r == 0)
        return h->d0;
    if (h->S)
        return creal(schur_eval(h, s));
    double *a = h->work, *x = a + r * r;
    for (int i = 0; i < r; i++) {
        int k0 = i > 0 ? i - 1 : 0;
        for (int k = k0; k < r; k++)
            a[i * r + k] = -h->H[i * r + k];
        a[i * r + i] += s;
        x[i] = h->b[i];
    }
    for (int k = 0; k < r - 1; k++) {
        double *pr = a + k * r, *nr = a + (k + 1) * r;
        if (fabs(nr[k]) > fabs(pr[k])) {
            for (int j = k; j < r; j++) {
                double t = pr[j];
                pr[j] = nr[j];
                nr[j] = t;
            }
            double t = x[k];
            x[k] = x[k + 1];
            x[k + 1] = t;
        }
        if (pr[k] == 0)
            return NAN;
        double f = nr[k] / pr[k];
        if (f != 0) {
            for (int j = k + 1; j < r; j++)
                nr[j] -= f * pr[j];
            x[k + 1] -= f * x[k];
        }
    }
    double sum = 0;
    for (int k = r - 1; k >= 0; k--) {
        const double *pr = a + k * r;
        double v = x[k];
        for (int j = k + 1; j < r; j++)
            v -= pr[j] * x[j];
        if (pr[k] == 0)
            return NAN;
        x[k] = v / pr[k];
        sum += h->c[k] * x[k];
    }
    return sum + h->d0;
}

int pencil_hess_feedback_eigen(const pencil_hess *h, double gain, double complex *eig, int *ok,
                               lw_error *err)
{
    int r = h->r;
    double den = 1.0 + gain * h->d0;
    *ok = 0;
    if (r == 0)
        return LW_OK;
    /* 1 + T = (1 + gain d0) (1 + kappa c^T (sI - H)^-1 b), kappa = gain/(1 + gain d0),
     * and det(sI - H + kappa b c^T) = det(sI - H) (1 + kappa c^T (sI - H)^-1 b).
     * With b = beta e_1 only the first row of H changes: the matrix stays
     * upper Hessenberg and needs no new reduction. */
    if (!(fabs(den) > 1e-9 * fmax(1.0, fabs(gain * h->d0))))
        return LW_OK;
    double kappa = gain / den;
    /* The rank-one update must not swamp H: after balancing, b and c of a
     * nearly decoupled network (repeated poles, stages without capacitance)
     * can carry scale factors of 1e30 and more, and the eigenvalues of
     * H - kappa b c^T then lose every digit. The whole network's pencil
     * has no such product (measured on the test networks: the ratio below
     * stays under 1e4 where this path is right). */
    double nh = 0, nb = 0, nc = 0;
    for (int a = 0; a < r; a++) {
        nb += h->b[a] * h->b[a];
        nc += h->c[a] * h->c[a];
        for (int k = a > 0 ? a - 1 : 0; k < r; k++)
            nh = fmax(nh, fabs(h->H[a * r + k]));
    }
    if (!(fabs(kappa) * sqrt(nb * nc) <= 1e6 * nh))
        return LW_OK;
    double *A = malloc(sizeof(double) * (size_t)(r * r));
    if (!A)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    memcpy(A, h->H, sizeof(double) * (size_t)(r * r));
    for (int k = 0; k < r; k++)
        A[k] -= kappa * h->b[0] * h->c[k];
    int rc = pencil_eig_status(eigvals_hessenberg_balanced(r, A, eig), "the closed-loop poles",
                               err);
    free(A);
    *ok = rc == LW_OK;
    return rc;
}

int pencil_hess_eigen(const pencil_hess *h, double complex *eig, lw_error *err)
{
    if (h->eig) {
        memcpy(eig, h->eig, sizeof *eig * (size_t)h->r);
        return LW_OK;
    }
    return pencil_eig_status(eigvals_hessenberg(h->r, h->H, eig), "the poles", err);
}
