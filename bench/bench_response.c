/* bench_response: timings of the closed-loop responses for 'make bench'
 * (SPEC section 6, issue 11), in process, medians over repeated runs:
 *   step   what 'response --step' computes on chainN: load, check, H with its
 *          zeros, peak and bandwidth, the 121-point table, the exact step;
 *   each   what 'response --inject each' computes on chainN: load, check,
 *          every node's step response at the read-out;
 *   sweep  'sweep --vary ccomp --to OUT --inject c0' over P points: margins
 *          and the response's overshoot, settling and peak at every point.
 * The read-out is the chain's last node, the source a current into c0 (the
 * dominant node). Nothing here asserts on a time.
 *
 *   bench_response [--budget S] [--ref REF.json] [--sweep N=P] chainN.loop ... */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "loopwise/design.h"
#include "loopwise/step.h"
#include "loopwise/text.h"

#include "clock.h"

enum { MAX_REPS = 100000, TABLE_POINTS = 121 };

static void die(const char *what, const lw_error *err, const char *path)
{
    fprintf(stderr, "bench_response: %s failed: ", what);
    lw_error_print(err, path, stderr);
    exit(3);
}

typedef struct net {
    const char *path;
    desc *d;
    model *m;
    check_result r;
    int to, src;
} net;

static void load(net *x)
{
    lw_error err;
    lw_error_clear(&err);
    text_file *t = NULL;
    int rc = text_read(x->path, &t, &err);
    if (!rc)
        rc = desc_parse(t, x->path, &x->d, &err);
    text_free(t);
    if (!rc)
        rc = desc_eval(x->d, &err);
    if (!rc)
        rc = model_new(x->d, &x->m, &err);
    check_opts o = { .want_loops = 1 };
    if (!rc)
        rc = check_run(x->d, x->m, &o, &x->r, &err);
    if (rc)
        die("loading", &err, x->path);
    char last[16];
    snprintf(last, sizeof last, "c%d", 3 * x->d->nnodes / 4 - 1);
    x->to = desc_find_node(x->d, last);
    x->src = desc_find_node(x->d, "c0");
}

static void unload(net *x)
{
    check_result_free(&x->r);
    model_free(x->m);
    desc_free(x->d);
}

/* response --step: returns the overshoot, to print beside the time. */
static double one_step(const char *path, double *overshoot)
{
    net x;
    memset(&x, 0, sizeof x);
    x.path = path;
    lw_error err;
    response *rs = NULL;
    response_result res;
    step_form *sf = NULL;
    step_result st;
    double t0 = now();
    load(&x);
    int rc = response_new(x.m, x.to, &rs, &err);
    if (!rc)
        rc = response_source(rs, (response_src){ RESP_INJECT, x.src }, &err);
    if (!rc)
        rc = response_analyse(rs, x.r.cl, x.r.ncl, NULL, &res, &err);
    if (!rc)
        rc = step_form_new(rs, &sf, &err);
    if (!rc)
        rc = step_run(sf, &res, &st, &err);
    for (int k = 0; !rc && k < TABLE_POINTS; k++) {
        double mag, hz = res.fmin_hz * pow(res.fmax_hz / res.fmin_hz, k / (TABLE_POINTS - 1.0));
        (void)response_phase(rs, &res, hz, &mag);
    }
    double dt = now() - t0;
    if (rc)
        die("response --step", &err, path);
    *overshoot = st.overshoot_pct;
    step_form_free(sf);
    response_result_free(&res);
    response_free(rs);
    unload(&x);
    return dt;
}

static double one_each(const char *path, double *worst)
{
    net x;
    memset(&x, 0, sizeof x);
    x.path = path;
    lw_error err;
    response *rs = NULL;
    step_form *sf = NULL;
    double t0 = now();
    load(&x);
    int n = x.d->nnodes, *nodes = malloc(sizeof(int) * (size_t)n);
    step_each_item *items = malloc(sizeof *items * (size_t)n);
    for (int k = 0; k < n; k++)
        nodes[k] = k;
    int rc = response_new(x.m, x.to, &rs, &err);
    if (!rc)
        rc = response_source(rs, (response_src){ RESP_INJECT, x.to }, &err);
    if (!rc)
        rc = step_form_new(rs, &sf, &err);
    if (!rc)
        rc = step_each(rs, sf, nodes, n, items, &err);
    double dt = now() - t0;
    if (rc)
        die("response --inject each", &err, path);
    *worst = 0;
    for (int k = 0; k < n; k++)
        if (!isnan(items[k].overshoot_pct))
            *worst = fmax(*worst, items[k].overshoot_pct);
    free(nodes);
    free(items);
    step_form_free(sf);
    response_free(rs);
    unload(&x);
    return dt;
}

