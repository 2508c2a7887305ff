/* Unit tests for desc: parsing .loop text into a description, evaluating
 * its values, break choice, error positions and overrides. */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/desc.h"
#include "loopwise/diag.h"
#include "loopwise/text.h"

#include "testutil.h"

#define assert_contains(hay, needle)                                                     \
    do {                                                                                 \
        if (!strstr((hay), (needle))) {                                                  \
            print_error("message \"%s\" does not contain \"%s\"\n", (hay), (needle));    \
            fail();                                                                      \
        }                                                                                \
    } while (0)

/* text_from_buffer -> desc_parse; the text is freed right away. */
static int parse(const char *src, desc **d, lw_error *err)
{
    text_file *t = NULL;
    *d = NULL;
    lw_error_clear(err);
    int rc = text_from_buffer(src, strlen(src), &t, err);
    if (rc != LW_OK)
        return rc;
    rc = desc_parse(t, "test.loop", d, err);
    text_free(t);
    return rc;
}

/* parse -> desc_eval; *d is kept (and must be freed) when parsing worked. */
static int parse_eval(const char *src, desc **d, lw_error *err)
{
    int rc = parse(src, d, err);
    if (rc == LW_OK)
        rc = desc_eval(*d, err);
    return rc;
}

static desc *must_parse_eval(const char *src)
{
    desc *d = NULL;
    lw_error err;
    int rc = parse_eval(src, &d, &err);
    if (rc != LW_OK) {
        print_error("unexpected error %d:%d: %s\n", err.line, err.col, err.msg);
        desc_free(d);
        fail();
    }
    return d;
}

/* Expects parse (eval when also_eval) to fail at line:col with needle in
 * the message; col 0 means any column. */
static void expect_error(const char *src, int also_eval, int line, int col, const char *needle)
{
    desc *d = NULL;
    lw_error err;
    int rc = also_eval ? parse_eval(src, &d, &err) : parse(src, &d, &err);
    desc_free(d);
    if (rc == LW_OK) {
        print_error("expected an error containing \"%s\", got none\n", needle);
        fail();
    }
    assert_int_equal(rc, LW_EINPUT);
    if (err.line != line || (col && err.col != col)) {
        print_error("error at %d:%d (%s), expected %d:%d\n", err.line, err.col, err.msg, line,
                    col);
        fail();
    }
    if (needle)
        assert_contains(err.msg, needle);
}

/* A two-node ring with a break candidate used by several tests. */
static const char *const ring =
    "param gmv = 2m\n"
    "param rl = 2 * 5k\n"
    "node a r=rl c=1p\n"
    "node b r=1k\n"
    "gm g1 b -> a gmv\n"
    "gm g2 a -> b -1m\n"
    "loop main negative a b\n";

/* ---- parsing ------------------------------------------------------------ */

static void test_params_and_values(void **state)
{
    (void)state;
    desc *d = must_parse_eval(ring);
    assert_int_equal(d->nparams, 2);
    assert_string_equal(d->params[0].name, "gmv");
    assert_rel(d->params[0].value, 2e-3, 1e-15);
    assert_rel(d->params[1].value, 10e3, 1e-15);
    assert_rel(d->pvals[1], 10e3, 1e-15);
    assert_int_equal(d->params[1].at.line, 2);
    assert_int_equal(d->params[1].at.col, 7);
    desc_free(d);
}

