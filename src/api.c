/* api: the public entry points of loopwise.h on the library's modules:
 *   lw_loop   a description: text -> desc (desc_parse), --set overrides
 *             (desc_set), evaluated (desc_eval)
 *   lw_check  check_run as the check command runs it, its figures copied
 *             out with the names they carry
 *   lw_point  design_eval, as sweep evaluates one value
 * The response is in api_response.c. Each entry runs as the program does,
 * GSL's error handler off and OpenBLAS on one thread (so the figures are
 * the program's to the last digit), and gives the caller's back. */
#include <gsl/gsl_errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#ifdef _OPENMP
#include <omp.h>
#endif

#include "loopwise/check.h"
#include "loopwise/design.h"
#include "loopwise/eigvals.h"
#include "loopwise/loopwise.h"
#include "loopwise/report.h"

#include "api_impl.h"

#define TWO_PI 6.283185307179586

const char *lw_version(void)
{
    return LOOPWISE_VERSION;
}

/* OpenBLAS, which the build links (see the Makefile). */
int openblas_get_num_threads(void);
void openblas_set_num_threads(int n);

api_state api_enter(void)
{
    api_state st = { gsl_set_error_handler_off(), openblas_get_num_threads(), 1 };
#ifdef _OPENMP
    st.omp_threads = omp_get_max_threads();
#endif
    eigvals_blas_one_thread();
    return st;
}

void api_leave(api_state st)
{
    openblas_set_num_threads(st.blas_threads);
#ifdef _OPENMP
    omp_set_num_threads(st.omp_threads); /* OpenBLAS's OpenMP variant sets both */
#endif
    gsl_set_error_handler(st.gsl);
}

void api_message(lw_message *msg, const char *name, const lw_error *e)
{
    if (!msg)
        return;
    msg->line = e->line;
    msg->col = e->col;
    if (e->line > 0)
        snprintf(msg->text, sizeof msg->text, "%s:%d:%d: %s", name, e->line, e->col, e->msg);
    else
        snprintf(msg->text, sizeof msg->text, "%s", e->msg);
}

void api_message_clear(lw_message *msg)
{
    if (msg) {
        msg->line = msg->col = 0;
        msg->text[0] = '\0';
    }
}

/* ---- the description ------------------------------------------------- */

static int loop_from(text_file *t, const char *name, int rc, lw_loop **out, lw_message *msg,
                     lw_error *err)
{
    desc *d = NULL;
    *out = NULL;
    if (!rc)
        rc = desc_parse(t, name, &d, err);
    if (!rc)
        rc = desc_eval(d, err);
    if (!rc && !(*out = malloc(sizeof **out)))
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
    if (rc) {
        api_message(msg, name, err);
        desc_free(d);
    } else {
        (*out)->d = d;
    }
    text_free(t);
    return rc;
}

int lw_loop_parse(const char *text, size_t len, const char *name, lw_loop **out,
                  lw_message *msg)
{
    lw_error err;
    text_file *t = NULL;
    lw_error_clear(&err);
    api_message_clear(msg);
    api_state old = api_enter();
    if (!name)
        name = "<buffer>";
    int rc = text_from_buffer(text, len, &t, &err);
    rc = loop_from(t, name, rc, out, msg, &err);
    api_leave(old);
    return rc;
}

int lw_loop_read(const char *path, lw_loop **out, lw_message *msg)
{
    lw_error err;
    text_file *t = NULL;
    lw_error_clear(&err);
    api_message_clear(msg);
    api_state old = api_enter();
    const char *name = strcmp(path, "-") ? path : "<stdin>";
    int rc = text_read(path, &t, &err);
    rc = loop_from(t, name, rc, out, msg, &err);
    api_leave(old);
    return rc;
}

void lw_loop_free(lw_loop *l)
{
    if (!l)
        return;
    desc_free(l->d);
    free(l);
}

