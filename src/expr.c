/* expr: compiles value expressions into a node pool and evaluates them. */
#include "loopwise/expr.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/text.h"

/* Keep in step with lw_fn_names below. */
typedef enum {
    OP_NUM, OP_PARAM, OP_NEG, OP_ADD, OP_SUB, OP_MUL, OP_DIV, OP_POW,
    OP_SQRT, OP_EXP, OP_LN, OP_LOG10, OP_ABS, OP_MIN, OP_MAX, OP_VT
} op_kind;

typedef struct enode {
    op_kind op;
    int line, col;    /* position of the operator, number or name */
    int a, b;         /* operand handles, -1 when unused */
    int param;        /* OP_PARAM */
    double v;         /* OP_NUM */
} enode;

struct expr_pool {
    enode *n;
    int len, cap;
};

static const struct {
    const char *name;
    op_kind op;
    int nargs;
} fns[] = {
    { "sqrt", OP_SQRT, 1 }, { "exp", OP_EXP, 1 }, { "ln", OP_LN, 1 },
    { "log10", OP_LOG10, 1 }, { "abs", OP_ABS, 1 }, { "min", OP_MIN, 2 },
    { "max", OP_MAX, 2 }, { "vt", OP_VT, 1 },
};
enum { NFNS = sizeof fns / sizeof fns[0] };

static const char *const reserved[] = {
    "param", "node", "input", "res", "cap", "gm", "loop", "break", "gnd", "inf", "pi",
    "sqrt", "exp", "ln", "log10", "abs", "min", "max", "vt", "corners", "normal", "uniform",
};

int expr_is_reserved(const char *name)
{
    for (size_t k = 0; k < sizeof reserved / sizeof reserved[0]; k++)
        if (strcmp(name, reserved[k]) == 0)
            return 1;
    return 0;
}

expr_pool *expr_pool_new(void)
{
    return calloc(1, sizeof(expr_pool));
}

void expr_pool_free(expr_pool *p)
{
    if (!p)
        return;
    free(p->n);
    free(p);
}

static int pool_add(expr_pool *p, enode node, int *h)
{
    if (p->len == p->cap) {
        if (p->cap >= EXPR_MAX_NODES)
            return LW_ENOMEM;
        int cap = p->cap ? p->cap * 2 : 256;
        enode *n = realloc(p->n, sizeof *n * (size_t)cap);
        if (!n)
            return LW_ENOMEM;
        p->n = n;
        p->cap = cap;
    }
    p->n[p->len] = node;
    *h = p->len++;
    return LW_OK;
}

/* ---- numbers ---------------------------------------------------------- */

static const char *const unit_names[] = {
    [UNIT_ANY] = "a param", [UNIT_F] = "a capacitance", [UNIT_OHM] = "a resistance",
    [UNIT_S] = "a transconductance", [UNIT_HZ] = "a frequency", [UNIT_NONE] = "a plain number",
};
static const char *const unit_expect[] = {
    [UNIT_ANY] = "F, ohm or S", [UNIT_F] = "F", [UNIT_OHM] = "ohm or \xCE\xA9",
    [UNIT_S] = "S", [UNIT_HZ] = "Hz", [UNIT_NONE] = "no unit",
};

/* Which quantity a unit symbol belongs to, or -1. */
static int unit_of(const char *s)
{
    if (!strcmp(s, "F"))
        return UNIT_F;
    if (!strcmp(s, "ohm") || !strcmp(s, "\xCE\xA9") || !strcmp(s, "\xE2\x84\xA6"))
        return UNIT_OHM;
    if (!strcmp(s, "S"))
        return UNIT_S;
    if (!strcmp(s, "Hz"))
        return UNIT_HZ;
    return -1;
}

/* Length in bytes of the SI prefix at s and its factor, or 0. */
static int prefix_of(const char *s, double *factor)
{
    static const struct { const char *p; double f; } tab[] = {
        { "f", 1e-15 }, { "p", 1e-12 }, { "n", 1e-9 }, { "u", 1e-6 },
        { "\xC2\xB5", 1e-6 }, { "\xCE\xBC", 1e-6 }, { "m", 1e-3 }, { "k", 1e3 },
        { "M", 1e6 }, { "G", 1e9 }, { "T", 1e12 },
    };
    for (size_t k = 0; k < sizeof tab / sizeof tab[0]; k++) {
        size_t l = strlen(tab[k].p);
        if (strncmp(s, tab[k].p, l) == 0) {
            *factor = tab[k].f;
            return (int)l;
        }
    }
    return 0;
}