static void test_nodes_fields_and_defaults(void **state)
{
    (void)state;
    desc *d = must_parse_eval("node a r=4.7k c=3.3p\n"
                              "node b c=1n\n"
                              "node c r=220\n"
                              "node e r=inf c=2p\n"
                              "node f c=2p r=1M\n"
                              "res rx a gnd 1k\n"
                              "gm g1 a -> b 1m\n"
                              "gm g2 b -> a -1m\n"
                              "gm g3 a -> c 1m\n"
                              "gm g4 a -> e 1m\n"
                              "gm g5 a -> f 1m\n"
                              "loop main negative a b\n");
    assert_int_equal(d->nnodes, 5);
    assert_string_equal(d->nodes[0].name, "a");
    assert_rel(d->nodes[0].r, 4.7e3, 1e-15);
    assert_rel(d->nodes[0].c, 3.3e-12, 1e-15);
    /* r defaults to inf, c to 0 */
    assert_true(isinf(d->nodes[1].r) && d->nodes[1].r > 0);
    assert_rel(d->nodes[1].c, 1e-9, 1e-15);
    assert_rel(d->nodes[2].r, 220.0, 1e-15);
    assert_true(d->nodes[2].c == 0.0);
    assert_true(isinf(d->nodes[3].r));
    assert_rel(d->nodes[3].c, 2e-12, 1e-15);
    /* fields in either order */
    assert_rel(d->nodes[4].r, 1e6, 1e-15);
    assert_rel(d->nodes[4].c, 2e-12, 1e-15);
    assert_int_equal(d->nodes[1].r_expr, -1);
    assert_int_equal(d->nodes[2].c_expr, -1);
    desc_free(d);
}

static void test_elements(void **state)
{
    (void)state;
    desc *d = must_parse_eval("param gx = 3m\n"
                              "node x r=10k c=1p\n"
                              "node y r=20k c=2p\n"
                              "res r1 x y 33k\n"
                              "res r2 gnd y 47k\n"
                              "cap c1 x y 5p\n"
                              "cap c2 x gnd 6p\n"
                              "gm g1 x -> y gx * 2\n"
                              "gm g2 y -> x -0.5m\n"
                              "loop main negative x y\n");
    assert_int_equal(d->nelems, 6);
    const desc_elem *e = d->elems;
    assert_int_equal(e[0].kind, ELEM_RES);
    assert_string_equal(e[0].name, "r1");
    assert_int_equal(e[0].a, 0);
    assert_int_equal(e[0].b, 1);
    assert_rel(e[0].value, 33e3, 1e-15);
    /* gnd is kept on the b side */
    assert_int_equal(e[1].a, 1);
    assert_int_equal(e[1].b, DESC_GND);
    assert_rel(e[1].value, 47e3, 1e-15);
    assert_int_equal(e[2].kind, ELEM_CAP);
    assert_rel(e[2].value, 5e-12, 1e-15);
    assert_int_equal(e[3].b, DESC_GND);
    assert_int_equal(e[4].kind, ELEM_GM);
    assert_int_equal(e[4].a, 0); /* IN */
    assert_int_equal(e[4].b, 1); /* OUT */
    /* the value is the rest of the line, spaces included */
    assert_rel(e[4].value, 6e-3, 1e-15);
    assert_rel(e[5].value, -0.5e-3, 1e-15);
    assert_int_equal(e[4].v_at.line, 8);
    assert_int_equal(e[4].v_at.col, 14);
    assert_string_equal(desc_elem_kind_name(ELEM_CAP), "cap");
    assert_int_equal(desc_find_elem(d, "c2"), 3);
    assert_int_equal(desc_find_node(d, "y"), 1);
    assert_int_equal(desc_find_node(d, "z"), -1);
    desc_free(d);
}

