/* Unit tests for expr: SI numbers, units that must fit the field, operator
 * precedence, functions and constants, and error positions. */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/diag.h"
#include "loopwise/expr.h"


#include "testutil.h"

#define assert_contains(hay, needle)                                                     \
    do {                                                                                 \
        if (!strstr((hay), (needle))) {                                                  \
            print_error("message \"%s\" does not contain \"%s\"\n", (hay), (needle));    \
            fail();                                                                      \
        }                                                                                \
    } while (0)

/* Two params for the tests that name some: k2 = 2.5, big = 1e300. */
static const char *const test_param_names[] = { "k2", "big" };
static const double test_param_values[] = { 2.5, 1e300 };

static int test_lookup(void *ctx, const char *name)
{
    (void)ctx;
    for (int k = 0; k < 2; k++)
        if (!strcmp(test_param_names[k], name))
            return k;
    return -1;
}

static const char *test_suggest(void *ctx, const char *name)
{
    (void)ctx;
    return lw_closest(name, test_param_names, 2);
}

static const expr_names test_names = { test_lookup, test_suggest, NULL };

/* Compiles text as the whole expression at line 7, starting in column col0,
 * and evaluates it. Returns the first failing status. */
static int run_at(const char *text, expr_unit unit, int col0, double *v, lw_error *err)
{
    expr_pool *p = expr_pool_new();
    assert_non_null(p);
    lw_error_clear(err);
    int h = -1;
    int rc = expr_compile(p, text, unit, &test_names, 7, col0, text, &h, err);
    if (rc == LW_OK)
        rc = expr_eval(p, h, test_param_values, v, err);
    expr_pool_free(p);
    return rc;
}

static double value_of(const char *text, expr_unit unit)
{
    lw_error err;
    double v = NAN;
    int rc = run_at(text, unit, 1, &v, &err);
    if (rc != LW_OK) {
        print_error("'%s' failed: %s\n", text, err.msg);
        fail();
    }
    return v;
}

static double number_of(const char *text, expr_unit unit)
{
    lw_error err;
    lw_error_clear(&err);
    double v = NAN;
    int rc = expr_number(text, unit, &v, &err);
    if (rc != LW_OK) {
        print_error("expr_number('%s') failed: %s\n", text, err.msg);
        fail();
    }
    return v;
}

/* ---- numbers ------------------------------------------------------------ */

static void test_plain_numbers(void **state)
{
    (void)state;
    assert_rel(number_of("12", UNIT_NONE), 12.0, 1e-15);
    assert_rel(number_of("1.5", UNIT_NONE), 1.5, 1e-15);
    assert_rel(number_of(".5", UNIT_NONE), 0.5, 1e-15);
    assert_rel(number_of("1e-12", UNIT_NONE), 1e-12, 1e-15);
    assert_rel(number_of("2.5E3", UNIT_NONE), 2500.0, 1e-15);
    assert_rel(number_of("7.25e+2", UNIT_NONE), 725.0, 1e-15);
    /* the same through the expression compiler */
    assert_rel(value_of(".5", UNIT_ANY), 0.5, 1e-15);
    assert_rel(value_of("2.5E3", UNIT_ANY), 2500.0, 1e-15);
}

static void test_si_prefixes(void **state)
{
    (void)state;
    assert_rel(number_of("3f", UNIT_F), 3e-15, 1e-15);
    assert_rel(number_of("2.2pF", UNIT_F), 2.2e-12, 1e-15);
    assert_rel(number_of("47n", UNIT_F), 47e-9, 1e-15);
    assert_rel(number_of("40uS", UNIT_S), 40e-6, 1e-15);
    assert_rel(number_of("180k", UNIT_OHM), 180e3, 1e-15);
    assert_rel(number_of("3.3M", UNIT_OHM), 3.3e6, 1e-15);
    assert_rel(number_of("1.5G", UNIT_ANY), 1.5e9, 1e-15);
    assert_rel(number_of("2T", UNIT_ANY), 2e12, 1e-15);
    /* an exponent and a prefix together */
    assert_rel(number_of("1e3k", UNIT_OHM), 1e6, 1e-15);
    assert_rel(value_of("1e3k", UNIT_OHM), 1e6, 1e-15);
    assert_rel(value_of("2.2pF", UNIT_F), 2.2e-12, 1e-15);
    assert_rel(value_of("40uS", UNIT_S), 40e-6, 1e-15);
}