int lw_loop_set(lw_loop *l, const char *assignment, lw_message *msg)
{
    lw_error err, ignored;
    lw_error_clear(&err);
    api_message_clear(msg);
    /* the override it replaces, kept to undo a value that is not allowed */
    char name[DESC_MAX_NAME + 4];
    const char *eq = strchr(assignment, '=');
    size_t n = eq ? (size_t)(eq - assignment) : 0;
    desc_target t;
    int found = eq && n < sizeof name;
    if (found) {
        memcpy(name, assignment, n);
        name[n] = '\0';
        found = desc_target_find(l->d, name, &t, &ignored) == LW_OK;
    }
    desc_saved saved = { 0, 0 };
    if (found)
        saved = desc_target_save(l->d, t);
    int rc = desc_set(l->d, assignment, &err);
    if (!rc && (rc = desc_eval(l->d, &err)) && found) {
        desc_target_restore(l->d, t, saved);
        desc_eval(l->d, &ignored);
    }
    if (rc)
        api_message(msg, l->d->path, &err);
    return rc;
}

/* ---- the analysis of 'check' ----------------------------------------- */

struct lw_check {
    model *m;
    check_result r;           /* its evaluator reads m */
    lw_margins margins;
    lw_root *roots[3];
    int nroots[3];
    lw_loop_verdict *loops;
    int nloops;
    char *brk;
    char **names;             /* copies of every name the arrays point at */
    int nnames;
};

/* A copy of s owned by c (NULL when s is NULL or memory runs out). */
static const char *keep(lw_check *c, const char *s)
{
    if (!s)
        return NULL;
    char *k = strdup(s);
    if (k)
        c->names[c->nnames++] = k;
    return k;
}

void lw_check_free(lw_check *c)
{
    if (!c)
        return;
    check_result_free(&c->r);
    model_free(c->m);
    for (int k = 0; k < 3; k++)
        free(c->roots[k]);
    free(c->loops);
    for (int k = 0; k < c->nnames; k++)
        free(c->names[k]);
    free(c->names);
    free(c);
}

lw_root *api_roots(const double complex *v, int n)
{
    lw_root *out = malloc(sizeof *out * (size_t)(n > 0 ? n : 1));
    for (int k = 0; out && k < n; k++)
        out[k] = (lw_root){ creal(v[k]) / TWO_PI, cimag(v[k]) / TWO_PI, NULL, NAN };
    return out;
}

/* The figures of r copied out of d and m. */
static int fill(lw_check *c, const desc *d)
{
    const check_result *r = &c->r;
    const lg_tf *tf = &r->tf;
    const margins *mg = &r->mg;
    const model *m = c->m;
    c->margins = (lw_margins){
        tf->dc,
        tf->dc != 0 && isfinite(tf->dc) ? 20.0 * log10(fabs(tf->dc)) : NAN,
        mg->best_cross >= 0 ? mg->cross[mg->best_cross].hz : NAN,
        mg->best_cross >= 0 ? mg->cross[mg->best_cross].value : NAN,
        mg->best_phase >= 0 ? mg->phase[mg->best_phase].value : NAN,
        mg->best_phase >= 0 ? mg->phase[mg->best_phase].hz : NAN,
        mg->ncross, r->stable };
    /* every name: the poles' owners, the loops and their gms, the break */
    c->names = malloc(sizeof *c->names * (size_t)(tf->npoles + 2 * r->nloops + 1));
    c->roots[0] = api_roots(tf->poles, tf->npoles);
    c->roots[1] = api_roots(tf->zeros, tf->nzeros);
    c->roots[2] = api_roots(r->cl, r->ncl);
    c->loops = malloc(sizeof *c->loops * (size_t)(r->nloops > 0 ? r->nloops : 1));
    if (!c->names || !c->roots[0] || !c->roots[1] || !c->roots[2] || !c->loops)
        return LW_ENOMEM;
    c->nroots[0] = tf->npoles;
    c->nroots[1] = tf->nzeros;
    c->nroots[2] = r->ncl;
    for (int k = 0; k < tf->npoles; k++) {
        int o = tf->owner ? tf->owner[k] : -1;
        if (o >= 0 && !(c->roots[0][k].node = keep(c, d->nodes[o].name)))
            return LW_ENOMEM;
        c->roots[0][k].estimate_hz = o >= 0 ? r->estimate_hz[o] : NAN;
    }
    c->nloops = r->nloops;
    for (int l = 0; l < r->nloops; l++) {
        const check_loop *cl = &r->loops[l];
        const char *at = cl->hop_gm >= 0 ? d->elems[m->gm[cl->hop_gm].elem].name : NULL;
        c->loops[l] = (lw_loop_verdict){ keep(c, d->loops[l].name), d->loops[l].negative, cl->dc,
                                         keep(c, at) };
        if (!c->loops[l].name || (at && !c->loops[l].measured_at))
            return LW_ENOMEM;
    }
    c->brk = (char *)keep(c, m->brk_node >= 0 ? d->nodes[m->brk_node].name
                                              : d->elems[m->gm[m->brk].elem].name);
    return c->brk ? LW_OK : LW_ENOMEM;
}