static void test_loops_and_hops(void **state)
{
    (void)state;
    /* x1 -> out is a Miller stage: its gm is the hop, not the capacitor;
     * out -> inn goes through a res; inn -> x1 has two parallel gms. */
    desc *d = must_parse_eval("node inn r=inf c=10f\n"
                              "node x1 r=1M c=50f\n"
                              "node out r=50k c=1p\n"
                              "gm ga inn -> x1 60u\n"
                              "cap cc x1 out 1p\n"
                              "gm g2 x1 -> out -1m\n"
                              "gm gb inn -> x1 40u\n"
                              "res fb out inn 1\n"
                              "loop main negative inn x1 out\n");
    assert_int_equal(d->nloops, 1);
    const desc_loop *L = &d->loops[0];
    assert_string_equal(L->name, "main");
    assert_true(L->negative);
    assert_int_equal(L->nnodes, 3);
    assert_int_equal(L->nodes[0], 0);
    assert_int_equal(L->nodes[1], 1);
    assert_int_equal(L->nodes[2], 2);
    assert_int_equal(L->nhops[0], 2); /* ga then gb, file order */
    assert_int_equal(L->hops[0][0], desc_find_elem(d, "ga"));
    assert_int_equal(L->hops[0][1], desc_find_elem(d, "gb"));
    assert_int_equal(L->nhops[1], 1);
    assert_int_equal(L->hops[1][0], desc_find_elem(d, "g2"));
    assert_int_equal(L->nhops[2], 1);
    assert_int_equal(L->hops[2][0], desc_find_elem(d, "fb"));
    assert_int_equal(L->at.line, 9);
    /* automatic break: the first gm every loop has as a hop */
    assert_int_equal(d->brk, desc_find_elem(d, "ga"));
    assert_false(d->brk_explicit);
    desc_free(d);
}

static void test_automatic_break_common_gm(void **state)
{
    (void)state;
    /* g1 only in loop one, g2 in both: the break is g2 although g1 comes first */
    desc *d = must_parse_eval("node a r=1k c=1p\n"
                              "node b r=1k c=1p\n"
                              "node c r=1k c=1p\n"
                              "gm g1 b -> a 1m\n"
                              "gm g2 a -> b -1m\n"
                              "gm g3 b -> c 1m\n"
                              "gm g4 c -> a 1m\n"
                              "loop one negative a b\n"
                              "loop two negative a b c\n");
    assert_int_equal(d->brk, desc_find_elem(d, "g2"));
    assert_false(d->brk_explicit);
    assert_int_equal(d->brk_at.line, 8);
    desc_free(d);
}

static void test_explicit_break(void **state)
{
    (void)state;
    desc *d = must_parse_eval("node a r=1k c=1p\n"
                              "node b r=1k c=1p\n"
                              "gm g1 b -> a 1m\n"
                              "gm g2 a -> b -1m\n"
                              "loop main negative a b\n"
                              "break g2\n");
    assert_int_equal(d->brk, desc_find_elem(d, "g2"));
    assert_true(d->brk_explicit);
    assert_int_equal(d->brk_at.line, 6);
    desc_free(d);
    /* a break without any loop line */
    d = must_parse_eval("node a r=1k c=1p\n"
                        "node b r=1k c=1p\n"
                        "gm g1 b -> a 1m\n"
                        "gm g2 a -> b -1m\n"
                        "break g1\n");
    assert_int_equal(d->brk, 0);
    assert_int_equal(d->nloops, 0);
    desc_free(d);
}

/* break NODE (SPEC 1): the node's gms in file order; a gm break leaves
 * brk_node at -1 and a node break leaves brk at -1. */
static void test_break_node(void **state)
{
    (void)state;
    desc *d = must_parse_eval("node a r=1k c=1p\n"
                              "node b r=1k c=1p\n"
                              "node c r=1k c=1p\n"
                              "gm g1 a -> b 1m\n"
                              "gm g2 b -> a -1m\n"
                              "gm g3 a -> c 1m\n"
                              "gm g4 c -> a -1m\n"
                              "loop one negative a b\n"
                              "loop two negative a c\n"
                              "break a\n");
    assert_int_equal(d->brk_node, desc_find_node(d, "a"));
    assert_int_equal(d->brk, -1);
    assert_true(d->brk_explicit);
    int gms[4];
    assert_int_equal(desc_break_gms(d, d->brk_node, gms), 2);
    assert_int_equal(gms[0], desc_find_elem(d, "g1"));
    assert_int_equal(gms[1], desc_find_elem(d, "g3"));
    desc_free(d);
    /* the same loops without a break line: the error names node a */
    expect_error("node a r=1k c=1p\n"
                 "node b r=1k c=1p\n"
                 "node c r=1k c=1p\n"
                 "gm g1 a -> b 1m\n"
                 "gm g2 b -> a -1m\n"
                 "gm g3 a -> c 1m\n"
                 "gm g4 c -> a -1m\n"
                 "loop one negative a b\n"
                 "loop two negative a c\n",
                 0, 8, 1, "every loop passes through 'a': add 'break a'");
    /* a node declared after the break line is not known there */
    expect_error("node a r=1k c=1p\n"
                 "node b r=1k c=1p\n"
                 "gm g1 a -> b 1m\n"
                 "gm g2 b -> a -1m\n"
                 "break z\n"
                 "node z r=1k\n",
                 0, 5, 7, "unknown gm or node 'z'");
}