static double one_sweep(const char *path, int npts, double *first_os)
{
    net x;
    memset(&x, 0, sizeof x);
    x.path = path;
    lw_error err;
    double t0 = now();
    load(&x);
    desc_target t;
    if (desc_target_find(x.d, "ccomp", &t, &err))
        die("finding ccomp", &err, path);
    sweep_probe probe = { x.to, { RESP_INJECT, x.src } };
    check_opts o = { 0 };
    design_goal g = { 60.0, NAN, 0 };
    sweep_result sw;
    if (sweep_run_probe(x.d, t, 50e-15, 10e-12, npts, 0, g, &o, &probe, &sw, &err))
        die("sweep --to", &err, path);
    double dt = now() - t0;
    *first_os = sw.pts[sw.npts - 1].overshoot_pct;
    sweep_result_free(&sw);
    unload(&x);
    return dt;
}

typedef double (*runner)(const char *, double *);

/* Median wall time per run, and in *cpu the median CPU time of the process
 * per run (on a shared machine the wall time also counts other work). */
static double median_of(const char *path, double budget, double (*fn)(const char *, double *),
                        double *value, int *reps, double *cpu)
{
    double *t = malloc(sizeof(double) * 2 * MAX_REPS), *c = t + MAX_REPS, total = 0;
    int n = 0;
    while (n < MAX_REPS && (n == 0 || total < budget)) {
        double c0 = cpu_now();
        t[n] = fn(path, value);
        c[n] = cpu_now() - c0;
        total += t[n++];
    }
    double m = median(t, n);
    *cpu = median(c, n);
    free(t);
    *reps = n;
    return m;
}

/* The reference's time for key NAME/OP/s in its flat JSON, or NAN. */
static double ref_time(const char *json, const char *name, const char *op)
{
    char key[256];
    snprintf(key, sizeof key, "\"%s/%s/s\":", name, op);
    const char *p = json ? strstr(json, key) : NULL;
    return p ? strtod(p + strlen(key), NULL) : NAN;
}

static char *slurp(const char *path)
{
    FILE *f = fopen(path, "rb");
    if (!f)
        return NULL;
    char *buf = malloc(1 << 20);
    size_t n = buf ? fread(buf, 1, (1 << 20) - 1, f) : 0;
    fclose(f);
    if (buf)
        buf[n] = '\0';
    return buf;
}

static void show(const char *name, const char *op, double sec, double cpu, int reps, double ref,
                 const char *note)
{
    printf("  %-10s %-22s %10.3f ms  (CPU %9.3f ms, %5d runs)", name, op, 1e3 * sec, 1e3 * cpu,
           reps);
    if (!isnan(ref))
        printf("   reference %9.1f ms   %6.1fx", 1e3 * ref, ref / sec);
    printf("   %s\n", note);
}

int main(int argc, char **argv)
{
    double budget = 0.5;
    const char *refpath = NULL;
    int sweep_n[8], sweep_p[8], nsweep = 0;
    for (int k = 1; k < argc; k++) {
        if (!strcmp(argv[k], "--budget") && k + 1 < argc)
            budget = atof(argv[++k]);
        else if (!strcmp(argv[k], "--ref") && k + 1 < argc)
            refpath = argv[++k];
        else if (!strcmp(argv[k], "--sweep") && k + 1 < argc && nsweep < 8)
            sscanf(argv[++k], "%d=%d", &sweep_n[nsweep], &sweep_p[nsweep]), nsweep++;
    }
    char *ref = refpath ? slurp(refpath) : NULL;
    double c0 = cpu_now(), w0 = now();
    printf("Closed-loop responses (in process: load, check, response; median per run)\n");
    for (int k = 1; k < argc; k++) {
        const char *path = argv[k];
        size_t len = strlen(path);
        if (len < 5 || strcmp(path + len - 5, ".loop"))
            continue;
        const char *base = strrchr(path, '/') ? strrchr(path, '/') + 1 : path;
        char name[64];
        snprintf(name, sizeof name, "%.*s", (int)(strlen(base) - 5), base);
        int reps, nodes = atoi(name + 5);
        double v, sec, cpu;
        char note[128];
        sec = median_of(path, budget, one_step, &v, &reps, &cpu);
        snprintf(note, sizeof note, "overshoot %.4g%%", v);
        show(name, "response --step", sec, cpu, reps, ref_time(ref, name, "step"), note);
        sec = median_of(path, budget, one_each, &v, &reps, &cpu);
        snprintf(note, sizeof note, "largest overshoot %.4g%%", v);
        show(name, "response --inject each", sec, cpu, reps, ref_time(ref, name, "each"), note);
        for (int s = 0; s < nsweep; s++) {
            if (sweep_n[s] != nodes)
                continue;
            double os, s0 = cpu_now();
            sec = one_sweep(path, sweep_p[s], &os);
            cpu = cpu_now() - s0;
            snprintf(note, sizeof note, "%d points; overshoot at 10 pF %.4g%%", sweep_p[s], os);
            char op[32];
            snprintf(op, sizeof op, "sweep --to (%d pts)", sweep_p[s]);
            show(name, op, sec, cpu, 1, ref_time(ref, name, "sweep_to"), note);
        }
    }
    printf("  CPU %.2f s over %.2f s of wall time (below 1: other work had the cores)\n",
           cpu_now() - c0, now() - w0);
    free(ref);
    return 0;
}
