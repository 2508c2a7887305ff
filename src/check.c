/* check: runs the analyses behind the 'check' command. */
#include "loopwise/check.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#define TWO_PI 6.283185307179586

void check_result_free(check_result *r)
{
    if (!r)
        return;
    lg_tf_free(&r->tf);
    free(r->cl);
    free(r->estimate_hz);
    free(r->loops);
    lgain_free(r->lg);
    free(r->node_double);
    free(r->node_half);
    free(r->node_cg);
    free(r->elem_double);
    free(r->elem_half);
    for (int l = 0; r->loop_lg && l < r->nloops; l++) {
        lgain_free(r->loop_lg[l]);
        lg_tf_free(&r->loop_tf[l]);
    }
    free(r->loop_lg);
    free(r->loop_tf);
    memset(r, 0, sizeof *r);
}

int check_accuracy_warning(const check_result *r)
{
    return r->tf.suspect || r->mg.mismatch || r->mg.exact || r->nyquist_disagrees;
}

/* The Nyquist count, and whether its Z agrees with the closed-loop poles in
 * the right half-plane (SPEC section 7). A count left undecided (1 + T
 * through 0 on the axis: a closed-loop pole on it) is not a disagreement. */
static int nyquist_verdict(check_result *r, lw_error *err)
{
    /* the factored form may only skip stretches where |T| is small once the
     * margins found it in agreement with the exact T */
    int trust = !(r->tf.suspect || r->mg.mismatch || r->mg.exact);
    int rc = nyquist_count(r->lg, &r->tf, r->mg.fmin_hz, r->mg.fmax_hz, trust, &r->nq, err);
    if (rc)
        return rc;
    r->have_nyquist = 1;
    double scale = 0;
    for (int k = 0; k < r->ncl; k++)
        scale = fmax(scale, cabs(r->cl[k]));
    int rhp = 0;
    for (int k = 0; k < r->ncl; k++)
        rhp += creal(r->cl[k]) > fmax(1e-9 * cabs(r->cl[k]), 1e-13 * scale);
    r->nyquist_disagrees = r->nq.decided && !r->marginal && r->nq.closed_loop_rhp != rhp;
    return LW_OK;
}

/* 1/(2π R C_total), C_total = c + every cap from the node to gnd. */
static int estimates(const desc *d, check_result *r, lw_error *err)
{
    r->estimate_hz = malloc(sizeof(double) * (size_t)(d->nnodes + 1));
    if (!r->estimate_hz)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    for (int k = 0; k < d->nnodes; k++) {
        double c = d->nodes[k].c, R = d->nodes[k].r;
        for (int e = 0; e < d->nelems; e++)
            if (d->elems[e].kind == ELEM_CAP && d->elems[e].a == k && d->elems[e].b == DESC_GND)
                c += d->elems[e].value;
        r->estimate_hz[k] = isfinite(R) && c > 0 ? 1.0 / (TWO_PI * R * c) : NAN;
    }
    return LW_OK;
}

/* The return ratio at gm index b of the model with the gms in off[] (and b)
 * switched off. */
static int return_ratio(const model *m, int b, unsigned char *off, double *G, int want_owner,
                        lg_tf *tf, lgain **lg, lw_error *err)
{
    unsigned char was = off[b];
    off[b] = 1;
    model_fill_g(m, off, G);
    off[b] = was;
    const model_gm *g = &m->gm[b];
    int rc = lgain_new(m->n, G, m->C, g->in, g->out, g->g, lg, err);
    if (!rc)
        rc = lg_tf_analyse(m->C, *lg, want_owner, tf, err);
    if (rc) {
        lgain_free(*lg);
        *lg = NULL;
    }
    return rc;
}

/* The loop gain at the break and the closed-loop poles, from one reduced
 * form. (Running the two eigenproblems side by side on two cores was
 * measured slower: the fork/join costs more than it saves at these sizes.) */
