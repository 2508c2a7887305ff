/* locus: the closed-loop poles followed as the loop gain rises. See locus.h. */
#include "loopwise/locus.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/loopgain.h"

/* The first gains after 0, log spaced, and the move (relative to the
 * root's magnitude) beyond which a step is halved. */
#define K_FIRST 1e-6
#define START_STEPS 31
#define MAX_MOVE 0.05
#define MAX_PASSES 12

typedef struct pair {
    double d;
    int i, j;
} pair;

static int cmp_pair(const void *pa, const void *pb)
{
    double a = ((const pair *)pa)->d, b = ((const pair *)pb)->d;
    return a < b ? -1 : a > b;
}

static double rel_dist(double complex a, double complex b)
{
    double m = fmax(cabs(a), cabs(b));
    return m > 0 ? cabs(a - b) / m : 0;
}

/* Joins each of a[n] to one of b[n], nearest pairs first: perm[i] is the
 * index in b of a[i]'s partner. Returns the largest distance joined, or a
 * negative value when out of memory. work holds n*n pairs, used[n] flags. */
static double match(const double complex *a, const double complex *b, int n, int *perm,
                    pair *work, unsigned char *used)
{
    int np = 0;
    for (int i = 0; i < n; i++)
        for (int j = 0; j < n; j++)
            work[np++] = (pair){ rel_dist(a[i], b[j]), i, j };
    qsort(work, (size_t)np, sizeof *work, cmp_pair);
    memset(used, 0, (size_t)(2 * n));
    double worst = 0;
    for (int p = 0, left = n; p < np && left > 0; p++) {
        if (used[work[p].i] || used[n + work[p].j])
            continue;
        used[work[p].i] = used[n + work[p].j] = 1;
        perm[work[p].i] = work[p].j;
        worst = fmax(worst, work[p].d);
        left--;
    }
    return worst;
}

typedef struct tracer {
    const model *m;
    unsigned char *brk;        /* the gms of the break (one, or a node's: SPEC 1) */
    double *G0, *G;
    int n;                  /* roots at every k */
    int count, cap;         /* solves done, room */
    double *k;
    double complex *rows;   /* rows[idx * n + r] */
    int same;               /* 0 once a k gives another number of roots */
} tracer;

/* The roots at gain fraction k into a new row, its index in *idx; -1 there
 * when the root count differs from the first row's (t->same = 0). */
static int solve(tracer *t, double k, int *idx, lw_error *err)
{
    const model *m = t->m;
    int n = m->n;
    memcpy(t->G, t->G0, sizeof(double) * (size_t)n * (size_t)n);
    for (int b = 0; b < m->ngm; b++)
        if (t->brk[b])
            t->G[m->gm[b].out * n + m->gm[b].in] -= k * m->gm[b].g;
    double complex *roots;
    int nr, rc = lg_natural_frequencies(n, t->G, m->C, &roots, &nr, err);
    *idx = -1;
    if (rc)
        return rc;
    if (nr != t->n) {
        t->same = 0;
    } else {
        *idx = t->count++; /* the callers keep count below cap */
        t->k[*idx] = k;
        memcpy(t->rows + (size_t)*idx * (size_t)t->n, roots, sizeof *roots * (size_t)nr);
    }
    free(roots);
    return LW_OK;
}

