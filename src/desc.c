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
#include "loopwise/desc.h"

#include <math.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

/* Keep in step with desc_elem_kind. */
static const char *const kind_names[] = { "res", "cap", "gm" };

const char *desc_elem_kind_name(desc_elem_kind k)
{
    return kind_names[k];
}

/* ---- one namespace: a small open-addressing hash ----------------------- */

/* Keep sym_names in step. */
typedef enum { SYM_PARAM, SYM_NODE, SYM_ELEM, SYM_LOOP, SYM_INPUT } sym_kind;
static const char *const sym_names[] = { "a param", "a node", "an element", "a loop",
                                         "an input" };

typedef struct sym {
    char *name;         /* owned copy */
    sym_kind kind;
    int index;
    int line;
} sym;

typedef struct symtab {
    sym *s;
    size_t cap, len;
} symtab;

static uint64_t hash_name(const char *s)
{
    uint64_t h = 1469598103934665603ull;
    while (*s)
        h = (h ^ (unsigned char)*s++) * 1099511628211ull;
    return h;
}

static sym *sym_find(const symtab *t, const char *name)
{
    if (!t->cap)
        return NULL;
    for (size_t k = hash_name(name) & (t->cap - 1);; k = (k + 1) & (t->cap - 1)) {
        if (!t->s[k].name)
            return NULL;
        if (!strcmp(t->s[k].name, name))
            return &t->s[k];
    }
}

static int sym_add(symtab *t, sym entry)
{
    if (2 * (t->len + 1) > t->cap) {
        size_t cap = t->cap ? 2 * t->cap : 256;
        sym *ns = calloc(cap, sizeof *ns);
        if (!ns)
            return LW_ENOMEM;
        for (size_t k = 0; k < t->cap; k++) {
            if (!t->s[k].name)
                continue;
            size_t j = hash_name(t->s[k].name) & (cap - 1);
            while (ns[j].name)
                j = (j + 1) & (cap - 1);
            ns[j] = t->s[k];
        }
        free(t->s);
        t->s = ns;
        t->cap = cap;
    }
    if (!(entry.name = strdup(entry.name)))
        return LW_ENOMEM;
    size_t j = hash_name(entry.name) & (t->cap - 1);
    while (t->s[j].name)
        j = (j + 1) & (t->cap - 1);
    t->s[j] = entry;
    t->len++;
    return LW_OK;
}

/* ---- parser state ------------------------------------------------------ */

typedef struct pstate {
    desc *d;
    symtab syms;
    const text_file *t;
    const text_line *ln;       /* line being parsed */
    lw_error *err;
    int caps[5];               /* allocated lengths of params, nodes, elems, loops, inputs */
    const text_line *brk_line;
    const char **later_params; /* every param name in the file, for "declared later" */
    int nlater;
} pstate;

static int at_tok(pstate *ps, const text_token *tk, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));

static int at_tok(pstate *ps, const text_token *tk, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(ps->err->msg, sizeof ps->err->msg, fmt, ap);
    va_end(ap);
    ps->err->line = ps->ln->number;
    ps->err->col = tk ? tk->col : 1;
    text_error_source(ps->err, ps->ln->raw);
    return LW_EINPUT;
}

static int grow(void **arr, int *cap, int len, size_t size, int limit)
{
    if (len < *cap)
        return LW_OK;
    if (len >= limit)
        return LW_EINPUT;
    int ncap = *cap ? 2 * *cap : 16;
    void *n = realloc(*arr, size * (size_t)ncap);
    if (!n)
        return LW_ENOMEM;
    *arr = n;
    *cap = ncap;
    return LW_OK;
}

static int valid_name(const char *s)
{
    if (!((*s >= 'A' && *s <= 'Z') || (*s >= 'a' && *s <= 'z') || *s == '_'))
        return 0;
    for (s++; *s; s++)
        if (!((*s >= 'A' && *s <= 'Z') || (*s >= 'a' && *s <= 'z') || *s == '_' ||
              (*s >= '0' && *s <= '9')))
            return 0;
    return 1;
}