static int suffix_byte(const unsigned char *s)
{
    return (*s >= 'A' && *s <= 'Z') || (*s >= 'a' && *s <= 'z') || *s >= 0x80;
}

/* Checks that unit symbol u (may be empty) fits the field. */
static int unit_fits(expr_unit want, int have)
{
    if (have < 0)
        return 0;
    if (want == UNIT_ANY)
        return have != UNIT_HZ;
    return (int)want == have;
}

/* Reads a number at s: digits, fraction, exponent, then an optional SI
 * prefix and unit. Sets *used to the bytes consumed. On error, *bad is the
 * byte offset of the suffix. */
static int read_number(const char *s, expr_unit unit, double *value, int *used, int *bad,
                       char *msg, size_t msgsz)
{
    const char *p = s;
    while (*p >= '0' && *p <= '9')
        p++;
    if (*p == '.')
        for (p++; *p >= '0' && *p <= '9'; p++)
            ;
    if ((*p == 'e' || *p == 'E')) {
        const char *q = p + 1;
        if (*q == '+' || *q == '-')
            q++;
        if (*q >= '0' && *q <= '9') {
            while (*q >= '0' && *q <= '9')
                q++;
            p = q;
        }
    }
    char numbuf[80];
    size_t nlen = (size_t)(p - s);
    if (nlen >= sizeof numbuf || (nlen == 1 && *s == '.')) {
        *bad = 0;
        snprintf(msg, msgsz, "malformed number");
        return LW_EINPUT;
    }
    memcpy(numbuf, s, nlen);
    numbuf[nlen] = '\0';
    double v = strtod(numbuf, NULL);
    const char *suf = p;
    while (suffix_byte((const unsigned char *)p))
        p++;
    char sbuf[64];
    size_t slen = (size_t)(p - suf);
    *bad = (int)(suf - s);
    if (slen >= sizeof sbuf) {
        snprintf(msg, msgsz, "unknown suffix after the number; expected an SI prefix and a unit");
        return LW_EINPUT;
    }
    memcpy(sbuf, suf, slen);
    sbuf[slen] = '\0';
    double factor = 1.0;
    const char *u = sbuf;
    if (slen > 0 && unit_of(sbuf) < 0) {
        int pl = prefix_of(sbuf, &factor);
        if (pl == 0 || (sbuf[pl] && unit_of(sbuf + pl) < 0)) {
            if (!strncmp(sbuf, "meg", 3) || !strncmp(sbuf, "Meg", 3) || !strncmp(sbuf, "MEG", 3))
                snprintf(msg, msgsz, "unknown suffix '%s'; for mega write M", sbuf);
            else if (sbuf[0] == 'K')
                snprintf(msg, msgsz, "unknown suffix '%s'; for kilo write k", sbuf);
            else if (sbuf[0] == 'U')
                snprintf(msg, msgsz, "unknown suffix '%s'; for micro write u", sbuf);
            else
                snprintf(msg, msgsz,
                         "unknown suffix '%s'; expected an SI prefix (f p n u m k M G T) "
                         "optionally followed by %s", sbuf, unit_expect[unit]);
            return LW_EINPUT;
        }
        u = sbuf + pl;
    }
    if (*u && !unit_fits(unit, unit_of(u))) {
        snprintf(msg, msgsz, "unit '%s' does not fit %s; expected %s", u, unit_names[unit],
                 unit == UNIT_NONE ? "a plain number" : unit_expect[unit]);
        return LW_EINPUT;
    }
    *value = v * factor;
    *used = (int)(p - s);
    if (!isfinite(*value)) {
        *bad = 0;
        snprintf(msg, msgsz, "number out of range");
        return LW_EINPUT;
    }
    return LW_OK;
}

