/* loopgain_ahead: a large network's dense eigenproblems side by side.
 *
 * From AHEAD_MIN nodes on, nearly all of a check's time is four dense
 * O(r^3) problems on the reduced matrix: the poles with their owners
 * (dgeev with both sets of vectors), the controller Hessenberg form, the
 * closed-loop poles on it and the zero candidates from it. The first needs
 * only the reduction, the other three only the Hessenberg form, so two
 * OpenMP sections run them at once: the poles on one core, the form and
 * the two problems that follow it on the other, which then spends the time
 * left checking zero candidates against the exact T (lg_verify_zero) until
 * the poles are done. Each call is the same one the sequential path makes,
 * on one BLAS thread, so the results are the same to the last bit on any
 * number of threads. With one thread, or inside a parallel region already
 * (Monte Carlo, sweeps), nothing is computed ahead (lgain_ahead_wanted).
 * A section that fails stores nothing: the sequential path then asks again
 * and reports the error itself.
 *
 * At 4096 nodes (the benchmark chain) this took the check from 81 s to
 * 53 s on two cores: the poles with owners 42 s on one, the form 13 s, the
 * closed-loop poles 9 s and the zero candidates 4 s on the other. */
#include <complex.h>
#include <stdlib.h>
#include <string.h>
#ifdef _OPENMP
#include <omp.h>
#endif

#include "loopwise/pencil.h"
#include "loopgain_impl.h"

/* A candidate and what lg_verify_zero gave for it. */
typedef struct vz {
    double re, im;
    int ok;
} vz;

struct lgain_ahead {
    double complex *poles;   /* with owners; NULL when not computed */
    int *owner;
    double complex *cand;    /* zero candidates (PENCIL_ZEROS_AUTO); NULL: none */
    int ncand, used;
    vz *byval;               /* the candidates checked ahead, nbyval of them; sorted
                                by value when the candidates are handed out */
    int nbyval;
    int poles_done;          /* section A has finished (read and written atomically) */
    double complex *cl;      /* closed-loop poles; NULL: none */
    int cl_ok;
};

void lgain_ahead_free(lgain_ahead *a)
{
    if (!a)
        return;
    free(a->poles);
    free(a->owner);
    free(a->cand);
    free(a->byval);
    free(a->cl);
    free(a);
}

int lgain_ahead_wanted(int n)
{
#ifdef _OPENMP
    return n >= AHEAD_MIN && !omp_in_parallel() && omp_get_max_threads() > 1;
#else
    (void)n;
    return 0;
#endif
}

/* Section A: the poles with their owners. */
static void poles_ahead(lgain *lg, const double *C, lgain_ahead *a)
{
    int r = pencil_rank(lg->p);
    lw_error e;
    a->poles = malloc(sizeof *a->poles * (size_t)(r + 1));
    a->owner = malloc(sizeof(int) * (size_t)(r + 1));
    if (!(a->poles && a->owner && pencil_eigen(lg->p, C, a->poles, a->owner, &e) == LW_OK)) {
        free(a->poles);
        free(a->owner);
        a->poles = NULL;
        a->owner = NULL;
    }
    #pragma omp atomic write
    a->poles_done = 1;
}

/* The time section B has left while section A runs: the check of each zero
 * candidate against the exact T (lg_verify_zero), in order, until A is
 * done. Which candidates are reached depends on timing; what each check
 * gives does not, and the rest are checked later as before. */
static void verify_ahead(lgain *lg, lgain_ahead *a)
{
    if (!(a->byval = malloc(sizeof *a->byval * ((size_t)a->ncand + 1))))
        return;
    for (int k = 0; k < a->ncand; k++) {
        int done;
        #pragma omp atomic read
        done = a->poles_done;
        if (done)
            break;
        a->byval[a->nbyval++] = (vz){ creal(a->cand[k]), cimag(a->cand[k]),
                                      lg_verify_zero(lg, a->cand[k]) };
    }
}