/* Checks a new name and enters it; points at tk on failure. */
static int declare(pstate *ps, const text_token *tk, const char *name, sym_kind kind, int index)
{
    if (strlen(name) > DESC_MAX_NAME)
        return at_tok(ps, tk, "name '%.20s...' is longer than %d characters", name, DESC_MAX_NAME);
    if (!valid_name(name))
        return at_tok(ps, tk, "'%s' is not a valid name; expected a letter or '_' followed by "
                      "letters, digits or '_'", name);
    if (expr_is_reserved(name) || !strcmp(name, "negative") || !strcmp(name, "positive"))
        return at_tok(ps, tk, "'%s' is reserved and cannot be used as a name", name);
    const sym *old = sym_find(&ps->syms, name);
    if (old)
        return at_tok(ps, tk, "'%s' is already declared on line %d as %s", name, old->line,
                      sym_names[old->kind]);
    return sym_add(&ps->syms, (sym){ (char *)name, kind, index, ps->ln->number }) == LW_OK
               ? LW_OK : lw_error_set(ps->err, LW_ENOMEM, "out of memory");
}

/* ---- names inside expressions ----------------------------------------- */

static int param_lookup(void *ctx, const char *name)
{
    pstate *ps = ctx;
    const sym *s = sym_find(&ps->syms, name);
    if (s)
        return s->kind == SYM_PARAM ? s->index : -2;
    for (int k = 0; k < ps->nlater; k++)
        if (!strcmp(ps->later_params[k], name))
            return -3;
    return -1;
}

static const char *param_suggest(void *ctx, const char *name)
{
    pstate *ps = ctx;
    int n = ps->d->nparams;
    const char **c = malloc(sizeof *c * (size_t)(n + 1));
    if (!c)
        return NULL;
    for (int k = 0; k < n; k++)
        c[k] = ps->d->params[k].name;
    const char *best = lw_closest(name, c, n);
    free(c);
    return best;
}

static int compile_at(pstate *ps, const char *text, int off, expr_unit unit, int *h)
{
    expr_names names = { param_lookup, param_suggest, ps };
    return expr_compile(ps->d->pool, text, unit, &names, ps->ln->number,
                        text_col(ps->ln->raw, off), ps->ln->raw, h, ps->err);
}

/* The rest of the line from token k on, as an expression. */
static int compile_rest(pstate *ps, int k, expr_unit unit, int *h, desc_pos *at)
{
    const text_token *tk = &ps->ln->tok[k];
    at->line = ps->ln->number;
    at->col = tk->col;
    return compile_at(ps, ps->ln->raw + tk->off, tk->off, unit, h);
}

/* ---- node references --------------------------------------------------- */

static const char *node_suggest(pstate *ps, const char *name)
{
    int n = ps->d->nnodes;
    const char **c = malloc(sizeof *c * (size_t)(n + 1));
    if (!c)
        return NULL;
    for (int k = 0; k < n; k++)
        c[k] = ps->d->nodes[k].name;
    const char *best = lw_closest(name, c, n);
    free(c);
    return best;
}

/* node-ref -> NAME | 'gnd' | INPUT
 * An input stands where gnd may (SPEC section 6): *idx is then DESC_GND and
 * *in the input's index; in is NULL where no input may stand (a loop line). */