int expr_number(const char *text, expr_unit unit, double *value, lw_error *err)
{
    char msg[256];
    int used = 0, bad = 0;
    if (!((*text >= '0' && *text <= '9') || *text == '.'))
        return lw_error_set(err, LW_EINPUT, "'%s' is not a number", text);
    if (read_number(text, unit, value, &used, &bad, msg, sizeof msg) != LW_OK)
        return lw_error_set(err, LW_EINPUT, "'%s': %s", text, msg);
    if (text[used])
        return lw_error_set(err, LW_EINPUT, "'%s': unexpected text after the number", text);
    return LW_OK;
}

/* ---- parser ----------------------------------------------------------- */

typedef struct parser {
    expr_pool *pool;
    const char *text, *p;
    expr_unit unit;
    const expr_names *names;
    int line, col0, depth;
    const char *raw;
    lw_error *err;
} parser;

static int here(const parser *ps, const char *at)
{
    return ps->col0 + text_col(ps->text, (int)(at - ps->text)) - 1;
}

static int fail(parser *ps, const char *at, const char *fmt, const char *arg)
{
    text_error_source(ps->err, ps->raw);
    return lw_error_at(ps->err, ps->line, here(ps, at), fmt, arg);
}

static void skip_space(parser *ps)
{
    while (*ps->p == ' ' || *ps->p == '\t')
        ps->p++;
}

static int add(parser *ps, op_kind op, const char *at, int a, int b, int *h)
{
    enode n = { op, ps->line, here(ps, at), a, b, -1, 0.0 };
    if (pool_add(ps->pool, n, h) != LW_OK)
        return lw_error_set(ps->err, LW_ENOMEM, "expression too large");
    return LW_OK;
}

static int parse_sum(parser *ps, int *h);
static int parse_unary(parser *ps, int *h);

static int is_name_start(char c)
{
    return (c >= 'A' && c <= 'Z') || (c >= 'a' && c <= 'z') || c == '_';
}

static int is_name_char(char c)
{
    return is_name_start(c) || (c >= '0' && c <= '9');
}

/* call -> NAME '(' sum [',' sum] ')' */
static int parse_call(parser *ps, const char *at, const char *name, int *h)
{
    int k = 0;
    while (k < (int)NFNS && strcmp(fns[k].name, name))
        k++;
    if (k == (int)NFNS)
        return fail(ps, at, "unknown function '%s'; expected sqrt, exp, ln, log10, abs, min, max or vt",
                    name);
    ps->p++; /* '(' */
    int a = -1, b = -1, rc;
    if ((rc = parse_sum(ps, &a)) != LW_OK)
        return rc;
    skip_space(ps);
    if (fns[k].nargs == 2) {
        if (*ps->p != ',')
            return fail(ps, ps->p, "expected ',' and a second argument for '%s'", name);
        ps->p++;
        if ((rc = parse_sum(ps, &b)) != LW_OK)
            return rc;
        skip_space(ps);
    } else if (*ps->p == ',') {
        return fail(ps, ps->p, "'%s' takes one argument", name);
    }
    if (*ps->p != ')')
        return fail(ps, ps->p, "expected ')' to close the call to '%s'", name);
    ps->p++;
    return add(ps, fns[k].op, at, a, b, h);
}

static int parse_name(parser *ps, int *h)
{
    const char *at = ps->p;
    char name[80];
    size_t len = 0;
    while (is_name_char(*ps->p))
        ps->p++;
    len = (size_t)(ps->p - at);
    if (len >= sizeof name)
        return fail(ps, at, "name too long%s", "");
    memcpy(name, at, len);
    name[len] = '\0';
    skip_space(ps);
    if (*ps->p == '(')
        return parse_call(ps, at, name, h);
    if (!strcmp(name, "pi") || !strcmp(name, "inf")) {
        int rc = add(ps, OP_NUM, at, -1, -1, h);
        if (rc == LW_OK)
            ps->pool->n[*h].v = name[0] == 'p' ? 3.14159265358979323846 : INFINITY;
        return rc;
    }
    if (!ps->names)
        return fail(ps, at, "'%s' is not a number; expected a number such as 60, 1.5k or 2.2p "
                    "(params cannot be used here)", name);
    int idx = ps->names->lookup(ps->names->ctx, name);
    if (idx == -2)
        return fail(ps, at, "'%s' is not a param; a value may only use params", name);
    if (idx == -3)
        return fail(ps, at, "param '%s' is used before it is declared; declare it above", name);
    if (idx < 0) {
        const char *s = ps->names && ps->names->suggest
                            ? ps->names->suggest(ps->names->ctx, name) : NULL;
        text_error_source(ps->err, ps->raw);
        if (s)
            return lw_error_at(ps->err, ps->line, here(ps, at),
                               "unknown param '%s' (did you mean '%s'?)", name, s);
        return lw_error_at(ps->err, ps->line, here(ps, at), "unknown param '%s'", name);
    }
    int rc = add(ps, OP_PARAM, at, -1, -1, h);
    if (rc == LW_OK)
        ps->pool->n[*h].param = idx;
    return rc;
}

