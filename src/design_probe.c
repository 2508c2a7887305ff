/* design_probe: the closed-loop response read at one point of a sweep
 * (sweep --to, SPEC section 6): the margin and its price side by side. */
#include <math.h>

#include "loopwise/design.h"
#include "loopwise/step.h"

int design_probe_point(const model *m, const check_result *r, const sweep_probe *p,
                       const check_opts *o, design_point *pt, lw_error *err)
{
    /* the peak of |H| over the band the command line gives, as 'response'
     * reads it (--fmin/--fmax) */
    response_opts ro = { o ? o->fmin_hz : 0, o ? o->fmax_hz : 0 };
    response *rs = NULL;
    response_result res;
    step_form *sf = NULL;
    step_result st;
    int rc = response_new(m, p->to, &rs, err);
    if (!rc)
        rc = response_source(rs, p->src, err);
    if (!rc)
        rc = response_analyse(rs, r->cl, r->ncl, &ro, &res, err);
    if (rc) {
        response_free(rs);
        return rc;
    }
    pt->peak_db = res.peak_value > 0 && isfinite(res.peak_value) ? 20.0 * log10(res.peak_value)
                                                                   : NAN;
    if (r->stable && !(rc = step_form_new(rs, &sf, err)) && !(rc = step_run(sf, &res, &st, err))) {
        pt->overshoot_pct = st.overshoot_pct;
        pt->settle1_s = st.settle1;
    }
    step_form_free(sf);
    response_result_free(&res);
    response_free(rs);
    return rc;
}