static void test_micro_sign_both_code_points(void **state)
{
    (void)state;
    /* U+00B5 MICRO SIGN and U+03BC GREEK SMALL LETTER MU */
    assert_rel(number_of("4.7\xC2\xB5" "F", UNIT_F), 4.7e-6, 1e-15);
    assert_rel(number_of("4.7\xCE\xBC" "F", UNIT_F), 4.7e-6, 1e-15);
    assert_rel(number_of("33\xC2\xB5", UNIT_S), 33e-6, 1e-15);
    assert_rel(value_of("33\xCE\xBC" "S", UNIT_S), 33e-6, 1e-15);
    assert_rel(value_of("2\xC2\xB5" "F + 3\xCE\xBC" "F", UNIT_F), 5e-6, 1e-15);
}

static void test_milli_versus_mega(void **state)
{
    (void)state;
    assert_rel(number_of("5m", UNIT_S), 5e-3, 1e-15);
    assert_rel(number_of("5mS", UNIT_S), 5e-3, 1e-15);
    assert_rel(number_of("5M", UNIT_OHM), 5e6, 1e-15);
    assert_rel(number_of("5Mohm", UNIT_OHM), 5e6, 1e-15);
    assert_rel(number_of("5mohm", UNIT_OHM), 5e-3, 1e-15);
    assert_rel(value_of("1M / 1m", UNIT_ANY), 1e9, 1e-15);
}

static void test_unit_symbols(void **state)
{
    (void)state;
    assert_rel(number_of("10ohm", UNIT_OHM), 10.0, 1e-15);
    assert_rel(number_of("10k\xCE\xA9", UNIT_OHM), 10e3, 1e-15);   /* U+03A9 */
    assert_rel(number_of("10k\xE2\x84\xA6", UNIT_OHM), 10e3, 1e-15); /* U+2126 */
    assert_rel(number_of("3F", UNIT_F), 3.0, 1e-15);
    assert_rel(number_of("2S", UNIT_S), 2.0, 1e-15);
    /* a param takes any of them */
    assert_rel(number_of("2.2pF", UNIT_ANY), 2.2e-12, 1e-15);
    assert_rel(number_of("180kohm", UNIT_ANY), 180e3, 1e-15);
    assert_rel(number_of("40uS", UNIT_ANY), 40e-6, 1e-15);
}

static void test_unit_must_fit_field(void **state)
{
    (void)state;
    lw_error err;
    double v;
    lw_error_clear(&err);
    assert_int_equal(expr_number("2.2pF", UNIT_OHM, &v, &err), LW_EINPUT);
    assert_contains(err.msg, "does not fit");
    lw_error_clear(&err);
    assert_int_equal(expr_number("40uS", UNIT_F, &v, &err), LW_EINPUT);
    assert_contains(err.msg, "does not fit");
    lw_error_clear(&err);
    assert_int_equal(expr_number("180kohm", UNIT_S, &v, &err), LW_EINPUT);
    assert_contains(err.msg, "does not fit");
    lw_error_clear(&err);
    assert_int_equal(expr_number("1nF", UNIT_NONE, &v, &err), LW_EINPUT);
    /* through the compiler, with a position on the given line */
    assert_int_equal(run_at("2.2pF", UNIT_OHM, 1, &v, &err), LW_EINPUT);
    assert_contains(err.msg, "does not fit");
    assert_int_equal(err.line, 7);
    assert_true(err.col >= 1 && err.col <= 5);
    assert_int_equal(run_at("1k + 40uS", UNIT_F, 1, &v, &err), LW_EINPUT);
    assert_contains(err.msg, "does not fit");
    assert_int_equal(err.line, 7);
    assert_true(err.col >= 6 && err.col <= 10);
}

static void test_unknown_suffix(void **state)
{
    (void)state;
    lw_error err;
    double v;
    lw_error_clear(&err);
    assert_int_equal(expr_number("10meg", UNIT_OHM, &v, &err), LW_EINPUT);
    assert_contains(err.msg, "for mega write M");
    assert_contains(err.msg, "meg");
    assert_int_equal(run_at("10meg", UNIT_OHM, 1, &v, &err), LW_EINPUT);
    assert_contains(err.msg, "for mega write M");
    assert_int_equal(err.line, 7);
    lw_error_clear(&err);
    assert_int_equal(expr_number("3xyz", UNIT_F, &v, &err), LW_EINPUT);
    assert_contains(err.msg, "xyz");
    lw_error_clear(&err);
    assert_int_equal(expr_number("12 ", UNIT_NONE, &v, &err), LW_EINPUT);
    lw_error_clear(&err);
    assert_int_equal(expr_number("abc", UNIT_NONE, &v, &err), LW_EINPUT);
}

