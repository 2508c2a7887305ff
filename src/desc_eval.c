/* desc_eval: evaluates a description's values (with --set overrides) and
 * checks each against the range its field allows. */
#include "loopwise/desc.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

/* Evaluates slot (expr with optional override) into *v; name and suffix
 * name the slot in an error message (joined only then). */
static int eval_slot(desc *d, int expr, int override, double fixed, const char *name,
                     const char *suffix, double *v, lw_error *err)
{
    if (override == DESC_FIXED) {
        *v = fixed;
        return LW_OK;
    }
    int h = override >= 0 ? override : expr;
    int rc = expr_eval(d->pool, h, d->pvals, v, err);
    if (rc != LW_OK && override >= 0) {
        char msg[LW_MSG_MAX];
        snprintf(msg, sizeof msg, "--set %s%s: %.600s", name, suffix, err->msg);
        lw_error_set(err, LW_EINPUT, "%s", msg);
    } else if (rc != LW_OK) {
        desc_error_source(d, err);
    }
    return rc;
}

/* Reports a value outside its allowed range at pos (or at --set). */
static int range_error(const desc *d, desc_pos pos, int overridden, const char *what,
                       const char *rule, double v, lw_error *err)
{
    char got[64];
    snprintf(got, sizeof got, "%s%.6g", isinf(v) ? "" : "", v);
    if (overridden)
        return lw_error_set(err, LW_EINPUT, "--set %s: %s, got %s", what, rule, got);
    lw_error_at(err, pos.line, pos.col, "%s: %s, got %s", what, rule, got);
    desc_error_source(d, err);
    return LW_EINPUT;
}

static int eval_nodes(desc *d, lw_error *err)
{
    char what[DESC_MAX_NAME + 16];
    for (int k = 0; k < d->nnodes; k++) {
        desc_node *n = &d->nodes[k];
        int rc;
        n->r = INFINITY;
        n->c = 0.0;
        if ((n->r_expr >= 0 || n->r_override != DESC_NO_OVERRIDE) &&
            (rc = eval_slot(d, n->r_expr, n->r_override, n->r_fixed, n->name, ".r", &n->r, err)))
            return rc;
        if (!(n->r > 0)) {
            snprintf(what, sizeof what, "%s.r", n->name);
            return range_error(d, n->r_at, n->r_override != DESC_NO_OVERRIDE, what,
                               "a node resistance must be positive (or inf)", n->r, err);
        }
        if ((n->c_expr >= 0 || n->c_override != DESC_NO_OVERRIDE) &&
            (rc = eval_slot(d, n->c_expr, n->c_override, n->c_fixed, n->name, ".c", &n->c, err)))
            return rc;
        if (!(n->c >= 0) || isinf(n->c)) {
            snprintf(what, sizeof what, "%s.c", n->name);
            return range_error(d, n->c_at, n->c_override != DESC_NO_OVERRIDE, what,
                               "a node capacitance must be zero or positive and finite", n->c, err);
        }
    }
    return LW_OK;
}

static int eval_elems(desc *d, lw_error *err)
{
    static const char *const rule[] = {
        "a resistance must be positive and finite", "a capacitance must be positive and finite",
        "a transconductance must be finite",
    };
    for (int k = 0; k < d->nelems; k++) {
        desc_elem *e = &d->elems[k];
        int rc = eval_slot(d, e->expr, e->override, e->fixed, e->name, "", &e->value, err);
        if (rc)
            return rc;
        int ok = e->kind == ELEM_GM ? isfinite(e->value) : (isfinite(e->value) && e->value > 0);
        if (!ok) {
            char what[DESC_MAX_NAME + 16];
            snprintf(what, sizeof what, "%s '%s'", desc_elem_kind_name(e->kind), e->name);
            return range_error(d, e->v_at, e->override != DESC_NO_OVERRIDE,
                               e->override != DESC_NO_OVERRIDE ? e->name : what,
                               rule[e->kind], e->value, err);
        }
    }
    return LW_OK;
}

/* A node whose voltage nothing defines: no r, no c, and no res or cap. A gm
 * alone only injects current or senses voltage, so it does not count. */
