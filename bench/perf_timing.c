/* perf_timing.c - alternating-repetition timing with medians (see
 * perf_timing.h). CPU time of the process is used, so other jobs on the
 * machine do not add to it. */
#define _POSIX_C_SOURCE 200809L

#include "perf_timing.h"

#include <stdio.h>
#include <stdlib.h>
#include <time.h>

#define MAX_SIDES 8
#define MAX_REPS 64
#define TARGET_NS 2.0e7 /* CPU time aimed at per repetition and side */

volatile double perf_sink;

static double cpu_ns(void)
{
    struct timespec t;
    clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &t);
    return (double)t.tv_sec * 1e9 + (double)t.tv_nsec;
}

static double run_calls(const perf_side *s, long calls)
{
    double start = cpu_ns();
    for (long c = 0; c < calls; c++)
        s->fn(s->ctx);
    return cpu_ns() - start;
}

/* Doubles the call count until one batch takes at least TARGET_NS / 8,
 * then scales it up to TARGET_NS. */
static long calibrate(const perf_side *s)
{
    long calls = 1;
    double ns;
    while ((ns = run_calls(s, calls)) < TARGET_NS / 8 && calls < (1L << 40))
        calls *= 2;
    long scaled = (long)((double)calls * TARGET_NS / (ns > 1 ? ns : 1));
    return scaled > 1 ? scaled : 1;
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

void perf_time_sides(const perf_side *sides, int count, int reps, double *median_ns)
{
    long calls[MAX_SIDES];
    double per_call[MAX_SIDES][MAX_REPS];
    if (count > MAX_SIDES || reps > MAX_REPS) {
        fprintf(stderr, "perf_time_sides: at most %d sides and %d reps\n", MAX_SIDES, MAX_REPS);
        exit(2);
    }
    for (int k = 0; k < count; k++)
        calls[k] = calibrate(&sides[k]);
    for (int r = 0; r < reps; r++)
        for (int step = 0; step < count; step++) {
            int k = (r + step) % count;
            per_call[k][r] = run_calls(&sides[k], calls[k]) / (double)calls[k];
        }
    for (int k = 0; k < count; k++) {
        qsort(per_call[k], (size_t)reps, sizeof per_call[k][0], cmp_double);
        median_ns[k] = reps % 2 ? per_call[k][reps / 2]
                                : 0.5 * (per_call[k][reps / 2 - 1] + per_call[k][reps / 2]);
    }
}

double perf_ratio(const char *label, double num, double den, const char *target)
{
    double ratio = num / den;
    printf("  %-44s %9.2f   (target %s)\n", label, ratio, target);
    return ratio;
}