/* ---- operators ---------------------------------------------------------- */

static void test_precedence(void **state)
{
    (void)state;
    assert_rel(value_of("-2^2", UNIT_NONE), -4.0, 1e-15);       /* unary minus looser than ^ */
    assert_rel(value_of("2^3^2", UNIT_NONE), 512.0, 1e-15);     /* right-associative */
    assert_rel(value_of("(2^3)^2", UNIT_NONE), 64.0, 1e-15);
    assert_rel(value_of("2^-1", UNIT_NONE), 0.5, 1e-15);
    assert_rel(value_of("(-2)^2", UNIT_NONE), 4.0, 1e-15);
    assert_rel(value_of("1 + 2 * 3", UNIT_NONE), 7.0, 1e-15);
    assert_rel(value_of("(1 + 2) * 3", UNIT_NONE), 9.0, 1e-15);
    assert_rel(value_of("2 * 3 ^ 2", UNIT_NONE), 18.0, 1e-15);
    assert_rel(value_of("8 / 4 / 2", UNIT_NONE), 1.0, 1e-15);   /* left-associative */
    assert_rel(value_of("10 - 4 - 3", UNIT_NONE), 3.0, 1e-15);
    assert_rel(value_of("-3 * -2", UNIT_NONE), 6.0, 1e-15);
    assert_rel(value_of("2 - -2", UNIT_NONE), 4.0, 1e-15);
    assert_rel(value_of("+5", UNIT_NONE), 5.0, 1e-15);
    assert_rel(value_of("1k * 2 + 3k", UNIT_OHM), 5e3, 1e-15);
}

static void test_functions(void **state)
{
    (void)state;
    assert_rel(value_of("sqrt(16)", UNIT_NONE), 4.0, 1e-15);
    assert_rel(value_of("exp(1)", UNIT_NONE), exp(1.0), 1e-15);
    assert_rel(value_of("ln(exp(2.5))", UNIT_NONE), 2.5, 1e-15);
    assert_rel(value_of("log10(1000)", UNIT_NONE), 3.0, 1e-15);
    assert_rel(value_of("abs(-3.5)", UNIT_NONE), 3.5, 1e-15);
    assert_rel(value_of("abs(3.5)", UNIT_NONE), 3.5, 1e-15);
    assert_rel(value_of("min(2, 3)", UNIT_NONE), 2.0, 1e-15);
    assert_rel(value_of("max(2,3)", UNIT_NONE), 3.0, 1e-15);
    assert_rel(value_of("min(-1, -4)", UNIT_NONE), -4.0, 1e-15);
    assert_rel(value_of("sqrt(max(9, 4) * 4)", UNIT_NONE), 6.0, 1e-15);
    assert_rel(value_of("sqrt (25)", UNIT_NONE), 5.0, 1e-15);
    assert_rel(value_of("1/(2*pi*10k*1n)", UNIT_ANY), 1.0 / (2 * PI_ * 1e4 * 1e-9), 1e-14);
}

static void test_function_errors(void **state)
{
    (void)state;
    lw_error err;
    double v;
    assert_int_equal(run_at("min(1)", UNIT_NONE, 1, &v, &err), LW_EINPUT);
    assert_int_equal(run_at("sqrt(1, 2)", UNIT_NONE, 1, &v, &err), LW_EINPUT);
    assert_int_equal(run_at("cosh(1)", UNIT_NONE, 1, &v, &err), LW_EINPUT);
    assert_int_equal(run_at("sqrt(-1)", UNIT_NONE, 1, &v, &err), LW_EINPUT);
    assert_int_equal(run_at("ln(0)", UNIT_NONE, 1, &v, &err), LW_EINPUT);
    assert_int_equal(run_at("log10(-2)", UNIT_NONE, 1, &v, &err), LW_EINPUT);
    assert_int_equal(run_at("sqrt(4", UNIT_NONE, 1, &v, &err), LW_EINPUT);
}

