/* loopgain_tf: the structure of T: open-loop poles and owners, the zero
 * candidates sorted into zeros, hidden modes and debris, roots at the
 * origin, the sign and T(0). See loopgain.h. */
#include "loopwise/loopgain.h"

#include <limits.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/linalg.h"
#include "loopwise/pencil.h"
#include "loopgain_impl.h"

/* Sorts poles with their owners kept alongside. */
typedef struct pole_rec {
    double complex p;
    int owner;
} pole_rec;

static int cmp_rec(const void *a, const void *b)
{
    return lg_cmp_root(&((const pole_rec *)a)->p, &((const pole_rec *)b)->p);
}

/* ---- zeros: verify the candidates -------------------------------------- */

/* A candidate z is a zero of T when |T| near z is far below |T| on a small
 * circle around it (for a zero of order k the ratio is about (1e-11/1e-3)^k;
 * a zero 1e-6 from a pole still gives 1e-5).
 * A mode T cannot see shows up as a candidate too, but T is not small there;
 * so does rounding debris at huge |z|, where T is noise. */
int lg_verify_zero(lgain *lg, double complex z)
{
    double mag = cabs(z);
    double complex c = z + 1e-11 * mag * cexp(I * 0.7);
    double tc = cabs(lgain_eval(lg, c));
    if (!isfinite(tc))
        return 0;
    double tmin = INFINITY;
    for (int k = 0; k < 6; k++) {
        double complex q = z + 1e-3 * mag * cexp(I * (0.3 + k * 1.0471975511965976));
        double t = cabs(lgain_eval(lg, q));
        /* tc not below 1e-2 t here cannot be below 1e-2 tmin: a mode T cannot
         * see is told from a zero at the first point */
        if (!isfinite(t) || !(tc < 1e-2 * t))
            return 0;
        tmin = fmin(tmin, t);
    }
    return tmin > 0 && tc < 1e-2 * tmin;
}

/* Marks the unmatched pole nearest to z (within 1e-6 relative) as hidden. */
static int match_hidden(lg_tf *tf, double complex z)
{
    int best = -1;
    double bestd = INFINITY;
    for (int k = 0; k < tf->npoles; k++) {
        if (tf->hidden[k])
            continue;
        double dist = cabs(tf->poles[k] - z);
        if (dist < bestd) {
            bestd = dist;
            best = k;
        }
    }
    if (best >= 0 && bestd <= 1e-6 * fmax(cabs(z), cabs(tf->poles[best]))) {
        tf->hidden[best] = 1;
        return 1;
    }
    return 0;
}

