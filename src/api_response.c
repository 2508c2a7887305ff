/* api_response: lw_response_run, the analysis of the response command on
 * the library's modules: the source named as the command line names it
 * (cmd_response_source), the closed-loop poles from check_run, the
 * transfer (response_analyse) and, on a stable loop, its exact step
 * response (step_run). */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/check.h"
#include "loopwise/cli.h"
#include "loopwise/step.h"

#include "api_impl.h"

struct lw_response {
    lw_response_summary s;
    lw_root *poles, *zeros;
    int npoles, nzeros;
};

void lw_response_free(lw_response *r)
{
    if (!r)
        return;
    free(r->poles);
    free(r->zeros);
    free(r);
}

static double db(double v)
{
    return v > 0 && isfinite(v) ? 20.0 * log10(v) : NAN;
}

/* The figures of one transfer and its step (NULL: unstable). */
static void summarise(lw_response *out, const response_result *res, const step_result *st,
                      int stable)
{
    lw_response_summary *s = &out->s;
    s->dc = res->dc;
    s->dc_db = db(fabs(res->dc));
    s->hinf = res->hinf;
    s->peak_hz = res->peak_hz;
    s->peak_value = res->peak_value;
    s->peak_db = db(res->peak_value);
    s->bandwidth_hz = res->bandwidth_hz;
    s->stable = stable;
    s->has_step = st != NULL;
    s->step_initial = st ? st->initial : NAN;
    s->step_final = st ? st->final : NAN;
    s->step_peak_value = st ? st->peak_value : NAN;
    s->step_peak_time_s = st ? st->peak_time : NAN;
    s->overshoot_pct = st ? st->overshoot_pct : NAN;
    s->undershoot_pct = st ? st->undershoot_pct : NAN;
    s->rise_time_s = st ? st->rise_time : NAN;
    s->settle_1pct_s = st ? st->settle1 : NAN;
    s->settle_01pct_s = st ? st->settle01 : NAN;
}

static int run(const desc *d, const lw_response_request *q, lw_response *out, lw_error *err)
{
    int to, each, rc;
    response_src src;
    /* the source as the command line's --to, --from and --inject name it */
    options *o = malloc(sizeof *o);
    if (!o)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    cli_options_init(o);
    o->command = "response";
    o->to_node = q->to;
    o->from_node = q->from;
    o->inject = q->inject;
    rc = q->to ? cmd_response_source(o, d, &to, &src, &each, err)
               : lw_error_set(err, LW_EINPUT, "the request names no node to read (to)");
    free(o);
    if (!rc && each)
        rc = lw_error_set(err, LW_EINPUT, "inject 'each' ranks every node; name one node to "
                          "inject into");
    if (rc)
        return rc;
    model *m = NULL;
    check_result r;
    response *rs = NULL;
    response_result res;
    step_form *sf = NULL;
    step_result st;
    int have_r = 0, have_res = 0;
    check_opts co = { q->fmin_hz, q->fmax_hz, 1, 1, 0, 0, NULL };
    response_opts ro = { q->fmin_hz, q->fmax_hz };
    if ((rc = model_new(d, &m, err)) || (rc = check_run(d, m, &co, &r, err)))
        goto done;
    have_r = 1;
    if ((rc = response_new(m, to, &rs, err)) || (rc = response_source(rs, src, err)) ||
        (rc = response_analyse(rs, r.cl, r.ncl, &ro, &res, err)))
        goto done;
    have_res = 1;
    if (r.stable && ((rc = step_form_new(rs, &sf, err)) || (rc = step_run(sf, &res, &st, err))))
        goto done;
    summarise(out, &res, r.stable ? &st : NULL, r.stable);
    out->npoles = r.ncl;
    out->nzeros = res.tf.nzeros;
    out->poles = api_roots(r.cl, r.ncl);
    out->zeros = api_roots(res.tf.zeros, res.tf.nzeros);
    if (!out->poles || !out->zeros)
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
done:
    step_form_free(sf);
    if (have_res)
        response_result_free(&res);
    response_free(rs);
    if (have_r)
        check_result_free(&r);
    model_free(m);
    return rc;
}

int lw_response_run(const lw_loop *l, const lw_response_request *q, lw_response **out,
                    lw_message *msg)
{
    lw_error err;
    lw_error_clear(&err);
    api_message_clear(msg);
    *out = NULL;
    lw_response *r = calloc(1, sizeof *r);
    api_state old = api_enter();
    int rc = r ? run(l->d, q, r, &err) : lw_error_set(&err, LW_ENOMEM, "out of memory");
    api_leave(old);
    if (rc) {
        api_message(msg, l->d->path, &err);
        lw_response_free(r);
        return rc;
    }
    *out = r;
    return LW_OK;
}

lw_response_summary lw_response_figures(const lw_response *r)
{
    return r->s;
}

const lw_root *lw_response_poles(const lw_response *r, int *n)
{
    *n = r->npoles;
    return r->poles;
}

const lw_root *lw_response_zeros(const lw_response *r, int *n)
{
    *n = r->nzeros;
    return r->zeros;
}
