/* mc_floor: where one Monte Carlo sample's time goes, on one thread, and
 * how much of it is the three small eigenproblems a sample must solve.
 *
 *   build/bench/mc_floor [--budget S] [--cores N] FILE.loop
 *
 * Times, each repeated for S seconds in all (default 0.5, in five rounds
 * taken in turn) and reported as the median: (a) one sample as 'montecarlo' analyses it at the file's nominal
 * values (evaluate the params, stamp the model, check_run without owners,
 * loops or the Nyquist count); (b) the evaluator's form, balanced (GSL)
 * and reduced to controller Hessenberg form (LAPACK); (c) the LAPACK
 * eigenvalue computations of that sample alone, on the matrices it builds:
 * the open-loop poles (the
 * controller Hessenberg form H), the closed-loop poles (H less the
 * feedback's rank-one term, balanced) and the zero candidates (QZ of the
 * bordered pencil); (d) for comparison, GSL's nonsymmetric eigensolver on
 * the same H. It then prints the least time 100,000 samples can take on N
 * cores (default: the cores online) for (b) and (c) alone, beside issue
 * 12's target. Reads the library's internal headers, since it times its parts.
 * No assertion is made on any time. */
#include <complex.h>
#include <gsl/gsl_eigen.h>
#include <gsl/gsl_errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "../src/loopgain_impl.h"
#include "../src/pencil_impl.h"
#include "loopwise/check.h"
#include "loopwise/eigvals.h"

#include "clock.h"

enum { MAX_REPS = 1000000, ROUNDS = 5, SAMPLES = 100000 };
static const double TARGET_S = 1.5; /* issue 12: 100,000 samples on 2 cores */

static void die(const char *what, const lw_error *err)
{
    fprintf(stderr, "mc_floor: %s: %s\n", what, err->msg);
    exit(1);
}

typedef struct subject {
    desc *d;
    model *m;
    check_result r;           /* the nominal sample, for its evaluator */
    gsl_eigen_nonsymm_workspace *gw;
    gsl_matrix *gA;
    gsl_vector_complex *gev;
} subject;

typedef enum { PART_SAMPLE, PART_HESS, PART_POLES, PART_CLOSED, PART_ZEROS, PART_GSL, NPARTS } part;

static const char *const part_name[NPARTS] = {
    "one sample as montecarlo runs it",
    "  balance and controller Hessenberg form",
    "  LAPACK: open-loop poles (Hessenberg QR)",
    "  LAPACK: closed-loop poles (balance, QR)",
    "  LAPACK: zero candidates (QZ)",
    "  for comparison: GSL nonsymm on the same H",
};

/* One run of a part; returns its time in seconds. */
static double run_part(subject *s, part p)
{
    static const check_opts mc = { 0, 0, 0, 0, 0, 0, NULL }; /* as cmd_montecarlo */
    lw_error err;
    lw_error_clear(&err);
    pencil_hess *h = s->r.lg->h;
    double complex ev[64], z[64];
    int ok, nz, used, rc = LW_OK;
    double t0 = now();
    switch (p) {
    case PART_SAMPLE: {
        model *m = NULL;
        check_result r;
        if (!(rc = desc_eval(s->d, &err)) && !(rc = model_new(s->d, &m, &err)) &&
            !(rc = check_run(s->d, m, &mc, &r, &err)))
            check_result_free(&r);
        model_free(m);
        break;
    }
    case PART_HESS: {
        pencil_hess *hn = NULL;
        rc = pencil_hess_new(s->r.lg->p, &s->r.lg->io, &hn, &err);
        pencil_hess_free(hn);
        break;
    }
    case PART_POLES:
        rc = pencil_hess_eigen(h, ev, &err);
        break;
    case PART_CLOSED:
        rc = pencil_hess_feedback_eigen(h, s->r.lg->hgain, ev, &ok, &err);
        break;
    case PART_ZEROS:
        rc = pencil_hess_zero_candidates(s->r.lg->p, h, &s->r.lg->io, PENCIL_ZEROS_AUTO, z, &nz,
                                         &used, &err);
        break;
    case PART_GSL:
        for (int i = 0; i < h->r; i++)
            for (int j = 0; j < h->r; j++)
                gsl_matrix_set(s->gA, (size_t)i, (size_t)j, j + 1 >= i ? h->H[i * h->r + j] : 0.0);
        rc = gsl_eigen_nonsymm(s->gA, s->gev, s->gw) ? LW_ENUMERIC : LW_OK;
        break;
    default:
        break;
    }
    double dt = now() - t0;
    if (rc)
        die(part_name[p], &err);
    return dt;
}