static int open_loop_poles(const double *C, int want_owner, lgain *lg, lg_tf *tf,
                           lw_error *err)
{
    int r = pencil_rank(lg->p);
    tf->poles = malloc(sizeof *tf->poles * (size_t)(r + 1));
    tf->hidden = calloc((size_t)r + 1, 1);
    tf->owner = malloc(sizeof(int) * (size_t)(r + 1));
    pole_rec *rec = malloc(sizeof *rec * (size_t)(r + 1));
    if (!tf->poles || !tf->hidden || !tf->owner || !rec) {
        free(rec);
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    for (int k = 0; k < r; k++)
        tf->owner[k] = -1;
    /* owners need the eigenvectors of the reduced matrix; the values alone
     * come from the Hessenberg form the evaluator already holds */
    int rc = LW_OK;
    if (!want_owner)
        rc = pencil_hess_eigen(lg->h, tf->poles, err);
    else if (!lgain_ahead_poles(lg, tf->poles, tf->owner)) /* computed ahead, or now */
        rc = pencil_eigen(lg->p, C, tf->poles, tf->owner, err);
    if (rc) {
        free(rec);
        return rc;
    }
    for (int k = 0; k < r; k++)
        rec[k] = (pole_rec){ lg_tidy(tf->poles[k]), tf->owner[k] };
    qsort(rec, (size_t)r, sizeof *rec, cmp_rec);
    for (int k = 0; k < r; k++) {
        tf->poles[k] = rec[k].p;
        tf->owner[k] = rec[k].owner;
    }
    free(rec);
    tf->npoles = r;
    return LW_OK;
}

/* 1 when the scaled real matrix A (n x n, row-major) is singular to rounding:
 * smallest singular value below 1e-13 of the largest, rows and columns
 * equilibrated first. */
static int numerically_singular(const double *A, int n)
{
    return linalg_singular(n, A, 1e-13);
}

/* Whether s = 0 can be a root at all: Y0(0) = G0 singular for a pole, the
 * bordered [[G0, e_o], [e_i^T, 0]] singular for a zero. A magnitude test
 * alone would take a real low-frequency pole for one at the origin when the
 * network also has a pole ten decades higher. */
static void origin_possible(const lgain *lg, int *pole, int *zero)
{
    *pole = numerically_singular(lg->Gs, lg->n);
    *zero = linalg_bordered_singular(lg->n, lg->Gs, lg->us, lg->out, lg->in, 1e-13);
}

/* A zero of the zero dynamics away from every pole is taken without the
 * full verification, but its accuracy is checked: for a simple zero z known
 * to a relative error e, |T(z)| / |T(z + 1e-4 |z| u)| is about e / 1e-4, so
 * a ratio below 1e-2 means e < 1e-6. The zero dynamics' Krylov basis is
 * ill-conditioned when the stages along the path have poles decades below
 * the largest one (issue 16), and then this is what notices. */
static int zero_accurate(lgain *lg, double complex z)
{
    double mag = cabs(z), t0, t1;
    if (cimag(z) == 0) {
        /* on the real axis in real arithmetic: z (1 + 1e-4) is as good a
         * neighbour as any for a simple zero */
        t0 = fabs(lgain_eval_real(lg, creal(z)));
        t1 = fabs(lgain_eval_real(lg, creal(z) * (1 + 1e-4)));
    } else {
        t0 = cabs(lgain_eval(lg, z));
        t1 = cabs(lgain_eval(lg, z + 1e-4 * mag * cexp(I * 0.9)));
    }
    return isfinite(t0) && isfinite(t1) && t0 < 1e-2 * t1;
}

/* Sorts the candidates into zeros, hidden modes and debris. Returns 1, with
 * the sorting left unfinished, when check_plain is set and a candidate
 * taken as a zero without verification is not accurate. */
/* The radius within which k roots count as one k-fold root at s = 0, as a
 * fraction of the largest root: a k-fold root at the origin (a chain of k
 * integrators is a Jordan block) comes out of the eigenvalue iteration
 * spread over a circle of about eps^(1/k), so 1e-9 (SPEC 1) for a single
 * root and (1e-13)^(1/k) beyond. */
static double origin_radius(int k)
{
    return fmax(1e-9, pow(1e-13, 1.0 / k));
}

/* The size of the cluster at the origin among the magnitudes m[n] (sorted
 * rising): the largest k whose k smallest lie within origin_radius(k). */
static int origin_cluster(const double *m, int n, double scale)
{
    int best = 0;
    for (int k = 1; k <= n && k <= 8; k++)
        if (m[k - 1] <= origin_radius(k) * scale)
            best = k;
    return best;
}

static int cmp_mag(const void *pa, const void *pb)
{
    double a = cabs(*(const double complex *)pa), b = cabs(*(const double complex *)pb);
    return a < b ? -1 : a > b;
}

/* The origin order of T from the slope of the exact T (the LU of the whole
 * network) between 1e-10 and 1e-11 of scale on the real axis, below which
 * SPEC 1 counts every root as at the origin; INT_MIN when T is zero or
 * singular there or the slope is not near an integer. */
static int origin_slope(lgain *lg, double scale)
{
    double t1 = cabs(lgain_eval_full(lg, 1e-10 * scale));
    double t2 = cabs(lgain_eval_full(lg, 1e-11 * scale));
    if (!(t1 > 0) || !(t2 > 0) || !isfinite(t1) || !isfinite(t2))
        return INT_MIN;
    double slope = log10(t1 / t2);
    return fabs(slope - round(slope)) < 0.1 ? (int)round(slope) : INT_MIN;
}

/* Snaps the roots at the origin to exactly 0: *p0 of the poles (sorted by
 * magnitude already) and *z0 of the candidates (sorted here). */
static void origin_roots(lgain *lg, lg_tf *tf, double complex *cand, int nc, double scale,
                         int *p0, int *z0)
{
    int pole_ok = 0, zero_ok = 0, np = tf->npoles;
    *p0 = *z0 = 0;
    qsort(cand, (size_t)nc, sizeof *cand, cmp_mag);
    double *m = malloc(sizeof(double) * (size_t)(np + nc + 1));
    if (!m)
        return;
    for (int k = 0; k < np; k++)
        m[k] = cabs(tf->poles[k]);
    for (int k = 0; k < nc; k++)
        m[np + k] = cabs(cand[k]);
    int cp = origin_cluster(m, np, scale), cz = origin_cluster(m + np, nc, scale);
    free(m);
    if (cp + cz == 0)
        return;
    origin_possible(lg, &pole_ok, &zero_ok);
    *p0 = pole_ok ? cp : 0;
    *z0 = zero_ok ? cz : 0;
    if (*p0 + *z0 > 1) {
        /* a multiple root: the exact T's slope far below every genuine root
         * decides when the cluster sizes disagree with it */
        int m_lu = origin_slope(lg, scale);
        if (m_lu != INT_MIN && m_lu != *z0 - *p0) {
            *p0 = m_lu < 0 && pole_ok ? (-m_lu < np ? -m_lu : np) : 0;
            *z0 = m_lu > 0 && zero_ok ? (m_lu < nc ? m_lu : nc) : 0;
        }
    }
    for (int k = 0; k < *p0; k++)
        tf->poles[k] = 0;
    for (int k = 0; k < *z0; k++)
        cand[k] = 0;
}

static int sort_candidates(lgain *lg, lg_tf *tf, double complex *cand, int nc, int check_plain,
                           int ahead)
{
    double scale = 0;
    for (int k = 0; k < tf->npoles; k++)
        scale = fmax(scale, cabs(tf->poles[k]));
    if (scale == 0)
        for (int k = 0; k < nc; k++)
            scale = fmax(scale, cabs(cand[k]));
    tf->origin_tol = 1e-9 * scale;
    int p0, z0;
    origin_roots(lg, tf, cand, nc, scale, &p0, &z0);
    for (int k = 0; k < nc; k++) {
        if (k < z0)
            continue;
        /* In exact arithmetic the finite candidates are the zeros of T and the
         * modes T cannot see (which are poles); rounding adds debris only far
         * out, where infinite zeros were perturbed. So a candidate away from
         * every pole and within a hundred times the largest is a zero; the
         * others are checked against the exact T. */
        int near_pole = 0;
        for (int j = 0; j < tf->npoles && !near_pole; j++)
            near_pole = cabs(tf->poles[j] - cand[k]) <= 1e-4 * fmax(cabs(cand[k]), cabs(tf->poles[j]));
        int plain = !near_pole && cabs(cand[k]) <= 100.0 * scale;
        if (plain && check_plain && !zero_accurate(lg, cand[k]))
            return 1;
        int v = ahead ? lgain_ahead_verified(lg, cand[k]) : -1;
        if (plain || (v >= 0 ? v : lg_verify_zero(lg, cand[k])))
            tf->zeros[tf->nzeros++] = lg_tidy(cand[k]);
        else
            match_hidden(tf, cand[k]);
    }
    /* Origin: a hidden mode at s = 0 pairs with an origin candidate. */
    int cancel = p0 < z0 ? p0 : z0;
    for (int k = 0; k < tf->npoles && cancel > 0; k++)
        if (tf->poles[k] == 0 && !tf->hidden[k]) {
            tf->hidden[k] = 1;
            cancel--;
        }
    tf->origin = z0 - p0;
    for (int k = 0; k < tf->origin; k++)
        tf->zeros[tf->nzeros++] = 0;
    lg_sort(tf->zeros, tf->nzeros);
    return 0;
}

/* The zeros of T by the path asked for (PENCIL_ZEROS_AUTO or _QZ), falling
 * back from the zero dynamics to the bordered pencil when a zero proves
 * inaccurate. */
static int classify_zeros(lgain *lg, lg_tf *tf, int method, lw_error *err)
{
    pencil *p = lg->p;
    int r = pencil_rank(p), nc = 0, used = PENCIL_ZEROS_QZ, rc = LW_OK;
    double complex *cand = malloc(sizeof *cand * (size_t)(r + 1));
    if (!tf->zeros)
        tf->zeros = malloc(sizeof *tf->zeros * (size_t)(r + 1));
    if (!cand || !tf->zeros) {
        free(cand);
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    for (;;) {
        /* computed ahead, with lg_verify_zero of as many of them as there
         * was time for (lgain_ahead_verified) */
        int ahead = method == PENCIL_ZEROS_AUTO && lgain_ahead_zero_candidates(lg, cand, &nc, &used);
        if (!ahead)
            rc = pencil_hess_zero_candidates(p, lg->h, &lg->io, method, cand, &nc, &used, err);
        if (rc)
            break;
        tf->nzeros = 0;
        memset(tf->hidden, 0, (size_t)tf->npoles);
        if (!sort_candidates(lg, tf, cand, nc, used == PENCIL_ZEROS_DYNAMICS_CHECK, ahead))
            break;
        method = PENCIL_ZEROS_QZ;
    }
    tf->zeros_qz = used == PENCIL_ZEROS_QZ;
    free(cand);
    return rc;
}

double lg_tf_lowest_root(const lg_tf *tf)
{
    double lo = INFINITY;
    for (int k = 0; k < tf->npoles; k++)
        if (!tf->hidden[k] && tf->poles[k] != 0)
            lo = fmin(lo, cabs(tf->poles[k]));
    for (int k = 0; k < tf->nzeros; k++)
        if (tf->zeros[k] != 0)
            lo = fmin(lo, cabs(tf->zeros[k]));
    return lo;
}

/* Sign of K0 and T(0), from T on the positive real axis well below every
 * singularity; the slope there also cross-checks the origin order. */
static void low_frequency(lgain *lg, lg_tf *tf)
{
    double lo = lg_tf_lowest_root(tf);
    double sigma = isfinite(lo) ? 1e-4 * lo : 1.0;
    /* with a pole or zero at the origin T is large or small near it, and
     * the LU of the whole network keeps its sign where the reduced form,
     * spanning many decades, may not */
    double complex t1 = tf->origin ? lgain_eval_full(lg, sigma) : lgain_eval(lg, sigma);
    double complex t2 = tf->origin ? lgain_eval_full(lg, sigma / 10) : lgain_eval(lg, sigma / 10);
    tf->sign = creal(t1) > 0 ? 1 : (creal(t1) < 0 ? -1 : 0);
    if (cabs(t1) > 0 && cabs(t2) > 0) {
        double slope = log10(cabs(t1) / cabs(t2));
        if (fabs(slope - tf->origin) > 0.05)
            tf->suspect = 1;
    }
    if (tf->origin < 0) {
        tf->dc = tf->sign > 0 ? INFINITY : -INFINITY;
    } else if (tf->origin > 0 || tf->sign == 0) {
        tf->dc = 0;
    } else {
        /* T(0) from the LU of the whole network: the most direct path, and
         * the one that keeps full accuracy when the poles span many decades */
        double complex t0 = lgain_eval_full(lg, 0);
        if (!isfinite(creal(t0)))
            t0 = lgain_eval(lg, 0);
        tf->dc = isfinite(creal(t0)) ? creal(t0) : creal(lgain_eval(lg, sigma * 1e-6));
        /* T(0) by the LU decides the sign; the reduced form at sigma can
         * lose it when the poles span many decades */
        if (tf->dc != 0 && (tf->dc > 0) != (tf->sign > 0)) {
            tf->sign = tf->dc > 0 ? 1 : -1;
            if (!lgain_uses_full(lg))
                lgain_use_full(lg, 1);
        }
    }
}

int lg_tf_analyse(const double *C, lgain *lg, int want_owner, lg_tf *tf, lw_error *err)
{
    memset(tf, 0, sizeof *tf);
    int rc = open_loop_poles(C, want_owner, lg, tf, err);
    if (!rc && lg->gain == 0) {
        /* the break is switched off: T is identically zero */
        tf->sign = 0;
        tf->dc = 0;
    } else if (!rc) {
        rc = classify_zeros(lg, tf, PENCIL_ZEROS_AUTO, err);
        if (!rc)
            low_frequency(lg, tf);
    }
    if (rc)
        lg_tf_free(tf);
    return rc;
}

int lg_tf_zeros_again(lgain *lg, lg_tf *tf, lw_error *err)
{
    if (lg->gain == 0 || tf->zeros_qz)
        return LW_OK;
    tf->suspect = 0;
    int rc = classify_zeros(lg, tf, PENCIL_ZEROS_QZ, err);
    if (!rc)
        low_frequency(lg, tf);
    return rc;
}

void lg_tf_free(lg_tf *tf)
{
    if (!tf)
        return;
    free(tf->poles);
    free(tf->owner);
    free(tf->hidden);
    free(tf->zeros);
    memset(tf, 0, sizeof *tf);
}
