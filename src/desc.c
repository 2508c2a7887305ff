/* desc: parses the lines of a .loop file into a description and evaluates
 * its values. Grammar (one declaration per line):
 *
 *   param NAME '=' EXPR
 *   node  NAME ['r=' EXPR] ['c=' EXPR]
 *   input NAME
 *   res   NAME A B EXPR          cap NAME A B EXPR
 *   gm    NAME IN '->' OUT EXPR
 *   loop  NAME ('negative'|'positive') N1 N2 ... Nk
 *   break NAME                   (desc_break.c)
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "desc_impl.h"

/* Keep in step with desc_elem_kind. */
static const char *const kind_names[] = { "res", "cap", "gm" };

const char *desc_elem_kind_name(desc_elem_kind k)
{
    return kind_names[k];
}

/* ---- the declarations --------------------------------------------------- */

int desc_need_tokens(pstate *ps, int n, const char *usage)
{
    const text_line *ln = ps->ln;
    if (ln->ntok >= n)
        return LW_OK;
    const text_token *last = &ln->tok[ln->ntok - 1];
    ps->err->line = ln->number;
    ps->err->col = last->col + text_col(last->s, (int)strlen(last->s));
    text_error_source(ps->err, ln->raw);
    snprintf(ps->err->msg, sizeof ps->err->msg, "incomplete '%s' line; expected %s",
             ln->tok[0].s, usage);
    return LW_EINPUT;
}

int desc_too_many(pstate *ps, const char *what, int limit)
{
    return desc_at_tok(ps, &ps->ln->tok[0], "too many %s (limit %d)", what, limit);
}

/* param -> 'param' NAME '=' EXPR [spread] */
static int parse_param(pstate *ps)
{
    int rc = desc_need_tokens(ps, 2, "'param NAME = VALUE'");
    if (rc)
        return rc;
    desc *d = ps->d;
    if (desc_grow((void **)&d->params, &ps->caps[0], d->nparams, sizeof *d->params,
             DESC_MAX_PARAMS))
        return desc_too_many(ps, "params", DESC_MAX_PARAMS);
    const text_token *tk = &ps->ln->tok[1];
    const char *raw = ps->ln->raw;
    desc_param *p = &d->params[d->nparams];
    memset(p, 0, sizeof *p);
    size_t nl = strcspn(tk->s, "=");
    if (nl > DESC_MAX_NAME)
        nl = DESC_MAX_NAME + 1 < strlen(tk->s) ? DESC_MAX_NAME + 1 : nl;
    char name[DESC_MAX_NAME + 2];
    snprintf(name, sizeof name, "%.*s", (int)nl, tk->s);
    int off = tk->off + (int)strcspn(tk->s, "=");
    while (raw[off] == ' ' || raw[off] == '\t')
        off++;
    if (raw[off] != '=') {
        ps->err->line = ps->ln->number;
        ps->err->col = text_col(raw, off);
        text_error_source(ps->err, raw);
        snprintf(ps->err->msg, sizeof ps->err->msg,
                 "expected '=' after the param name: 'param %s = VALUE'", name);
        return LW_EINPUT;
    }
    if ((rc = desc_declare(ps, tk, name, SYM_PARAM, d->nparams)) != LW_OK)
        return rc;
    snprintf(p->name, sizeof p->name, "%.64s", name);
    p->at = (desc_pos){ ps->ln->number, tk->col };
    p->override = -1;
    off++;
    while (raw[off] == ' ' || raw[off] == '\t')
        off++;
    /* The symbol table points at p->name; register it before compiling so
     * self-reference reports "not yet" rather than "unknown". */
    d->nparams++;
    if (!raw[off]) {
        ps->err->line = ps->ln->number;
        ps->err->col = text_col(raw, off);
        text_error_source(ps->err, raw);
        snprintf(ps->err->msg, sizeof ps->err->msg, "expected a value after '='");
        return LW_EINPUT;
    }
    int ks = desc_spread_start(ps->ln, off);
    char text[TEXT_MAX_LINE + 1];
    int end = ks < ps->ln->ntok ? ps->ln->tok[ks].off : (int)strlen(raw);
    snprintf(text, sizeof text, "%.*s", end - off, raw + off);
    if (!text[strspn(text, " \t")])
        return desc_at_tok(ps, &ps->ln->tok[ks], "expected a value before '%s'", ps->ln->tok[ks].s);
    sym *self = desc_sym_find(&ps->syms, p->name);
    self->kind = SYM_LOOP; /* not usable inside its own definition */
    rc = desc_compile_at(ps, text, off, UNIT_ANY, &p->expr);
    if (!rc)
        rc = desc_parse_spread(ps, ks, &p->spread);
    self->kind = SYM_PARAM;
    if (rc == LW_EINPUT && strstr(ps->err->msg, "is not a param") &&
        strstr(ps->err->msg, p->name) == ps->err->msg + 1)
        snprintf(ps->err->msg, sizeof ps->err->msg, "param '%s' refers to itself", p->name);
    return rc;
}

