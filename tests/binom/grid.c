/* grid: prints Clopper-Pearson bounds from binom_lower_bound and
 * binom_upper_bound for tests/binom/check.py, which compares them with
 * scipy and with the definition.
 *   grid full    every k of every n from 1 to 2000
 *   grid pairs   the pairs "k n" read from standard input, one a line
 * Output, raw native doubles, five per pair: k, n, the two-sided 95% lower
 * and upper bounds (tails 0.025) and the one-sided 95% lower bound (tail
 * 0.05). Rows of the full grid are computed on all OpenMP threads and
 * written in order. */
#include <gsl/gsl_errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/binom.h"

enum { FULL_N = 2000 };

static void bounds(int k, int n, double *v)
{
    v[0] = k;
    v[1] = n;
    v[2] = binom_lower_bound(k, n, 0.025);
    v[3] = binom_upper_bound(k, n, 0.025);
    v[4] = binom_lower_bound(k, n, 0.05);
}

int main(int argc, char **argv)
{
    static double row[(FULL_N + 1) * 5];
    /* as the program does at start: binom.c then saves and restores "off" on
     * every thread, so the threads cannot disturb each other's handler */
    gsl_set_error_handler_off();
    if (argc == 2 && !strcmp(argv[1], "full")) {
        for (int n = 1; n <= FULL_N; n++) {
#pragma omp parallel for schedule(static)
            for (int k = 0; k <= n; k++)
                bounds(k, n, row + 5 * k);
            fwrite(row, sizeof *row, 5 * (size_t)(n + 1), stdout);
        }
    } else if (argc == 2 && !strcmp(argv[1], "pairs")) {
        int k, n;
        while (scanf("%d %d", &k, &n) == 2) {
            bounds(k, n, row);
            fwrite(row, sizeof *row, 5, stdout);
        }
    } else {
        fputs("usage: grid full|pairs\n", stderr);
        return 2;
    }
    return fflush(stdout) || ferror(stdout) ? 1 : 0;
}