static int check_floating(const desc *d, lw_error *err)
{
    char *passive = calloc((size_t)d->nnodes + 1, 1);
    if (!passive)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    for (int k = 0; k < d->nelems; k++) {
        const desc_elem *e = &d->elems[k];
        if (e->kind == ELEM_GM)
            continue;
        passive[e->a] = 1;
        if (e->b != DESC_GND)
            passive[e->b] = 1;
    }
    int rc = LW_OK;
    for (int k = 0; k < d->nnodes && rc == LW_OK; k++) {
        const desc_node *n = &d->nodes[k];
        if (passive[k] || isfinite(n->r) || n->c > 0)
            continue;
        lw_error_at(err, n->at.line, n->at.col, "node '%s' is floating: no resistance or "
                    "capacitance to ground or to another node; expected r=, c=, or a res or cap "
                    "on it", n->name);
        desc_error_source(d, err);
        rc = LW_EINPUT;
    }
    free(passive);
    return rc;
}

static int eval_bound(desc *d, const desc_bound *b, double nominal, double *v, lw_error *err)
{
    if (b->is_pct) {
        /* a percentage is of the nominal's size, so -10% is the lower end
         * for a negative nominal too (a gain of -1m spreads to -1.1m..-0.9m) */
        *v = nominal + fabs(nominal) * b->pct / 100.0;
        return LW_OK;
    }
    int rc = expr_eval(d->pool, b->expr, d->pvals, v, err);
    if (rc)
        desc_error_source(d, err);
    return rc;
}

static int spread_error(const desc *d, desc_pos at, const char *fmt, const char *name, double a,
                        double b, lw_error *err)
{
    lw_error_at(err, at.line, at.col, fmt, name, a, b);
    desc_error_source(d, err);
    return LW_EINPUT;
}

/* Evaluates a param's corner range and distribution around its value. */
static int eval_spread(desc *d, desc_param *p, lw_error *err)
{
    desc_spread *sp = &p->spread;
    int rc = LW_OK;
    /* a percentage of zero spreads nothing (SPEC section 5): say so at the
     * file's own value; a value set from outside pins the param instead */
    if (p->value == 0 && p->override == DESC_NO_OVERRIDE) {
        int range = sp->has_range && (sp->lo.is_pct || sp->hi.is_pct);
        int dist = sp->dist != DIST_NONE && (sp->a.is_pct || (sp->dist == DIST_UNIFORM && sp->b.is_pct));
        if (range || dist) {
            desc_pos at = range ? sp->range_at : sp->dist_at;
            lw_error_at(err, at.line, at.col, "param '%s': a spread in percent of a nominal "
                        "value of 0 spreads nothing; give the %s absolutely, e.g. %s", p->name,
                        range || sp->dist == DIST_UNIFORM ? "bounds" : "sigma",
                        range ? "'corners -1m..1m'" : sp->dist == DIST_UNIFORM
                        ? "'uniform -1m..1m'" : "'normal 1m'");
            desc_error_source(d, err);
            return LW_EINPUT;
        }
    }
    if (sp->has_range) {
        if ((rc = eval_bound(d, &sp->lo, p->value, &sp->lo_v, err)) ||
            (rc = eval_bound(d, &sp->hi, p->value, &sp->hi_v, err)))
            return rc;
        if (!(sp->lo_v <= sp->hi_v) || !isfinite(sp->lo_v) || !isfinite(sp->hi_v))
            return spread_error(d, sp->range_at, "param '%s': corner range %.6g..%.6g is "
                                "inverted or not finite; expected LO..HI with LO below HI",
                                p->name, sp->lo_v, sp->hi_v, err);
    }
    if (sp->dist == DIST_NORMAL) {
        if (sp->a.is_pct) {
            sp->a_v = fabs(p->value) * sp->a.pct / 100.0;
        } else if ((rc = eval_bound(d, &sp->a, p->value, &sp->a_v, err))) {
            return rc;
        }
        if (!(sp->a_v >= 0) || !isfinite(sp->a_v))
        {
            lw_error_at(err, sp->dist_at.line, sp->dist_at.col, "param '%s': sigma %.6g is "
                        "negative or not finite; expected a sigma of zero or more", p->name,
                        sp->a_v);
            desc_error_source(d, err);
            return LW_EINPUT;
        }
    } else if (sp->dist == DIST_UNIFORM) {
        if ((rc = eval_bound(d, &sp->a, p->value, &sp->a_v, err)) ||
            (rc = eval_bound(d, &sp->b, p->value, &sp->b_v, err)))
            return rc;
        if (!(sp->a_v <= sp->b_v) || !isfinite(sp->a_v) || !isfinite(sp->b_v))
            return spread_error(d, sp->dist_at, "param '%s': uniform range %.6g..%.6g is "
                                "inverted or not finite; expected LO..HI with LO below HI",
                                p->name, sp->a_v, sp->b_v, err);
    }
    return LW_OK;
}