/* ---- error positions ---------------------------------------------------- */

static void test_unknown_node_suggests(void **state)
{
    (void)state;
    expect_error("node output r=1k c=1p\n"
                 "node inn r=1k c=1p\n"
                 "gm g1 inn -> outpt 1m\n",
                 0, 3, 14, "did you mean 'output'");
    expect_error("node x1 r=1k c=1p\n"
                 "node x2 r=1k c=1p\n"
                 "gm g1 x1 -> x2 1m\n"
                 "gm g2 x2 -> x1 -1m\n"
                 "loop main negative x1 x3\n",
                 0, 5, 23, "did you mean");
    expect_error("node out r=1k c=1p\n"
                 "node inn r=1k c=1p\n"
                 "res r1 inn qqqqqqq 1k\n",
                 0, 3, 12, "qqqqqqq");
}

static void test_duplicate_name(void **state)
{
    (void)state;
    /* points at the second declaration, names the line of the first */
    expect_error("param x = 1k\n"
                 "\n"
                 "node x r=1k c=1p\n",
                 0, 3, 6, "line 1");
    expect_error("node a r=1k c=1p\n"
                 "node b r=1k c=1p\n"
                 "gm g1 a -> b 1m\n"
                 "# a comment\n"
                 "res   g1 a b 1k\n",
                 0, 5, 7, "line 3");
}

static void test_glued_arrow(void **state)
{
    (void)state;
    expect_error("node a r=1k c=1p\n"
                 "node b r=1k c=1p\n"
                 "gm g1 a->b 1m\n",
                 0, 3, 7, "separate");
    expect_error("node a r=1k c=1p\n"
                 "node b r=1k c=1p\n"
                 "gm g1 a ->b 1m\n",
                 0, 3, 9, "separate");
}

static void test_unknown_keyword(void **state)
{
    (void)state;
    expect_error("node a r=1k c=1p\n"
                 "  nodes b r=1k c=1p\n",
                 0, 2, 3, "nodes");
    expect_error("node a r=1k c=1p\n"
                 "wire w a gnd 1k\n",
                 0, 2, 1, "wire");
}

static void test_missing_hop(void **state)
{
    (void)state;
    /* no element from b back to a */
    desc *d = NULL;
    lw_error err;
    int rc = parse("node a r=1k c=1p\n"
                   "node b r=1k c=1p\n"
                   "gm g1 a -> b 1m\n"
                   "loop main negative a b\n",
                   &d, &err);
    desc_free(d);
    assert_int_equal(rc, LW_EINPUT);
    assert_int_equal(err.line, 4);
    assert_true(err.col >= 1);
    assert_contains(err.msg, "hop");
    assert_contains(err.msg, "main");
}

static void test_no_common_gm(void **state)
{
    (void)state;
    /* two loops that share no gm: points at the first loop line */
    expect_error("node a r=1k c=1p\n"
                 "node b r=1k c=1p\n"
                 "node c r=1k c=1p\n"
                 "gm g1 a -> b 1m\n"
                 "gm g2 b -> a -1m\n"
                 "gm g3 a -> c 1m\n"
                 "gm g4 c -> a -1m\n"
                 "# loops follow\n"
                 "loop one negative a b\n"
                 "loop two negative a c\n",
                 0, 9, 1, "break");
    /* no loop and no break: line 1, column 1 */
    expect_error("node a r=1k c=1p\n"
                 "node b r=1k c=1p\n"
                 "gm g1 a -> b 1m\n"
                 "gm g2 b -> a -1m\n",
                 0, 1, 1, "break");
}

