/* variation: corners and Monte Carlo on top of check. */
#include "loopwise/variation.h"

#include "loopwise/binom.h"

#include <gsl/gsl_errno.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>
#include <gsl/gsl_sort.h>
#include <gsl/gsl_statistics.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#ifdef _OPENMP
#include <omp.h>
#endif

int variation_eval_at(desc *d, int np, const int *params, const double *vals,
                      const check_opts *o, design_point *pt, int *valid, lw_error *err)
{
    desc_saved saved[64];
    desc_saved *sv = np <= 64 ? saved : malloc(sizeof *sv * (size_t)np);
    if (!sv)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    for (int j = 0; j < np; j++) {
        desc_target t = { TARGET_PARAM, params[j] };
        sv[j] = desc_target_save(d, t);
        desc_target_set(d, t, vals[j], err);
    }
    model *m = NULL;
    check_result r;
    int rc = desc_eval(d, err);
    *valid = rc == LW_OK;
    if (rc == LW_EINPUT)
        rc = LW_OK; /* a sampled value out of range is a failed sample, not a failed run */
    else if (!rc && !(rc = model_new(d, &m, err)) && !(rc = check_run(d, m, o, &r, err))) {
        design_point_from(&r, 0, pt);
        check_result_free(&r);
    }
    model_free(m);
    for (int j = 0; j < np; j++)
        desc_target_restore(d, (desc_target){ TARGET_PARAM, params[j] }, sv[j]);
    if (sv != saved)
        free(sv);
    return rc;
}

/* ---- corners ------------------------------------------------------------- */

void corner_result_free(corner_result *r)
{
    if (!r)
        return;
    free(r->params);
    free(r->values);
    free(r->pts);
    free(r->order);
    free(r->interior);
    memset(r, 0, sizeof *r);
}

typedef struct ranked {
    double dist;
    int index;
} ranked;

/* Worst first: smallest distance to the goal (undefined margins count as worst). */
static int cmp_ranked(const void *a, const void *b)
{
    const ranked *x = a, *y = b;
    if (x->dist != y->dist)
        return x->dist < y->dist ? -1 : 1;
    return x->index - y->index;
}

int corners_rank(corner_result *r, design_goal g, lw_error *err)
{
    ranked *rk = malloc(sizeof *rk * (size_t)r->ncorners);
    if (!rk)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    for (int c = 0; c < r->ncorners; c++)
        rk[c] = (ranked){ design_goal_distance(&r->pts[c], g), c };
    qsort(rk, (size_t)r->ncorners, sizeof *rk, cmp_ranked);
    for (int c = 0; c < r->ncorners; c++)
        r->order[c] = rk[c].index;
    free(rk);
    return LW_OK;
}

/* A --set pins a param (SPEC section 5): its range or distribution is not
 * used, so the reported figures are those of the operating point asked for. */
static int combined(const desc_param *p)
{
    return p->spread.has_range && p->override == DESC_NO_OVERRIDE;
}

static int drawn(const desc_param *p)
{
    return p->spread.dist != DIST_NONE && p->override == DESC_NO_OVERRIDE;
}

