/* loopgain: exact evaluation of the return ratio and its poles and zeros. */
#include "loopwise/loopgain.h"

#include <limits.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/linalg.h"
#include "loopwise/pencil.h"
#include "loopgain_impl.h"

void lgain_free(lgain *lg)
{
    if (!lg)
        return;
    lgain_ahead_free(lg->ahead);
    pencil_hess_free(lg->h);
    pencil_free(lg->p);
    netlu_free(lg->lu);
    free(lg->u);
    free(lg->Gs);
    free(lg->Cs);
    free(lg->Y);
    free(lg->x);
    free(lg->Yr);
    free(lg->xr);
    free(lg->perm);
    free(lg);
}

/* From NETLU_MIN nodes on, the LU path is the sparse LU of netlu.c: a
 * network's Y(s) has a few entries per row, and the dense LU's n^3 (about
 * a second a point at 2048 nodes) made the exact scan of a large network
 * take hours; at 512 nodes a sparse solve costs 0.07 ms against the
 * Hessenberg form's 0.46 ms.
 * From NETLU_FIRST nodes on it is the evaluator from the start: there the
 * reduced form lost accuracy (its T was off by 3e-8 at the crossover of
 * the 2048-node benchmark chain, and by many orders of magnitude at 10 GHz
 * on the 1024-node one, where |T| is 1e-87), and the sparse LU is both the
 * exact path and the cheaper one. Below it the Hessenberg form stays the
 * evaluator, checked against the LU as before. */
#define NETLU_MIN 200
#define NETLU_FIRST 1000

int lgain_hess_build(lgain *lg, lw_error *err)
{
    /* the LU path evaluates T from NETLU_FIRST nodes: no Schur form then */
    return (lg->full ? pencil_hess_new_plain : pencil_hess_new)(lg->p, &lg->io, &lg->h, err);
}