static int node_ref(pstate *ps, int k, int allow_gnd, int *idx, int *in, desc_pos *at)
{
    const text_token *tk = &ps->ln->tok[k];
    at->line = ps->ln->number;
    at->col = tk->col;
    if (in)
        *in = -1;
    if (strstr(tk->s, "->"))
        return at_tok(ps, tk, "'%s': separate '->' from the node names with spaces", tk->s);
    if (!strcmp(tk->s, "gnd")) {
        if (!allow_gnd)
            return at_tok(ps, tk, "'gnd' cannot be part of a loop; expected a declared node");
        *idx = DESC_GND;
        return LW_OK;
    }
    const sym *s = sym_find(&ps->syms, tk->s);
    if (s && s->kind == SYM_NODE) {
        *idx = s->index;
        return LW_OK;
    }
    if (s && s->kind == SYM_INPUT) {
        if (!in)
            return at_tok(ps, tk, "'%s' is an input (a driven node), and a loop runs through "
                          "nodes only; expected a declared node", tk->s);
        *idx = DESC_GND;
        *in = s->index;
        return LW_OK;
    }
    if (s)
        return at_tok(ps, tk, "'%s' is %s, not a node", tk->s, sym_names[s->kind]);
    const char *best = node_suggest(ps, tk->s);
    if (best)
        return at_tok(ps, tk, "unknown node '%s' (did you mean '%s'?)", tk->s, best);
    return at_tok(ps, tk, "unknown node '%s'; declare it with a 'node' line first", tk->s);
}

/* ---- the declarations --------------------------------------------------- */

static int need_tokens(pstate *ps, int n, const char *usage)
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

static int too_many(pstate *ps, const char *what, int limit)
{
    return at_tok(ps, &ps->ln->tok[0], "too many %s (limit %d)", what, limit);
}

/* bound -> ['+'|'-'] NUMBER '%' | EXPR      (no spaces inside) */
static int parse_bound(pstate *ps, const text_token *tk, const char *text, int off,
                       desc_bound *b)
{
    size_t len = strlen(text);
    b->expr = -1;
    b->is_pct = len > 0 && text[len - 1] == '%';
    if (!b->is_pct)
        return compile_at(ps, text, off, UNIT_ANY, &b->expr);
    char num[64];
    int neg = text[0] == '-', skip = text[0] == '-' || text[0] == '+';
    if (len - 1 - (size_t)skip == 0 || len >= sizeof num)
        return at_tok(ps, tk, "'%s': expected a percentage such as 5%% or -10%%", tk->s);
    memcpy(num, text + skip, len - 1 - (size_t)skip);
    num[len - 1 - (size_t)skip] = '\0';
    lw_error e;
    if (expr_number(num, UNIT_NONE, &b->pct, &e) != LW_OK)
        return at_tok(ps, tk, "'%s': expected a percentage such as 5%% or -10%%", tk->s);
    if (neg)
        b->pct = -b->pct;
    return LW_OK;
}

/* range -> bound '..' bound */
static int parse_range(pstate *ps, const text_token *tk, desc_bound *lo, desc_bound *hi)
{
    const char *dots = strstr(tk->s, "..");
    if (!dots || dots == tk->s || !dots[2])
        return at_tok(ps, tk, "'%s': expected a range LO..HI (no spaces), e.g. 4.5k..5.5k or "
                      "-10%%..+10%%", tk->s);
    char left[TEXT_MAX_LINE + 1];
    size_t l = (size_t)(dots - tk->s);
    memcpy(left, tk->s, l);
    left[l] = '\0';
    int rc = parse_bound(ps, tk, left, tk->off, lo);
    if (!rc)
        rc = parse_bound(ps, tk, dots + 2, tk->off + (int)l + 2, hi);
    return rc;
}

/* spread -> {'corners' range | 'normal' bound | 'uniform' range} */
static int parse_spread(pstate *ps, int k, desc_spread *sp)
{
    const text_line *ln = ps->ln;
    for (; k < ln->ntok; k += 2) {
        const text_token *kw = &ln->tok[k];
        int is_c = !strcmp(kw->s, "corners"), is_n = !strcmp(kw->s, "normal"),
            is_u = !strcmp(kw->s, "uniform");
        if (!is_c && !is_n && !is_u)
            return at_tok(ps, kw, "unexpected '%s'; a param's spread is 'corners LO..HI', "
                          "'normal SIGMA' or 'uniform LO..HI'", kw->s);
        if (k + 1 >= ln->ntok)
            return at_tok(ps, kw, "'%s' needs a value after it", kw->s);
        const text_token *v = &ln->tok[k + 1];
        desc_pos at = { ln->number, v->col };
        int rc;
        if (is_c) {
            if (sp->has_range)
                return at_tok(ps, kw, "'corners' given twice");
            sp->has_range = 1;
            sp->range_at = at;
            rc = parse_range(ps, v, &sp->lo, &sp->hi);
        } else {
            if (sp->dist != DIST_NONE)
                return at_tok(ps, kw, "a second distribution; a param takes 'normal' or "
                              "'uniform', once");
            sp->dist = is_n ? DIST_NORMAL : DIST_UNIFORM;
            sp->dist_at = at;
            rc = is_n ? parse_bound(ps, v, v->s, v->off, &sp->a)
                      : parse_range(ps, v, &sp->a, &sp->b);
        }
        if (rc)
            return rc;
    }
    return LW_OK;
}

