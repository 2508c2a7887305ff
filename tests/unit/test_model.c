/* Unit tests for model: the stamps of nodes, two-terminal elements and gms
 * into G and C, and model_fill_g with an off mask. */
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
#include "loopwise/model.h"
#include "loopwise/text.h"

#include "testutil.h"

/* Exactly zero (an entry no element touches). */
#define assert_zero(got)                                                                 \
    do {                                                                                 \
        double z_ = (got);                                                               \
        if (z_ != 0.0) {                                                                 \
            print_error("%s = %.17g, expected 0\n", #got, z_);                          \
            fail();                                                                      \
        }                                                                                \
    } while (0)

typedef struct net {
    desc *d;
    model *m;
} net;

/* text_from_buffer -> desc_parse -> desc_eval -> model_new. */
static net build(const char *src)
{
    net nt = { NULL, NULL };
    text_file *t = NULL;
    lw_error err;
    lw_error_clear(&err);
    int rc = text_from_buffer(src, strlen(src), &t, &err);
    if (rc == LW_OK)
        rc = desc_parse(t, "test.loop", &nt.d, &err);
    text_free(t);
    if (rc == LW_OK)
        rc = desc_eval(nt.d, &err);
    if (rc == LW_OK)
        rc = model_new(nt.d, &nt.m, &err);
    if (rc != LW_OK) {
        print_error("building the network failed at %d:%d: %s\n", err.line, err.col, err.msg);
        desc_free(nt.d);
        fail();
    }
    return nt;
}

static void drop(net *nt)
{
    model_free(nt->m);
    desc_free(nt->d);
}

#define AT(A, n, i, j) ((A)[(i) * (n) + (j)])

static void test_node_fields_on_diagonal(void **state)
{
    (void)state;
    net nt = build("node a r=2k c=3p\n"
                   "node b r=inf c=5p\n"
                   "node c r=500\n"
                   "gm g1 a -> b 1m\n"
                   "gm g2 b -> c 1m\n"
                   "gm g3 c -> a -1m\n"
                   "loop main negative a b c\n");
    const model *m = nt.m;
    int n = m->n;
    assert_int_equal(n, 3);
    assert_rel(AT(m->Gp, n, 0, 0), 1.0 / 2e3, 1e-15);
    assert_zero(AT(m->Gp, n, 1, 1)); /* r=inf: no conductance */
    assert_rel(AT(m->Gp, n, 2, 2), 1.0 / 500.0, 1e-15);
    assert_rel(AT(m->C, n, 0, 0), 3e-12, 1e-15);
    assert_rel(AT(m->C, n, 1, 1), 5e-12, 1e-15);
    assert_zero(AT(m->C, n, 2, 2));
    /* Gp holds no gm: every off-diagonal entry is zero */
    for (int i = 0; i < n; i++)
        for (int j = 0; j < n; j++)
            if (i != j) {
                assert_zero(AT(m->Gp, n, i, j));
                assert_zero(AT(m->C, n, i, j));
            }
    drop(&nt);
}

static void test_two_terminal_stamps(void **state)
{
    (void)state;
    net nt = build("node a r=1k c=1p\n"
                   "node b r=4k\n"
                   "node c c=2p\n"
                   "res r1 a b 250\n"
                   "res r2 gnd c 8k\n"
                   "cap c1 b c 7p\n"
                   "cap c2 a gnd 11p\n"
                   "gm g1 a -> b 1m\n"
                   "gm g2 b -> a -1m\n"
                   "loop main negative a b\n");
    const model *m = nt.m;
    int n = m->n;
    /* res r1 between a and b: +1/R on both diagonals, -1/R off the diagonal */
    assert_rel(AT(m->Gp, n, 0, 0), 1.0 / 1e3 + 1.0 / 250.0, 1e-15);
    assert_rel(AT(m->Gp, n, 1, 1), 1.0 / 4e3 + 1.0 / 250.0, 1e-15);
    assert_rel(AT(m->Gp, n, 0, 1), -1.0 / 250.0, 1e-15);
    assert_rel(AT(m->Gp, n, 1, 0), -1.0 / 250.0, 1e-15);
    /* res r2 from c to gnd: diagonal only */
    assert_rel(AT(m->Gp, n, 2, 2), 1.0 / 8e3, 1e-15);
    assert_zero(AT(m->Gp, n, 0, 2));
    assert_zero(AT(m->Gp, n, 2, 0));
    assert_zero(AT(m->Gp, n, 1, 2));
    assert_zero(AT(m->Gp, n, 2, 1));
    /* cap c1 between b and c, cap c2 from a to gnd */
    assert_rel(AT(m->C, n, 0, 0), 1e-12 + 11e-12, 1e-15);
    assert_rel(AT(m->C, n, 1, 1), 7e-12, 1e-15);
    assert_rel(AT(m->C, n, 2, 2), 2e-12 + 7e-12, 1e-15);
    assert_rel(AT(m->C, n, 1, 2), -7e-12, 1e-15);
    assert_rel(AT(m->C, n, 2, 1), -7e-12, 1e-15);
    assert_zero(AT(m->C, n, 0, 1));
    assert_zero(AT(m->C, n, 0, 2));
    drop(&nt);
}

static void test_gm_stamp_and_off_mask(void **state)
{
    (void)state;
    net nt = build("node a r=1k c=1p\n"
                   "node b r=2k c=1p\n"
                   "node c r=3k c=1p\n"
                   "res rab a b 10k\n"
                   "gm g1 a -> b 2m\n"
                   "gm g2 b -> c -3m\n"
                   "gm g3 c -> a 5m\n"
                   "gm g4 a -> b 0.5m\n"
                   "loop main negative a b c\n"
                   "break g2\n");
    const model *m = nt.m;
    int n = m->n;
    assert_int_equal(m->ngm, 4);
    assert_int_equal(m->gm[0].in, 0);
    assert_int_equal(m->gm[0].out, 1);
    assert_rel(m->gm[1].g, -3e-3, 1e-15);
    assert_int_equal(m->brk, 1);
    assert_int_equal(m->gm[m->brk].elem, desc_find_elem(nt.d, "g2"));
    assert_int_equal(model_gm_of_elem(m, desc_find_elem(nt.d, "g3")), 2);
    assert_int_equal(model_gm_of_elem(m, desc_find_elem(nt.d, "rab")), -1);

    double *G = malloc(sizeof(double) * (size_t)(n * n));
    assert_non_null(G);
    /* all on: G[OUT][IN] -= g for each, parallel gms add up */
    model_fill_g(m, NULL, G);
    assert_rel(AT(G, n, 1, 0), -1.0 / 10e3 - 2e-3 - 0.5e-3, 1e-15);
    assert_rel(AT(G, n, 0, 1), -1.0 / 10e3, 1e-15); /* a gm is one-way */
    assert_rel(AT(G, n, 2, 1), 3e-3, 1e-15);
    assert_zero(AT(G, n, 1, 2));
    assert_rel(AT(G, n, 0, 2), -5e-3, 1e-15);
    assert_zero(AT(G, n, 2, 0));
    assert_rel(AT(G, n, 0, 0), 1.0 / 1e3 + 1.0 / 10e3, 1e-15);
    assert_rel(AT(G, n, 1, 1), 1.0 / 2e3 + 1.0 / 10e3, 1e-15);
    assert_rel(AT(G, n, 2, 2), 1.0 / 3e3, 1e-15);

    /* off mask: g2 (the break) and g4 switched off */
    unsigned char off[4] = { 0, 1, 0, 1 };
    model_fill_g(m, off, G);
    assert_rel(AT(G, n, 1, 0), -1.0 / 10e3 - 2e-3, 1e-15);
    assert_zero(AT(G, n, 2, 1));
    assert_rel(AT(G, n, 0, 2), -5e-3, 1e-15);
    /* Gp itself is left untouched */
    for (int i = 0; i < n; i++)
        for (int j = 0; j < n; j++)
            if (!((i == 0 && j == 1) || (i == 1 && j == 0) || i == j))
                assert_zero(AT(m->Gp, n, i, j));

    /* every gm off: G equals Gp */
    unsigned char all[4] = { 1, 1, 1, 1 };
    model_fill_g(m, all, G);
    for (int k = 0; k < n * n; k++)
        assert_true(G[k] == m->Gp[k]);
    free(G);
    drop(&nt);
}

static void test_self_gm_stamps_diagonal(void **state)
{
    (void)state;
    /* a gm from a node to itself lands on the diagonal */
    net nt = build("node a r=1k c=1p\n"
                   "gm g1 a -> a -2m\n"
                   "loop main negative a\n");
    const model *m = nt.m;
    double G[1];
    model_fill_g(m, NULL, G);
    assert_rel(G[0], 1.0 / 1e3 + 2e-3, 1e-15);
    drop(&nt);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_node_fields_on_diagonal),
        cmocka_unit_test(test_two_terminal_stamps),
        cmocka_unit_test(test_gm_stamp_and_off_mask),
        cmocka_unit_test(test_self_gm_stamps_diagonal),
    };
    return cmocka_run_group_tests_name("model", tests, NULL, NULL);
}