static void test_constants(void **state)
{
    (void)state;
    assert_rel(value_of("pi", UNIT_NONE), PI_, 1e-16);
    assert_rel(value_of("2*pi", UNIT_NONE), 2.0 * PI_, 1e-16);
    double v = value_of("inf", UNIT_OHM);
    assert_true(isinf(v) && v > 0);
    assert_rel(value_of("1/inf", UNIT_NONE), 0.0, 1e-16);
}

static void test_params(void **state)
{
    (void)state;
    assert_rel(value_of("k2 * 2", UNIT_ANY), 5.0, 1e-15);
    assert_rel(value_of("k2^2", UNIT_ANY), 6.25, 1e-15);
    lw_error err;
    double v;
    assert_int_equal(run_at("k3 + 1", UNIT_ANY, 1, &v, &err), LW_EINPUT);
    assert_contains(err.msg, "k3");
    assert_contains(err.msg, "did you mean 'k2'");
    assert_int_equal(err.col, 1);
}

/* ---- evaluation errors and positions ------------------------------------ */

static void test_division_by_zero_column(void **state)
{
    (void)state;
    lw_error err;
    double v;
    assert_int_equal(run_at("1/0", UNIT_NONE, 1, &v, &err), LW_EINPUT);
    assert_contains(err.msg, "division by zero");
    assert_int_equal(err.line, 7);
    assert_int_equal(err.col, 2);
    /* the '/' is column 6 of "1 + 2/(3-3)" */
    assert_int_equal(run_at("1 + 2/(3-3)", UNIT_NONE, 1, &v, &err), LW_EINPUT);
    assert_contains(err.msg, "division by zero");
    assert_int_equal(err.col, 6);
    /* the expression starts in column 20 of its line: '/' is column 22 */
    assert_int_equal(run_at("4 / (k2 - 2.5)", UNIT_ANY, 20, &v, &err), LW_EINPUT);
    assert_contains(err.msg, "division by zero");
    assert_int_equal(err.col, 22);
    /* columns count characters, not bytes: the micro sign is one column */
    assert_int_equal(run_at("2\xC2\xB5/0", UNIT_ANY, 1, &v, &err), LW_EINPUT);
    assert_contains(err.msg, "division by zero");
    assert_int_equal(err.col, 3);
}

static void test_overflow_and_nan(void **state)
{
    (void)state;
    lw_error err;
    double v;
    assert_int_equal(run_at("big * big", UNIT_ANY, 1, &v, &err), LW_EINPUT);
    assert_int_equal(err.line, 7);
    assert_int_equal(run_at("inf - inf", UNIT_ANY, 1, &v, &err), LW_EINPUT);
    assert_int_equal(run_at("1e999", UNIT_ANY, 1, &v, &err), LW_EINPUT);
}

static void test_syntax_errors(void **state)
{
    (void)state;
    lw_error err;
    double v;
    assert_int_equal(run_at("1 +", UNIT_NONE, 1, &v, &err), LW_EINPUT);
    assert_int_equal(err.line, 7);
    assert_int_equal(run_at("(1 + 2", UNIT_NONE, 1, &v, &err), LW_EINPUT);
    assert_int_equal(run_at("1 2", UNIT_NONE, 1, &v, &err), LW_EINPUT);
    assert_int_equal(err.col, 3);
    assert_int_equal(run_at("", UNIT_NONE, 1, &v, &err), LW_EINPUT);
    assert_int_equal(run_at("*3", UNIT_NONE, 1, &v, &err), LW_EINPUT);
    assert_int_equal(err.col, 1);
}

static char *nested(int depth)
{
    char *s = malloc((size_t)(2 * depth + 2));
    assert_non_null(s);
    memset(s, '(', (size_t)depth);
    s[depth] = '1';
    memset(s + depth + 1, ')', (size_t)depth);
    s[2 * depth + 1] = '\0';
    return s;
}

static void test_nesting_limit(void **state)
{
    (void)state;
    lw_error err;
    double v = 0;
    char *ok = nested(10);
    assert_int_equal(run_at(ok, UNIT_NONE, 1, &v, &err), LW_OK);
    assert_rel(v, 1.0, 1e-15);
    free(ok);
    /* far beyond the limit: an error, not a stack overflow */
    char *deep = nested(5000);
    assert_int_equal(run_at(deep, UNIT_NONE, 1, &v, &err), LW_EINPUT);
    assert_contains(err.msg, "nested too deeply");
    assert_int_equal(err.line, 7);
    assert_true(err.col > 1 && err.col <= 5000);
    free(deep);
    /* unary minus nests too */
    char minus[3001];
    memset(minus, '-', 3000);
    minus[2999] = '1';
    minus[3000] = '\0';
    assert_int_equal(run_at(minus, UNIT_NONE, 1, &v, &err), LW_EINPUT);
    assert_contains(err.msg, "nested too deeply");
}