/* First token of a spread clause on the param line, or ntok. */
static int spread_start(const text_line *ln, int off)
{
    for (int k = 2; k < ln->ntok; k++)
        if (ln->tok[k].off > off && (!strcmp(ln->tok[k].s, "corners") ||
                                     !strcmp(ln->tok[k].s, "normal") ||
                                     !strcmp(ln->tok[k].s, "uniform")))
            return k;
    return ln->ntok;
}

/* param -> 'param' NAME '=' EXPR [spread] */
static int parse_param(pstate *ps)
{
    int rc = need_tokens(ps, 2, "'param NAME = VALUE'");
    if (rc)
        return rc;
    desc *d = ps->d;
    if (grow((void **)&d->params, &ps->caps[0], d->nparams, sizeof *d->params,
             DESC_MAX_PARAMS))
        return too_many(ps, "params", DESC_MAX_PARAMS);
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
    if ((rc = declare(ps, tk, name, SYM_PARAM, d->nparams)) != LW_OK)
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
    int ks = spread_start(ps->ln, off);
    char text[TEXT_MAX_LINE + 1];
    int end = ks < ps->ln->ntok ? ps->ln->tok[ks].off : (int)strlen(raw);
    snprintf(text, sizeof text, "%.*s", end - off, raw + off);
    if (!text[strspn(text, " \t")])
        return at_tok(ps, &ps->ln->tok[ks], "expected a value before '%s'", ps->ln->tok[ks].s);
    sym *self = sym_find(&ps->syms, p->name);
    self->kind = SYM_LOOP; /* not usable inside its own definition */
    rc = compile_at(ps, text, off, UNIT_ANY, &p->expr);
    if (!rc)
        rc = parse_spread(ps, ks, &p->spread);
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
    return at_tok(ps, next, "a space inside the node field '%c=': a node field may not contain "
                  "spaces; write '%s', or give the value a name with a param line", f->s[0],
                  joined);
}

/* node -> 'node' NAME ['r=' EXPR] ['c=' EXPR] */
static int parse_node(pstate *ps)
{
    int rc = need_tokens(ps, 2, "'node NAME r=VALUE c=VALUE'");
    if (rc)
        return rc;
    desc *d = ps->d;
    if (grow((void **)&d->nodes, &ps->caps[1], d->nnodes, sizeof *d->nodes, DESC_MAX_NODES))
        return too_many(ps, "nodes", DESC_MAX_NODES);
    desc_node *n = &d->nodes[d->nnodes];
    memset(n, 0, sizeof *n);
    const text_token *tk = &ps->ln->tok[1];
    n->r_expr = n->c_expr = n->r_override = n->c_override = -1;
    n->at = (desc_pos){ ps->ln->number, tk->col };
    if (strlen(tk->s) <= DESC_MAX_NAME)
        snprintf(n->name, sizeof n->name, "%s", tk->s);
    if ((rc = declare(ps, tk, tk->s, SYM_NODE, d->nnodes)) != LW_OK)
        return rc;
    d->nnodes++;
    for (int k = 2; k < ps->ln->ntok; k++) {
        const text_token *f = &ps->ln->tok[k];
        int is_r = !strncmp(f->s, "r=", 2), is_c = !strncmp(f->s, "c=", 2);
        if ((rc = field_split(ps, k)))
            return rc;
        if (!is_r && !is_c)
            return at_tok(ps, f, "unknown node field '%s'; expected r=VALUE or c=VALUE "
                          "(no spaces inside the value)", f->s);
        int *slot = is_r ? &n->r_expr : &n->c_expr;
        if (*slot >= 0)
            return at_tok(ps, f, "field '%c=' given twice", f->s[0]);
        if (!f->s[2])
            return at_tok(ps, f, "expected a value after '%c='", f->s[0]);
        *(is_r ? &n->r_at : &n->c_at) = (desc_pos){ ps->ln->number, f->col + 2 };
        if ((rc = compile_at(ps, f->s + 2, f->off + 2, is_r ? UNIT_OHM : UNIT_F, slot)))
            return rc;
    }
    return LW_OK;
}

