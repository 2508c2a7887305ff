/* expr: value expressions of the .loop format (numbers with SI prefixes and
 * units, params, + - * / ^, functions) compiled to a small tree and evaluated.
 *
 * Ownership: an expr_pool owns every node it compiles; expr_pool_free
 * releases them all. Expressions are referred to by int handles into the pool. */
#ifndef LOOPWISE_EXPR_H
#define LOOPWISE_EXPR_H

#include "loopwise/diag.h"

enum { EXPR_MAX_DEPTH = 64, EXPR_MAX_NODES = 1 << 20 };

/* The quantity a value stands for: decides which unit symbol may follow a
 * number. Keep in step with unit_names in expr.c. */
typedef enum {
    UNIT_ANY,   /* a param: any unit symbol */
    UNIT_F,     /* capacitance */
    UNIT_OHM,   /* resistance */
    UNIT_S,     /* transconductance */
    UNIT_HZ,    /* frequency (command-line options) */
    UNIT_NONE   /* a plain number (degrees, counts) */
} expr_unit;

typedef struct expr_pool expr_pool;

/* How an expression finds the params it names. lookup returns the param's
 * index (>= 0), -1 for a name never declared, -2 for a name declared as
 * something that is not a param (a node, say), -3 for a param declared later
 * in the file. suggest (may be NULL) returns a close declared param name. */
typedef struct expr_names {
    int (*lookup)(void *ctx, const char *name);
    const char *(*suggest)(void *ctx, const char *name);
    void *ctx;
} expr_names;

expr_pool *expr_pool_new(void);
void expr_pool_free(expr_pool *p);

/* Compiles text (a whole expression) into the pool. line and col0 locate
 * text[0] in the file for error messages; raw is the source line. */
int expr_compile(expr_pool *p, const char *text, expr_unit unit, const expr_names *names,
                 int line, int col0, const char *raw, int *handle, lw_error *err);

/* Evaluates with params[k] as the value of param k. An error (division by
 * zero, overflow, NaN) points at the operator or call that produced it.
 * inf is allowed only where it comes from the constant 'inf' itself. */
int expr_eval(const expr_pool *p, int handle, const double *params, double *value,
              lw_error *err);

/* The param an expression stands for whole: P or -P gives P's index; any
 * other expression (a number, a product, a function) gives -1. */
int expr_sole_param(const expr_pool *p, int handle);

/* Calls fn for every param index the expression refers to. */
void expr_params(const expr_pool *p, int handle, void (*fn)(void *, int), void *ctx);

/* Parses a lone number with optional SI prefix and unit ("2.2pF", "1e3k"). */
int expr_number(const char *text, expr_unit unit, double *value, lw_error *err);

/* 1 if name is reserved (keywords, gnd, inf, pi, function names). */
int expr_is_reserved(const char *name);

#endif