/* The message promises a limit of EXPR_MAX_DEPTH (64) levels; parentheses
 * nested fewer levels deep than that must be accepted. */
static void test_nesting_below_stated_limit(void **state)
{
    (void)state;
    lw_error err;
    double v = 0;
    char *s = nested(EXPR_MAX_DEPTH - 4);
    int rc = run_at(s, UNIT_NONE, 1, &v, &err);
    if (rc != LW_OK)
        print_error("%d nested parentheses rejected: %s\n", EXPR_MAX_DEPTH - 4, err.msg);
    assert_int_equal(rc, LW_OK);
    assert_rel(v, 1.0, 1e-15);
    free(s);
}

static void test_reserved(void **state)
{
    (void)state;
    const char *res[] = { "param", "node", "res", "cap", "gm", "loop", "break", "gnd",
                          "inf", "pi", "sqrt", "exp", "ln", "log10", "abs", "min", "max" };
    for (size_t k = 0; k < sizeof res / sizeof res[0]; k++)
        assert_true(expr_is_reserved(res[k]));
    assert_false(expr_is_reserved("out"));
    assert_false(expr_is_reserved("gm1"));
}

/* SPEC 2: the prefixes are f p n u \xC2\xB5 \xCE\xBC m k M G T; "anything else after a
 * number is an error". */
static void test_prefixes_outside_spec_rejected(void **state)
{
    (void)state;
    const char *bad[] = { "1a", "1P", "3aF", "2PS" };
    for (size_t k = 0; k < sizeof bad / sizeof bad[0]; k++) {
        lw_error err;
        lw_error_clear(&err);
        double v = 0;
        int rc = expr_number(bad[k], UNIT_ANY, &v, &err);
        if (rc == LW_OK)
            print_error("'%s' was accepted as %g\n", bad[k], v);
        assert_int_equal(rc, LW_EINPUT);
    }
}

/* SPEC 2: reserved are the keywords, gnd, inf, pi and the function names;
 * nothing else. */
/* SPEC section 2 reserves the keywords, gnd, inf, pi and the function names;
 * the corners issue adds the function vt and the spread words of a param line. */
static void test_reserved_only_spec_names(void **state)
{
    (void)state;
    const char *reserved[] = { "vt", "corners", "normal", "uniform", "gnd", "pi", "inf", "sqrt" };
    for (size_t k = 0; k < sizeof reserved / sizeof reserved[0]; k++)
        assert_true(expr_is_reserved(reserved[k]));
    const char *names[] = { "vtx", "e", "negative_x", "Pi", "INF" };
    for (size_t k = 0; k < sizeof names / sizeof names[0]; k++) {
        if (expr_is_reserved(names[k]))
            print_error("'%s' is reserved\n", names[k]);
        assert_false(expr_is_reserved(names[k]));
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_plain_numbers),
        cmocka_unit_test(test_si_prefixes),
        cmocka_unit_test(test_micro_sign_both_code_points),
        cmocka_unit_test(test_milli_versus_mega),
        cmocka_unit_test(test_unit_symbols),
        cmocka_unit_test(test_unit_must_fit_field),
        cmocka_unit_test(test_unknown_suffix),
        cmocka_unit_test(test_precedence),
        cmocka_unit_test(test_functions),
        cmocka_unit_test(test_function_errors),
        cmocka_unit_test(test_constants),
        cmocka_unit_test(test_params),
        cmocka_unit_test(test_division_by_zero_column),
        cmocka_unit_test(test_overflow_and_nan),
        cmocka_unit_test(test_syntax_errors),
        cmocka_unit_test(test_nesting_limit),
        cmocka_unit_test(test_nesting_below_stated_limit),
        cmocka_unit_test(test_reserved),
        cmocka_unit_test(test_prefixes_outside_spec_rejected),
        cmocka_unit_test(test_reserved_only_spec_names),
    };
    return cmocka_run_group_tests_name("expr", tests, NULL, NULL);
}
