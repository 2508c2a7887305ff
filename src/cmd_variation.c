/* cmd_variation: the 'corners' and 'montecarlo' commands and their output. */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "loopwise/cli.h"
#include "loopwise/figures.h"
#include "loopwise/report.h"
#include "loopwise/report_design.h"
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

static void set_line(FILE *f, const desc *d, const char *file, const int *params, int np,
                     const double *v)
{
    char b[40];
    fprintf(f, "loopwise check %s", file);
    for (int j = 0; j < np; j++)
        fprintf(f, " --set %s=%s", d->params[params[j]].name, exact(v[j], b, sizeof b));
}

static void json_set_line(FILE *f, const desc *d, const char *file, const int *params, int np,
                          const double *v)
{
    char buf[4096];
    int len = snprintf(buf, sizeof buf, "loopwise check %s", file);
    for (int j = 0; j < np && len < (int)sizeof buf; j++)
        len += snprintf(buf + len, sizeof buf - (size_t)len, " --set %s=%s",
                        d->params[params[j]].name, exact(v[j], (char[40]){ 0 }, 40));
    json_string(f, buf);
}


static void corners_text(FILE *f, const desc *d, const corner_result *r, design_goal g)
{
    fprintf(f, "loopwise corners: %s  %d corner%s (every combination of %d range end%s), "
            "target phase margin %.4g\xC2\xB0\n\n  %-4s", d->path, r->ncorners,
            r->ncorners == 1 ? "" : "s", r->nparams, r->nparams == 1 ? "" : "s", g.pm_deg, "#");
    for (int j = 0; j < r->nparams; j++)
        fprintf(f, " %-11s", d->params[r->params[j]].name);
    fprintf(f, " %-9s %-11s %-9s %s\n", "PM", "crossover", "GM", "stable");
    for (int k = 0; k < r->ncorners; k++) {
        int c = r->order[k];
        const design_point *p = &r->pts[c];
        char a[32], pm[16], gm[16];
        fprintf(f, "  %-4d", c + 1);
        for (int j = 0; j < r->nparams; j++)
            fprintf(f, " %-11.4g", r->values[c * r->nparams + j]);
        snprintf(pm, sizeof pm, isnan(p->pm_deg) ? "-" : "%.2f\xC2\xB0", p->pm_deg);
        snprintf(gm, sizeof gm, isnan(p->gm_db) ? "-" : "%.2f dB", p->gm_db);
        fprintf(f, " %-10s %-11s %-9s %s%s\n", pm,
                isnan(p->crossover_hz) ? "none" : si_format(p->crossover_hz, "Hz", a, sizeof a),
                gm, p->stable ? "yes" : "NO", design_meets(p, g) ? "" : "  < target");
    }
}

int cmd_corners(const options *o, desc *d, int *code, lw_error *err)
{
    check_opts co = { .fmin_hz = o->fmin, .fmax_hz = o->fmax, .want_owner = 1 };
    design_goal g = { o->pm, o->gm_given ? o->gm : NAN };
    corner_result r;
    int rc = corners_run(d, &co, g, &r, err);
    if (rc)
        return rc;
    int w = r.order[0];
    const double *wv = r.values + w * r.nparams;
    int met = 1;
    for (int c = 0; c < r.ncorners; c++)
        met &= design_meets(&r.pts[c], g);
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
        fprintf(stdout, "],\n \"worst\": %d, \"met\": %s, \"reproduce\": ", w + 1,
                met ? "true" : "false");
        json_set_line(stdout, d, o->file, r.params, r.nparams, wv);
        fputs("}\n", stdout);
    } else {
        corners_text(stdout, d, &r, g);
        const design_point *p = &r.pts[w];
        char a[32];
        printf("\nWorst corner #%d:", w + 1);
        if (isnan(p->pm_deg))
            printf(" no crossover, phase margin undefined");
        else
            printf(" phase margin %.2f\xC2\xB0 at %s", p->pm_deg,
                   si_format(p->crossover_hz, "Hz", a, sizeof a));
        if (!isnan(p->gm_db))
            printf(", gain margin %.2f dB", p->gm_db);
        if (!isnan(p->p1_hz))
            printf(", poles of T at %s", si_format(p->p1_hz, "Hz", a, sizeof a));
        if (!isnan(p->p2_hz))
            printf(" and %s", si_format(p->p2_hz, "Hz", a, sizeof a));
        printf("%s\n", p->stable ? "" : ", UNSTABLE");
        printf("  reproduce it: ");
        set_line(stdout, d, o->file, r.params, r.nparams, wv);
        printf("\nVerdict: %s\n", met ? "every corner meets the target."
                                      : "some corners miss the target (marked above).");
    }
    *code = met ? 0 : 1;
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
    fprintf(f, "  %-15s", label);
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

