/* json: machine output of 'check' (SPEC section 4). Doubles print as %.17g
 * (round-trip exact); NaN and infinities print as null. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/design.h"
#include "loopwise/report.h"

#define TWO_PI 6.283185307179586

void json_number(FILE *f, double v)
{
    if (isfinite(v))
        fprintf(f, "%.17g", v);
    else
        fputs("null", f);
}

void json_string(FILE *f, const char *s)
{
    fputc('"', f);
    for (const unsigned char *p = (const unsigned char *)s; *p; p++) {
        if (*p == '"' || *p == '\\')
            fprintf(f, "\\%c", *p);
        else if (*p < 0x20)
            fprintf(f, "\\u%04x", *p);
        else
            fputc(*p, f);
    }
    fputc('"', f);
}

static void json_roots(FILE *f, const double complex *v, int n)
{
    fputc('[', f);
    for (int k = 0; k < n; k++) {
        fprintf(f, "%s{\"re_hz\": ", k ? ", " : "");
        json_number(f, creal(v[k]) / TWO_PI);
        fputs(", \"im_hz\": ", f);
        json_number(f, cimag(v[k]) / TWO_PI);
        fputc('}', f);
    }
    fputc(']', f);
}

static void json_poles(FILE *f, const desc *d, const check_result *r)
{
    const lg_tf *tf = &r->tf;
    fputc('[', f);
    for (int k = 0; k < tf->npoles; k++) {
        int o = tf->owner ? tf->owner[k] : -1;
        fprintf(f, "%s{\"re_hz\": ", k ? ", " : "");
        json_number(f, creal(tf->poles[k]) / TWO_PI);
        fputs(", \"im_hz\": ", f);
        json_number(f, cimag(tf->poles[k]) / TWO_PI);
        fputs(", \"node\": ", f);
        if (o >= 0)
            json_string(f, d->nodes[o].name);
        else
            fputs("null", f);
        fputs(", \"estimate_hz\": ", f);
        json_number(f, o >= 0 ? r->estimate_hz[o] : NAN);
        fprintf(f, ", \"in_loop_gain\": %s}", tf->hidden[k] ? "false" : "true");
    }
    fputc(']', f);
}

static void json_loops(FILE *f, const desc *d, const model *m, const check_result *r)
{
    fputc('[', f);
    for (int l = 0; l < r->nloops; l++) {
        const check_loop *cl = &r->loops[l];
        fprintf(f, "%s{\"name\": ", l ? ", " : "");
        json_string(f, d->loops[l].name);
        fprintf(f, ", \"sign\": \"%s\", \"dc_gain\": ",
                d->loops[l].negative ? "negative" : "positive");
        json_number(f, cl->dc);
        fputs(", \"measured_at\": ", f);
        if (cl->hop_gm >= 0)
            json_string(f, d->elems[m->gm[cl->hop_gm].elem].name);
        else
            fputs("null", f);
        fputc('}', f);
    }
    fputc(']', f);
}

void report_check_json(FILE *f, const desc *d, const model *m, const check_result *r)
{
    const lg_tf *tf = &r->tf;
    const margins *mg = &r->mg;
    fputs("{\"break\": ", f);
    json_string(f, m->brk_node >= 0 ? d->nodes[m->brk_node].name
                                    : d->elems[m->gm[m->brk].elem].name);
    fputs(", \"break_gms\": [", f);
    for (int k = 0, first = 1; k < m->ngm; k++)
        if (m->brk_node >= 0 ? m->gm[k].in == m->brk_node : k == m->brk) {
            fputs(first ? "" : ", ", f);
            json_string(f, d->elems[m->gm[k].elem].name);
            first = 0;
        }
    fputc(']', f);
    fputs(",\n \"dc_loop_gain\": ", f);
    json_number(f, tf->dc);
    fputs(",\n \"dc_loop_gain_db\": ", f);
    json_number(f, tf->dc != 0 && isfinite(tf->dc) ? 20.0 * log10(fabs(tf->dc)) : NAN);
    fputs(",\n \"crossover_hz\": ", f);
    json_number(f, mg->best_cross >= 0 ? mg->cross[mg->best_cross].hz : NAN);
    fputs(",\n \"phase_margin_deg\": ", f);
    json_number(f, mg->best_cross >= 0 ? mg->cross[mg->best_cross].value : NAN);
    fputs(",\n \"crossovers\": [", f);
    for (int k = 0; k < mg->ncross; k++) {
        fprintf(f, "%s{\"hz\": ", k ? ", " : "");
        json_number(f, mg->cross[k].hz);
        fputs(", \"phase_margin_deg\": ", f);
        json_number(f, mg->cross[k].value);
        fputc('}', f);
    }
    fputs("],\n \"gain_margin_db\": ", f);
    json_number(f, mg->best_phase >= 0 ? mg->phase[mg->best_phase].value : NAN);
    fputs(",\n \"phase_crossover_hz\": ", f);
    json_number(f, mg->best_phase >= 0 ? mg->phase[mg->best_phase].hz : NAN);
    fputs(",\n \"open_loop_poles\": ", f);
    json_poles(f, d, r);
    fputs(",\n \"open_loop_zeros\": ", f);
    json_roots(f, tf->zeros, tf->nzeros);
    fputs(",\n \"closed_loop_poles\": ", f);
    json_roots(f, r->cl, r->ncl);
    fprintf(f, ",\n \"stable\": %s", r->stable ? "true" : "false");
    if (r->have_nyquist) {
        const nyquist *q = &r->nq;
        fputs(",\n \"nyquist\": {\"encirclements\": ", f);
        json_number(f, q->decided ? (double)q->encirclements : NAN);
        fprintf(f, ", \"open_loop_rhp\": %d, \"closed_loop_rhp\": ", q->open_loop_rhp);
        json_number(f, q->decided ? (double)q->closed_loop_rhp : NAN);
        fputc('}', f);
    }
    fputs(",\n \"loops\": ", f);
    json_loops(f, d, m, r);
    fputs(",\n \"dominance_db\": ", f);
    json_number(f, r->dominance_db);
    if (r->node_double) {
        fputs(",\n \"node_table\": [", f);
        for (int k = 0, first = 1; k < d->nnodes; k++) {
            if (!(r->node_cg[k] > 0))
                continue;
            fprintf(f, "%s{\"node\": ", first ? "" : ", ");
            json_string(f, d->nodes[k].name);
            fputs(", \"c_to_ground_f\": ", f);
            json_number(f, r->node_cg[k]);
            fputs(", \"pm_change_double_deg\": ", f);
            json_number(f, r->node_double[k]);
            fputs(", \"pm_change_half_deg\": ", f);
            json_number(f, r->node_half[k]);
            fputc('}', f);
            first = 0;
        }
        fputc(']', f);
    }
    design_row *w;
    int nw = design_table_rows(d, r, &w);
    if (nw > 0) {
        /* every node's capacitance to ground and every cap and res element,
         * largest effect first */
        static const char *const kinds[] = { "node", "cap", "res" };
        fputs(",\n \"compensation_table\": [", f);
        for (int k = 0; k < nw; k++) {
            const design_row *x = &w[k];
            int a = x->kind == ROW_NODE ? x->index : d->elems[x->index].a;
            fprintf(f, "%s{\"kind\": \"%s\", \"name\": ", k ? ",\n   " : "", kinds[x->kind]);
            json_string(f, x->kind == ROW_NODE ? d->nodes[a].name : d->elems[x->index].name);
            fputs(", \"between\": [", f);
            json_string(f, d->nodes[a].name);
            fputs(", ", f);
            json_string(f, x->kind == ROW_NODE ? "gnd" : desc_elem_end(d, &d->elems[x->index], 1));
            fprintf(f, "], \"value\": ");
            json_number(f, x->value);
            fputs(", \"pm_change_double_deg\": ", f);
            json_number(f, x->pm_double);
            fputs(", \"pm_change_half_deg\": ", f);
            json_number(f, x->pm_half);
            fputc('}', f);
        }
        fputc(']', f);
    }
    free(w);
    fputs(",\n \"band_hz\": [", f);
    json_number(f, mg->fmin_hz);
    fputs(", ", f);
    json_number(f, mg->fmax_hz);
    fprintf(f, "],\n \"accuracy_warning\": %s}\n",
            check_accuracy_warning(r) ? "true" : "false");
}
