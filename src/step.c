/* step: the exact step response from the modal form, and its figures.
 * See step.h for the method. */
#include "loopwise/step.h"

#include <gsl/gsl_blas.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/bracket.h"
#include "loopwise/modal.h"

/* A mode matters for the sampling while its term exceeds this fraction of
 * the response's scale: four decades below the 0.1% settling band. */
#define SIGNIFICANT 1e-7
/* The settling bands and the slow mode's threshold. */
#define BAND_1 1e-2
#define BAND_01 1e-3
/* Samples per decade of t, and per radian of an oscillation: with y' at
 * every sample (one response), and with y alone, where an extremum shows as
 * a turn of the samples (--inject each: about 12 per period). */
#define PER_DECADE 64
#define PER_RADIAN 4.0
#define EACH_PER_RADIAN 2.0
/* Bounds on the samples: of one oscillating mode, and in all. */
#define MODE_POINTS 20000
#define MAX_POINTS 100000
#define EACH_POINTS 20000

struct step_form {
    response *rs;
    modal *mf;
    int r, nw;
    double *w;          /* weights of the response's current source */
    double *ry, *rd;    /* rows at one time */
};

void step_form_free(step_form *sf)
{
    if (!sf)
        return;
    modal_free(sf->mf);
    free(sf->w);
    free(sf);
}

