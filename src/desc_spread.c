/* desc_spread: the spread grammar of a param line (corner ranges and
 * distributions, SPEC section 2). See desc_impl.h. */
#include <string.h>

#include "desc_impl.h"

/* bound -> ['+'|'-'] NUMBER '%' | EXPR      (no spaces inside) */
static int parse_bound(pstate *ps, const text_token *tk, const char *text, int off,
                       desc_bound *b)
{
    size_t len = strlen(text);
    b->expr = -1;
    b->is_pct = len > 0 && text[len - 1] == '%';
    if (!b->is_pct)
        return desc_compile_at(ps, text, off, UNIT_ANY, &b->expr);
    char num[64];
    int neg = text[0] == '-', skip = text[0] == '-' || text[0] == '+';
    if (len - 1 - (size_t)skip == 0 || len >= sizeof num)
        return desc_at_tok(ps, tk, "'%s': expected a percentage such as 5%% or -10%%", tk->s);
    memcpy(num, text + skip, len - 1 - (size_t)skip);
    num[len - 1 - (size_t)skip] = '\0';
    lw_error e;
    if (expr_number(num, UNIT_NONE, &b->pct, &e) != LW_OK)
        return desc_at_tok(ps, tk, "'%s': expected a percentage such as 5%% or -10%%", tk->s);
    if (neg)
        b->pct = -b->pct;
    return LW_OK;
}

/* range -> bound '..' bound */
static int parse_range(pstate *ps, const text_token *tk, desc_bound *lo, desc_bound *hi)
{
    const char *dots = strstr(tk->s, "..");
    if (!dots || dots == tk->s || !dots[2])
        return desc_at_tok(ps, tk, "'%s': expected a range LO..HI (no spaces), e.g. 4.5k..5.5k or "
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
int desc_parse_spread(pstate *ps, int k, desc_spread *sp)
{
    const text_line *ln = ps->ln;
    for (; k < ln->ntok; k += 2) {
        const text_token *kw = &ln->tok[k];
        int is_c = !strcmp(kw->s, "corners"), is_n = !strcmp(kw->s, "normal"),
            is_u = !strcmp(kw->s, "uniform");
        if (!is_c && !is_n && !is_u)
            return desc_at_tok(ps, kw, "unexpected '%s'; a param's spread is 'corners LO..HI', "
                          "'normal SIGMA' or 'uniform LO..HI'", kw->s);
        if (k + 1 >= ln->ntok)
            return desc_at_tok(ps, kw, "'%s' needs a value after it", kw->s);
        const text_token *v = &ln->tok[k + 1];
        desc_pos at = { ln->number, v->col };
        int rc;
        if (is_c) {
            if (sp->has_range)
                return desc_at_tok(ps, kw, "'corners' given twice");
            sp->has_range = 1;
            sp->range_at = at;
            rc = parse_range(ps, v, &sp->lo, &sp->hi);
        } else {
            if (sp->dist != DIST_NONE)
                return desc_at_tok(ps, kw, "a second distribution; a param takes 'normal' or "
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
int desc_spread_start(const text_line *ln, int off)
{
    for (int k = 2; k < ln->ntok; k++)
        if (ln->tok[k].off > off && (!strcmp(ln->tok[k].s, "corners") ||
                                     !strcmp(ln->tok[k].s, "normal") ||
                                     !strcmp(ln->tok[k].s, "uniform")))
            return k;
    return ln->ntok;
}