int desc_eval(desc *d, lw_error *err)
{
    for (int k = 0; k < d->nparams; k++) {
        desc_param *p = &d->params[k];
        int rc = eval_slot(d, p->expr, p->override, p->fixed, p->name, "", &p->value, err);
        if (rc)
            return rc;
        d->pvals[k] = p->value;
        if ((rc = eval_spread(d, p, err)))
            return rc;
    }
    int rc = eval_nodes(d, err);
    if (!rc)
        rc = eval_elems(d, err);
    if (!rc)
        rc = check_floating(d, err);
    return rc;
}

/* ---- units of params ---------------------------------------------------- */

enum { UNIT_UNSEEN = -1, UNIT_MIXED = -2 };

static void feed(int *u, int param, int unit)
{
    if (param < 0 || unit == UNIT_UNSEEN)
        return;
    int *p = &u[param];
    *p = *p == UNIT_UNSEEN ? unit : (*p == unit ? unit : UNIT_MIXED);
}

/* A param takes the unit of a field whose whole value it is (the field's
 * expression is P or -P), and of a param defined as exactly P or -P. A
 * param inside a larger expression says nothing about its unit (in
 * 'gpass = 40*iload' the 40 carries siemens per ampere), so such uses are
 * not counted; fields of different units leave the param without one. */
void desc_units_infer(desc *d)
{
    int *u = malloc(sizeof(int) * ((size_t)d->nparams + 1));
    for (int k = 0; k < d->nparams; k++)
        d->params[k].unit = UNIT_ANY;
    if (!u)
        return; /* the units are only shown: without memory, none are */
    for (int k = 0; k < d->nparams; k++)
        u[k] = UNIT_UNSEEN;
    static const expr_unit by_kind[] = { UNIT_OHM, UNIT_F, UNIT_S };
    for (int k = 0; k < d->nnodes; k++) {
        if (d->nodes[k].r_expr >= 0)
            feed(u, expr_sole_param(d->pool, d->nodes[k].r_expr), UNIT_OHM);
        if (d->nodes[k].c_expr >= 0)
            feed(u, expr_sole_param(d->pool, d->nodes[k].c_expr), UNIT_F);
    }
    for (int k = 0; k < d->nelems; k++)
        feed(u, expr_sole_param(d->pool, d->elems[k].expr), by_kind[d->elems[k].kind]);
    /* a param is used only after it is declared: going backwards, each
     * param's own unit is complete before it is passed on */
    for (int k = d->nparams - 1; k >= 0; k--)
        feed(u, expr_sole_param(d->pool, d->params[k].expr), u[k]);
    for (int k = 0; k < d->nparams; k++)
        d->params[k].unit = u[k] >= 0 ? (expr_unit)u[k] : UNIT_ANY;
    free(u);
}

expr_unit desc_target_shown_unit(const desc *d, desc_target t)
{
    return t.kind == TARGET_PARAM ? d->params[t.index].unit : desc_target_unit(d, t);
}

/* ---- targets: --set, --tune, --vary ------------------------------------ */

int desc_target_find(const desc *d, const char *name, desc_target *t, lw_error *err)
{
    const char *dot = strchr(name, '.');
    if (dot) {
        char node[DESC_MAX_NAME + 1];
        size_t l = (size_t)(dot - name);
        if (l > DESC_MAX_NAME)
            return lw_error_set(err, LW_EINPUT, "'%s': name too long", name);
        memcpy(node, name, l);
        node[l] = '\0';
        int k = desc_find_node(d, node);
        if (k < 0 && desc_find_input(d, node) >= 0)
            return lw_error_set(err, LW_EINPUT, "'%s': '%s' is an input, an ideal source with "
                                "no r or c; change what connects it instead", name, node);
        if (k < 0)
            return lw_error_set(err, LW_EINPUT, "'%s': unknown node '%s'", name, node);
        if (strcmp(dot, ".r") && strcmp(dot, ".c"))
            return lw_error_set(err, LW_EINPUT, "'%s': a node has fields .r and .c", name);
        *t = (desc_target){ dot[1] == 'r' ? TARGET_NODE_R : TARGET_NODE_C, k };
        return LW_OK;
    }
    for (int k = 0; k < d->nparams; k++)
        if (!strcmp(d->params[k].name, name)) {
            *t = (desc_target){ TARGET_PARAM, k };
            return LW_OK;
        }
    int e = desc_find_elem(d, name);
    if (e >= 0) {
        *t = (desc_target){ TARGET_ELEM, e };
        return LW_OK;
    }
    if (desc_find_node(d, name) >= 0)
        return lw_error_set(err, LW_EINPUT, "'%s' is a node; name its field as %s.r or %s.c",
                            name, name, name);
    if (desc_find_input(d, name) >= 0)
        return lw_error_set(err, LW_EINPUT, "'%s' is an input, not a param or an element; name "
                            "an element that connects it", name);
    int n = d->nparams + d->nelems;
    const char **c = malloc(sizeof *c * (size_t)(n + 1));
    const char *best = NULL;
    if (c) {
        for (int k = 0; k < d->nparams; k++)
            c[k] = d->params[k].name;
        for (int k = 0; k < d->nelems; k++)
            c[d->nparams + k] = d->elems[k].name;
        best = lw_closest(name, c, n);
    }
    int rc = best ? lw_error_set(err, LW_EINPUT, "unknown param or element '%s' (did you mean "
                                 "'%s'?)", name, best)
                  : lw_error_set(err, LW_EINPUT, "unknown param or element '%s'", name);
    free(c);
    return rc;
}