int step_form_new(response *rs, step_form **out, lw_error *err)
{
    *out = NULL;
    int r = response_rank(rs), rc;
    double d;
    step_form *sf = calloc(1, sizeof *sf);
    double *A = malloc(sizeof(double) * (size_t)(r * r + 2 * r + 1));
    if (!sf || !A) {
        free(A);
        free(sf);
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    sf->rs = rs;
    sf->r = r;
    double *b = A + r * r, *c = b + r;
    rc = response_state(rs, A, b, c, &d, err);
    if (!rc)
        rc = modal_new(r, A, c, &sf->mf, err);
    for (int k = 0; !rc && k < sf->mf->nmodes; k++)
        if (!(creal(sf->mf->modes[k].p) < 0))
            rc = lw_error_set(err, LW_ENUMERIC, "the closed loop is not stable: no step response");
    if (!rc) {
        sf->nw = sf->mf->nw;
        sf->w = malloc(sizeof(double) * (size_t)(3 * sf->nw + 3));
        if (!sf->w)
            rc = lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    if (!rc) {
        sf->ry = sf->w + sf->nw + 1;
        sf->rd = sf->ry + sf->nw + 1;
        modal_weights(sf->mf, b, sf->w);
    }
    free(A);
    if (rc) {
        step_form_free(sf);
        return rc;
    }
    *out = sf;
    return LW_OK;
}

/* ---- y(t) and its refinement -------------------------------------------- */

typedef struct yctx {
    step_form *sf;
    const double *w;
    double final, level;
    const double *lamp;     /* ln of each mode's amplitude, or NULL */
    double lfloor;          /* terms below e^lfloor are left out */
} yctx;

static double dot(const double *a, const double *b, int n)
{
    double s = 0;
    for (int k = 0; k < n; k++)
        s += a[k] * b[k];
    return s;
}

static double y_at(double t, void *p)
{
    yctx *c = p;
    return c->final + modal_value(c->sf->mf, c->w, c->lamp, c->lfloor, t, NULL) - c->level;
}

static double dy_at(double t, void *p)
{
    yctx *c = p;
    double d;
    modal_value(c->sf->mf, c->w, c->lamp, c->lfloor, t, &d);
    return d;
}

/* What y_at may leave out: terms below 1e-18 of the response's scale, far
 * under the rounding of the sum. lamp gets nmodes values. */
static void envelope(step_form *sf, const double *w, double scale, double *lamp, yctx *c)
{
    for (int k = 0; k < sf->mf->nmodes; k++) {
        double a = modal_amplitude(sf->mf, k, w);
        lamp[k] = a > 0 ? log(a) : -INFINITY;
    }
    c->lamp = lamp;
    c->lfloor = scale > 0 ? log(1e-18 * scale) : -INFINITY;
}


/* ---- the time grid ------------------------------------------------------- */

/* How long mode k's term stays above thr: ln(a/thr)/rate for one exponential;
 * a cluster (a repeated pole: polynomial times exponential) is evaluated,
 * doubling the time until its term stays below. */
static double lifetime(step_form *sf, int k, const double *w, double thr)
{
    const modal_mode *md = &sf->mf->modes[k];
    double a = modal_amplitude(sf->mf, k, w), rate = -creal(md->p);
    if (!(a > thr) || !(thr > 0))
        return 0;
    double t = log(a / thr) / rate;
    if (md->kind != MODE_CLUSTER)
        return t;
    for (int it = 0; it < 60; it++) {
        double e1 = fabs(modal_term(sf->mf, k, w, t)), e2 = fabs(modal_term(sf->mf, k, w, 1.5 * t));
        if (!(e1 > thr) && !(e2 > thr))
            break;
        t *= 2;
    }
    return t;
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return x < y ? -1 : x > y;
}

/* Samples: 0, a logarithmic grid from 1e-3 of the fastest significant
 * mode's time scale to the end, and PER_RADIAN per radian of each
 * oscillating mode while it lasts. life[k] is 0 for a mode that does not
 * matter. */
static double *time_grid(const modal *mf, const double *life, double per_radian, int cap, int *n,
                         double *t_end)
{
    double tend = 0, fast = 0, slow = INFINITY;
    for (int k = 0; k < mf->nmodes; k++) {
        slow = fmin(slow, -creal(mf->modes[k].p));
        if (life[k] > 0) {
            tend = fmax(tend, life[k]);
            fast = fmax(fast, cabs(mf->modes[k].p));
        }
    }
    if (!(tend > 0)) {
        /* nothing moves: y is constant; a short horizon for the record */
        tend = isfinite(slow) && slow > 0 ? 10.0 / slow : 1.0;
        fast = 1.0 / tend;
    }
    double t0 = 1e-3 / fast;
    if (t0 >= tend)
        t0 = tend * 1e-3;
    int nlog = (int)ceil(PER_DECADE * log10(tend / t0)) + 1, m = 0, total = nlog + 1;
    int *nosc = calloc((size_t)mf->nmodes + 1, sizeof(int));
    if (!nosc)
        return NULL;
    for (int k = 0; k < mf->nmodes; k++) {
        double im = fabs(cimag(mf->modes[k].p));
        if (life[k] > 0 && im > 0) {
            double pts = life[k] * cabs(mf->modes[k].p) * per_radian;
            nosc[k] = pts > MODE_POINTS ? MODE_POINTS : (int)pts + 1;
            total += nosc[k];
        }
    }
    double scale = total > cap ? (double)cap / total : 1.0;
    double *t = malloc(sizeof(double) * (size_t)(total + 1));
    if (!t) {
        free(nosc);
        return NULL;
    }
    t[m++] = 0;
    for (int k = 0; k < nlog; k++)
        t[m++] = t0 * pow(tend / t0, (double)k / (nlog - 1));
    for (int k = 0; k < mf->nmodes; k++) {
        int q = (int)(nosc[k] * scale);
        for (int j = 1; j <= q; j++)
            t[m++] = life[k] * j / q;
    }
    free(nosc);
    qsort(t, (size_t)m, sizeof *t, cmp_double);
    int u = 0;
    for (int j = 0; j < m; j++)
        if (u == 0 || t[j] > t[u - 1] * (1 + 1e-12))
            t[u++] = t[j];
    *n = u;
    *t_end = tend;
    return t;
}

/* ---- the figures ----------------------------------------------------------- */

/* The first time y reaches level (on the side of sgn), between merged
 * samples, monotone between neighbours. */
static double first_reach(yctx *c, const double *pt, const double *py, int m, double level,
                          double sgn)
{
    for (int j = 0; j < m; j++)
        if (sgn * (py[j] - level) >= 0) {
            if (j == 0)
                return 0;
            c->level = level;
            double t = bracket_root(y_at, c, pt[j - 1], pt[j], 0, 1e-12);
            c->level = 0;
            return t;
        }
    return NAN;
}

/* The last time |y - final| exceeds band. */
static double last_exceed(yctx *c, const double *pt, const double *py, int m, double band)
{
    int j = m - 1;
    while (j >= 0 && !(fabs(py[j] - c->final) > band))
        j--;
    if (j < 0)
        return 0;
    if (j == m - 1)
        return pt[m - 1]; /* beyond the horizon: not expected */
    c->level = c->final + (py[j] > c->final ? band : -band);
    double t = bracket_root(y_at, c, pt[j], pt[j + 1], 0, 1e-12);
    c->level = 0;
    return t;
}

/* An extremum of y between a and b where y' changes sign, appended to the
 * merged samples. */
static void extremum(yctx *c, double a, double b, double *pt, double *py, int *m)
{
    double te = bracket_root(dy_at, c, a, b, 0, 1e-12);
    if (te > a && te < b) {
        pt[*m] = te;
        py[(*m)++] = y_at(te, c);
    }
}

/* Every figure but the slow mode from samples t, y (n of them, t[0] = 0 with
 * y[0] = y(0+)) and the slopes dy there; pt, py are workspace of 2n. Without
 * dy (--inject each, where every node's y comes from one product with the
 * shared rows) an extremum is where the sampled y turns, and y' is found
 * exactly only around it. The merged list (samples and extrema in time
 * order) is monotone between neighbours, but for turns that cannot decide a
 * figure (without dy; the rise time is then not meaningful). */
static void figures(yctx *c, const double *t, const double *y, const double *dy, int n,
                    double *pt, double *py, step_result *o)
{
    int m = 0;
    double fin = c->final, big = 0, sg = fin > 0 ? 1 : (fin < 0 ? -1 : 0);
    /* a turn within a millionth of the scale from the final value decides no
     * figure (the overshoot's resolution is coarser, the bands wider), and
     * there the samples' rounding makes turns of its own: not refined */
    for (int i = 0; i < n; i++)
        big = fmax(big, fabs(y[i]));
    double scale = fin != 0 ? fabs(fin) : big, quiet = 1e-6 * scale;
    /* Without y' a turn of the samples is refined only when it may decide a
     * figure: a true extremum exceeds its samples by a few percent of the
     * swing at most (4 samples per radian: 1 - cos(1/4) = 3%), so a turn 10%
     * short of the best sample is not the peak (nor the undershoot), and
     * one before the last sample outside the 1% band, or well inside the
     * band, does not set the settling time. */
    double top = 0, wrong = 0;
    int last_out = 0;
    for (int i = 0; !dy && i < n; i++) {
        top = fmax(top, sg != 0 ? sg * (y[i] - fin) : fabs(y[i]));
        wrong = fmax(wrong, -sg * y[i]);
        if (fabs(y[i] - fin) > BAND_1 * scale)
            last_out = i;
    }
    for (int i = 0; i < n; i++) {
        double v = i >= 1 ? y[i - 1] : 0;
        int decides = dy || (sg != 0 ? sg * (v - fin) : fabs(v)) >= 0.9 * top ||
                      (wrong > 0 && -sg * v >= 0.9 * wrong) ||
                      (i - 1 >= last_out && fabs(v - fin) >= 0.5 * BAND_1 * scale);
        if (!dy && i >= 2 && (y[i - 1] - y[i - 2]) * (y[i] - y[i - 1]) < 0 &&
            fabs(y[i - 1] - fin) > quiet && decides) {
            /* the turn lies in (t[i-2], t[i]); y' there decides on which side
             * of the sample t[i-1] (already in the list) */
            double d1 = dy_at(t[i - 1], c);
            int before = (y[i - 1] - y[i - 2]) * d1 < 0;
            if (before) {
                double keep_t = pt[m - 1], keep_y = py[m - 1];
                m--;
                extremum(c, t[i - 2], t[i - 1], pt, py, &m);
                pt[m] = keep_t;
                py[m++] = keep_y;
            } else {
                extremum(c, t[i - 1], t[i], pt, py, &m);
            }
        }
        pt[m] = t[i];
        py[m++] = y[i];
        if (dy && i + 1 < n && ((dy[i] > 0 && dy[i + 1] < 0) || (dy[i] < 0 && dy[i + 1] > 0)) &&
            (fabs(y[i] - fin) > quiet || fabs(y[i + 1] - fin) > quiet))
            extremum(c, t[i], t[i + 1], pt, py, &m);
    }
    double sgn = fin > 0 ? 1 : (fin < 0 ? -1 : 0);
    int best = 0, lo = 0;
    for (int j = 1; j < m; j++) {
        double key = sgn != 0 ? sgn * py[j] : fabs(py[j]);
        double kb = sgn != 0 ? sgn * py[best] : fabs(py[best]);
        if (key > kb)
            best = j;
        if ((sgn >= 0 && py[j] < py[lo]) || (sgn < 0 && py[j] > py[lo]))
            lo = j;
    }
    /* excursions below the sampling's resolution (SIGNIFICANT of |final|:
     * the modes that small are not followed in time) count as none */
    double ext = sgn != 0 ? sgn * (py[best] - fin) : fabs(py[best]);
    if (sgn != 0 ? ext > SIGNIFICANT * fabs(fin) : ext > 0) {
        o->peak_value = py[best];
        o->peak_time = pt[best];
        o->overshoot_pct = sgn != 0 ? 100.0 * ext / fabs(fin) : NAN;
    } else {
        o->peak_value = fin;
        o->peak_time = NAN;
        o->overshoot_pct = sgn != 0 ? 0 : NAN;
    }
    if (sgn != 0) {
        double under = fmax(0.0, -sgn * py[lo]);
        o->undershoot_pct = under > SIGNIFICANT * fabs(fin) ? 100.0 * under / fabs(fin) : 0;
        if (sgn * y[0] >= 0.1 * fabs(fin)) {
            o->rise_time = NAN;
        } else {
            double t10 = first_reach(c, pt, py, m, 0.1 * fin, sgn);
            double t90 = first_reach(c, pt, py, m, 0.9 * fin, sgn);
            o->rise_time = t90 - t10;
        }
    } else {
        o->undershoot_pct = NAN;
        o->rise_time = NAN;
    }
    double base = sgn != 0 ? fabs(fin) : fabs(py[best]);
    o->settle1 = base > 0 ? last_exceed(c, pt, py, m, BAND_1 * base) : 0;
    o->settle01 = base > 0 ? last_exceed(c, pt, py, m, BAND_01 * base) : 0;
}

/* The mode whose term lasts longest above 0.1% of base. */
static void slow_mode(step_form *sf, const double *w, double base, const lg_tf *tf,
                      step_result *o)
{
    double best = -INFINITY;
    o->has_slow = 0;
    for (int k = 0; k < sf->mf->nmodes && base > 0; k++) {
        const modal_mode *md = &sf->mf->modes[k];
        double a = modal_amplitude(sf->mf, k, w) / base;
        if (!(a > 0))
            continue;
        double life = md->kind == MODE_CLUSTER && a > BAND_01
                          ? lifetime(sf, k, w, BAND_01 * base)
                          : log(a / BAND_01) / -creal(md->p);
        if (life > best) {
            best = life;
            o->has_slow = 1;
            o->slow_pole = creal(md->p) + I * fabs(cimag(md->p));
            o->slow_amplitude = a;
        }
    }
    o->slow_doublet = 0;
    for (int k = 0; o->has_slow && o->slow_amplitude < 0.05 && k < tf->nzeros; k++) {
        double complex z = tf->zeros[k], p = o->slow_pole;
        if (cabs(p - z) < 0.1 * cabs(p) || cabs(conj(p) - z) < 0.1 * cabs(p))
            o->slow_doublet = 1;
    }
}

/* Scale of a response for its grid: |final|, or the sum of the modes'
 * amplitudes when final is 0. */
static double response_scale(step_form *sf, const double *w, double fin)
{
    if (fin != 0)
        return fabs(fin);
    double s = 0;
    for (int k = 0; k < sf->mf->nmodes; k++)
        s += modal_amplitude(sf->mf, k, w);
    return s;
}

static int sample(step_form *sf, yctx *c, double initial, const double *t, int n, double *y,
                  double *dy)
{
    for (int i = 0; i < n; i++) {
        if (modal_rows(sf->mf, t[i], sf->ry, sf->rd))
            return LW_ENUMERIC;
        y[i] = c->final + dot(sf->ry, c->w, sf->nw);
        dy[i] = dot(sf->rd, c->w, sf->nw);
    }
    y[0] = initial;
    return LW_OK;
}

int step_run(step_form *sf, const response_result *res, step_result *o, lw_error *err)
{
    memset(o, 0, sizeof *o);
    o->initial = res->hinf;
    o->final = res->dc;
    if (res->zero)
        memset(sf->w, 0, sizeof(double) * (size_t)sf->nw);
    yctx c = { sf, sf->w, res->dc, 0, NULL, 0 };
    double scale = response_scale(sf, sf->w, res->dc);
    double *life = malloc(sizeof(double) * (size_t)(2 * sf->mf->nmodes + 1));
    if (!life)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    double *lamp = life + sf->mf->nmodes;
    envelope(sf, sf->w, scale, lamp, &c);
    for (int k = 0; k < sf->mf->nmodes; k++)
        life[k] = lifetime(sf, k, sf->w, SIGNIFICANT * scale);
    int n;
    double *t = time_grid(sf->mf, life, PER_RADIAN, MAX_POINTS, &n, &o->t_end);
    double *buf = t ? malloc(sizeof(double) * (size_t)(6 * n)) : NULL;
    if (!t || !buf) {
        free(t);
        free(life);
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    double *y = buf, *dy = y + n, *pt = dy + n, *py = pt + 2 * n;
    int rc = sample(sf, &c, o->initial, t, n, y, dy);
    if (rc) {
        rc = lw_error_set(err, LW_ENUMERIC, "the matrix exponential of a repeated pole failed");
    } else {
        o->npoints = n;
        figures(&c, t, y, dy, n, pt, py, o);
        slow_mode(sf, sf->w, o->final != 0 ? fabs(o->final) : fabs(o->peak_value), &res->tf, o);
    }
    free(t);
    free(buf);
    free(life);
    return rc;
}

double step_value(step_form *sf, const step_result *sr, double t)
{
    if (t <= 0)
        return sr->initial;
    yctx c = { sf, sf->w, sr->final, 0, NULL, 0 };
    return y_at(t, &c);
}

/* ---- every node at once ------------------------------------------------- */

int step_each(response *rs, step_form *sf, const int *nodes, int nn, step_each_item *out,
              lw_error *err)
{
    int nw = sf->nw, nm = sf->mf->nmodes, r = sf->r, rc = LW_OK, n = 0;
    double *W = malloc(sizeof(double) * (size_t)(nw * nn + 1));
    double *fin = malloc(sizeof(double) * (size_t)(3 * nn + nm + r + 1));
    double *wj = malloc(sizeof(double) * (size_t)(nw + 1));
    double *t = NULL, *R = NULL, *Y = NULL;
    if (!W || !fin || !wj) {
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
        goto done;
    }
    double *ini = fin + nn, *scl = ini + nn, *life = scl + nn, *b = life + nm;
    memset(life, 0, sizeof(double) * (size_t)nm);
    for (int j = 0; j < nn; j++) {
        int reach;
        if ((rc = response_input_vector(rs, (response_src){ RESP_INJECT, nodes[j] }, b, &ini[j],
                                        &fin[j], &reach, err)))
            goto done;
        out[j] = (step_each_item){ nodes[j], reach, 0, 0, NAN, NAN, 0 };
        modal_weights(sf->mf, b, wj);
        if (!reach)
            memset(wj, 0, sizeof(double) * (size_t)nw);
        for (int k = 0; k < nw; k++)
            W[k * nn + j] = wj[k];
        scl[j] = response_scale(sf, wj, fin[j]);
        for (int k = 0; k < nm; k++)
            life[k] = fmax(life[k], lifetime(sf, k, wj, SIGNIFICANT * scl[j]));
    }
    double tend;
    if (!(t = time_grid(sf->mf, life, EACH_PER_RADIAN, EACH_POINTS, &n, &tend))) {
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
        goto done;
    }
    /* rows for every sample, then every node's y in one product Y = R W;
     * y' only where the sampled y turns (figures) */
    R = malloc(sizeof(double) * (size_t)n * (size_t)nw);
    Y = malloc(sizeof(double) * (size_t)n * (size_t)nn);
    double *ws = malloc(sizeof(double) * (size_t)(6 * n + 1));
    if (!R || !Y || !ws) {
        free(ws);
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
        goto done;
    }
    for (int i = 0; i < n && !rc; i++)
        if (modal_rows(sf->mf, t[i], R + (size_t)i * nw, NULL))
            rc = lw_error_set(err, LW_ENUMERIC, "the matrix exponential of a repeated pole failed");
    if (!rc) {
        gsl_matrix_view Rv = gsl_matrix_view_array(R, (size_t)n, (size_t)nw);
        gsl_matrix_view Wv = gsl_matrix_view_array(W, (size_t)nw, (size_t)nn);
        gsl_matrix_view Yv = gsl_matrix_view_array(Y, (size_t)n, (size_t)nn);
        gsl_blas_dgemm(CblasNoTrans, CblasNoTrans, 1.0, &Rv.matrix, &Wv.matrix, 0.0, &Yv.matrix);
    }
    double *y = ws, *pt = y + 2 * n, *py = pt + 2 * n;
    for (int j = 0; j < nn && !rc; j++) {
        for (int k = 0; k < nw; k++)
            wj[k] = W[k * nn + j];
        for (int i = 0; i < n; i++)
            y[i] = fin[j] + Y[(size_t)i * nn + j];
        y[0] = out[j].reaches ? ini[j] : 0;
        yctx c = { sf, wj, fin[j], 0, NULL, 0 };
        envelope(sf, wj, scl[j], life, &c); /* life is free by now */
        step_result o;
        memset(&o, 0, sizeof o);
        figures(&c, t, y, NULL, n, pt, py, &o);
        out[j].final = fin[j];
        out[j].peak_value = o.peak_value;
        out[j].overshoot_pct = o.overshoot_pct;
        out[j].undershoot_pct = o.undershoot_pct;
        out[j].settle1 = o.settle1;
    }
    free(ws);
done:
    free(W);
    free(fin);
    free(wj);
    free(t);
    free(R);
    free(Y);
    return rc;
}