static int break_analysis(const model *m, unsigned char *off, double *G0, double *G,
                          int want_owner, check_result *r, lw_error *err)
{
    int in = -1, nb = model_break_mark(m, off, &in), rc;
    model_fill_g(m, off, G0);
    model_fill_g(m, NULL, G);
    if (nb == 1) {
        const model_gm *g = NULL;
        for (int k = 0; k < m->ngm; k++)
            if (off[k])
                g = &m->gm[k];
        rc = lgain_new_ahead(m->n, G0, m->C, g->in, g->out, g->g, NULL, want_owner, &r->lg, err);
    } else {
        /* break NODE (SPEC 1): u = the sum of g e_OUT over its gms */
        double *u = calloc((size_t)m->n, sizeof(double));
        rc = u ? LW_OK : lw_error_set(err, LW_ENOMEM, "out of memory");
        for (int k = 0; !rc && k < m->ngm; k++)
            if (off[k])
                u[m->gm[k].out] += m->gm[k].g;
        if (!rc)
            rc = lgain_new_ahead(m->n, G0, m->C, in, -1, 0.0, u, want_owner, &r->lg, err);
        free(u);
    }
    memset(off, 0, (size_t)m->ngm);
    if (rc)
        return rc;
    int rc1 = LW_OK, rc2 = LW_OK;
    lw_error e2;
    lw_error_clear(&e2);
    rc1 = lg_tf_analyse(m->C, r->lg, want_owner, &r->tf, err);
    if (!rc1)
        rc2 = lgain_closed_loop(r->lg, m->n, G, m->C, &r->cl, &r->ncl, &e2);
    if (!rc1 && rc2)
        *err = e2;
    return rc1 ? rc1 : rc2;
}

static int hop_in_loop(const desc_loop *L, int e)
{
    for (int j = 0; j < L->nnodes; j++)
        for (int k = 0; k < L->nhops[j]; k++)
            if (L->hops[j][k] == e)
                return 1;
    return 0;
}

/* A gm is private to loop l when no other declared loop has it as a hop. */
static int private_to(const desc *d, int l, int e)
{
    for (int o = 0; o < d->nloops; o++)
        if (o != l && hop_in_loop(&d->loops[o], e))
            return 0;
    return 1;
}

static int first_private(const desc *d, const model *m, int l)
{
    const desc_loop *L = &d->loops[l];
    for (int j = 0; j < L->nnodes; j++)
        for (int k = 0; k < L->nhops[j]; k++) {
            int e = L->hops[j][k];
            if (d->elems[e].kind == ELEM_GM && private_to(d, l, e))
                return model_gm_of_elem(m, e);
        }
    return -1;
}

static int sign_error(const desc *d, int l, const check_loop *cl, lw_error *err)
{
    const desc_loop *L = &d->loops[l];
    char gain[64];
    if (isinf(cl->dc))
        snprintf(gain, sizeof gain, "unbounded (%s at DC)", cl->sign > 0 ? "+inf" : "-inf");
    else
        snprintf(gain, sizeof gain, "%+.4g", cl->dc);
    lw_error_at(err, L->sign_at.line, L->sign_at.col,
                cl->sign == 0 ? "loop '%s' is declared %s but its own gain is zero; expected a "
                                "loop that feeds back (DC gain %s)"
                              : "loop '%s' is declared %s but its own DC gain is %s; expected %s",
                L->name, L->negative ? "negative" : "positive", gain,
                cl->sign == 0 ? "" : L->negative ? "a positive T(0) for negative feedback"
                                                 : "a negative T(0) for positive feedback");
    desc_error_source(d, err);
    return LW_EINPUT;
}

