/* desc_break: where the loop is opened (SPEC section 1, "Break").
 *
 *   break -> 'break' NAME        NAME: a gm, or a node (issue 18)
 *
 * A node N as the break is every gm whose IN is N, taken together: as if a
 * unity-gain buffer sat in front of their controls and the loop were opened
 * at its output. Without a 'break' line the break is the first gm in file
 * order that every declared loop has as a hop; when there is none, the error
 * names the nodes every declared loop passes through (that control a gm),
 * the candidates for 'break NODE'. */
#include <stdlib.h>
#include <string.h>

#include "loopwise/desc.h"

/* Index of a param or loop named name, -1 when none (for the messages). */
static int find_param(const desc *d, const char *name)
{
    for (int k = 0; k < d->nparams; k++)
        if (!strcmp(d->params[k].name, name))
            return k;
    return -1;
}

static int find_loop(const desc *d, const char *name)
{
    for (int k = 0; k < d->nloops; k++)
        if (!strcmp(d->loops[k].name, name))
            return k;
    return -1;
}

int desc_break_gms(const desc *d, int node, int *gms)
{
    int n = 0;
    for (int e = 0; e < d->nelems; e++)
        if (d->elems[e].kind == ELEM_GM && d->elems[e].a == node) {
            if (gms)
                gms[n] = e;
            n++;
        }
    return n;
}

static int at(lw_error *err, int line, int col, const char *raw)
{
    err->line = line;
    err->col = col;
    text_error_source(err, raw);
    return LW_EINPUT;
}

int desc_break_name(desc *d, const char *name, int line, int col, const char *raw,
                    lw_error *err)
{
    int e = desc_find_elem(d, name), node = desc_find_node(d, name);
    if (node >= 0) {
        if (desc_break_gms(d, node, NULL) == 0) {
            lw_error_at(err, line, col, "node '%s' controls no gm; 'break NODE' opens the loop "
                        "at the gms whose input is that node, so name a node that drives one, "
                        "or a gm", name);
            return at(err, line, col, raw);
        }
        d->brk = -1;
        d->brk_node = node;
    } else if (e >= 0) {
        if (d->elems[e].kind != ELEM_GM) {
            lw_error_at(err, line, col, "'%s' is a %s; the break must be a gm or a node", name,
                        desc_elem_kind_name(d->elems[e].kind));
            return at(err, line, col, raw);
        }
        if (d->elems[e].a_in >= 0) {
            /* its control is an input, AC ground for the loop (SPEC section 6) */
            lw_error_at(err, line, col, "'%s' is driven by input '%s'; the break must be a gm "
                        "between two nodes, or a node", name, d->inputs[d->elems[e].a_in].name);
            return at(err, line, col, raw);
        }
        d->brk = e;
        d->brk_node = -1;
    } else {
        const char *what = find_param(d, name) >= 0 ? "a param" : find_loop(d, name) >= 0
                           ? "a loop" : desc_find_input(d, name) >= 0 ? "an input" : NULL;
        if (what) {
            lw_error_at(err, line, col, "'%s' is %s; the break must be a gm or a node", name,
                        what);
            return at(err, line, col, raw);
        }
        /* declared before the break line: everything in d so far */
        const char **c = malloc(sizeof *c * (size_t)(d->nelems + d->nnodes + 1));
        int n = 0;
        for (int k = 0; c && k < d->nelems; k++)
            if (d->elems[k].kind == ELEM_GM)
                c[n++] = d->elems[k].name;
        for (int k = 0; c && k < d->nnodes; k++)
            c[n++] = d->nodes[k].name;
        const char *best = c ? lw_closest(name, c, n) : NULL;
        if (best)
            lw_error_at(err, line, col, "unknown gm or node '%s' (did you mean '%s'?)", name,
                        best);
        else
            lw_error_at(err, line, col, "unknown gm or node '%s'; the break names a gm or a "
                        "node declared above", name);
        free(c);
        return at(err, line, col, raw);
    }
    d->brk_explicit = 1;
    return LW_OK;
}

static int loop_has_hop(const desc_loop *L, int e)
{
    for (int j = 0; j < L->nnodes; j++)
        for (int k = 0; k < L->nhops[j]; k++)
            if (L->hops[j][k] == e)
                return 1;
    return 0;
}

static int loop_has_node(const desc_loop *L, int node)
{
    for (int j = 0; j < L->nnodes; j++)
        if (L->nodes[j] == node)
            return 1;
    return 0;
}

/* The message when no gm is common: the nodes of the first loop (in its
 * order) that every other loop passes through and that control a gm. */