static void mc_text(FILE *f, const desc *d, const char *file, const mc_result *r, uint64_t seed,
                    design_goal g)
{
    fprintf(f, "loopwise montecarlo: %s  %d samples, seed %llu, target phase margin %.4g\xC2\xB0\n"
            "  varied:", d->path, r->nsamples, (unsigned long long)seed, g.pm_deg);
    for (int j = 0; j < r->nparams; j++) {
        const desc_param *p = &d->params[r->params[j]];
        if (p->spread.dist == DIST_NORMAL)
            fprintf(f, "%s %s (normal, sigma %.4g)", j ? "," : "", p->name, p->spread.a_v);
        else
            fprintf(f, "%s %s (uniform %.4g..%.4g)", j ? "," : "", p->name, p->spread.a_v,
                    p->spread.b_v);
    }
    fprintf(f, "\n\n  %-15s %-9s %-9s %-9s %-9s %-9s %-9s %-9s %-9s %-9s\n", "", "mean", "sigma",
            "min", "1%", "5%", "median", "95%", "99%", "max");
    stats_row(f, "PM (degrees)", &r->pm, 0);
    stats_row(f, "GM (dB)", &r->gm, 0);
    stats_row(f, "crossover", &r->fc, 1);
    fprintf(f, "\n  yield: %d of %d samples meet the target (%.3f%%)\n"
            "  95%% confidence interval (Clopper-Pearson): %.3f%% to %.3f%%; one-sided 95%% "
            "lower bound %.3f%%\n", r->passes, r->nsamples, 100 * r->yield, 100 * r->ci_lo,
            100 * r->ci_hi, 100 * r->lower95);
    if (r->invalid)
        fprintf(f, "  %d samples gave values that are not allowed (a negative resistance, ...) "
                "and count as failures\n", r->invalid);
    if (r->pm.n < r->nsamples - r->invalid)
        fprintf(f, "  %d samples have no crossover (no phase margin) and count as failures\n",
                r->nsamples - r->invalid - r->pm.n);
    if (r->worst >= 0) {
        const design_point *p = &r->pts[r->worst];
        fprintf(f, "\n  worst sample #%d: phase margin ", r->worst + 1);
        if (isnan(p->pm_deg))
            fprintf(f, "undefined");
        else
            fprintf(f, "%.2f\xC2\xB0", p->pm_deg);
        fprintf(f, "%s\n  reproduce it: ", p->stable ? "" : ", UNSTABLE");
        set_line(f, d, file, r->params, r->nparams, r->values + (size_t)r->worst * (size_t)r->nparams);
        fputc('\n', f);
    }
}

int cmd_montecarlo(const options *o, const desc *d, const text_file *t, int *code,
                   lw_error *err)
{
    if (o->samples <= 0)
        return lw_error_set(err, LW_EINPUT, "montecarlo needs --samples N with N of 1 or more");
    check_opts co = { .fmin_hz = o->fmin, .fmax_hz = o->fmax };
    design_goal g = { o->pm, o->gm_given ? o->gm : NAN };
    mc_result r;
    uint64_t seed = o->seed_given ? o->seed : 1;
    FILE *progress = isatty(2) && !o->json ? stderr : NULL;
    int rc = montecarlo_run(t, d->path, o->sets, o->nsets, o->samples, seed, g, &co, progress,
                            &r, err);
    if (rc)
        return rc;
    if (o->json) {
        printf("{\"samples\": %d, \"seed\": %llu, \"target_pm_deg\": ", r.nsamples,
               (unsigned long long)seed);
        json_number(stdout, g.pm_deg);
        printf(", \"passes\": %d, \"invalid\": %d, \"yield\": ", r.passes, r.invalid);
        json_number(stdout, r.yield);
        fputs(", \"yield_ci95\": [", stdout);
        json_number(stdout, r.ci_lo);
        fputs(", ", stdout);
        json_number(stdout, r.ci_hi);
        fputs("], \"yield_lower95\": ", stdout);
        json_number(stdout, r.lower95);
        json_stats(stdout, "phase_margin_deg", &r.pm);
        json_stats(stdout, "gain_margin_db", &r.gm);
        json_stats(stdout, "crossover_hz", &r.fc);
        fprintf(stdout, ",\n \"worst\": {\"index\": %d", r.worst + 1);
        if (r.worst >= 0) {
            fputs(", ", stdout);
            report_point_fields(stdout, &r.pts[r.worst]);
            fputs(", \"reproduce\": ", stdout);
            json_set_line(stdout, d, o->file, r.params, r.nparams,
                          r.values + (size_t)r.worst * (size_t)r.nparams);
        }
        fputs("}}\n", stdout);
    } else {
        mc_text(stdout, d, o->file, &r, seed, g);
    }
    *code = r.passes == r.nsamples ? 0 : (o->pm_given ? 1 : 0);
    if (o->plot) {
        double *pm = malloc(sizeof(double) * (size_t)(r.nsamples + 1));
        int n = 0;
        for (int i = 0; pm && i < r.nsamples; i++)
            if (r.valid[i] && !isnan(r.pts[i].pm_deg))
                pm[n++] = r.pts[i].pm_deg;
        figure_opts fo = { o->plot, o->width, o->height, o->keep_script };
        fflush(stdout);
        rc = pm ? figure_histogram(&fo, d, pm, n, g, err) : lw_error_set(err, LW_ENOMEM, "out of memory");
        free(pm);
    }
    mc_result_free(&r);
    return rc;
}