static int is_field(const char *s)
{
    return !strncmp(s, "r=", 2) || !strncmp(s, "c=", 2);
}

/* A space inside a node field splits it into tokens, and the expression
 * parser would see only the first part ("expected ')'"). A field followed by
 * a token that cannot start a field and continues it (an operator at the
 * seam, an open bracket, a bare "r =") is reported as such, with the field
 * written without its spaces. */
static int field_split(pstate *ps, int k)
{
    const text_line *ln = ps->ln;
    const text_token *f = &ln->tok[k];
    if (k + 1 >= ln->ntok || is_field(ln->tok[k + 1].s))
        return LW_OK;
    const text_token *next = &ln->tok[k + 1];
    size_t fl = strlen(f->s);
    int open = 0;
    for (const char *c = f->s; *c; c++)
        open += (*c == '(') - (*c == ')');
    int bare = (!strcmp(f->s, "r") || !strcmp(f->s, "c")) && next->s[0] == '=';
    int seam = fl > 0 && (strchr("+-*/^(,=", f->s[fl - 1]) || strchr("+-*/^),", next->s[0]));
    if (!bare && !(is_field(f->s) && (seam || open > 0)))
        return LW_OK;
    char joined[96];
    size_t len = 0;
    for (int j = k; j < ln->ntok && (j == k || !is_field(ln->tok[j].s)); j++)
        for (const char *c = ln->tok[j].s; *c && len + 4 < sizeof joined; c++)
            joined[len++] = *c;
    if (len + 4 >= sizeof joined)
        memcpy(joined + len, "...", 3), len += 3;
    joined[len] = '\0';
    return desc_at_tok(ps, next, "a space inside the node field '%c=': a node field may not "
                       "contain "
                  "spaces; write '%s', or give the value a name with a param line", f->s[0],
                  joined);
}

/* node -> 'node' NAME ['r=' EXPR] ['c=' EXPR] */
static int parse_node(pstate *ps)
{
    int rc = desc_need_tokens(ps, 2, "'node NAME r=VALUE c=VALUE'");
    if (rc)
        return rc;
    desc *d = ps->d;
    if (desc_grow((void **)&d->nodes, &ps->caps[1], d->nnodes, sizeof *d->nodes, DESC_MAX_NODES))
        return desc_too_many(ps, "nodes", DESC_MAX_NODES);
    desc_node *n = &d->nodes[d->nnodes];
    memset(n, 0, sizeof *n);
    const text_token *tk = &ps->ln->tok[1];
    n->r_expr = n->c_expr = n->r_override = n->c_override = -1;
    n->at = (desc_pos){ ps->ln->number, tk->col };
    if (strlen(tk->s) <= DESC_MAX_NAME)
        snprintf(n->name, sizeof n->name, "%s", tk->s);
    if ((rc = desc_declare(ps, tk, tk->s, SYM_NODE, d->nnodes)) != LW_OK)
        return rc;
    d->nnodes++;
    for (int k = 2; k < ps->ln->ntok; k++) {
        const text_token *f = &ps->ln->tok[k];
        int is_r = !strncmp(f->s, "r=", 2), is_c = !strncmp(f->s, "c=", 2);
        if ((rc = field_split(ps, k)))
            return rc;
        if (!is_r && !is_c)
            return desc_at_tok(ps, f, "unknown node field '%s'; expected r=VALUE or c=VALUE "
                          "(no spaces inside the value)", f->s);
        int *slot = is_r ? &n->r_expr : &n->c_expr;
        if (*slot >= 0)
            return desc_at_tok(ps, f, "field '%c=' given twice", f->s[0]);
        if (!f->s[2])
            return desc_at_tok(ps, f, "expected a value after '%c='", f->s[0]);
        *(is_r ? &n->r_at : &n->c_at) = (desc_pos){ ps->ln->number, f->col + 2 };
        if ((rc = desc_compile_at(ps, f->s + 2, f->off + 2, is_r ? UNIT_OHM : UNIT_F, slot)))
            return rc;
    }
    return LW_OK;
}

