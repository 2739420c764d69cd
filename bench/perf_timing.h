/* perf_timing.h - shared timing for the perf benchmarks: several functions
 * timed in alternating repetitions on one process, reported as medians, so
 * that a noisy shared machine skews all of them alike. */
#ifndef PERF_TIMING_H
#define PERF_TIMING_H

/* One timed side: fn(ctx) is one call of the thing measured. */
typedef struct perf_side {
    const char *name;
    void (*fn)(void *ctx);
    void *ctx;
} perf_side;

/* Runs every side for `reps` repetitions, rotating the order each time; a
 * repetition makes enough calls to last about 20 ms of CPU time. Writes the
 * median CPU nanoseconds per call of side k to median_ns[k]. */
void perf_time_sides(const perf_side *sides, int count, int reps, double *median_ns);

/* Prints "label  ratio  (target)" for num/den and returns the ratio. */
double perf_ratio(const char *label, double num, double den, const char *target);

/* Keeps results of timed calls from being optimised away. */
extern volatile double perf_sink;

#endif
