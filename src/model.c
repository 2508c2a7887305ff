/* model: stamps an evaluated description into G and C. */
#include "loopwise/model.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

void model_free(model *m)
{
    if (!m)
        return;
    free(m->Gp);
    free(m->C);
    free(m->gm);
    free(m->ins);
    free(m);
}

void model_stamp2(double *A, int n, int a, int b, double y)
{
    A[a * n + a] += y;
    if (b == DESC_GND)
        return;
    A[b * n + b] += y;
    A[a * n + b] -= y;
    A[b * n + a] -= y;
}

int model_new(const desc *d, model **out, lw_error *err)
{
    *out = NULL;
    model *m = calloc(1, sizeof *m);
    int n = d->nnodes;
    if (!m)
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    m->n = n;
    m->Gp = calloc((size_t)n * (size_t)n, sizeof(double));
    m->C = calloc((size_t)n * (size_t)n, sizeof(double));
    m->gm = calloc((size_t)d->nelems + 1, sizeof *m->gm);
    m->ins = calloc((size_t)d->nelems + 1, sizeof *m->ins);
    m->ninputs = d->ninputs;
    if (!m->Gp || !m->C || !m->gm || !m->ins) {
        model_free(m);
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    for (int k = 0; k < n; k++) {
        if (isfinite(d->nodes[k].r))
            m->Gp[k * n + k] += 1.0 / d->nodes[k].r;
        m->C[k * n + k] += d->nodes[k].c;
    }
    m->brk = -1;
    m->brk_node = d->brk_node;
    for (int k = 0; k < d->nelems; k++) {
        const desc_elem *e = &d->elems[k];
        int x = e->kind == ELEM_GM ? e->a_in : e->b_in;
        if (x >= 0)
            m->ins[m->nins++] = (model_in){ x, e->kind == ELEM_GM ? e->b : e->a, e->kind,
                                            e->value };
        if (e->kind == ELEM_GM && e->a_in >= 0)
            continue; /* its control is AC ground for the loop: no stamp in G */
        if (e->kind == ELEM_RES)
            model_stamp2(m->Gp, n, e->a, e->b, 1.0 / e->value);
        else if (e->kind == ELEM_CAP)
            model_stamp2(m->C, n, e->a, e->b, e->value);
        else {
            if (k == d->brk)
                m->brk = m->ngm;
            m->gm[m->ngm++] = (model_gm){ k, e->a, e->b, e->value };
        }
    }
    *out = m;
    return LW_OK;
}

void model_fill_g(const model *m, const unsigned char *off, double *G)
{
    int n = m->n;
    memcpy(G, m->Gp, sizeof(double) * (size_t)n * (size_t)n);
    for (int k = 0; k < m->ngm; k++)
        if (!off || !off[k])
            G[m->gm[k].out * n + m->gm[k].in] -= m->gm[k].g;
}

int model_break_mark(const model *m, unsigned char *off, int *in)
{
    int n = 0;
    for (int k = 0; k < m->ngm; k++)
        if (m->brk_node >= 0 ? m->gm[k].in == m->brk_node : k == m->brk) {
            off[k] = 1;
            *in = m->gm[k].in;
            n++;
        }
    return n;
}

void model_input_fill(const model *m, int x, double *b0, double *b1)
{
    memset(b0, 0, sizeof(double) * (size_t)m->n);
    memset(b1, 0, sizeof(double) * (size_t)m->n);
    for (int k = 0; k < m->nins; k++) {
        const model_in *s = &m->ins[k];
        if (s->input != x)
            continue;
        if (s->kind == ELEM_RES)
            b0[s->node] += 1.0 / s->value;
        else if (s->kind == ELEM_CAP)
            b1[s->node] += s->value;
        else
            b0[s->node] += s->value;
    }
}

int model_gm_of_elem(const model *m, int e)
{
    for (int k = 0; k < m->ngm; k++)
        if (m->gm[k].elem == e)
            return k;
    return -1;
}