/* Each part in turn, ROUNDS times, for budget / ROUNDS seconds each time
 * (so that a disturbance of the machine falls on every part alike); the
 * median of all its runs. */
static void median_times(subject *s, double budget, double *us)
{
    double *t[NPARTS], total[NPARTS] = { 0 };
    int n[NPARTS] = { 0 };
    for (int p = 0; p < NPARTS; p++)
        if (!(t[p] = malloc(sizeof(double) * MAX_REPS)))
            die("timing", &(lw_error){ .msg = "out of memory" });
    for (int round = 1; round <= ROUNDS; round++)
        for (int p = 0; p < NPARTS; p++)
            while (n[p] < MAX_REPS && (n[p] < 3 * round || total[p] < budget * round / ROUNDS)) {
                t[p][n[p]] = run_part(s, (part)p);
                total[p] += t[p][n[p]++];
            }
    for (int p = 0; p < NPARTS; p++) {
        us[p] = 1e6 * median(t[p], n[p]);
        free(t[p]);
    }
}

static void load(const char *path, subject *s)
{
    static const check_opts mc = { 0, 0, 0, 0, 0, 0, NULL };
    lw_error err;
    lw_error_clear(&err);
    text_file *t = NULL;
    int rc = text_read(path, &t, &err);
    if (!rc)
        rc = desc_parse(t, path, &s->d, &err);
    text_free(t);
    if (!rc)
        rc = desc_eval(s->d, &err);
    if (!rc)
        rc = model_new(s->d, &s->m, &err);
    if (!rc)
        rc = check_run(s->d, s->m, &mc, &s->r, &err);
    if (rc)
        die(path, &err);
    if (!s->r.lg || !s->r.lg->h || s->r.lg->h->S)
        die(path, &(lw_error){ .msg = "no small Hessenberg evaluator (a loop under 1000 states "
                                      "analysed on the fast path is needed)" });
    size_t r = (size_t)s->r.lg->h->r;
    s->gw = gsl_eigen_nonsymm_alloc(r);
    s->gA = gsl_matrix_alloc(r, r);
    s->gev = gsl_vector_complex_alloc(r);
    gsl_eigen_nonsymm_params(0, 0, s->gw); /* no balancing: H is balanced already */
}

int main(int argc, char **argv)
{
    double budget = 0.5;
    long cores = sysconf(_SC_NPROCESSORS_ONLN);
    const char *path = NULL;
    for (int k = 1; k < argc; k++) {
        if (!strcmp(argv[k], "--budget") && k + 1 < argc)
            budget = atof(argv[++k]);
        else if (!strcmp(argv[k], "--cores") && k + 1 < argc)
            cores = atol(argv[++k]);
        else if (argv[k][0] != '-' && !path)
            path = argv[k];
        else
            path = NULL, k = argc;
    }
    if (!path || !(budget > 0) || cores < 1) {
        fprintf(stderr, "usage: mc_floor [--budget S] [--cores N] FILE.loop\n");
        return 2;
    }
    gsl_set_error_handler_off();
    eigvals_blas_one_thread();
    subject s = { 0 };
    load(path, &s);
    double us[NPARTS];
    median_times(&s, budget, us);
    double eig = us[PART_POLES] + us[PART_CLOSED] + us[PART_ZEROS], dense = eig + us[PART_HESS];
    printf("  one thread, median of repeated runs at the nominal values (%d states):\n",
           s.r.lg->h->r);
    for (int p = 0; p < NPARTS; p++)
        printf("  %-46s %8.2f us\n", part_name[p], us[p]);
    printf("  the three eigenproblems %.1f us, with the Hessenberg form %.1f us: %.0f%% of a "
           "sample\n", eig, dense, 100 * dense / us[PART_SAMPLE]);
    printf("  %d samples on %ld cores: at least %.2f s for that dense work alone, %.2f s "
           "for whole samples\n  (perfect scaling); the target of %.1f s allows %.1f us of "
           "CPU per sample\n", SAMPLES, cores, dense * 1e-6 * SAMPLES / (double)cores,
           us[PART_SAMPLE] * 1e-6 * SAMPLES / (double)cores, TARGET_S,
           TARGET_S * (double)cores / SAMPLES * 1e6);
    gsl_eigen_nonsymm_free(s.gw);
    gsl_matrix_free(s.gA);
    gsl_vector_complex_free(s.gev);
    check_result_free(&s.r);
    model_free(s.m);
    desc_free(s.d);
    return 0;
}