int corners_setup(desc *d, int levels, corner_result *r, lw_error *err)
{
    memset(r, 0, sizeof *r);
    int np = 0, pinned = 0;
    for (int k = 0; k < d->nparams; k++) {
        np += combined(&d->params[k]);
        pinned += d->params[k].spread.has_range && !combined(&d->params[k]);
    }
    if (np == 0 && pinned)
        return lw_error_set(err, LW_EINPUT, "every param with a corner range is pinned by "
                            "--set: there is nothing left to combine; use 'check' for one "
                            "operating point");
    if (np == 0)
        return lw_error_set(err, LW_EINPUT, "no param carries a corner range; add "
                            "'corners LO..HI' to a param line, e.g. 'param temp = 300 corners "
                            "233..398'");
    /* levels^np corners, counted without overflow */
    double count = pow(levels, np);
    if (count > CORNERS_MAX && levels == 2)
        return lw_error_set(err, LW_EINPUT, "%d params with corner ranges give 2^%d corners, "
                            "more than the limit of %d; keep ranges on the 12 that matter most, "
                            "or use 'montecarlo'", np, np, CORNERS_MAX);
    if (count > CORNERS_MAX)
        return lw_error_set(err, LW_EINPUT, "%d params with corner ranges at %d levels give "
                            "%.0f corners, more than the limit of %d; use fewer --levels, or "
                            "'montecarlo'", np, levels, count, CORNERS_MAX);
    int nc = (int)count;
    r->params = malloc(sizeof(int) * (size_t)np);
    r->values = malloc(sizeof(double) * (size_t)(nc * np));
    r->pts = calloc((size_t)nc, sizeof *r->pts);
    r->order = malloc(sizeof(int) * (size_t)nc);
    r->interior = calloc((size_t)nc, 1);
    if (!r->params || !r->values || !r->pts || !r->order || !r->interior) {
        corner_result_free(r);
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    r->nparams = np;
    r->ncorners = nc;
    r->levels = levels;
    for (int k = 0, j = 0; k < d->nparams; k++)
        if (combined(&d->params[k]))
            r->params[j++] = k;
    /* corner c has digit (c / K^(np-1-j)) mod K for param j (the first param
     * most significant; with K = 2, the bits of c), and takes the value
     * lo + (hi - lo) digit/(K - 1), the ends exactly */
    for (int c = 0; c < nc; c++) {
        int rest = c;
        for (int j = np - 1; j >= 0; j--) {
            const desc_spread *sp = &d->params[r->params[j]].spread;
            int digit = rest % levels;
            rest /= levels;
            double v = digit == 0 ? sp->lo_v : digit == levels - 1
                           ? sp->hi_v : sp->lo_v + (sp->hi_v - sp->lo_v) * digit / (levels - 1);
            r->values[c * np + j] = v;
            r->interior[c] |= digit != 0 && digit != levels - 1;
        }
        r->order[c] = c;
    }
    return LW_OK;
}

int corners_run(desc *d, const check_opts *o, design_goal g, int levels, corner_result *r,
                lw_error *err)
{
    int rc = corners_setup(d, levels, r, err);
    if (rc)
        return rc;
    gsl_error_handler_t *old = gsl_set_error_handler_off();
    for (int c = 0; c < r->ncorners && !rc; c++) {
        int valid;
        rc = variation_eval_at(d, r->nparams, r->params, r->values + c * r->nparams, o,
                               &r->pts[c], &valid, err);
        if (!rc && !valid) {
            char msg[LW_MSG_MAX];
            snprintf(msg, sizeof msg, "%.600s", err->msg);
            rc = lw_error_set(err, LW_EINPUT, "corner %d gives a value that is not allowed: %s",
                              c + 1, msg);
        }
    }
    gsl_set_error_handler(old);
    desc_eval(d, err);
    if (rc) {
        corner_result_free(r);
        return rc;
    }
    if ((rc = corners_rank(r, g, err)))
        corner_result_free(r);
    return rc;
}

int corners_worst_interior(const corner_result *r, design_goal g)
{
    int w = r->order[0];
    if (!r->interior[w])
        return -1;
    double dw = design_goal_distance(&r->pts[w], g);
    for (int c = 0; c < r->ncorners; c++)
        if (!r->interior[c] && !(design_goal_distance(&r->pts[c], g) > dw))
            return -1;
    return w;
}

/* ---- Monte Carlo -------------------------------------------------------- */

void mc_result_free(mc_result *r)
{
    if (!r)
        return;
    free(r->params);
    free(r->values);
    free(r->pts);
    free(r->valid);
    free(r->index);
    memset(r, 0, sizeof *r);
}

/* splitmix64 (Steele, Lea and Flood 2014): decorrelates (seed, index). */
static uint64_t mix(uint64_t x)
{
    x += 0x9e3779b97f4a7c15ull;
    x = (x ^ (x >> 30)) * 0xbf58476d1ce4e5b9ull;
    x = (x ^ (x >> 27)) * 0x94d049bb133111ebull;
    return x ^ (x >> 31);
}

/* The generator each sample draws from: splitmix64 run as a sequence (the
 * state advances by the golden-ratio increment and each output is the mix
 * of the state), wrapped as a GSL generator so that GSL's distributions
 * draw from it. Its 64-bit state takes the whole per-sample seed (GSL's
 * Mersenne twister keeps 32 bits of a seed, so 100,000 samples would share
 * a stream about once), and seeding it costs nothing. */
typedef struct sm64_state {
    uint64_t s;
} sm64_state;

static void sm64_set(void *vstate, unsigned long seed)
{
    ((sm64_state *)vstate)->s = (uint64_t)seed;
}

static uint64_t sm64_next(void *vstate)
{
    sm64_state *st = vstate;
    uint64_t x = st->s;
    st->s += 0x9e3779b97f4a7c15ull;
    return mix(x);
}

static unsigned long sm64_get(void *vstate)
{
    return (unsigned long)(sm64_next(vstate) >> 32);
}

static double sm64_get_double(void *vstate)
{
    return (double)(sm64_next(vstate) >> 11) * 0x1.0p-53; /* [0, 1), 53 random bits */
}

static const gsl_rng_type sm64_type = { "splitmix64", 0xffffffffUL, 0, sizeof(sm64_state),
                                        sm64_set, sm64_get, sm64_get_double };

void mc_clopper_pearson(int x, int n, double alpha, double *lo, double *hi, double *lower1)
{
    /* Clopper and Pearson (1934): binomial tails of alpha/2 on each side,
     * and of alpha on the lower side alone (binom.c). */
    *lo = binom_lower_bound(x, n, alpha / 2);
    *hi = binom_upper_bound(x, n, alpha / 2);
    *lower1 = binom_lower_bound(x, n, alpha);
}

static int load_copy(const text_file *t, const char *path, const char *const *sets, int nsets,
                     desc **d, lw_error *err)
{
    int rc = desc_parse(t, path, d, err);
    for (int k = 0; !rc && k < nsets; k++)
        rc = desc_set(*d, sets[k], err);
    if (!rc)
        rc = desc_eval(*d, err);
    return rc;
}

/* The distribution of each varied param, taken from the nominal evaluation
 * (evaluating a sample changes the desc's own values). */
typedef struct mc_dist {
    desc_dist kind;
    double centre, a, b;
} mc_dist;

static void draw(const mc_dist *dist, int np, gsl_rng *rng, double *v)
{
    for (int j = 0; j < np; j++)
        v[j] = dist[j].kind == DIST_NORMAL ? dist[j].centre + gsl_ran_gaussian(rng, dist[j].a)
                                           : gsl_ran_flat(rng, dist[j].a, dist[j].b);
}

static void stats_of(double *x, int n, mc_stats *s)
{
    memset(s, 0, sizeof *s);
    s->n = n;
    if (n == 0) {
        s->mean = s->sigma = s->min = s->max = NAN;
        s->p1 = s->p5 = s->p50 = s->p95 = s->p99 = NAN;
        return;
    }
    gsl_sort(x, 1, (size_t)n);
    s->mean = gsl_stats_mean(x, 1, (size_t)n);
    s->sigma = n > 1 ? gsl_stats_sd_m(x, 1, (size_t)n, s->mean) : 0.0;
    s->min = x[0];
    s->max = x[n - 1];
    s->p1 = gsl_stats_quantile_from_sorted_data(x, 1, (size_t)n, 0.01);
    s->p5 = gsl_stats_quantile_from_sorted_data(x, 1, (size_t)n, 0.05);
    s->p50 = gsl_stats_quantile_from_sorted_data(x, 1, (size_t)n, 0.50);
    s->p95 = gsl_stats_quantile_from_sorted_data(x, 1, (size_t)n, 0.95);
    s->p99 = gsl_stats_quantile_from_sorted_data(x, 1, (size_t)n, 0.99);
}

int montecarlo_summarise(mc_result *r, design_goal g, lw_error *err)
{
    int n = r->nsamples;
    double *x = malloc(sizeof(double) * (size_t)(n + 1));
    if (!x)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    int m;
    r->passes = r->invalid = 0;
    r->worst = -1;
    double worstd = INFINITY;
    for (int i = 0; i < n; i++) {
        if (!r->valid[i]) {
            r->invalid++;
            continue;
        }
        r->passes += design_meets(&r->pts[i], g);
        double dist = design_goal_distance(&r->pts[i], g);
        if (dist < worstd) {
            worstd = dist;
            r->worst = i;
        }
    }
    m = 0;
    for (int i = 0; i < n; i++)
        if (r->valid[i] && !isnan(r->pts[i].pm_deg))
            x[m++] = r->pts[i].pm_deg;
    stats_of(x, m, &r->pm);
    m = 0;
    for (int i = 0; i < n; i++)
        if (r->valid[i] && !isnan(r->pts[i].gm_db))
            x[m++] = r->pts[i].gm_db;
    stats_of(x, m, &r->gm);
    m = 0;
    for (int i = 0; i < n; i++)
        if (r->valid[i] && !isnan(r->pts[i].crossover_hz))
            x[m++] = r->pts[i].crossover_hz;
    stats_of(x, m, &r->fc);
    free(x);
    r->yield = (double)r->passes / n;
    mc_clopper_pearson(r->passes, n, 0.05, &r->ci_lo, &r->ci_hi, &r->lower95);
    return LW_OK;
}

int montecarlo_setup(const desc *d, int nsamples, mc_result *r, lw_error *err)
{
    memset(r, 0, sizeof *r);
    int np = 0, pinned = 0;
    for (int k = 0; k < d->nparams; k++) {
        np += drawn(&d->params[k]);
        pinned += d->params[k].spread.dist != DIST_NONE && !drawn(&d->params[k]);
    }
    if (np == 0 && pinned)
        return lw_error_set(err, LW_EINPUT, "every param with a distribution is pinned by "
                            "--set: there is nothing left to draw; use 'check' for one "
                            "operating point");
    if (np == 0)
        return lw_error_set(err, LW_EINPUT, "no param carries a distribution; add 'normal "
                            "SIGMA' or 'uniform LO..HI' to a param line, e.g. 'param ib = 10u "
                            "normal 2%%'");
    r->nsamples = r->total = nsamples;
    r->nparams = np;
    r->params = malloc(sizeof(int) * (size_t)np);
    r->values = malloc(sizeof(double) * (size_t)nsamples * (size_t)np);
    r->pts = calloc((size_t)nsamples, sizeof *r->pts);
    r->valid = calloc((size_t)nsamples, 1);
    r->index = malloc(sizeof(int) * (size_t)nsamples);
    if (!r->params || !r->values || !r->pts || !r->valid || !r->index)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    for (int s = 0; s < nsamples; s++)
        r->index[s] = s;
    for (int k = 0, j = 0; k < d->nparams; k++)
        if (drawn(&d->params[k]))
            r->params[j++] = k;
    return LW_OK;
}

int montecarlo_run(const text_file *t, const char *path, const char *const *sets, int nsets,
                   int nsamples, uint64_t seed, design_goal g, const check_opts *o,
                   FILE *progress, mc_result *r, lw_error *err)
{
    return montecarlo_run_part(t, path, sets, nsets, nsamples, 1, 1, seed, g, o, progress, r,
                               err);
}

int montecarlo_run_part(const text_file *t, const char *path, const char *const *sets,
                        int nsets, int nsamples, int part_k, int part_m, uint64_t seed,
                        design_goal g, const check_opts *o, FILE *progress, mc_result *r,
                        lw_error *err)
{
    memset(r, 0, sizeof *r);
    if (nsamples < 1 || nsamples > MC_MAX_SAMPLES)
        return lw_error_set(err, LW_EINPUT, "--samples %d: expected 1 to %d samples", nsamples,
                            MC_MAX_SAMPLES);
    if (part_m < 1 || part_k < 1 || part_k > part_m || part_m > nsamples)
        return lw_error_set(err, LW_EINPUT, "--part %d/%d: expected 1 <= K <= M <= %d", part_k,
                            part_m, nsamples);
    desc *d0;
    mc_dist *dist = NULL;
    /* part K of M: the indices K-1, K-1+M, K-1+2M, ... below N (SPEC 8) */
    int count = (nsamples - part_k) / part_m + 1;
    int rc = load_copy(t, path, sets, nsets, &d0, err);
    if (!rc)
        rc = montecarlo_setup(d0, count, r, err);
    for (int s = 0; !rc && s < count; s++)
        r->index[s] = part_k - 1 + s * part_m;
    r->total = nsamples;
    if (!rc && !(dist = malloc(sizeof *dist * (size_t)r->nparams)))
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
    for (int j = 0; !rc && j < r->nparams; j++) {
        const desc_param *p = &d0->params[r->params[j]];
        dist[j] = (mc_dist){ p->spread.dist, p->value, p->spread.a_v, p->spread.b_v };
    }
    desc_free(d0);
    if (rc) {
        free(dist);
        mc_result_free(r);
        return rc;
    }
    gsl_error_handler_t *old = gsl_set_error_handler_off();
    int failed = 0, done = 0;
    lw_error first;
    lw_error_clear(&first);
    #pragma omp parallel
    {
        desc *d = NULL;
        lw_error e;
        lw_error_clear(&e);
        gsl_rng *rng = gsl_rng_alloc(&sm64_type);
        int mine = rng && load_copy(t, path, sets, nsets, &d, &e) == LW_OK;
        #pragma omp for schedule(dynamic, 64)
        for (int s = 0; s < count; s++) {
            int bad;
            #pragma omp atomic read
            bad = failed;
            if (bad || !mine)
                continue;
            double *v = r->values + (size_t)s * (size_t)r->nparams;
            int valid, i = r->index[s];
            gsl_rng_set(rng, (unsigned long)mix(seed ^ mix((uint64_t)i)));
            draw(dist, r->nparams, rng, v);
            if (variation_eval_at(d, r->nparams, r->params, v, o, &r->pts[s], &valid, &e) != LW_OK) {
                #pragma omp critical
                {
                    if (!failed)
                        first = e;
                    failed = 1;
                }
            }
            r->valid[s] = (unsigned char)valid;
            int k;
            #pragma omp atomic capture
            k = ++done;
            if (progress && k % 2000 == 0) {
                #pragma omp critical
                {
                    fprintf(progress, "\rmontecarlo: %d of %d samples", k, count);
                    fflush(progress);
                }
            }
        }
        if (!mine) {
            #pragma omp critical
            {
                if (!failed)
                    first = e;
                failed = 1;
            }
        }
        desc_free(d);
        gsl_rng_free(rng);
    }
    gsl_set_error_handler(old);
    free(dist);
    if (progress)
        fprintf(progress, "\r%60s\r", "");
    if (failed) {
        *err = first;
        mc_result_free(r);
        return LW_ENUMERIC;
    }
    if ((rc = montecarlo_summarise(r, g, err)))
        mc_result_free(r);
    return rc;
}