/* primary -> NUMBER | NAME | call | '(' sum ')' */
static int parse_primary(parser *ps, int *h)
{
    skip_space(ps);
    const char *at = ps->p;
    char c = *ps->p;
    if ((c >= '0' && c <= '9') || c == '.') {
        char msg[256];
        double v = 0;
        int used = 0, bad = 0;
        if (read_number(ps->p, ps->unit, &v, &used, &bad, msg, sizeof msg) != LW_OK)
            return fail(ps, ps->p + bad, "%s", msg);
        ps->p += used;
        int rc = add(ps, OP_NUM, at, -1, -1, h);
        if (rc == LW_OK)
            ps->pool->n[*h].v = v;
        return rc;
    }
    if (is_name_start(c))
        return parse_name(ps, h);
    if (c == '(') {
        ps->p++;
        int rc = parse_sum(ps, h);
        if (rc != LW_OK)
            return rc;
        skip_space(ps);
        if (*ps->p != ')')
            return fail(ps, ps->p, "expected ')'%s", "");
        ps->p++;
        return LW_OK;
    }
    if (c == '\0')
        return fail(ps, at, "expected a value at the end of the expression%s", "");
    char tok[8] = { 0 };
    tok[0] = c;
    if ((unsigned char)c >= 0x80)
        snprintf(tok, sizeof tok, "%.4s", at);
    return fail(ps, at, "unexpected '%s'; expected a number, a param, a function or '('", tok);
}

/* power -> primary ['^' unary]   (right-associative, binds tighter than unary minus) */
static int parse_power(parser *ps, int *h)
{
    int a, b, rc;
    if ((rc = parse_primary(ps, &a)) != LW_OK)
        return rc;
    skip_space(ps);
    if (*ps->p != '^') {
        *h = a;
        return LW_OK;
    }
    const char *at = ps->p++;
    if ((rc = parse_unary(ps, &b)) != LW_OK)
        return rc;
    return add(ps, OP_POW, at, a, b, h);
}

/* unary -> ('-' | '+') unary | power */
static int parse_unary(parser *ps, int *h)
{
    if (++ps->depth > EXPR_MAX_DEPTH)
        return fail(ps, ps->p, "expression nested too deeply (limit %s levels)", "64");
    skip_space(ps);
    int rc;
    if (*ps->p == '-' || *ps->p == '+') {
        const char *at = ps->p++;
        int a;
        if ((rc = parse_unary(ps, &a)) != LW_OK)
            return rc;
        rc = *at == '-' ? add(ps, OP_NEG, at, a, -1, h) : (*h = a, LW_OK);
    } else {
        rc = parse_power(ps, h);
    }
    ps->depth--;
    return rc;
}

/* term -> unary {('*' | '/') unary} */
static int parse_term(parser *ps, int *h)
{
    int rc = parse_unary(ps, h);
    for (;;) {
        if (rc != LW_OK)
            return rc;
        skip_space(ps);
        if (*ps->p != '*' && *ps->p != '/')
            return LW_OK;
        const char *at = ps->p++;
        int b;
        if ((rc = parse_unary(ps, &b)) != LW_OK)
            return rc;
        rc = add(ps, *at == '*' ? OP_MUL : OP_DIV, at, *h, b, h);
    }
}

/* sum -> term {('+' | '-') term} */
static int parse_sum(parser *ps, int *h)
{
    int rc = parse_term(ps, h);
    for (;;) {
        if (rc != LW_OK)
            return rc;
        skip_space(ps);
        if (*ps->p != '+' && *ps->p != '-')
            break;
        const char *at = ps->p++;
        int b;
        if ((rc = parse_term(ps, &b)) != LW_OK)
            return rc;
        rc = add(ps, *at == '+' ? OP_ADD : OP_SUB, at, *h, b, h);
    }
    return LW_OK;
}