/* in, out, g for a single gm; u (n values) instead when out is -1. */
static int lgain_make(int n, const double *G0, const double *C, int in, int out, double g,
                      const double *u, int ahead, lgain **out_lg, lw_error *err)
{
    *out_lg = NULL;
    lgain *lg = calloc(1, sizeof *lg);
    size_t nn = (size_t)n * (size_t)n;
    if (!lg)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    lg->n = n;
    lg->in = in;
    lg->out = out;
    lg->Gs = malloc(sizeof(double) * nn);
    lg->Cs = malloc(sizeof(double) * nn);
    /* the LU path's matrices are allocated when first used: most checks
     * never take it at more than a few points */
    lg->perm = malloc(sizeof(int) * (size_t)n);
    lg->x = malloc(sizeof *lg->x * (size_t)n);
    lg->xr = malloc(sizeof(double) * (size_t)n);
    if (u)
        lg->u = calloc(3 * (size_t)n, sizeof(double));
    double *d = malloc(sizeof(double) * (size_t)n);
    if (!lg->Gs || !lg->Cs || !lg->perm || !lg->x || !lg->xr || !d || (u && !lg->u)) {
        free(d);
        lgain_free(lg);
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    /* Same diagonal scaling as the pencil: unit capacitance where there is one. */
    for (int k = 0; k < n; k++) {
        double c = C[k * n + k], gmax = 0;
        for (int j = 0; j < n; j++)
            gmax = fmax(gmax, fmax(fabs(G0[k * n + j]), fabs(G0[j * n + k])));
        d[k] = c > 0 ? 1.0 / sqrt(c) : (gmax > 0 ? 1.0 / sqrt(gmax) : 1.0);
    }
    for (int i = 0; i < n; i++)
        for (int j = 0; j < n; j++) {
            lg->Gs[i * n + j] = d[i] * G0[i * n + j] * d[j];
            lg->Cs[i * n + j] = d[i] * C[i * n + j] * d[j];
        }
    if (u) {
        /* T = -e_in^T Y0^-1 u = -d_in e_in^T Ys^-1 (D u) with Ys = D Y0 D */
        int any = 0;
        lg->v = lg->u + n;
        lg->us = lg->u + 2 * n;
        for (int k = 0; k < n; k++) {
            lg->u[k] = u[k];
            lg->us[k] = d[k] * u[k];
            any |= u[k] != 0;
        }
        lg->v[in] = 1.0;
        lg->gain = any ? -d[in] : 0.0;
        lg->hgain = any ? -1.0 : 0.0;
        lg->io = (pencil_io){ 0, in, -1, lg->u, lg->v };
    } else {
        lg->gain = lg->hgain = -g * d[in] * d[out];
        lg->io = (pencil_io){ 1, in, out, NULL, NULL };
    }
    free(d);
    int rc = n >= NETLU_MIN ? netlu_new(n, lg->Gs, lg->Cs, &lg->lu, err) : LW_OK;
    lg->full = n >= NETLU_FIRST;
    if (!rc)
        rc = pencil_new(n, G0, C, &lg->p, err);
    if (!rc && ahead && lgain_ahead_wanted(n))
        rc = lgain_ahead_run(lg, C, err);
    else if (!rc)
        rc = lgain_hess_build(lg, err);
    if (rc) {
        lgain_free(lg);
        return rc;
    }
    *out_lg = lg;
    return LW_OK;
}

int lgain_new(int n, const double *G0, const double *C, int in, int out, double g,
              lgain **out_lg, lw_error *err)
{
    return lgain_make(n, G0, C, in, out, g, NULL, 0, out_lg, err);
}

int lgain_new_ahead(int n, const double *G0, const double *C, int in, int out, double g,
                    const double *u, int ahead, lgain **out_lg, lw_error *err)
{
    return lgain_make(n, G0, C, in, u ? -1 : out, u ? 0.0 : g, u, ahead, out_lg, err);
}

int lgain_new_vec(int n, const double *G0, const double *C, int in, const double *u,
                  lgain **out_lg, lw_error *err)
{
    return lgain_make(n, G0, C, in, -1, 0.0, u, 0, out_lg, err);
}

/* The right-hand side of the LU path: e_out, or D u for a vector break. */
static double rhs_at(const lgain *lg, int k)
{
    return lg->us ? lg->us[k] : (double)(k == lg->out);
}

double complex lgain_eval(lgain *lg, double complex s)
{
    if (lg->gain == 0)
        return 0;
    if (lg->full)
        return lgain_eval_full(lg, s);
    return lg->hgain * pencil_hess_eval(lg->h, s);
}

void lgain_use_full(lgain *lg, int on)
{
    lg->full = on;
}

int lgain_uses_full(const lgain *lg)
{
    return lg->full;
}

void lgain_walk_store(lgain *lg, double hz, double ph)
{
    lg->walked = 1;
    lg->walk_hz = hz;
    lg->walk_ph = ph;
}

int lgain_walk_recall(const lgain *lg, double *hz, double *ph)
{
    *hz = lg->walk_hz;
    *ph = lg->walk_ph;
    return lg->walked;
}

/* lgain_eval_full on the real axis: the same LU in real arithmetic. */
static double eval_full_real(lgain *lg, double sr)
{
    int n = lg->n;
    size_t nn = (size_t)n * (size_t)n;
    for (int k = 0; k < n; k++)
        lg->xr[k] = rhs_at(lg, k);
    if (lg->lu)
        return netlu_solve_real(lg->lu, sr, lg->xr) ? NAN : lg->gain * lg->xr[lg->in];
    if (!lg->Yr && !(lg->Yr = malloc(sizeof(double) * nn)))
        return NAN;
    for (size_t k = 0; k < nn; k++)
        lg->Yr[k] = lg->Gs[k] + sr * lg->Cs[k];
    if (linalg_solve_real(n, lg->Yr, lg->perm, lg->xr))
        return NAN;
    return lg->gain * lg->xr[lg->in];
}

double lgain_eval_real(lgain *lg, double s)
{
    if (lg->gain == 0)
        return 0;
    if (lg->full)
        return eval_full_real(lg, s);
    return lg->hgain * pencil_hess_eval_real(lg->h, s);
}

double complex lgain_eval_full(lgain *lg, double complex s)
{
    int n = lg->n;
    size_t nn = (size_t)n * (size_t)n;
    if (lg->gain == 0)
        return 0;
    double sr = creal(s), si = cimag(s);
    if (si == 0)
        return eval_full_real(lg, sr);
    if (lg->lu) {
        for (int k = 0; k < n; k++)
            lg->x[k] = rhs_at(lg, k);
        return netlu_solve(lg->lu, s, lg->x) ? NAN : lg->gain * lg->x[lg->in];
    }
    if (!lg->Y && !(lg->Y = malloc(sizeof *lg->Y * nn)))
        return NAN;
    for (size_t k = 0; k < nn; k++)
        lg->Y[k] = (lg->Gs[k] + sr * lg->Cs[k]) + I * (si * lg->Cs[k]);
    for (int k = 0; k < n; k++)
        lg->x[k] = rhs_at(lg, k);
    if (linalg_solve_complex(n, lg->Y, lg->perm, lg->x))
        return NAN;
    return lg->gain * lg->x[lg->in];
}

/* ---- sorting ----------------------------------------------------------- */

int lg_cmp_root(const void *pa, const void *pb)
{
    double complex a = *(const double complex *)pa, b = *(const double complex *)pb;
    double ma = cabs(a), mb = cabs(b);
    /* magnitudes equal to rounding are a conjugate pair: order by imag */
    if (fabs(ma - mb) > 1e-12 * fmax(ma, mb))
        return ma < mb ? -1 : 1;
    if (cimag(a) != cimag(b))
        return cimag(a) < cimag(b) ? -1 : 1;
    return creal(a) < creal(b) ? -1 : (creal(a) > creal(b));
}

void lg_sort(double complex *v, int n)
{
    qsort(v, (size_t)n, sizeof *v, lg_cmp_root);
}

/* Cleans rounding residue: an imaginary part below 1e-12 of the magnitude is 0. */
double complex lg_tidy(double complex z)
{
    if (fabs(cimag(z)) <= 1e-12 * cabs(z))
        return creal(z);
    return z;
}

int lgain_closed_loop(lgain *lg, int n, const double *G, const double *C, double complex **roots,
                      int *nroots, lw_error *err)
{
    int r = pencil_rank(lg->p), ok = 0;
    *roots = malloc(sizeof **roots * (size_t)(r + 1));
    if (!*roots)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    int rc = lg->gain == 0 || lgain_ahead_closed_loop(lg, *roots, &ok)
                 ? LW_OK
                 : pencil_hess_feedback_eigen(lg->h, lg->hgain, *roots, &ok, err);
    if (lg->gain == 0) {
        /* the break is off: the closed loop is the open loop */
        rc = pencil_eigen(lg->p, C, *roots, NULL, err);
        ok = !rc;
    }
    if (rc || !ok) {
        free(*roots);
        *roots = NULL;
        return rc ? rc : lg_natural_frequencies(n, G, C, roots, nroots, err);
    }
    for (int k = 0; k < r; k++)
        (*roots)[k] = lg_tidy((*roots)[k]);
    lg_sort(*roots, r);
    *nroots = r;
    return LW_OK;
}

int lg_natural_frequencies(int n, const double *G, const double *C, double complex **roots,
                           int *nroots, lw_error *err)
{
    pencil *p;
    *roots = NULL;
    *nroots = 0;
    int rc = pencil_new(n, G, C, &p, err);
    if (rc)
        return rc;
    int r = pencil_rank(p);
    *roots = malloc(sizeof **roots * (size_t)(r + 1));
    if (!*roots) {
        pencil_free(p);
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    rc = pencil_eigen(p, C, *roots, NULL, err);
    pencil_free(p);
    if (rc) {
        free(*roots);
        *roots = NULL;
        return rc;
    }
    for (int k = 0; k < r; k++)
        (*roots)[k] = lg_tidy((*roots)[k]);
    lg_sort(*roots, r);
    *nroots = r;
    return LW_OK;
}