expr_unit desc_target_unit(const desc *d, desc_target t)
{
    static const expr_unit by_kind[] = { UNIT_OHM, UNIT_F, UNIT_S };
    switch (t.kind) {
    case TARGET_PARAM: return UNIT_ANY;
    case TARGET_ELEM: return by_kind[d->elems[t.index].kind];
    case TARGET_NODE_R: return UNIT_OHM;
    default: return UNIT_F;
    }
}

static int *override_slot(desc *d, desc_target t, double **fixed)
{
    switch (t.kind) {
    case TARGET_PARAM: *fixed = &d->params[t.index].fixed; return &d->params[t.index].override;
    case TARGET_ELEM: *fixed = &d->elems[t.index].fixed; return &d->elems[t.index].override;
    case TARGET_NODE_R: *fixed = &d->nodes[t.index].r_fixed; return &d->nodes[t.index].r_override;
    default: *fixed = &d->nodes[t.index].c_fixed; return &d->nodes[t.index].c_override;
    }
}

typedef struct set_ctx {
    const desc *d;
    int limit;   /* params with index < limit may be used */
} set_ctx;

static int set_lookup(void *ctx, const char *name)
{
    const set_ctx *s = ctx;
    for (int k = 0; k < s->d->nparams; k++)
        if (!strcmp(s->d->params[k].name, name))
            return k < s->limit ? k : -3;
    return -1;
}

int desc_set(desc *d, const char *assignment, lw_error *err)
{
    const char *eq = strchr(assignment, '=');
    if (!eq || eq == assignment)
        return lw_error_set(err, LW_EINPUT, "--set '%s': expected NAME=VALUE", assignment);
    char name[DESC_MAX_NAME + 4];
    size_t l = (size_t)(eq - assignment);
    if (l >= sizeof name)
        return lw_error_set(err, LW_EINPUT, "--set: name too long");
    memcpy(name, assignment, l);
    name[l] = '\0';
    desc_target t;
    int rc = desc_target_find(d, name, &t, err);
    if (rc) {
        char msg[LW_MSG_MAX];
        snprintf(msg, sizeof msg, "%.700s", err->msg);
        return lw_error_set(err, LW_EINPUT, "--set: %s", msg);
    }
    set_ctx sc = { d, t.kind == TARGET_PARAM ? t.index : d->nparams };
    expr_names names = { set_lookup, NULL, &sc };
    int h;
    lw_error e2;
    lw_error_clear(&e2);
    if ((rc = expr_compile(d->pool, eq + 1, desc_target_unit(d, t), &names, 1, 1, eq + 1, &h, &e2)))
        return lw_error_set(err, rc, "--set %s: column %d: %.600s", name, e2.col, e2.msg);
    double *fixed;
    *override_slot(d, t, &fixed) = h;
    return LW_OK;
}

int desc_target_set(desc *d, desc_target t, double value, lw_error *err)
{
    (void)err;
    double *fixed;
    int *slot = override_slot(d, t, &fixed);
    *slot = DESC_FIXED;
    *fixed = value;
    return LW_OK;
}

double desc_target_value(const desc *d, desc_target t)
{
    switch (t.kind) {
    case TARGET_PARAM: return d->params[t.index].value;
    case TARGET_ELEM: return d->elems[t.index].value;
    case TARGET_NODE_R: return d->nodes[t.index].r;
    default: return d->nodes[t.index].c;
    }
}

desc_saved desc_target_save(desc *d, desc_target t)
{
    double *fixed;
    int *slot = override_slot(d, t, &fixed);
    return (desc_saved){ *slot, *fixed };
}

void desc_target_restore(desc *d, desc_target t, desc_saved s)
{
    double *fixed;
    int *slot = override_slot(d, t, &fixed);
    *slot = s.override;
    *fixed = s.fixed;
}