static desc_elem *new_elem(pstate *ps, desc_elem_kind kind, int *rc)
{
    desc *d = ps->d;
    if (grow((void **)&d->elems, &ps->caps[2], d->nelems, sizeof *d->elems, DESC_MAX_ELEMS)) {
        *rc = too_many(ps, "elements", DESC_MAX_ELEMS);
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
    if ((*rc = declare(ps, tk, tk->s, SYM_ELEM, d->nelems)) != LW_OK)
        return NULL;
    d->nelems++;
    return e;
}

/* res -> 'res' NAME A B EXPR     cap -> 'cap' NAME A B EXPR */
static int parse_passive(pstate *ps, desc_elem_kind kind)
{
    int rc = need_tokens(ps, 5, kind == ELEM_RES ? "'res NAME A B VALUE'" : "'cap NAME A B VALUE'");
    if (rc)
        return rc;
    desc_elem *e = new_elem(ps, kind, &rc);
    if (!e)
        return rc;
    if ((rc = node_ref(ps, 2, 1, &e->a, &e->a_in, &e->a_at)) ||
        (rc = node_ref(ps, 3, 1, &e->b, &e->b_in, &e->b_at)))
        return rc;
    if (e->a == e->b && e->a_in == e->b_in)
        return at_tok(ps, &ps->ln->tok[3], "both ends of '%s' are on '%s'; expected two "
                      "different nodes", e->name, ps->ln->tok[3].s);
    if (e->a == DESC_GND && e->b == DESC_GND) {
        /* an input with gnd or another input: no node takes the signal */
        const char *x = ps->ln->tok[e->a_in >= 0 ? 2 : 3].s;
        const char *y = ps->ln->tok[e->a_in >= 0 ? 3 : 2].s;
        if (e->a_in >= 0 && e->b_in >= 0)
            return at_tok(ps, &ps->ln->tok[3], "'%s' joins input '%s' to input '%s'; an "
                          "element on an input must lead to a node", e->name, x, y);
        return at_tok(ps, &ps->ln->tok[e->a_in >= 0 ? 3 : 2], "'%s' ties input '%s' to gnd; "
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
    return compile_rest(ps, 4, kind == ELEM_RES ? UNIT_OHM : UNIT_F, &e->expr, &e->v_at);
}

/* gm -> 'gm' NAME IN '->' OUT EXPR */
static int parse_gm(pstate *ps)
{
    const text_line *ln = ps->ln;
    for (int k = 2; k < ln->ntok && k < 5; k++)
        if (strstr(ln->tok[k].s, "->") && strcmp(ln->tok[k].s, "->"))
            return at_tok(ps, &ln->tok[k], "'%s': separate '->' from the node names with "
                          "spaces, as in 'IN -> OUT'", ln->tok[k].s);
    int rc = need_tokens(ps, 6, "'gm NAME IN -> OUT VALUE'");
    if (rc)
        return rc;
    if (strcmp(ln->tok[3].s, "->"))
        return at_tok(ps, &ln->tok[3], "expected '->' between the input and output nodes, "
                      "got '%s'", ln->tok[3].s);
    desc_elem *e = new_elem(ps, ELEM_GM, &rc);
    if (!e)
        return rc;
    if ((rc = node_ref(ps, 2, 1, &e->a, &e->a_in, &e->a_at)) ||
        (rc = node_ref(ps, 4, 1, &e->b, &e->b_in, &e->b_at)))
        return rc;
    if (e->b_in >= 0)
        return at_tok(ps, &ln->tok[4], "'%s' is an input (an ideal voltage source): a gm "
                      "cannot drive current into it; expected a node as the gm's OUT",
                      ln->tok[4].s);
    if (e->a_in >= 0 && e->b == DESC_GND)
        return at_tok(ps, &ln->tok[4], "a gm from input '%s' into gnd does nothing; expected a "
                      "node as the gm's OUT", ln->tok[2].s);
    if ((e->a == DESC_GND && e->a_in < 0) || e->b == DESC_GND)
        return at_tok(ps, &ln->tok[e->a == DESC_GND && e->a_in < 0 ? 2 : 4],
                      "a gm between a node and gnd does nothing; expected two declared nodes");
    return compile_rest(ps, 5, UNIT_S, &e->expr, &e->v_at);
}

/* loop -> 'loop' NAME ('negative'|'positive') N1 N2 ... Nk */
static int parse_loop(pstate *ps)
{
    int rc = need_tokens(ps, 4, "'loop NAME negative|positive NODE NODE ...'");
    if (rc)
        return rc;
    desc *d = ps->d;
    const text_line *ln = ps->ln;
    if (grow((void **)&d->loops, &ps->caps[3], d->nloops, sizeof *d->loops, DESC_MAX_LOOPS))
        return too_many(ps, "loops", DESC_MAX_LOOPS);
    desc_loop *L = &d->loops[d->nloops];
    memset(L, 0, sizeof *L);
    L->at = (desc_pos){ ln->number, ln->tok[0].col };
    if (strlen(ln->tok[1].s) <= DESC_MAX_NAME)
        snprintf(L->name, sizeof L->name, "%s", ln->tok[1].s);
    if ((rc = declare(ps, &ln->tok[1], ln->tok[1].s, SYM_LOOP, d->nloops)) != LW_OK)
        return rc;
    d->nloops++;
    const char *sg = ln->tok[2].s;
    if (strcmp(sg, "negative") && strcmp(sg, "positive"))
        return at_tok(ps, &ln->tok[2], "unknown loop sign '%s'; expected negative or positive", sg);
    L->negative = sg[0] == 'n';
    L->sign_at = (desc_pos){ ln->number, ln->tok[2].col };
    int k = ln->ntok - 3;
    L->nodes = calloc((size_t)k, sizeof *L->nodes);
    L->node_at = calloc((size_t)k, sizeof *L->node_at);
    if (!L->nodes || !L->node_at)
        return lw_error_set(ps->err, LW_ENOMEM, "out of memory");
    for (int j = 0; j < k; j++) {
        if ((rc = node_ref(ps, 3 + j, 0, &L->nodes[j], NULL, &L->node_at[j])))
            return rc;
        L->nnodes++;
        for (int i = 0; i < j; i++)
            if (L->nodes[i] == L->nodes[j])
                return at_tok(ps, &ln->tok[3 + j], "node '%s' appears twice in loop '%s'; "
                              "a loop visits each node once", ln->tok[3 + j].s, L->name);
    }
    return LW_OK;
}

/* input -> 'input' NAME */
static int parse_input(pstate *ps)
{
    int rc = need_tokens(ps, 2, "'input NAME'");
    if (rc)
        return rc;
    desc *d = ps->d;
    const text_line *ln = ps->ln;
    if (ln->ntok > 2)
        return at_tok(ps, &ln->tok[2], "unexpected '%s'; 'input' takes a name and nothing else "
                      "(an input is an ideal source: it has no r= or c=)", ln->tok[2].s);
    if (grow((void **)&d->inputs, &ps->caps[4], d->ninputs, sizeof *d->inputs, DESC_MAX_INPUTS))
        return too_many(ps, "inputs", DESC_MAX_INPUTS);
    desc_input *x = &d->inputs[d->ninputs];
    memset(x, 0, sizeof *x);
    x->at = (desc_pos){ ln->number, ln->tok[1].col };
    if (strlen(ln->tok[1].s) <= DESC_MAX_NAME)
        snprintf(x->name, sizeof x->name, "%s", ln->tok[1].s);
    if ((rc = declare(ps, &ln->tok[1], ln->tok[1].s, SYM_INPUT, d->ninputs)) != LW_OK)
        return rc;
    d->ninputs++;
    return LW_OK;
}

/* break -> 'break' NAME      (a gm or a node; resolved in desc_break.c) */
static int parse_break(pstate *ps)
{
    int rc = need_tokens(ps, 2, "'break NAME' naming a gm or a node");
    if (rc)
        return rc;
    const text_line *ln = ps->ln;
    if (ln->ntok > 2)
        return at_tok(ps, &ln->tok[2], "unexpected '%s'; 'break' takes one name, a gm or a node",
                      ln->tok[2].s);
    if (ps->brk_line)
        return at_tok(ps, &ln->tok[0], "a second 'break' line; the first is on line %d",
                      ps->brk_line->number);
    ps->brk_line = ln;
    ps->d->brk_at = (desc_pos){ ln->number, ln->tok[0].col };
    return desc_break_name(ps->d, ln->tok[1].s, ln->number, ln->tok[1].col, ln->raw, ps->err);
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
    if (!strcmp(k, "loop")) return parse_loop(ps);
    if (!strcmp(k, "break")) return parse_break(ps);
    const char *best = lw_closest(k, kw, 8);
    if (best)
        return at_tok(ps, &ps->ln->tok[0], "unknown keyword '%s' (did you mean '%s'?)", k, best);
    return at_tok(ps, &ps->ln->tok[0], "unknown keyword '%s'; expected param, node, input, res, "
                  "cap, gm, loop or break", k);
}

/* ---- whole-file checks ------------------------------------------------- */

/* Hop N(j) -> N(j+1): every gm from N(j) to N(j+1); else a res or cap between them. */
static int find_hops(pstate *ps, desc_loop *L, const text_line *loop_line)
{
    desc *d = ps->d;
    L->hops = calloc((size_t)L->nnodes, sizeof *L->hops);
    L->nhops = calloc((size_t)L->nnodes, sizeof *L->nhops);
    if (!L->hops || !L->nhops)
        return lw_error_set(ps->err, LW_ENOMEM, "out of memory");
    for (int j = 0; j < L->nnodes; j++) {
        int from = L->nodes[j], to = L->nodes[(j + 1) % L->nnodes];
        int n = 0;
        L->hops[j] = malloc(sizeof(int) * (size_t)(d->nelems + 1));
        if (!L->hops[j])
            return lw_error_set(ps->err, LW_ENOMEM, "out of memory");
        for (int e = 0; e < d->nelems; e++)
            if (d->elems[e].kind == ELEM_GM && d->elems[e].a == from && d->elems[e].b == to)
                L->hops[j][n++] = e;
        for (int e = 0; n == 0 && e < d->nelems; e++) {
            const desc_elem *el = &d->elems[e];
            if (el->kind != ELEM_GM && ((el->a == from && el->b == to) ||
                                        (el->a == to && el->b == from))) {
                L->hops[j][n++] = e;
            }
        }
        L->nhops[j] = n;
        if (n == 0) {
            ps->ln = loop_line;
            return at_tok(ps, &loop_line->tok[3 + j], "loop '%s' has no hop from '%s' to '%s'; "
                          "expected a gm %s -> %s, or a res or cap between them", L->name,
                          d->nodes[from].name, d->nodes[to].name, d->nodes[from].name,
                          d->nodes[to].name);
        }
    }
    return LW_OK;
}

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
        if ((rc = find_hops(ps, &ps->d->loops[l], ln)) != LW_OK)
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