static desc_elem *new_elem(pstate *ps, desc_elem_kind kind, int *rc)
{
    desc *d = ps->d;
    if (desc_grow((void **)&d->elems, &ps->caps[2], d->nelems, sizeof *d->elems, DESC_MAX_ELEMS)) {
        *rc = desc_too_many(ps, "elements", DESC_MAX_ELEMS);
        return NULL;
    }
    desc_elem *e = &d->elems[d->nelems];
    memset(e, 0, sizeof *e);
    e->kind = kind;
    e->override = -1;
    e->a_in = e->b_in = -1;
    const text_token *tk = &ps->ln->tok[1];
    e->at = (desc_pos){ ps->ln->number, tk->col };
    if (strlen(tk->s) <= DESC_MAX_NAME)
        snprintf(e->name, sizeof e->name, "%s", tk->s);
    if ((*rc = desc_declare(ps, tk, tk->s, SYM_ELEM, d->nelems)) != LW_OK)
        return NULL;
    d->nelems++;
    return e;
}

/* res -> 'res' NAME A B EXPR     cap -> 'cap' NAME A B EXPR */
static int parse_passive(pstate *ps, desc_elem_kind kind)
{
    int rc = desc_need_tokens(ps, 5, kind == ELEM_RES ? "'res NAME A B VALUE'"
                                                      : "'cap NAME A B VALUE'");
    if (rc)
        return rc;
    desc_elem *e = new_elem(ps, kind, &rc);
    if (!e)
        return rc;
    if ((rc = desc_node_ref(ps, 2, 1, &e->a, &e->a_in, &e->a_at)) ||
        (rc = desc_node_ref(ps, 3, 1, &e->b, &e->b_in, &e->b_at)))
        return rc;
    if (e->a == e->b && e->a_in == e->b_in)
        return desc_at_tok(ps, &ps->ln->tok[3], "both ends of '%s' are on '%s'; expected two "
                      "different nodes", e->name, ps->ln->tok[3].s);
    if (e->a == DESC_GND && e->b == DESC_GND) {
        /* an input with gnd or another input: no node takes the signal */
        const char *x = ps->ln->tok[e->a_in >= 0 ? 2 : 3].s;
        const char *y = ps->ln->tok[e->a_in >= 0 ? 3 : 2].s;
        if (e->a_in >= 0 && e->b_in >= 0)
            return desc_at_tok(ps, &ps->ln->tok[3], "'%s' joins input '%s' to input '%s'; an "
                          "element on an input must lead to a node", e->name, x, y);
        return desc_at_tok(ps, &ps->ln->tok[e->a_in >= 0 ? 3 : 2], "'%s' ties input '%s' to gnd; "
                      "an input is an ideal source, so this carries nothing into the network: "
                      "connect it to a node", e->name, x);
    }
    if (e->a == DESC_GND) { /* keep gnd (or the input) on the b side */
        e->a = e->b;
        e->b = DESC_GND;
        e->b_in = e->a_in;
        e->a_in = -1;
        desc_pos t = e->a_at;
        e->a_at = e->b_at;
        e->b_at = t;
    }
    return desc_compile_rest(ps, 4, kind == ELEM_RES ? UNIT_OHM : UNIT_F, &e->expr, &e->v_at);
}

/* gm -> 'gm' NAME IN '->' OUT EXPR */
static int parse_gm(pstate *ps)
{
    const text_line *ln = ps->ln;
    for (int k = 2; k < ln->ntok && k < 5; k++)
        if (strstr(ln->tok[k].s, "->") && strcmp(ln->tok[k].s, "->"))
            return desc_at_tok(ps, &ln->tok[k], "'%s': separate '->' from the node names with "
                          "spaces, as in 'IN -> OUT'", ln->tok[k].s);
    int rc = desc_need_tokens(ps, 6, "'gm NAME IN -> OUT VALUE'");
    if (rc)
        return rc;
    if (strcmp(ln->tok[3].s, "->"))
        return desc_at_tok(ps, &ln->tok[3], "expected '->' between the input and output nodes, "
                      "got '%s'", ln->tok[3].s);
    desc_elem *e = new_elem(ps, ELEM_GM, &rc);
    if (!e)
        return rc;
    if ((rc = desc_node_ref(ps, 2, 1, &e->a, &e->a_in, &e->a_at)) ||
        (rc = desc_node_ref(ps, 4, 1, &e->b, &e->b_in, &e->b_at)))
        return rc;
    if (e->b_in >= 0)
        return desc_at_tok(ps, &ln->tok[4], "'%s' is an input (an ideal voltage source): a gm "
                      "cannot drive current into it; expected a node as the gm's OUT",
                      ln->tok[4].s);
    if (e->a_in >= 0 && e->b == DESC_GND)
        return desc_at_tok(ps, &ln->tok[4], "a gm from input '%s' into gnd does nothing; "
                           "expected a "
                      "node as the gm's OUT", ln->tok[2].s);
    if ((e->a == DESC_GND && e->a_in < 0) || e->b == DESC_GND)
        return desc_at_tok(ps, &ln->tok[e->a == DESC_GND && e->a_in < 0 ? 2 : 4],
                      "a gm between a node and gnd does nothing; expected two declared nodes");
    return desc_compile_rest(ps, 5, UNIT_S, &e->expr, &e->v_at);
}