static int declared_loops(const desc *d, const model *m, check_result *r, double *G, int keep,
                          lw_error *err)
{
    r->nloops = d->nloops;
    r->loops = calloc((size_t)d->nloops + 1, sizeof *r->loops);
    if (keep) {
        r->loop_lg = calloc((size_t)d->nloops + 1, sizeof *r->loop_lg);
        r->loop_tf = calloc((size_t)d->nloops + 1, sizeof *r->loop_tf);
        if (!r->loop_lg || !r->loop_tf)
            return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    unsigned char *off = calloc((size_t)m->ngm + 1, 1);
    int rc = r->loops && off ? LW_OK : lw_error_set(err, LW_ENOMEM, "out of memory");
    for (int l = 0; l < d->nloops && rc == LW_OK; l++) {
        check_loop *cl = &r->loops[l];
        cl->hop_gm = first_private(d, m, l);
        cl->dc = NAN;
        if (cl->hop_gm < 0)
            continue;
        memset(off, 0, (size_t)m->ngm);
        for (int k = 0; k < m->ngm; k++)
            for (int o = 0; o < d->nloops; o++)
                if (o != l && hop_in_loop(&d->loops[o], m->gm[k].elem) &&
                    private_to(d, o, m->gm[k].elem))
                    off[k] = 1;
        int any_off = 0;
        for (int k = 0; k < m->ngm; k++)
            any_off |= off[k];
        if (cl->hop_gm == m->brk && !any_off && r->lg && !keep) {
            /* the loop's own gain is the loop gain at the break: already known */
            cl->dc = r->tf.dc;
            cl->sign = r->tf.sign;
            if (!(d->loops[l].negative ? cl->sign > 0 : cl->sign < 0))
                rc = sign_error(d, l, cl, err);
            continue;
        }
        lg_tf tf;
        lgain *lg = NULL;
        if ((rc = return_ratio(m, cl->hop_gm, off, G, 0, &tf, &lg, err)))
            break;
        cl->dc = tf.dc;
        cl->sign = tf.sign;
        if (keep) {
            r->loop_lg[l] = lg;
            r->loop_tf[l] = tf;
        } else {
            lg_tf_free(&tf);
            lgain_free(lg);
        }
        int ok = d->loops[l].negative ? cl->sign > 0 : cl->sign < 0;
        if (!ok)
            rc = sign_error(d, l, cl, err);
    }
    free(off);
    return rc;
}

static void dominance(const desc *d, check_result *r)
{
    double neg = 0, pos = 0;
    int nneg = 0, npos = 0, finite = 1;
    r->dominance_db = NAN;
    for (int l = 0; l < d->nloops; l++) {
        double v = r->loops[l].dc;
        if (isnan(v))
            continue;
        finite &= isfinite(v);
        if (d->loops[l].negative) {
            neg += v;
            nneg++;
        } else {
            pos += v;
            npos++;
        }
    }
    if (nneg && npos && finite && pos != 0 && neg != 0)
        r->dominance_db = 20.0 * log10(fabs(neg) / fabs(pos));
}

static void stability(check_result *r)
{
    double scale = 0;
    for (int k = 0; k < r->ncl; k++)
        scale = fmax(scale, cabs(r->cl[k]));
    r->stable = 1;
    r->marginal = 0;
    for (int k = 0; k < r->ncl; k++) {
        /* on the axis within rounding: the pole's own relative accuracy
         * (1e-9 of its magnitude), or the absolute accuracy of an
         * eigenvalue solver for a pole near the origin (about 1e-13 of
         * the largest); 1e-9 of the largest alone would call a lightly
         * damped low-frequency pair marginal beside a pole at THz */
        double re = creal(r->cl[k]), tol = fmax(1e-9 * cabs(r->cl[k]), 1e-13 * scale);
        if (re >= -tol) {
            r->stable = 0;
            if (re <= tol)
                r->marginal = 1;
        }
    }
}

/* The margins from the factored form. Where its spot checks find it
 * disagreeing with the exact T, the zeros are found again by the bordered
 * pencil; if the two still disagree, the margins are found on the exact T
 * alone, so that no margin is ever read off a wrong factored form
 * (issue 16). What stays uncertain after that keeps the accuracy warning. */
static int sound_margins(const check_opts *o, check_result *r, lw_error *err)
{
    double flo = 0, fhi = 0;
    int rc = LW_OK;
    for (int pass = 0; rc == LW_OK; pass++) {
        margin_band(&r->tf, r->cl, r->ncl, &flo, &fhi);
        if (o->fmin_hz > 0)
            flo = o->fmin_hz;
        if (o->fmax_hz > 0)
            fhi = o->fmax_hz;
        if (!(fhi > flo))
            return lw_error_set(err, LW_EINPUT, "the band is empty: --fmin must be below "
                                "--fmax (got %g Hz to %g Hz)", flo, fhi);
        rc = margins_find(r->lg, &r->tf, flo, fhi, &r->mg, err);
        if (rc || (!r->mg.mismatch && !r->tf.suspect) || pass > 0 || r->tf.zeros_qz)
            break;
        rc = lg_tf_zeros_again(r->lg, &r->tf, err);
    }
    if (!rc && r->mg.mismatch) {
        rc = margins_find_exact(r->lg, &r->tf, flo, fhi, &r->mg, err);
        r->tf.phase_exact = 1;
    }
    return rc;
}

static double seconds(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* The progress line: the stage that starts now and the time so far; NULL
 * clears it. A check of thousands of nodes spends seconds to a minute in
 * its eigenproblems and scans, with nothing else to show. */
static void progress(const check_opts *o, const model *m, double t0, const char *stage)
{
    if (!o->progress)
        return;
    if (stage)
        fprintf(o->progress, "\rcheck, %d nodes: %-36s %7.1f s", m->n, stage, seconds() - t0);
    else
        fprintf(o->progress, "\r%72s\r", "");
    fflush(o->progress);
}

int check_run(const desc *d, const model *m, const check_opts *o, check_result *r,
              lw_error *err)
{
    memset(r, 0, sizeof *r);
    double t0 = o->progress ? seconds() : 0;
    progress(o, m, t0, "reduction, poles and zeros of T");
    size_t nn = (size_t)m->n * (size_t)m->n;
    double *G = malloc(sizeof(double) * (2 * nn + 1)), *G2 = G ? G + nn : NULL;
    unsigned char *off = calloc((size_t)m->ngm + 1, 1);
    int rc = G && off ? LW_OK : lw_error_set(err, LW_ENOMEM, "out of memory");
    if (!rc)
        rc = break_analysis(m, off, G, G2, o->want_owner, r, err);
    if (!rc && o->want_loops) {
        progress(o, m, t0, "declared loops");
        rc = declared_loops(d, m, r, G, o->keep_loops, err);
    }
    if (!rc)
        rc = estimates(d, r, err);
    if (!rc) {
        progress(o, m, t0, "margins");
        rc = sound_margins(o, r, err);
    }
    if (!rc)
        stability(r);
    if (!rc && o->want_nyquist) {
        progress(o, m, t0, "Nyquist count");
        rc = nyquist_verdict(r, err);
    }
    progress(o, m, t0, NULL);
    if (!rc) {
        if (o->want_loops)
            dominance(d, r);
        else
            r->dominance_db = NAN;
    }
    free(G);
    free(off);
    if (rc)
        check_result_free(r);
    return rc;
}

/* ---- gm-only cycles ------------------------------------------------------ */

typedef struct cyc {
    const desc *d;
    FILE *out;
    int *path, *onpath, depth, found, steps;
} cyc;

static int declared_cycle(const desc *d, const int *path, int len)
{
    for (int l = 0; l < d->nloops; l++) {
        const desc_loop *L = &d->loops[l];
        if (L->nnodes != len)
            continue;
        for (int s = 0; s < len; s++) {
            int same = 1;
            for (int k = 0; k < len && same; k++)
                same = L->nodes[(s + k) % len] == path[k];
            if (same)
                return 1;
        }
    }
    return 0;
}

/* Depth-first search for simple cycles through start, visiting only nodes
 * with index >= start so each cycle is found once. Bounded in work. */
static void dfs(cyc *c, int start, int v)
{
    const desc *d = c->d;
    if (c->found >= 3 || ++c->steps > 100000)
        return;
    for (int e = 0; e < d->nelems; e++) {
        const desc_elem *el = &d->elems[e];
        if (el->kind != ELEM_GM || el->a != v || el->b < start)
            continue;
        if (el->b == start) {
            if (!declared_cycle(d, c->path, c->depth)) {
                fprintf(c->out, "%s: warning: the gm elements form a loop ", d->path);
                for (int k = 0; k < c->depth; k++)
                    fprintf(c->out, "%s -> ", d->nodes[c->path[k]].name);
                fprintf(c->out, "%s that no 'loop' line declares\n", d->nodes[start].name);
                c->found++;
            }
            continue;
        }
        if (c->onpath[el->b] || c->depth >= d->nnodes)
            continue;
        c->onpath[el->b] = 1;
        c->path[c->depth++] = el->b;
        dfs(c, start, el->b);
        c->depth--;
        c->onpath[el->b] = 0;
    }
}

int check_warn_gm_cycles(const desc *d, FILE *out)
{
    cyc c = { d, out, calloc((size_t)d->nnodes + 1, sizeof(int)),
              calloc((size_t)d->nnodes + 1, sizeof(int)), 0, 0, 0 };
    for (int s = 0; c.path && c.onpath && s < d->nnodes && c.found < 3; s++) {
        c.path[0] = s;
        c.depth = 1;
        c.onpath[s] = 1;
        dfs(&c, s, s);
        c.onpath[s] = 0;
    }
    free(c.path);
    free(c.onpath);
    return c.found;
}