int lw_check_run(const lw_loop *l, double fmin_hz, double fmax_hz, lw_check **out,
                 lw_message *msg)
{
    lw_error err;
    lw_error_clear(&err);
    api_message_clear(msg);
    *out = NULL;
    lw_check *c = calloc(1, sizeof *c);
    if (!c) {
        lw_error_set(&err, LW_ENOMEM, "out of memory");
        api_message(msg, l->d->path, &err);
        return LW_ENOMEM;
    }
    api_state old = api_enter();
    /* the options of the check command: owners, loops, the Nyquist count */
    check_opts co = { fmin_hz, fmax_hz, 1, 1, 0, 1, NULL };
    int rc = model_new(l->d, &c->m, &err);
    if (!rc && (rc = check_run(l->d, c->m, &co, &c->r, &err)))
        memset(&c->r, 0, sizeof c->r);
    if (!rc && (rc = fill(c, l->d)))
        lw_error_set(&err, rc, "out of memory");
    api_leave(old);
    if (rc) {
        api_message(msg, l->d->path, &err);
        lw_check_free(c);
        return rc;
    }
    *out = c;
    return LW_OK;
}

lw_margins lw_check_margins(const lw_check *c)
{
    return c->margins;
}

const lw_root *lw_check_roots(const lw_check *c, lw_roots_kind kind, int *n)
{
    int k = kind == LW_OPEN_LOOP_POLES ? 0 : kind == LW_OPEN_LOOP_ZEROS ? 1 : 2;
    *n = c->nroots[k];
    return c->roots[k];
}

const lw_loop_verdict *lw_check_loops(const lw_check *c, int *n)
{
    *n = c->nloops;
    return c->loops;
}

double lw_check_dominance_db(const lw_check *c)
{
    return c->r.dominance_db;
}

const char *lw_check_break(const lw_check *c)
{
    return c->brk;
}

int lw_check_verdict(const lw_check *c, double pm_deg, double gm_db)
{
    report_target t = { isnan(pm_deg) ? 60.0 : pm_deg, !isnan(pm_deg), gm_db, !isnan(gm_db) };
    return report_check_status(&c->r, t);
}

/* ---- one point of 'sweep' --------------------------------------------- */

int lw_sweep_point(lw_loop *l, const char *name, double value, double fmin_hz, double fmax_hz,
                   lw_point *out, lw_message *msg)
{
    lw_error err, ignored;
    lw_error_clear(&err);
    api_message_clear(msg);
    desc_target t;
    design_point pt;
    /* the options of sweep: no owner nodes, no loops' own gains */
    check_opts co = { fmin_hz, fmax_hz, 0, 0, 0, 0, NULL };
    api_state old = api_enter();
    int rc = desc_target_find(l->d, name, &t, &err);
    if (!rc && !isfinite(value))
        rc = lw_error_set(&err, LW_EINPUT, "%s: the value must be finite", name);
    if (!rc)
        rc = design_eval(l->d, t, value, &co, &pt, &err);
    desc_eval(l->d, &ignored); /* the description's own values again */
    api_leave(old);
    if (rc) {
        api_message(msg, l->d->path, &err);
        return rc;
    }
    *out = (lw_point){ value, pt.pm_deg, pt.crossover_hz, pt.gm_db, pt.dc, pt.stable };
    return LW_OK;
}
