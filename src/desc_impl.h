/* desc_impl: what the files of the desc module share, not part of the
 * library's interface. desc.c parses the declarations and checks the whole
 * file; desc_names.c keeps the one namespace (names, node references, names
 * inside expressions); desc_spread.c parses a param's spread; desc_loops.c
 * parses loop and break lines and finds each loop's hops (the break itself
 * is resolved in desc_break.c, through the public desc.h).
 * Every function reports an input error at a token of the line being parsed
 * (ps->ln) and returns LW_EINPUT, or LW_ENOMEM. */
#ifndef LOOPWISE_DESC_IMPL_H
#define LOOPWISE_DESC_IMPL_H

#include "loopwise/desc.h"

/* Keep desc_sym_names (desc_names.c) in step. */
typedef enum { SYM_PARAM, SYM_NODE, SYM_ELEM, SYM_LOOP, SYM_INPUT } sym_kind;
extern const char *const desc_sym_names[];

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

/* desc_names.c */
int desc_at_tok(pstate *ps, const text_token *tk, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));
/* Makes room for one more entry of an array grown by doubling; LW_EINPUT at
 * the limit, LW_ENOMEM. */
int desc_grow(void **arr, int *cap, int len, size_t size, int limit);
/* Checks a new name and enters it; points at tk on failure. */
int desc_declare(pstate *ps, const text_token *tk, const char *name, sym_kind kind, int index);
sym *desc_sym_find(const symtab *t, const char *name);
int desc_compile_at(pstate *ps, const char *text, int off, expr_unit unit, int *h);
int desc_compile_rest(pstate *ps, int k, expr_unit unit, int *h, desc_pos *at);
/* node-ref -> NAME | 'gnd' | INPUT (token k; in NULL where no input may stand) */
int desc_node_ref(pstate *ps, int k, int allow_gnd, int *idx, int *in, desc_pos *at);

/* desc.c: a line with fewer than n tokens (usage says what was expected);
 * an array at its limit */
int desc_need_tokens(pstate *ps, int n, const char *usage);
int desc_too_many(pstate *ps, const char *what, int limit);

/* desc_spread.c: spread -> {'corners' range | 'normal' bound | 'uniform' range}
 * from token k on; desc_spread_start: the first token of a spread clause
 * after byte off of the param line, or ntok. */
int desc_parse_spread(pstate *ps, int k, desc_spread *sp);
int desc_spread_start(const text_line *ln, int off);

/* desc_loops.c */
int desc_parse_loop(pstate *ps);
int desc_parse_break(pstate *ps);
int desc_find_hops(pstate *ps, desc_loop *L, const text_line *loop_line);

#endif