int expr_compile(expr_pool *p, const char *text, expr_unit unit, const expr_names *names,
                 int line, int col0, const char *raw, int *handle, lw_error *err)
{
    parser ps = { p, text, text, unit, names, line, col0, 0, raw, err };
    int rc = parse_sum(&ps, handle);
    if (rc != LW_OK)
        return rc;
    skip_space(&ps);
    if (*ps.p)
        return fail(&ps, ps.p, "unexpected '%.1s' after the value; expected an operator", ps.p);
    return LW_OK;
}

/* ---- evaluation ------------------------------------------------------- */

static int eval_fail(const enode *n, lw_error *err, const char *what)
{
    err->src[0] = '\0';
    return lw_error_at(err, n->line, n->col, "%s", what);
}

static int eval_node(const expr_pool *p, int h, const double *params, double *out,
                     lw_error *err)
{
    const enode *n = &p->n[h];
    double a = 0, b = 0;
    int rc;
    if (n->a >= 0 && (rc = eval_node(p, n->a, params, &a, err)) != LW_OK)
        return rc;
    if (n->b >= 0 && (rc = eval_node(p, n->b, params, &b, err)) != LW_OK)
        return rc;
    double r;
    switch (n->op) {
    case OP_NUM: r = n->v; break;
    case OP_PARAM: r = params[n->param]; break;
    case OP_NEG: r = -a; break;
    case OP_ADD: r = a + b; break;
    case OP_SUB: r = a - b; break;
    case OP_MUL: r = a * b; break;
    case OP_DIV:
        if (b == 0.0)
            return eval_fail(n, err, "division by zero");
        r = a / b;
        break;
    case OP_POW: r = pow(a, b); break;
    case OP_SQRT:
        if (a < 0)
            return eval_fail(n, err, "sqrt of a negative value");
        r = sqrt(a);
        break;
    case OP_EXP: r = exp(a); break;
    case OP_LN:
    case OP_LOG10:
        if (a <= 0)
            return eval_fail(n, err, "logarithm of a value that is not positive");
        r = n->op == OP_LN ? log(a) : log10(a);
        break;
    case OP_ABS: r = fabs(a); break;
    case OP_MIN: r = a < b ? a : b; break;
    case OP_MAX: r = a > b ? a : b; break;
    case OP_VT:
        /* thermal voltage kT/q in volts for T in kelvin; k and q are exact in
         * the 2019 SI (CODATA 2018): k = 1.380649e-23 J/K, q = 1.602176634e-19 C */
        if (!(a > 0))
            return eval_fail(n, err, "vt() takes an absolute temperature in kelvin, above 0");
        r = 1.380649e-23 * a / 1.602176634e-19;
        break;
    default: r = NAN; break;
    }
    if (isnan(r))
        return eval_fail(n, err, "the value is not a number (NaN)");
    if (isinf(r) && !isinf(a) && !isinf(b) && n->op != OP_NUM && n->op != OP_PARAM)
        return eval_fail(n, err, "the value overflows");
    *out = r;
    return LW_OK;
}

int expr_eval(const expr_pool *p, int handle, const double *params, double *value,
              lw_error *err)
{
    return eval_node(p, handle, params, value, err);
}

static void walk_params(const expr_pool *p, int h, void (*fn)(void *, int), void *ctx)
{
    const enode *n = &p->n[h];
    if (n->op == OP_PARAM)
        fn(ctx, n->param);
    if (n->a >= 0)
        walk_params(p, n->a, fn, ctx);
    if (n->b >= 0)
        walk_params(p, n->b, fn, ctx);
}

int expr_sole_param(const expr_pool *p, int handle)
{
    while (handle >= 0 && p->n[handle].op == OP_NEG)
        handle = p->n[handle].a;
    return handle >= 0 && p->n[handle].op == OP_PARAM ? p->n[handle].param : -1;
}

void expr_params(const expr_pool *p, int handle, void (*fn)(void *, int), void *ctx)
{
    walk_params(p, handle, fn, ctx);
}