static int no_common_gm(const desc *d, lw_error *err)
{
    const desc_loop *L0 = &d->loops[0];
    char list[LW_MSG_MAX / 2];
    size_t len = 0;
    int n = 0, first = -1;
    list[0] = '\0';
    for (int j = 0; j < L0->nnodes; j++) {
        int node = L0->nodes[j], all = desc_break_gms(d, node, NULL) > 0;
        for (int l = 1; l < d->nloops && all; l++)
            all = loop_has_node(&d->loops[l], node);
        if (!all)
            continue;
        int w = snprintf(list + len, sizeof list - len, "%s'%s'", n ? ", " : "",
                         d->nodes[node].name);
        if (w < 0 || (size_t)w >= sizeof list - len)
            break;
        len += (size_t)w;
        if (first < 0)
            first = node;
        n++;
    }
    if (n == 0)
        lw_error_at(err, L0->at.line, L0->at.col, "no gm is a hop of every declared loop, and "
                    "no node that controls a gm is on every loop; add a 'break NAME' line "
                    "naming the gm or node where the loop gain is measured");
    else if (n == 1)
        lw_error_at(err, L0->at.line, L0->at.col, "no gm is a hop of every declared loop; every "
                    "loop passes through %s: add 'break %s' to open the loop there, or a "
                    "'break NAME' line naming a gm", list, d->nodes[first].name);
    else
        lw_error_at(err, L0->at.line, L0->at.col, "no gm is a hop of every declared loop; every "
                    "loop passes through %s: add 'break NODE' naming one of them to open the "
                    "loop there, or a 'break NAME' line naming a gm", list);
    desc_error_source(d, err);
    return LW_EINPUT;
}

int desc_break_choose(desc *d, lw_error *err)
{
    if (d->brk_explicit)
        return LW_OK;
    if (d->nloops == 0)
        return lw_error_at(err, 1, 1, "no loop declared and no break given; add a "
                           "'loop NAME negative|positive NODES...' line, or a 'break NAME' line "
                           "naming the gm (or node) where the loop is opened");
    for (int e = 0; e < d->nelems; e++) {
        if (d->elems[e].kind != ELEM_GM)
            continue;
        int all = 1;
        for (int l = 0; l < d->nloops && all; l++)
            all = loop_has_hop(&d->loops[l], e);
        if (all) {
            d->brk = e;
            d->brk_at = d->loops[0].at;
            return LW_OK;
        }
    }
    return no_common_gm(d, err);
}

/* 1 when element e is a hop of some declared loop: a loop's own return
 * path, not a local loop around one stage. */
static int any_loop_hop(const desc *d, int e)
{
    for (int l = 0; l < d->nloops; l++)
        if (loop_has_hop(&d->loops[l], e))
            return 1;
    return 0;
}

/* The res and cap elements at node x (inputs and gnd ends count as
 * elements too), and whether a gm touches it. */
static int passive_degree(const desc *d, int x, int *gm_touch)
{
    int n = 0;
    *gm_touch = 0;
    for (int e = 0; e < d->nelems; e++) {
        const desc_elem *el = &d->elems[e];
        if (el->a != x && el->b != x)
            continue;
        if (el->kind == ELEM_GM)
            *gm_touch = 1;
        else
            n++;
    }
    return n;
}

/* A chain of res and cap elements from node i to node o through nodes that
 * carry nothing else (a Miller capacitor, alone or in series with its
 * nulling resistor), none of them a hop of a declared loop: its elements
 * into chain (at most max), their count as the return, 0 when none. */
static int bridge_between(const desc *d, int i, int o, int *chain, int max)
{
    for (int e = 0; e < d->nelems; e++) {
        const desc_elem *el = &d->elems[e];
        if (el->kind == ELEM_GM || (el->a != i && el->b != i) || any_loop_hop(d, e))
            continue;
        int n = 0, prev = e, at = el->a == i ? el->b : el->a;
        if (n < max)
            chain[n++] = e;
        /* walk on while the node reached is a plain link of two elements */
        for (int guard = 0; at != DESC_GND && at != o && guard < max; guard++) {
            int gm_touch, next = -1;
            if (passive_degree(d, at, &gm_touch) != 2 || gm_touch)
                break;
            for (int k = 0; k < d->nelems && next < 0; k++)
                if (k != prev && d->elems[k].kind != ELEM_GM &&
                    (d->elems[k].a == at || d->elems[k].b == at))
                    next = k;
            if (next < 0 || any_loop_hop(d, next) || n >= max)
                break;
            chain[n++] = next;
            prev = next;
            at = d->elems[next].a == at ? d->elems[next].b : d->elems[next].a;
        }
        if (at == o)
            return n;
    }
    return 0;
}

int desc_break_bridge(const desc *d, int *gm, int *chain, int max)
{
    int gms[64], ng;
    if (d->brk >= 0) {
        gms[0] = d->brk;
        ng = 1;
    } else {
        ng = desc_break_gms(d, d->brk_node, NULL) <= 64 ? desc_break_gms(d, d->brk_node, gms) : 0;
    }
    for (int k = 0; k < ng; k++) {
        const desc_elem *g = &d->elems[gms[k]];
        int n = g->b == DESC_GND ? 0 : bridge_between(d, g->a, g->b, chain, max);
        if (n) {
            *gm = gms[k];
            return n;
        }
    }
    return 0;
}

int desc_break_suggest(const desc *d)
{
    if (d->nloops == 0)
        return -1;
    const desc_loop *L0 = &d->loops[0];
    int chain[16];
    for (int j = 0; j < L0->nnodes; j++) {
        int node = L0->nodes[j], all = desc_break_gms(d, node, NULL) > 0;
        for (int l = 1; l < d->nloops && all; l++)
            all = loop_has_node(&d->loops[l], node);
        /* not itself the input of a bridged stage */
        for (int e = 0; e < d->nelems && all; e++) {
            const desc_elem *g = &d->elems[e];
            if (g->kind == ELEM_GM && g->a == node && g->b != DESC_GND &&
                bridge_between(d, node, g->b, chain, 16))
                all = 0;
        }
        if (all)
            return node;
    }
    return -1;
}