/* input -> 'input' NAME */
static int parse_input(pstate *ps)
{
    int rc = desc_need_tokens(ps, 2, "'input NAME'");
    if (rc)
        return rc;
    desc *d = ps->d;
    const text_line *ln = ps->ln;
    if (ln->ntok > 2)
        return desc_at_tok(ps, &ln->tok[2], "unexpected '%s'; 'input' takes a name and nothing "
                           "else "
                      "(an input is an ideal source: it has no r= or c=)", ln->tok[2].s);
    if (desc_grow((void **)&d->inputs, &ps->caps[4], d->ninputs, sizeof *d->inputs,
                  DESC_MAX_INPUTS))
        return desc_too_many(ps, "inputs", DESC_MAX_INPUTS);
    desc_input *x = &d->inputs[d->ninputs];
    memset(x, 0, sizeof *x);
    x->at = (desc_pos){ ln->number, ln->tok[1].col };
    if (strlen(ln->tok[1].s) <= DESC_MAX_NAME)
        snprintf(x->name, sizeof x->name, "%s", ln->tok[1].s);
    if ((rc = desc_declare(ps, &ln->tok[1], ln->tok[1].s, SYM_INPUT, d->ninputs)) != LW_OK)
        return rc;
    d->ninputs++;
    return LW_OK;
}

static int parse_line(pstate *ps)
{
    static const char *const kw[] = { "param", "node", "input", "res", "cap", "gm", "loop",
                                      "break" };
    const char *k = ps->ln->tok[0].s;
    if (!strcmp(k, "param")) return parse_param(ps);
    if (!strcmp(k, "node")) return parse_node(ps);
    if (!strcmp(k, "input")) return parse_input(ps);
    if (!strcmp(k, "res")) return parse_passive(ps, ELEM_RES);
    if (!strcmp(k, "cap")) return parse_passive(ps, ELEM_CAP);
    if (!strcmp(k, "gm")) return parse_gm(ps);
    if (!strcmp(k, "loop")) return desc_parse_loop(ps);
    if (!strcmp(k, "break")) return desc_parse_break(ps);
    const char *best = lw_closest(k, kw, 8);
    if (best)
        return desc_at_tok(ps, &ps->ln->tok[0], "unknown keyword '%s' (did you mean '%s'?)", k,
                           best);
    return desc_at_tok(ps, &ps->ln->tok[0], "unknown keyword '%s'; expected param, node, "
                       "input, res, "
                  "cap, gm, loop or break", k);
}

/* ---- whole-file checks ------------------------------------------------- */

static int keep_lines(pstate *ps)
{
    desc *d = ps->d;
    int n = ps->t->total_lines;
    d->lines = calloc((size_t)n + 2, sizeof *d->lines);
    if (!d->lines)
        return lw_error_set(ps->err, LW_ENOMEM, "out of memory");
    d->total_lines = n;
    for (int k = 0; k < ps->t->nlines; k++) {
        const text_line *ln = &ps->t->lines[k];
        size_t len = strlen(ln->raw);
        if (len >= LW_SRC_MAX)
            len = LW_SRC_MAX - 1;
        d->lines[ln->number] = malloc(len + 1);
        if (!d->lines[ln->number])
            return lw_error_set(ps->err, LW_ENOMEM, "out of memory");
        memcpy(d->lines[ln->number], ln->raw, len);
        d->lines[ln->number][len] = '\0';
    }
    return LW_OK;
}

static int collect_param_names(pstate *ps)
{
    const text_file *t = ps->t;
    ps->later_params = malloc(sizeof(char *) * (size_t)(t->nlines + 1));
    if (!ps->later_params)
        return LW_ENOMEM;
    for (int k = 0; k < t->nlines; k++) {
        const text_line *ln = &t->lines[k];
        if (ln->ntok >= 2 && !strcmp(ln->tok[0].s, "param"))
            ps->later_params[ps->nlater++] = ln->tok[1].s;
    }
    return LW_OK;
}

/* Every input drives something: an input with no element on it is a typo
 * or a leftover, and a response from it would be identically zero. */
