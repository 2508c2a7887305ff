/* cmd_variation: the 'corners' and 'montecarlo' commands and their output. */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "loopwise/cli.h"
#include "loopwise/figures.h"
#include "loopwise/mc_parts.h"
#include "loopwise/report.h"
#include "loopwise/report_across.h"
#include "loopwise/units.h"
#include "loopwise/variation.h"

#define TWO_PI 6.283185307179586

/* The shortest decimal that reads back as exactly v (at most 17 digits). */
static const char *exact(double v, char *buf, size_t n)
{
    for (int prec = 6; prec <= 17; prec++) {
        snprintf(buf, n, "%.*g", prec, v);
        if (strtod(buf, NULL) == v)
            break;
    }
    return buf;
}

/* The command that gives exactly the reported figures of one corner or
 * sample: the file, the band if given, every --set of the command line (a
 * value the user pinned is part of the operating point), the tuned value
 * when there is one, then the varied values. Returns a string to free, or
 * NULL without memory. */
char *cli_reproduce(const options *o, const desc *d, const char *tune, double value,
                    const int *params, int np, const double *v)
{
    char *buf = NULL, b[40];
    size_t len = 0;
    FILE *f = open_memstream(&buf, &len);
    if (!f)
        return NULL;
    fputs("loopwise check ", f);
    report_shell_word(f, o->file);
    if (o->fmin > 0)
        fprintf(f, " --fmin %s", exact(o->fmin, b, sizeof b));
    if (o->fmax > 0)
        fprintf(f, " --fmax %s", exact(o->fmax, b, sizeof b));
    for (int k = 0; k < o->nsets; k++) {
        fputs(" --set ", f);
        report_shell_word(f, o->sets[k]);
    }
    if (tune)
        fprintf(f, " --set %s=%s", tune, exact(value, b, sizeof b));
    for (int j = 0; j < np; j++)
        fprintf(f, " --set %s=%s", d->params[params[j]].name, exact(v[j], b, sizeof b));
    if (fclose(f) != 0) {
        free(buf);
        return NULL;
    }
    return buf;
}

static void corners_text(FILE *f, const desc *d, const corner_result *r, design_goal g)
{
    char gt[160];
    if (r->levels == 2)
        fprintf(f, "loopwise corners: %s  %d corner%s (every combination of %d range end%s), "
                "%s\n", d->path, r->ncorners, r->ncorners == 1 ? "" : "s", r->nparams,
                r->nparams == 1 ? "" : "s", report_goal_text(g, gt, sizeof gt));
    else
        fprintf(f, "loopwise corners: %s  %d corners (every combination of %d values of each "
                "of %d range%s, ends included), %s\n", d->path, r->ncorners, r->levels,
                r->nparams, r->nparams == 1 ? "" : "s", report_goal_text(g, gt, sizeof gt));
    report_pinned_text(f, d, 1);
    fprintf(f, "\n  %-4s", "#");
    for (int j = 0; j < r->nparams; j++)
        fprintf(f, " %-11s", d->params[r->params[j]].name);
    fprintf(f, " %-13s %-11s %-12s %s\n", "phase margin", "crossover", "gain margin", "stable");
    for (int k = 0; k < r->ncorners; k++) {
        int c = r->order[k];
        const design_point *p = &r->pts[c];
        char a[32], pm[16], gm[16];
        fprintf(f, "  %-4d", c + 1);
        for (int j = 0; j < r->nparams; j++) {
            const desc_param *q = &d->params[r->params[j]];
            fputc(' ', f);
            report_pad(f, si_format(r->values[c * r->nparams + j], report_unit_of(q->unit), a,
                                    sizeof a), 11);
        }
        snprintf(pm, sizeof pm, isnan(p->pm_deg) ? "none" : "%.2f\xC2\xB0", p->pm_deg);
        snprintf(gm, sizeof gm, isnan(p->gm_db) ? "unbounded" : "%.2f dB", units_no_neg_zero(p->gm_db, 2));
        fprintf(f, " %-14s %-11s %-12s %s%s\n", pm,
                isnan(p->crossover_hz) ? "none" : si_format(p->crossover_hz, "Hz", a, sizeof a),
                gm, p->stable ? "yes" : "NO", design_meets(p, g) ? "" : report_below_mark(g));
    }
}