static void test_empty_file(void **state)
{
    (void)state;
    expect_error("", 0, 1, 1, NULL);
    expect_error("\n\n   \n", 0, 1, 1, NULL);
    expect_error("# only a comment\n# and another\n", 0, 1, 1, NULL);
}

static void test_floating_node(void **state)
{
    (void)state;
    /* z has no r, no c and only a gm on it */
    expect_error("node a r=1k c=1p\n"
                 "node b r=1k c=1p\n"
                 "node z\n"
                 "gm g1 b -> a 1m\n"
                 "gm g2 a -> b -1m\n"
                 "gm g3 a -> z 1m\n"
                 "loop main negative a b\n",
                 1, 3, 6, "'z'");
    /* r=inf and c=0 written out are the same */
    expect_error("node a r=1k c=1p\n"
                 "node b r=1k c=1p\n"
                 "node w r=inf c=0\n"
                 "gm g1 b -> a 1m\n"
                 "gm g2 a -> b -1m\n"
                 "loop main negative a b\n",
                 1, 3, 6, "'w'");
    /* a node with only a res on it is not floating */
    desc *d = must_parse_eval("node a r=1k c=1p\n"
                              "node b r=1k c=1p\n"
                              "node w\n"
                              "res rw a w 1k\n"
                              "gm g1 b -> a 1m\n"
                              "gm g2 a -> b -1m\n"
                              "loop main negative a b\n");
    desc_free(d);
}

static void test_value_errors(void **state)
{
    (void)state;
    /* division by zero in a gm value points at the '/' */
    expect_error("node a r=1k c=1p\n"
                 "node b r=1k c=1p\n"
                 "gm g1 b -> a 1m/0\n"
                 "gm g2 a -> b -1m\n"
                 "loop main negative a b\n",
                 1, 3, 16, "division by zero");
    /* inside a node field: "node a r=1k/(1-1)" */
    expect_error("node a r=1k/(1-1) c=1p\n"
                 "node b r=1k c=1p\n"
                 "gm g1 b -> a 1m\n"
                 "gm g2 a -> b -1m\n"
                 "loop main negative a b\n",
                 1, 1, 12, "division by zero");
    /* a unit that does not fit the field */
    expect_error("node a r=1k c=1kohm\n", 0, 1, 0, "does not fit");
    expect_error("node a r=10meg c=1p\n", 0, 1, 0, "for mega write M");
    /* a negative resistance */
    expect_error("node a r=1k c=1p\n"
                 "node b r=1k c=1p\n"
                 "res r1 a b -5k\n"
                 "gm g1 b -> a 1m\n"
                 "gm g2 a -> b -1m\n"
                 "loop main negative a b\n",
                 1, 3, 0, "r1");
}

static void test_crlf_and_bom(void **state)
{
    (void)state;
    desc *d = must_parse_eval("\xEF\xBB\xBFparam gmv = 2m\r\n"
                              "node a r=10k c=1p\r\n"
                              "node b r=1k\r\n"
                              "\r\n"
                              "gm g1 b -> a gmv\r\n"
                              "gm g2 a -> b -1m   # comment\r\n"
                              "loop main negative a b\r\n");
    assert_int_equal(d->nparams, 1);
    assert_string_equal(d->params[0].name, "gmv");
    assert_rel(d->params[0].value, 2e-3, 1e-15);
    assert_int_equal(d->nnodes, 2);
    assert_rel(d->nodes[0].c, 1e-12, 1e-15);
    assert_rel(d->nodes[1].r, 1e3, 1e-15);
    assert_string_equal(d->loops[0].name, "main");
    assert_int_equal(d->loops[0].nnodes, 2);
    assert_rel(d->elems[1].value, -1e-3, 1e-15);
    desc_free(d);
    /* the byte-order mark takes no column */
    expect_error("\xEF\xBB\xBFnodes a r=1k\r\n", 0, 1, 1, "nodes");
    expect_error("\xEF\xBB\xBF" "node a r=1k c=1p\r\n"
                 "node b r=1k c=1p\r\n"
                 "gm g1 a->b 1m\r\n",
                 0, 3, 7, "separate");
}