int locus_trace(const model *m, int max_solves, locus *L, lw_error *err)
{
    memset(L, 0, sizeof *L);
    int n = m->n, rc = LW_OK;
    if (max_solves < START_STEPS + 9)
        max_solves = START_STEPS + 9;
    tracer t = { m, NULL, NULL, NULL, 0, 0, max_solves, NULL, NULL, 1 };
    int *ord = NULL, *next = NULL, *perm = NULL;
    double complex *prev = NULL;
    pair *work = NULL;
    unsigned char *used = NULL;
    t.G0 = malloc(sizeof(double) * (size_t)n * (size_t)n);
    t.G = malloc(sizeof(double) * (size_t)n * (size_t)n);
    t.k = malloc(sizeof(double) * (size_t)max_solves);
    ord = malloc(sizeof(int) * (size_t)max_solves);
    next = malloc(sizeof(int) * (size_t)max_solves);
    if (!t.G0 || !t.G || !t.k || !ord || !next)
        goto nomem;
    unsigned char *off = calloc((size_t)m->ngm + 1, 1);
    if (!off)
        goto nomem;
    int in;
    model_break_mark(m, off, &in);
    model_fill_g(m, off, t.G0);
    t.brk = off;
    /* the first solve sizes the rows */
    {
        double complex *roots;
        int nr;
        if ((rc = lg_natural_frequencies(n, t.G0, m->C, &roots, &nr, err)))
            goto done;
        free(roots);
        t.n = nr;
        t.rows = malloc(sizeof *t.rows * (size_t)(nr + 1) * (size_t)max_solves);
        perm = malloc(sizeof *perm * (size_t)(nr + 1));
        work = malloc(sizeof *work * (size_t)(nr + 1) * (size_t)(nr + 1));
        used = malloc((size_t)(2 * nr + 2));
        prev = malloc(sizeof *prev * (size_t)(nr + 1));
        if (!t.rows || !perm || !work || !used || !prev)
            goto nomem;
    }
    int len = 0;
    for (int i = -1; i < START_STEPS && t.same; i++) {
        double k = i < 0 ? 0 : K_FIRST * pow(1.0 / K_FIRST, (double)i / (START_STEPS - 1));
        int idx;
        if ((rc = solve(&t, k, &idx, err)))
            goto done;
        if (idx >= 0)
            ord[len++] = idx;
    }
    if (t.n == 0 || !t.same)
        goto done; /* nothing to follow, or a root through infinity */
    /* halve the steps where a root moves too far */
    for (int pass = 0, added = 1; added && pass < MAX_PASSES && t.count < t.cap; pass++) {
        int nl = 0;
        added = 0;
        for (int i = 0; i + 1 < len; i++) {
            next[nl++] = ord[i];
            int a = ord[i], b = ord[i + 1];
            if (t.count >= t.cap)
                continue;
            double move = match(t.rows + (size_t)a * t.n, t.rows + (size_t)b * t.n, t.n, perm,
                                work, used);
            if (move <= MAX_MOVE)
                continue;
            double km = t.k[a] == 0 ? 0.1 * t.k[b] : sqrt(t.k[a] * t.k[b]);
            int idx;
            if ((rc = solve(&t, km, &idx, err)) || !t.same)
                goto done;
            next[nl++] = idx;
            added = 1;
        }
        next[nl++] = ord[len - 1];
        memcpy(ord, next, sizeof *ord * (size_t)nl);
        len = nl;
    }
    /* the paths: each row's roots put in the order of the row before */
    L->k = malloc(sizeof *L->k * (size_t)len);
    L->s = malloc(sizeof *L->s * (size_t)len * (size_t)t.n);
    if (!L->k || !L->s)
        goto nomem;
    L->npaths = t.n;
    L->nk = len;
    for (int i = 0; i < len; i++) {
        const double complex *row = t.rows + (size_t)ord[i] * t.n;
        L->k[i] = t.k[ord[i]];
        if (i == 0) {
            for (int p = 0; p < t.n; p++)
                L->s[(size_t)p * len] = row[p];
            continue;
        }
        for (int p = 0; p < t.n; p++)
            prev[p] = L->s[(size_t)p * len + i - 1];
        L->max_step = fmax(L->max_step, match(prev, row, t.n, perm, work, used));
        for (int p = 0; p < t.n; p++)
            L->s[(size_t)p * len + i] = row[perm[p]];
    }
    goto done;
nomem:
    rc = lw_error_set(err, LW_ENOMEM, "out of memory");
done:
    if (rc || !t.same)
        locus_free(L);
    free(t.brk);
    free(t.G0);
    free(t.G);
    free(t.k);
    free(t.rows);
    free(ord);
    free(next);
    free(perm);
    free(work);
    free(used);
    free(prev);
    return rc;
}

void locus_free(locus *L)
{
    if (!L)
        return;
    free(L->k);
    free(L->s);
    memset(L, 0, sizeof *L);
}