/* The worst corner lies between the range ends and is worse than every
 * corner of ends alone: a dip that corners at the ends cannot show. */
static void interior_text(FILE *f, const desc *d, const corner_result *r, design_goal g)
{
    int w = r->order[0], e = -1;
    char a[32];
    for (int k = 0; k < r->ncorners && e < 0; k++)
        if (!r->interior[r->order[k]])
            e = r->order[k];
    fprintf(f, "The worst point lies between the range ends (");
    for (int j = 0, n = 0; j < r->nparams; j++) {
        const desc_param *q = &d->params[r->params[j]];
        double v = r->values[w * r->nparams + j];
        if (v == q->spread.lo_v || v == q->spread.hi_v)
            continue;
        fprintf(f, "%s%s = %s", n++ ? ", " : "", q->name,
                si_format(v, report_unit_of(q->unit), a, sizeof a));
    }
    fprintf(f, "): it is worse than every corner of range ends alone");
    if (e >= 0 && !isnan(r->pts[e].pm_deg))
        fprintf(f, ", the worst of which (#%d) has %.2f\xC2\xB0", e + 1, r->pts[e].pm_deg);
    fprintf(f, ".\n");
    (void)g;
}

int cmd_corners(const options *o, desc *d, int *code, lw_error *err)
{
    check_opts co = { .fmin_hz = o->fmin, .fmax_hz = o->fmax, .want_owner = 1 };
    design_goal g = option_goal(o);
    corner_result r;
    int rc = corners_run(d, &co, g, o->levels ? o->levels : 2, &r, err);
    if (rc)
        return rc;
    int w = r.order[0];
    char *again = cli_reproduce(o, d, NULL, 0, r.params, r.nparams, r.values + w * r.nparams);
    if (!again) {
        corner_result_free(&r);
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    int met = 1, failed = 0, wi = corners_worst_interior(&r, g);
    for (int c = 0; c < r.ncorners; c++) {
        met &= design_meets(&r.pts[c], g);
        failed |= design_fails(&r.pts[c], g);
    }
    if (o->json) {
        fprintf(stdout, "{\"corners\": [");
        for (int k = 0; k < r.ncorners; k++) {
            int c = r.order[k];
            fprintf(stdout, "%s\n  {\"index\": %d, \"values\": {", k ? "," : "", c + 1);
            for (int j = 0; j < r.nparams; j++) {
                fprintf(stdout, "%s", j ? ", " : "");
                json_string(stdout, d->params[r.params[j]].name);
                fputs(": ", stdout);
                json_number(stdout, r.values[c * r.nparams + j]);
            }
            fputs("}, ", stdout);
            report_point_fields(stdout, &r.pts[c]);
            fputc('}', stdout);
        }
        fprintf(stdout, "],\n \"levels\": %d, \"worst\": %d, \"worst_interior\": ", r.levels,
                w + 1);
        if (wi >= 0)
            fprintf(stdout, "%d", wi + 1);
        else
            fputs("null", stdout);
        fprintf(stdout, ", \"met\": %s, ", met ? "true" : "false");
        report_pinned_json(stdout, d, 1);
        fputs(", \"reproduce\": ", stdout);
        json_string(stdout, again);
        fputs("}\n", stdout);
    } else {
        corners_text(stdout, d, &r, g);
        const design_point *p = &r.pts[w];
        char a[32];
        printf("\nWorst corner #%d:", w + 1);
        if (isnan(p->pm_deg))
            printf(" no crossover, phase margin undefined");
        else
            printf(" phase margin %.2f\xC2\xB0 (crossover %s)", p->pm_deg,
                   si_format(p->crossover_hz, "Hz", a, sizeof a));
        if (!isnan(p->gm_db))
            printf(", gain margin %.2f dB", units_no_neg_zero(p->gm_db, 2));
        if (!isnan(p->p1_hz))
            printf(", poles of T at %s", si_format(p->p1_hz, "Hz", a, sizeof a));
        if (!isnan(p->p2_hz))
            printf(" and %s", si_format(p->p2_hz, "Hz", a, sizeof a));
        printf("%s\n  reproduce it: %s\n", p->stable ? "" : ", UNSTABLE", again);
        if (wi >= 0)
            interior_text(stdout, d, &r, g);
        if (met)
            printf("Verdict: every corner is stable and meets the %s.\n", design_goal_word(g));
        else if (failed)
            printf("Verdict: some corners are unstable or miss a target given (marked above).\n");
        else
            printf("Verdict: some corners fall below the %.4g\xC2\xB0 reference (marked above); "
                   "no target was given.\n", g.pm_deg);
    }
    *code = failed ? 1 : 0;
    free(again);
    corner_result_free(&r);
    return LW_OK;
}

static void stats_row(FILE *f, const char *label, const mc_stats *s, int hz)
{
    char b[9][32];
    const double v[9] = { s->mean, s->sigma, s->min, s->p1, s->p5, s->p50, s->p95, s->p99, s->max };
    for (int k = 0; k < 9; k++) {
        if (isnan(v[k]))
            snprintf(b[k], sizeof b[k], "-");
        else if (hz)
            si_format(v[k], "Hz", b[k], sizeof b[k]);
        else
            snprintf(b[k], sizeof b[k], "%.2f", v[k]);
    }
    fputs("  ", f);
    report_pad(f, label, 15);
    for (int k = 0; k < 9; k++)
        fprintf(f, " %-9s", b[k]);
    fputc('\n', f);
}

static void json_stats(FILE *f, const char *name, const mc_stats *s)
{
    fprintf(f, ",\n \"%s\": {\"n\": %d, \"mean\": ", name, s->n);
    json_number(f, s->mean);
    const char *keys[] = { "sigma", "min", "max", "p1", "p5", "p50", "p95", "p99" };
    const double v[] = { s->sigma, s->min, s->max, s->p1, s->p5, s->p50, s->p95, s->p99 };
    for (int k = 0; k < 8; k++) {
        fprintf(f, ", \"%s\": ", keys[k]);
        json_number(f, v[k]);
    }
    fputc('}', f);
}

/* With every sample passing, the one-sided lower bound is alpha^(1/n)
 * (Clopper and Pearson 1934 with x = n); the fewest samples that can show
 * a yield P at 95% are ln(0.05)/ln(P), rounded up. */
static double samples_to_show(double p)
{
    return ceil(log(0.05) / log(p));
}

static void mc_text(FILE *f, const options *o, const desc *d, const mc_result *r, uint64_t seed,
                    design_goal g, const char *again)
{
    char gt[160], a[32], b[32];
    if (o->part_m)
        fprintf(f, "loopwise montecarlo: %s  part %d of %d: %d of %d samples (each index i with "
                "i mod %d = %d), seed %llu, %s\n  varied:", d->path, o->part_k, o->part_m,
                r->nsamples, r->total, o->part_m, o->part_k - 1, (unsigned long long)seed,
                report_goal_text(g, gt, sizeof gt));
    else
        fprintf(f, "loopwise montecarlo: %s  %d samples, seed %llu, %s\n  varied:", d->path,
                r->nsamples, (unsigned long long)seed, report_goal_text(g, gt, sizeof gt));
    for (int j = 0; j < r->nparams; j++) {
        const desc_param *p = &d->params[r->params[j]];
        const char *u = report_unit_of(p->unit);
        if (p->spread.dist == DIST_NORMAL)
            fprintf(f, "%s %s (normal, sigma %s)", j ? "," : "", p->name,
                    si_format(p->spread.a_v, u, a, sizeof a));
        else
            fprintf(f, "%s %s (uniform %s..%s)", j ? "," : "", p->name,
                    si_format(p->spread.a_v, u, a, sizeof a), si_format(p->spread.b_v, u, b, sizeof b));
    }
    fputc('\n', f);
    report_pinned_text(f, d, 0);
    report_held_text(f, d, -1);
    fprintf(f, "\n  %-15s %-9s %-9s %-9s %-9s %-9s %-9s %-9s %-9s %-9s\n", "", "mean", "sigma",
            "min", "1%", "5%", "median", "95%", "99%", "max");
    stats_row(f, "phase margin \xC2\xB0", &r->pm, 0);
    stats_row(f, "gain margin dB", &r->gm, 0);
    stats_row(f, "crossover", &r->fc, 1);
    if (r->gm.n < r->nsamples - r->invalid)
        fprintf(f, "  %d samples have an unbounded gain margin (the phase never reaches "
                "-180\xC2\xB0); they are left out of its row\n", r->nsamples - r->invalid - r->gm.n);
    fprintf(f, "\n  yield: %d of %d samples pass (stable, %s): %.3f%%\n"
            "  95%% confidence interval (Clopper-Pearson): %.3f%% to %.3f%%; one-sided 95%% "
            "lower bound %.3f%%\n", r->passes, r->nsamples, report_goal_text(g, gt, sizeof gt),
            100 * r->yield, 100 * r->ci_lo, 100 * r->ci_hi, 100 * r->lower95);
    if (r->invalid)
        fprintf(f, "  %d samples gave values that are not allowed (a negative resistance, ...) "
                "and count as failures\n", r->invalid);
    if (r->pm.n < r->nsamples - r->invalid)
        fprintf(f, "  %d samples have no crossover (no phase margin) and count as failures\n",
                r->nsamples - r->invalid - r->pm.n);
    int unstable = 0;
    for (int i = 0; i < r->nsamples; i++)
        unstable += r->valid[i] && !r->pts[i].stable;
    if (unstable)
        fprintf(f, "  %d samples are unstable and count as failures\n", unstable);
    if (o->yield_given) {
        int met = r->lower95 >= o->yield;
        fprintf(f, "  yield target %.4g%%: %s: the one-sided 95%% lower bound %.3f%% %s it\n",
                100 * o->yield, met ? "met" : "MISSED", 100 * r->lower95,
                met ? "reaches" : "is below");
        if (!met && r->passes == r->nsamples)
            fprintf(f, "  every sample passed, but %d samples cannot show %.4g%%: that takes at "
                    "least %.0f\n", r->nsamples, 100 * o->yield, samples_to_show(o->yield));
    }
    if (r->worst >= 0) {
        const design_point *p = &r->pts[r->worst];
        fprintf(f, "\n  worst sample #%d: phase margin ", r->index[r->worst] + 1);
        if (isnan(p->pm_deg))
            fprintf(f, "undefined");
        else
            fprintf(f, "%.2f\xC2\xB0", p->pm_deg);
        fprintf(f, "%s\n  reproduce it: %s\n", p->stable ? "" : ", UNSTABLE", again);
    }
}

/* The worst sample's DC loop gain, which the parts' files do not carry: its
 * drawn values analysed again as the run analysed them. */
static int worst_dc(desc *d, const check_opts *co, mc_result *r, lw_error *err)
{
    if (r->worst < 0)
        return LW_OK;
    design_point pt;
    int valid;
    int rc = variation_eval_at(d, r->nparams, r->params,
                               r->values + (size_t)r->worst * (size_t)r->nparams, co, &pt,
                               &valid, err);
    lw_error back;
    if (desc_eval(d, &back) && !rc)   /* the operating point again */
        rc = lw_error_set(err, LW_ENUMERIC, "%s", back.msg);
    if (!rc && valid)
        r->pts[r->worst].dc = pt.dc;
    return rc;
}

int cmd_montecarlo(const options *o, desc *d, const text_file *t, const check_result *nominal,
                   int *code, lw_error *err)
{
    if (o->samples <= 0 && !o->nmerge)
        return lw_error_set(err, LW_EINPUT, "montecarlo needs --samples N with N of 1 or more");
    check_opts co = { .fmin_hz = o->fmin, .fmax_hz = o->fmax };
    design_goal g = option_goal(o);
    mc_result r;
    uint64_t seed = o->seed_given ? o->seed : 1;
    FILE *progress = isatty(2) && !o->json ? stderr : NULL;
    /* the run these samples belong to, for --samples-out and --merge */
    mc_run_id id = { mc_parts_fingerprint(t), o->samples, seed, o->seed_given,
                     o->part_m ? o->part_k : 1, o->part_m ? o->part_m : 1, o->sets, o->nsets,
                     o->fmin, o->fmax };
    int rc;
    if (o->nmerge) {
        const char *where;
        rc = mc_parts_merge(o->merge, o->nmerge, d, &id, g, &r, &where, err);
        if (rc && where) {
            /* about a part's file, not the description: said here */
            lw_error_print(err, where, stderr);
            err->msg[0] = '\0';
        }
        seed = id.seed;
        if (!rc && (rc = worst_dc(d, &co, &r, err)))
            mc_result_free(&r);
    } else {
        rc = montecarlo_run_part(t, d->path, o->sets, o->nsets, o->samples, id.part_k, id.part_m,
                                 seed, g, &co, progress, &r, err);
    }
    if (rc)
        return rc;
    if (o->samples_out && (rc = mc_parts_write(o->samples_out, o->file, d, &r, &id, g, err))) {
        mc_result_free(&r);
        return rc;
    }
    char *again = NULL;
    if (r.worst >= 0 && !(again = cli_reproduce(o, d, NULL, 0, r.params, r.nparams,
                                                 r.values + (size_t)r.worst * (size_t)r.nparams))) {
        mc_result_free(&r);
        return lw_error_set(err, LW_ENOMEM, "out of memory");
    }
    int yield_met = !o->yield_given || r.lower95 >= o->yield;
    if (o->samples_out && !strcmp(o->samples_out, "-")) {
        /* the samples on standard output instead of the report, as --csv - */
    } else if (o->json) {
        printf("{\"samples\": %d, ", r.nsamples);
        if (o->part_m)
            printf("\"part\": {\"k\": %d, \"m\": %d, \"samples_total\": %d}, ", o->part_k,
                   o->part_m, r.total);
        printf("\"seed\": %llu, \"target_pm_deg\": ", (unsigned long long)seed);
        json_number(stdout, g.pm_deg);
        printf(", \"passes\": %d, \"invalid\": %d, \"yield\": ", r.passes, r.invalid);
        json_number(stdout, r.yield);
        fputs(", \"yield_ci95\": [", stdout);
        json_number(stdout, r.ci_lo);
        fputs(", ", stdout);
        json_number(stdout, r.ci_hi);
        fputs("], \"yield_lower95\": ", stdout);
        json_number(stdout, r.lower95);
        fputs(", \"yield_target\": ", stdout);
        json_number(stdout, o->yield_given ? o->yield : NAN);
        printf(", \"yield_met\": %s, ", !o->yield_given ? "null" : yield_met ? "true" : "false");
        report_pinned_json(stdout, d, 0);
        json_stats(stdout, "phase_margin_deg", &r.pm);
        json_stats(stdout, "gain_margin_db", &r.gm);
        json_stats(stdout, "crossover_hz", &r.fc);
        fprintf(stdout, ",\n \"worst\": {\"index\": %d", r.worst >= 0 ? r.index[r.worst] + 1 : 0);
        if (r.worst >= 0) {
            fputs(", ", stdout);
            report_point_fields(stdout, &r.pts[r.worst]);
            fputs(", \"reproduce\": ", stdout);
            json_string(stdout, again);
        }
        fputs("}}\n", stdout);
    } else {
        mc_text(stdout, o, d, &r, seed, g, again);
        if (o->samples_out && strcmp(o->samples_out, "-"))
            printf("\n  %d sample%s written to %s%s\n", r.nsamples, r.nsamples == 1 ? "" : "s",
                   o->samples_out, o->part_m ? "; when every part has run, merge their files "
                   "with --merge" : "");
    }
    /* SPEC section 5: only --yield makes montecarlo exit 1; unstable
     * samples are failures inside the yield */
    *code = yield_met ? 0 : 1;
    if (o->plot) {
        figure_opts fo = { o->plot, o->width, o->height, o->keep_script };
        fflush(stdout);
        rc = figure_histogram(&fo, d, &r, nominal, o->sets, o->nsets, g,
                              o->yield_given ? o->yield : NAN, err);
    }
    free(again);
    mc_result_free(&r);
    return rc;
}
