/* desc_names: the one namespace of a .loop file (params, nodes, inputs,
 * elements and loops share it): a small open-addressing hash of names,
 * declaring a name, the names inside expressions, and node references.
 * See desc_impl.h. */
#include <stdarg.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "desc_impl.h"

/* Keep in step with sym_kind. */
const char *const desc_sym_names[] = { "a param", "a node", "an element", "a loop", "an input" };

static uint64_t hash_name(const char *s)
{
    uint64_t h = 1469598103934665603ull;
    while (*s)
        h = (h ^ (unsigned char)*s++) * 1099511628211ull;
    return h;
}

sym *desc_sym_find(const symtab *t, const char *name)
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

int desc_at_tok(pstate *ps, const text_token *tk, const char *fmt, ...)
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

int desc_grow(void **arr, int *cap, int len, size_t size, int limit)
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
int desc_declare(pstate *ps, const text_token *tk, const char *name, sym_kind kind, int index)
{
    if (strlen(name) > DESC_MAX_NAME)
        return desc_at_tok(ps, tk, "name '%.20s...' is longer than %d characters", name,
                           DESC_MAX_NAME);
    if (!valid_name(name))
        return desc_at_tok(ps, tk, "'%s' is not a valid name; expected a letter or '_' followed by "
                      "letters, digits or '_'", name);
    if (expr_is_reserved(name) || !strcmp(name, "negative") || !strcmp(name, "positive"))
        return desc_at_tok(ps, tk, "'%s' is reserved and cannot be used as a name", name);
    const sym *old = desc_sym_find(&ps->syms, name);
    if (old)
        return desc_at_tok(ps, tk, "'%s' is already declared on line %d as %s", name, old->line,
                      desc_sym_names[old->kind]);
    return sym_add(&ps->syms, (sym){ (char *)name, kind, index, ps->ln->number }) == LW_OK
               ? LW_OK : lw_error_set(ps->err, LW_ENOMEM, "out of memory");
}

/* ---- names inside expressions ----------------------------------------- */

static int param_lookup(void *ctx, const char *name)
{
    pstate *ps = ctx;
    const sym *s = desc_sym_find(&ps->syms, name);
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

int desc_compile_at(pstate *ps, const char *text, int off, expr_unit unit, int *h)
{
    expr_names names = { param_lookup, param_suggest, ps };
    return expr_compile(ps->d->pool, text, unit, &names, ps->ln->number,
                        text_col(ps->ln->raw, off), ps->ln->raw, h, ps->err);
}

/* The rest of the line from token k on, as an expression. */
int desc_compile_rest(pstate *ps, int k, expr_unit unit, int *h, desc_pos *at)
{
    const text_token *tk = &ps->ln->tok[k];
    at->line = ps->ln->number;
    at->col = tk->col;
    return desc_compile_at(ps, ps->ln->raw + tk->off, tk->off, unit, h);
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
int desc_node_ref(pstate *ps, int k, int allow_gnd, int *idx, int *in, desc_pos *at)
{
    const text_token *tk = &ps->ln->tok[k];
    at->line = ps->ln->number;
    at->col = tk->col;
    if (in)
        *in = -1;
    if (strstr(tk->s, "->"))
        return desc_at_tok(ps, tk, "'%s': separate '->' from the node names with spaces", tk->s);
    if (!strcmp(tk->s, "gnd")) {
        if (!allow_gnd)
            return desc_at_tok(ps, tk, "'gnd' cannot be part of a loop; expected a declared node");
        *idx = DESC_GND;
        return LW_OK;
    }
    const sym *s = desc_sym_find(&ps->syms, tk->s);
    if (s && s->kind == SYM_NODE) {
        *idx = s->index;
        return LW_OK;
    }
    if (s && s->kind == SYM_INPUT) {
        if (!in)
            return desc_at_tok(ps, tk, "'%s' is an input (a driven node), and a loop runs through "
                          "nodes only; expected a declared node", tk->s);
        *idx = DESC_GND;
        *in = s->index;
        return LW_OK;
    }
    if (s)
        return desc_at_tok(ps, tk, "'%s' is %s, not a node", tk->s, desc_sym_names[s->kind]);
    const char *best = node_suggest(ps, tk->s);
    if (best)
        return desc_at_tok(ps, tk, "unknown node '%s' (did you mean '%s'?)", tk->s, best);
    return desc_at_tok(ps, tk, "unknown node '%s'; declare it with a 'node' line first", tk->s);
}