/* Section B: the Hessenberg form, then the closed-loop poles and the zero
 * candidates on it. Returns the form's status (its error in *e). */
static int hess_ahead(lgain *lg, lgain_ahead *a, lw_error *e)
{
    int rc = lgain_hess_build(lg, e);
    if (rc || lg->gain == 0)
        return rc; /* the break switched off: no zeros, the closed loop is the open */
    int r = pencil_rank(lg->p);
    lw_error e2;
    a->cl = malloc(sizeof *a->cl * (size_t)(r + 1));
    if (a->cl && pencil_hess_feedback_eigen(lg->h, lg->hgain, a->cl, &a->cl_ok, &e2) != LW_OK) {
        free(a->cl);
        a->cl = NULL;
    }
    a->cand = malloc(sizeof *a->cand * (size_t)(r + 1));
    if (a->cand && pencil_hess_zero_candidates(lg->p, lg->h, &lg->io, PENCIL_ZEROS_AUTO, a->cand,
                                               &a->ncand, &a->used, &e2) != LW_OK) {
        free(a->cand);
        a->cand = NULL;
    }
    if (a->cand)
        verify_ahead(lg, a);
    return LW_OK;
}

int lgain_ahead_run(lgain *lg, const double *C, lw_error *err)
{
    lgain_ahead *a = calloc(1, sizeof *a);
    if (!a)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    int rc = LW_OK;
    lw_error e;
    lw_error_clear(&e);
    #pragma omp parallel sections num_threads(2)
    {
        #pragma omp section
        poles_ahead(lg, C, a);
        #pragma omp section
        rc = hess_ahead(lg, a, &e);
    }
    if (rc) {
        *err = e;
        lgain_ahead_free(a);
        return rc;
    }
    lg->ahead = a;
    return LW_OK;
}

int lgain_ahead_poles(lgain *lg, double complex *poles, int *owner)
{
    lgain_ahead *a = lg->ahead;
    if (!a || !a->poles)
        return 0;
    int r = pencil_rank(lg->p);
    memcpy(poles, a->poles, sizeof *poles * (size_t)r);
    memcpy(owner, a->owner, sizeof *owner * (size_t)r);
    free(a->poles);
    free(a->owner);
    a->poles = NULL;
    a->owner = NULL;
    return 1;
}

static int cmp_vz(const void *pa, const void *pb)
{
    const vz *a = pa, *b = pb;
    if (a->re != b->re)
        return a->re < b->re ? -1 : 1;
    return a->im < b->im ? -1 : a->im > b->im;
}

int lgain_ahead_zero_candidates(lgain *lg, double complex *cand, int *nc, int *used)
{
    lgain_ahead *a = lg->ahead;
    if (!a || !a->cand)
        return 0;
    memcpy(cand, a->cand, sizeof *cand * (size_t)a->ncand);
    *nc = a->ncand;
    *used = a->used;
    /* looked up by value: the analysis reorders the candidates (by
     * magnitude, the origin's first) before it checks them */
    if (a->byval)
        qsort(a->byval, (size_t)a->nbyval, sizeof *a->byval, cmp_vz);
    free(a->cand);
    a->cand = NULL;
    return 1;
}

int lgain_ahead_verified(const lgain *lg, double complex z)
{
    const lgain_ahead *a = lg->ahead;
    if (!a || !a->byval)
        return -1;
    vz key = { creal(z), cimag(z), 0 };
    const vz *hit = bsearch(&key, a->byval, (size_t)a->nbyval, sizeof key, cmp_vz);
    return hit ? hit->ok : -1;
}

int lgain_ahead_closed_loop(lgain *lg, double complex *roots, int *ok)
{
    lgain_ahead *a = lg->ahead;
    if (!a || !a->cl)
        return 0;
    memcpy(roots, a->cl, sizeof *roots * (size_t)pencil_rank(lg->p));
    *ok = a->cl_ok;
    free(a->cl);
    a->cl = NULL;
    return 1;
}