/* ---- overrides ---------------------------------------------------------- */

static void test_set_param_reevaluates_dependents(void **state)
{
    (void)state;
    desc *d = must_parse_eval(ring);
    lw_error err;
    lw_error_clear(&err);
    assert_rel(d->nodes[0].r, 10e3, 1e-15);
    assert_int_equal(desc_set(d, "rl=22k", &err), LW_OK);
    assert_int_equal(desc_eval(d, &err), LW_OK);
    assert_rel(d->nodes[0].r, 22e3, 1e-15);
    desc_free(d);
    /* a param that depends on the overridden one follows it */
    d = must_parse_eval("param r0 = 1k\n"
                        "param r1 = 3 * r0\n"
                        "node a r=r1 c=1p\n"
                        "node b r=r0\n"
                        "gm g1 b -> a 1m\n"
                        "gm g2 a -> b -1m\n"
                        "loop main negative a b\n");
    assert_rel(d->params[1].value, 3e3, 1e-15);
    assert_int_equal(desc_set(d, "r0=5k", &err), LW_OK);
    assert_int_equal(desc_eval(d, &err), LW_OK);
    assert_rel(d->params[0].value, 5e3, 1e-15);
    assert_rel(d->params[1].value, 15e3, 1e-15);
    assert_rel(d->nodes[0].r, 15e3, 1e-15);
    assert_rel(d->nodes[1].r, 5e3, 1e-15);
    /* a later param may use an earlier one in the override */
    assert_int_equal(desc_set(d, "r1=r0*2", &err), LW_OK);
    assert_int_equal(desc_eval(d, &err), LW_OK);
    assert_rel(d->nodes[0].r, 10e3, 1e-15);
    desc_free(d);
}

static void test_set_element_and_node_fields(void **state)
{
    (void)state;
    desc *d = must_parse_eval(ring);
    lw_error err;
    lw_error_clear(&err);
    assert_int_equal(desc_set(d, "g2=-3m", &err), LW_OK);
    assert_int_equal(desc_set(d, "a.r=7.5k", &err), LW_OK);
    assert_int_equal(desc_set(d, "b.c=4p", &err), LW_OK);
    assert_int_equal(desc_eval(d, &err), LW_OK);
    assert_rel(d->elems[1].value, -3e-3, 1e-15);
    assert_rel(d->elems[0].value, 2e-3, 1e-15);
    assert_rel(d->nodes[0].r, 7.5e3, 1e-15);
    assert_rel(d->nodes[0].c, 1e-12, 1e-15);
    assert_rel(d->nodes[1].c, 4e-12, 1e-15);
    assert_rel(d->nodes[1].r, 1e3, 1e-15);
    desc_target t;
    assert_int_equal(desc_target_find(d, "a.r", &t, &err), LW_OK);
    assert_int_equal(t.kind, TARGET_NODE_R);
    assert_rel(desc_target_value(d, t), 7.5e3, 1e-15);
    desc_free(d);
}