static int inputs_attached(pstate *ps)
{
    const desc *d = ps->d;
    for (int x = 0; x < d->ninputs; x++) {
        int used = 0;
        for (int e = 0; e < d->nelems && !used; e++)
            used = d->elems[e].a_in == x || d->elems[e].b_in == x;
        if (!used) {
            lw_error_at(ps->err, d->inputs[x].at.line, d->inputs[x].at.col, "input '%s' has "
                        "nothing attached; expected a res, cap or gm connecting it to a node",
                        d->inputs[x].name);
            desc_error_source(d, ps->err);
            return LW_EINPUT;
        }
    }
    return LW_OK;
}

static int parse_all(pstate *ps)
{
    const text_file *t = ps->t;
    int rc;
    if ((rc = keep_lines(ps)) || (rc = collect_param_names(ps)))
        return rc == LW_ENOMEM ? lw_error_set(ps->err, LW_ENOMEM, "out of memory") : rc;
    for (int k = 0; k < t->nlines; k++) {
        ps->ln = &t->lines[k];
        if ((rc = parse_line(ps)) != LW_OK)
            return rc;
    }
    if (ps->d->nnodes == 0)
        return lw_error_at(ps->err, 1, 1, t->nlines == 0
                           ? "empty file; expected node, gm and loop lines"
                           : "no node declared; expected at least one 'node' line");
    if ((rc = inputs_attached(ps)) != LW_OK)
        return rc;
    for (int l = 0; l < ps->d->nloops; l++) {
        const text_line *ln = NULL;
        for (int k = 0; k < t->nlines; k++)
            if (t->lines[k].number == ps->d->loops[l].at.line)
                ln = &t->lines[k];
        if ((rc = desc_find_hops(ps, &ps->d->loops[l], ln)) != LW_OK)
            return rc;
    }
    return desc_break_choose(ps->d, ps->err);
}

int desc_parse(const text_file *t, const char *path, desc **out, lw_error *err)
{
    *out = NULL;
    desc *d = calloc(1, sizeof *d);
    if (!d || !(d->pool = expr_pool_new()) || !(d->path = strdup(path))) {
        desc_free(d);
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    d->brk = -1;
    d->brk_node = -1;
    pstate ps = { .d = d, .t = t, .err = err };
    int rc = parse_all(&ps);
    for (size_t k = 0; k < ps.syms.cap; k++)
        free(ps.syms.s[k].name);
    free(ps.syms.s);
    free(ps.later_params);
    if (rc == LW_OK && !(d->pvals = calloc((size_t)d->nparams + 1, sizeof(double))))
        rc = lw_error_set(err, LW_ENOMEM, "out of memory");
    if (rc == LW_OK)
        desc_units_infer(d);
    if (rc != LW_OK) {
        desc_free(d);
        return rc;
    }
    *out = d;
    return LW_OK;
}

void desc_free(desc *d)
{
    if (!d)
        return;
    for (int l = 0; l < d->nloops; l++) {
        desc_loop *L = &d->loops[l];
        for (int j = 0; L->hops && j < L->nnodes; j++)
            free(L->hops[j]);
        free(L->hops);
        free(L->nhops);
        free(L->nodes);
        free(L->node_at);
    }
    for (int k = 0; d->lines && k <= d->total_lines; k++)
        free(d->lines[k]);
    free(d->lines);
    free(d->loops);
    free(d->inputs);
    free(d->params);
    free(d->pvals);
    free(d->nodes);
    free(d->elems);
    expr_pool_free(d->pool);
    free(d->path);
    free(d);
}

void desc_error_source(const desc *d, lw_error *err)
{
    if (err->line > 0 && err->line <= d->total_lines && d->lines[err->line])
        snprintf(err->src, sizeof err->src, "%s", d->lines[err->line]);
}

int desc_find_node(const desc *d, const char *name)
{
    for (int k = 0; k < d->nnodes; k++)
        if (!strcmp(d->nodes[k].name, name))
            return k;
    return -1;
}

int desc_find_input(const desc *d, const char *name)
{
    for (int k = 0; k < d->ninputs; k++)
        if (!strcmp(d->inputs[k].name, name))
            return k;
    return -1;
}

int desc_find_elem(const desc *d, const char *name)
{
    for (int k = 0; k < d->nelems; k++)
        if (!strcmp(d->elems[k].name, name))
            return k;
    return -1;
}

const char *desc_elem_end(const desc *d, const desc_elem *e, int b_end)
{
    int node = b_end ? e->b : e->a, in = b_end ? e->b_in : e->a_in;
    if (node != DESC_GND)
        return d->nodes[node].name;
    return in >= 0 ? d->inputs[in].name : "gnd";
}
