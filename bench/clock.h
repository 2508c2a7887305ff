/* clock: the timing helpers the benchmark programs share (wall and process
 * CPU clocks, the median of a set of runs). Header-only: each program is
 * one file linked against the library. */
#ifndef LOOPWISE_BENCH_CLOCK_H
#define LOOPWISE_BENCH_CLOCK_H

#include <stdlib.h>
#include <time.h>

static inline double clock_seconds(clockid_t id)
{
    struct timespec ts;
    clock_gettime(id, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* Wall time (monotonic) and the process's CPU time, in seconds. */
static inline double now(void)
{
    return clock_seconds(CLOCK_MONOTONIC);
}

static inline double cpu_now(void)
{
    return clock_seconds(CLOCK_PROCESS_CPUTIME_ID);
}

static inline int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return x < y ? -1 : (x > y);
}

/* The median of t[0..n-1] (n >= 1), sorting t in place. */
static inline double median(double *t, int n)
{
    qsort(t, (size_t)n, sizeof *t, cmp_double);
    return n % 2 ? t[n / 2] : 0.5 * (t[n / 2 - 1] + t[n / 2]);
}

#endif