static void test_set_errors(void **state)
{
    (void)state;
    desc *d = must_parse_eval(ring);
    lw_error err;
    lw_error_clear(&err);
    assert_int_equal(desc_set(d, "gmx=1m", &err), LW_EINPUT);
    assert_contains(err.msg, "gmv");           /* did you mean */
    assert_int_equal(desc_set(d, "a=1k", &err), LW_EINPUT);
    assert_int_equal(desc_set(d, "a.q=1k", &err), LW_EINPUT);
    assert_int_equal(desc_set(d, "a.r=2pF", &err), LW_EINPUT);
    assert_contains(err.msg, "does not fit");
    assert_int_equal(desc_set(d, "nothing", &err), LW_EINPUT);
    /* a value out of range is caught by desc_eval */
    assert_int_equal(desc_set(d, "a.r=-1k", &err), LW_OK);
    assert_int_equal(desc_eval(d, &err), LW_EINPUT);
    desc_free(d);
}

/* Issue 17, fault 8: a param's unit is the unit of the fields it is the
 * whole value of (by the definition of each field: node r and res in ohm,
 * node c and cap in farad, gm in siemens); a param that only sits inside a
 * larger expression, or feeds fields of different units, has none. */
static void test_param_units_from_fields(void **state)
{
    (void)state;
    desc *d = must_parse_eval("param cl = 4p\n"          /* node c: F */
                              "param cm = 1p\n"          /* cap: F */
                              "param cm2 = cm\n"         /* a param that is exactly cm */
                              "param g2 = 1.8m\n"        /* -g2 in a gm: S */
                              "param ro = 60k\n"         /* node r and a res: ohm */
                              "param k = 2\n"            /* only inside a product: none */
                              "param both = 1k\n"        /* a res and a gm: mixed, none */
                              "param unused = 3\n"
                              "node a r=ro c=cl\n"
                              "node b r=1M c=80f\n"
                              "gm g1 a -> b 100u\n"
                              "gm g2e b -> a -g2\n"
                              "gm g3 a -> b both\n"
                              "cap cc b a cm2\n"
                              "res r1 a gnd ro\n"
                              "res r2 b gnd both\n"
                              "res r3 a b k*ro\n"
                              "loop main negative a b\n"
                              "break g1\n");
    static const struct { const char *name; expr_unit unit; } want[] = {
        { "cl", UNIT_F }, { "cm", UNIT_F }, { "cm2", UNIT_F }, { "g2", UNIT_S },
        { "ro", UNIT_OHM }, { "k", UNIT_ANY }, { "both", UNIT_ANY }, { "unused", UNIT_ANY },
    };
    for (size_t j = 0; j < sizeof want / sizeof *want; j++) {
        desc_target t;
        lw_error err;
        assert_int_equal(desc_target_find(d, want[j].name, &t, &err), LW_OK);
        if (desc_target_shown_unit(d, t) != want[j].unit) {
            print_error("param %s: unit %d, expected %d\n", want[j].name,
                        desc_target_shown_unit(d, t), want[j].unit);
            fail();
        }
        /* what the command line accepts for a param is unchanged: any unit */
        assert_int_equal(desc_target_unit(d, t), UNIT_ANY);
    }
    desc_free(d);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_params_and_values),
        cmocka_unit_test(test_nodes_fields_and_defaults),
        cmocka_unit_test(test_elements),
        cmocka_unit_test(test_loops_and_hops),
        cmocka_unit_test(test_automatic_break_common_gm),
        cmocka_unit_test(test_explicit_break),
        cmocka_unit_test(test_break_node),
        cmocka_unit_test(test_unknown_node_suggests),
        cmocka_unit_test(test_duplicate_name),
        cmocka_unit_test(test_glued_arrow),
        cmocka_unit_test(test_unknown_keyword),
        cmocka_unit_test(test_missing_hop),
        cmocka_unit_test(test_no_common_gm),
        cmocka_unit_test(test_empty_file),
        cmocka_unit_test(test_floating_node),
        cmocka_unit_test(test_value_errors),
        cmocka_unit_test(test_crlf_and_bom),
        cmocka_unit_test(test_set_param_reevaluates_dependents),
        cmocka_unit_test(test_set_element_and_node_fields),
        cmocka_unit_test(test_set_errors),
        cmocka_unit_test(test_param_units_from_fields),
    };
    return cmocka_run_group_tests_name("desc", tests, NULL, NULL);
}
