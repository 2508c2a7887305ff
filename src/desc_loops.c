/* desc_loops: loop and break lines and the hops of each declared loop (SPEC
 * section 1, "Declared loops"); the break named on a 'break' line is
 * resolved, and chosen when none is given, in desc_break.c. See
 * desc_impl.h. */
#include <stdlib.h>
#include <string.h>

#include "desc_impl.h"

/* loop -> 'loop' NAME ('negative'|'positive') N1 N2 ... Nk */
int desc_parse_loop(pstate *ps)
{
    int rc = desc_need_tokens(ps, 4, "'loop NAME negative|positive NODE NODE ...'");
    if (rc)
        return rc;
    desc *d = ps->d;
    const text_line *ln = ps->ln;
    if (desc_grow((void **)&d->loops, &ps->caps[3], d->nloops, sizeof *d->loops, DESC_MAX_LOOPS))
        return desc_too_many(ps, "loops", DESC_MAX_LOOPS);
    desc_loop *L = &d->loops[d->nloops];
    memset(L, 0, sizeof *L);
    L->at = (desc_pos){ ln->number, ln->tok[0].col };
    if (strlen(ln->tok[1].s) <= DESC_MAX_NAME)
        snprintf(L->name, sizeof L->name, "%s", ln->tok[1].s);
    if ((rc = desc_declare(ps, &ln->tok[1], ln->tok[1].s, SYM_LOOP, d->nloops)) != LW_OK)
        return rc;
    d->nloops++;
    const char *sg = ln->tok[2].s;
    if (strcmp(sg, "negative") && strcmp(sg, "positive"))
        return desc_at_tok(ps, &ln->tok[2], "unknown loop sign '%s'; expected negative or "
                           "positive", sg);
    L->negative = sg[0] == 'n';
    L->sign_at = (desc_pos){ ln->number, ln->tok[2].col };
    int k = ln->ntok - 3;
    L->nodes = calloc((size_t)k, sizeof *L->nodes);
    L->node_at = calloc((size_t)k, sizeof *L->node_at);
    if (!L->nodes || !L->node_at)
        return lw_error_set(ps->err, LW_ENOMEM, "out of memory");
    for (int j = 0; j < k; j++) {
        if ((rc = desc_node_ref(ps, 3 + j, 0, &L->nodes[j], NULL, &L->node_at[j])))
            return rc;
        L->nnodes++;
        for (int i = 0; i < j; i++)
            if (L->nodes[i] == L->nodes[j])
                return desc_at_tok(ps, &ln->tok[3 + j], "node '%s' appears twice in loop '%s'; "
                              "a loop visits each node once", ln->tok[3 + j].s, L->name);
    }
    return LW_OK;
}

/* break -> 'break' NAME      (a gm or a node; resolved in desc_break.c) */
int desc_parse_break(pstate *ps)
{
    int rc = desc_need_tokens(ps, 2, "'break NAME' naming a gm or a node");
    if (rc)
        return rc;
    const text_line *ln = ps->ln;
    if (ln->ntok > 2)
        return desc_at_tok(ps, &ln->tok[2], "unexpected '%s'; 'break' takes one name, a gm or "
                           "a node",
                      ln->tok[2].s);
    if (ps->brk_line)
        return desc_at_tok(ps, &ln->tok[0], "a second 'break' line; the first is on line %d",
                      ps->brk_line->number);
    ps->brk_line = ln;
    ps->d->brk_at = (desc_pos){ ln->number, ln->tok[0].col };
    return desc_break_name(ps->d, ln->tok[1].s, ln->number, ln->tok[1].col, ln->raw, ps->err);
}

/* Hop N(j) -> N(j+1): every gm from N(j) to N(j+1); else a res or cap between them. */
int desc_find_hops(pstate *ps, desc_loop *L, const text_line *loop_line)
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
        /* the way back of a two-node loop may not be the element it went out
         * by: a resistor between two nodes is no loop on its own */
        int back = L->nnodes == 2 && j == 1 && L->nhops[0] == 1;
        int out_by = back && d->elems[L->hops[0][0]].kind != ELEM_GM ? L->hops[0][0] : -1;
        int same = 0;
        for (int e = 0; n == 0 && e < d->nelems; e++) {
            const desc_elem *el = &d->elems[e];
            if (el->kind != ELEM_GM && ((el->a == from && el->b == to) ||
                                        (el->a == to && el->b == from))) {
                if (e == out_by)
                    same = 1;
                else
                    L->hops[j][n++] = e;
            }
        }
        L->nhops[j] = n;
        if (n == 0 && same) {
            ps->ln = loop_line;
            return desc_at_tok(ps, &loop_line->tok[3 + j], "loop '%s' goes from '%s' to '%s' "
                               "and back through the same element '%s'; a loop must return by "
                               "another path: expected a gm %s -> %s, or another res or cap "
                               "between them", L->name, d->nodes[to].name, d->nodes[from].name,
                               d->elems[out_by].name, d->nodes[from].name, d->nodes[to].name);
        }
        if (n == 0) {
            ps->ln = loop_line;
            return desc_at_tok(ps, &loop_line->tok[3 + j], "loop '%s' has no hop from '%s' "
                               "to '%s'; "
                          "expected a gm %s -> %s, or a res or cap between them", L->name,
                          d->nodes[from].name, d->nodes[to].name, d->nodes[from].name,
                          d->nodes[to].name);
        }
    }
    return LW_OK;
}

