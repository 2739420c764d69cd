/* bench.c - time per row and peak scratch memory of dervish gradients from
 * 10^3 to 10^6 rows, for a 20-param logistic model evaluated row by row
 * (fit20.dvs) and the same model made to keep its rows in work by centring
 * its features (fit20_centred.dvs). Linux: ru_maxrss is read in KiB. */
#define _POSIX_C_SOURCE 200809L

#include "fit20.h"
#include "fit20_centred.h"
#include "sample_util.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#define SIZES      4
#define MAX_ROWS   1000000L
#define FEATURES   19
#define REPS       7         /* timed repetitions; the median is reported */
#define ROWS_TIMED MAX_ROWS  /* rows per timed repetition, at every size */
#define FLAT_LIMIT 1.20      /* "flat": time per row within 20 % of 10^3 rows */

static const long sizes[SIZES] = {1000L, 10000L, 100000L, MAX_ROWS};

enum { ROW_BY_ROW, WHOLE_BATCH, VARIANTS };
static const char *const variant_name[VARIANTS] = {"fit20 (row by row)",
                                                   "fit20_centred (rows kept in work)"};
#define READ_ONCE VARIANTS /* the timing table's extra row: a memory floor */

/* The rows, X[rows][FEATURES] and y[rows]; both models read them in place,
 * and a smaller size reads the first rows. */
typedef struct data_set {
    double *X, *y;
} data_set;

static volatile double sink; /* keeps the timed calls from being optimised out */

/* Invented rows from a fixed seed: features uniform in [-1.5, 1.5] (the
 * first one shifted by 2, so centring matters), labels drawn from a
 * logistic model. The first n rows are the same whatever the total. */
static int make_data(data_set *d, long rows)
{
    sample_rng rng;
    d->X = malloc((size_t)rows * FEATURES * sizeof *d->X);
    d->y = malloc((size_t)rows * sizeof *d->y);
    if (!d->X || !d->y)
        return 1;
    sample_rng_seed(&rng, 20202020u);
    for (long i = 0; i < rows; i++) {
        double z = -0.3;
        for (int j = 0; j < FEATURES; j++) {
            double x = sample_uniform(&rng, -1.5, 1.5) + (j == 0 ? 2.0 : 0.0);
            d->X[i * FEATURES + j] = x;
            z += (j % 2 ? 0.4 : -0.25) * x;
        }
        d->y[i] = sample_uniform(&rng, 0.0, 1.0) < 1.0 / (1.0 + exp(-z));
    }
    return 0;
}

static void free_data(data_set *d)
{
    free(d->X);
    free(d->y);
}

static fit20_input rows_input(const data_set *d, long n)
{
    fit20_input in = {.n = n, .X = d->X, .y = d->y};
    return in;
}

static fit20_centred_input whole_input(const data_set *d, long n)
{
    fit20_centred_input in = {.n = n, .X = d->X, .y = d->y};
    return in;
}

static size_t work_count(int variant, const data_set *d, long n)
{
    fit20_input r = rows_input(d, n);
    fit20_centred_input w = whole_input(d, n);
    return variant == ROW_BY_ROW ? fit20_work_count(&r) : fit20_centred_work_count(&w);
}

/* One gradient of the first n rows; both param structs are a w[19] and a b. */
static double gradient(int variant, const data_set *d, long n, const double *param,
                       double *grad, double *work)
{
    if (variant == ROW_BY_ROW) {
        fit20_input in = rows_input(d, n);
        fit20_param_flat p, g;
        memcpy(p.v, param, sizeof p.v);
        double loss = fit20_gradient(&p.p, &in, &g.p, work);
        memcpy(grad, g.v, sizeof g.v);
        return loss;
    } else {
        fit20_centred_input in = whole_input(d, n);
        fit20_centred_param_flat p, g;
        memcpy(p.v, param, sizeof p.v);
        double loss = fit20_centred_gradient(&p.p, &in, &g.p, work);
        memcpy(grad, g.v, sizeof g.v);
        return loss;
    }
}

/* For the finite-difference check: the value of the first 1000 rows. */
typedef struct check_ctx {
    int variant;
    const data_set *d;
    double *work;
} check_ctx;

static double check_value(const double *x, const void *ctx)
{
    const check_ctx *c = ctx;
    if (c->variant == ROW_BY_ROW) {
        fit20_input in = rows_input(c->d, sizes[0]);
        fit20_param_flat p;
        memcpy(p.v, x, sizeof p.v);
        return fit20_value(&p.p, &in, c->work);
    } else {
        fit20_centred_input in = whole_input(c->d, sizes[0]);
        fit20_centred_param_flat p;
        memcpy(p.v, x, sizeof p.v);
        return fit20_centred_value(&p.p, &in, c->work);
    }
}

/* A floor for comparison: adding up the inputs of n rows once, which costs
 * what fetching them from wherever they sit in memory costs. */
static double read_once(const data_set *d, long n)
{
    double total = 0.0;
    for (long i = 0; i < n * FEATURES; i++)
        total += d->X[i];
    for (long i = 0; i < n; i++)
        total += d->y[i];
    return total;
}

/* CPU time of this process: other jobs on the machine do not count. */
static double seconds_now(void)
{
    struct timespec t;
    clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

static int by_value(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

static double median(double *v, int count)
{
    qsort(v, (size_t)count, sizeof *v, by_value);
    return v[count / 2];
}

static long peak_rss_kib(void)
{
    struct rusage use;
    getrusage(RUSAGE_SELF, &use);
    return use.ru_maxrss;
}

/* What a child process measured for one variant and size. */
typedef struct memory_use {
    size_t work;         /* m_work_count, doubles */
    long base_kib;       /* peak RSS before the data was made */
    long peak_kib;       /* peak RSS after one gradient */
    double inputs_bytes; /* X and y */
} memory_use;

/* In a fresh child, so that the peak belongs to this variant and size
 * alone: makes the data, runs one gradient, and reports the peak RSS. */
static int measure_memory(int variant, long n, memory_use *out)
{
    int fd[2];
    pid_t child;
    int status;
    if (pipe(fd) != 0)
        return 1;
    child = fork();
    if (child < 0)
        return 1;
    if (child == 0) {
        data_set d;
        memory_use m;
        double param[FIT20_PARAM_COUNT] = {0}, grad[FIT20_PARAM_COUNT], *work = NULL;
        close(fd[0]);
        m.base_kib = peak_rss_kib();
        if (make_data(&d, n))
            _exit(1);
        m.work = work_count(variant, &d, n);
        if (m.work && !(work = malloc(m.work * sizeof *work)))
            _exit(1);
        sink = gradient(variant, &d, n, param, grad, work);
        m.peak_kib = peak_rss_kib();
        m.inputs_bytes = (double)n * (FEATURES + 1) * sizeof(double);
        _exit(write(fd[1], &m, sizeof m) == (ssize_t)sizeof m ? 0 : 1);
    }
    close(fd[1]);
    ssize_t got = read(fd[0], out, sizeof *out);
    close(fd[0]);
    if (waitpid(child, &status, 0) != child || !WIFEXITED(status) ||
        WEXITSTATUS(status) != 0 || got != (ssize_t)sizeof *out)
        return 1;
    return 0;
}

/* Checks both generated gradients against central differences on the
 * first 1000 rows, so the timings are of code that computes the right
 * thing. */
static int check_gradients(const data_set *d, double *work)
{
    double param[FIT20_PARAM_COUNT], grad[FIT20_PARAM_COUNT];
    int failed = 0;
    for (int k = 0; k < FIT20_PARAM_COUNT; k++)
        param[k] = 0.1 * (k % 5) - 0.2;
    for (int v = 0; v < VARIANTS; v++) {
        check_ctx ctx = {v, d, work};
        gradient(v, d, sizes[0], param, grad, work);
        failed |= sample_gradcheck(variant_name[v], check_value, &ctx, param, grad, NULL,
                                   FIT20_PARAM_COUNT, 1e-6);
    }
    return failed;
}

int main(void)
{
    static double ns_per_row[VARIANTS + 1][SIZES][REPS];
    memory_use mem[VARIANTS][SIZES];
    double param[FIT20_PARAM_COUNT], grad[FIT20_PARAM_COUNT], *work;
    double median_ns[VARIANTS + 1][SIZES];
    data_set d;
    int failed = 0;

    /* Memory first, while this process is still small: each child starts
     * from this process's peak. */
    for (int v = 0; v < VARIANTS; v++)
        for (int s = 0; s < SIZES; s++)
            if (measure_memory(v, sizes[s], &mem[v][s])) {
                fprintf(stderr, "bench: measuring memory at %ld rows failed\n", sizes[s]);
                return 1;
            }

    if (make_data(&d, MAX_ROWS) ||
        !(work = malloc(work_count(WHOLE_BATCH, &d, MAX_ROWS) * sizeof *work))) {
        fprintf(stderr, "bench: out of memory\n");
        return 1;
    }
    failed |= check_gradients(&d, work);

    for (int k = 0; k < FIT20_PARAM_COUNT; k++)
        param[k] = 0.05 * (k % 7) - 0.15;
    for (int v = 0; v < VARIANTS; v++) /* warm up caches and page tables */
        sink = gradient(v, &d, MAX_ROWS, param, grad, work);
    /* Repetitions alternate sizes and variants, rotating the order of the
     * sizes, so a slow spell of the machine spreads over all of them. */
    for (int r = 0; r < REPS; r++)
        for (int k = 0; k < SIZES; k++) {
            int s = (k + r) % SIZES;
            for (int v = 0; v <= READ_ONCE; v++) {
                long calls = ROWS_TIMED / sizes[s];
                double start = seconds_now();
                for (long c = 0; c < calls; c++)
                    sink = v == READ_ONCE ? read_once(&d, sizes[s])
                                          : gradient(v, &d, sizes[s], param, grad, work);
                ns_per_row[v][s][r] =
                    1e9 * (seconds_now() - start) / ((double)calls * (double)sizes[s]);
            }
        }

    for (int v = 0; v <= READ_ONCE; v++)
        for (int s = 0; s < SIZES; s++)
            median_ns[v][s] = median(ns_per_row[v][s], REPS);
    printf("\ngradient of a 20-param logistic model (19 features + bias): CPU time per\n"
           "row, median of %d alternating repetitions of %ld rows each; memory measured\n"
           "in a separate process for each model and size\n",
           REPS, ROWS_TIMED);
    for (int v = 0; v < VARIANTS; v++) {
        double worst = 1.0;
        printf("\n%s\n%9s  %8s  %8s  %13s  %9s  %19s\n", variant_name[v], "rows", "ns/row",
               "vs 10^3", "work/doubles", "work/MiB", "peak RSS-inputs/MiB");
        for (int s = 0; s < SIZES; s++) {
            double ratio = median_ns[v][s] / median_ns[v][0];
            if (fabs(ratio - 1.0) > fabs(worst - 1.0))
                worst = ratio;
            printf("%9ld  %8.1f  %8.2f  %13zu  %9.2f  %19.2f\n", sizes[s], median_ns[v][s],
                   ratio, mem[v][s].work, (double)mem[v][s].work * sizeof(double) / 1048576.0,
                   ((double)mem[v][s].peak_kib * 1024.0 - mem[v][s].inputs_bytes) /
                       1048576.0);
        }
        printf("time per row %s flat within 20%% (furthest from 10^3 rows: %.2f)\n",
               fabs(worst - 1.0) <= FLAT_LIMIT - 1.0 ? "is" : "is NOT", worst);
    }
    printf("\nfor comparison, adding up the inputs once (what fetching them costs)\n"
           "%9s  %8s  %8s\n", "rows", "ns/row", "vs 10^3");
    for (int s = 0; s < SIZES; s++)
        printf("%9ld  %8.1f  %8.2f\n", sizes[s], median_ns[READ_ONCE][s],
               median_ns[READ_ONCE][s] / median_ns[READ_ONCE][0]);
    printf("\npeak RSS of a child before it makes its data: %.2f MiB, part of every\n"
           "peak RSS-inputs above\n",
           (double)mem[ROW_BY_ROW][0].base_kib / 1024.0);
    printf("rows kept in work / row by row, time per row at 10^6 rows: %.2f\n",
           median_ns[WHOLE_BATCH][SIZES - 1] / median_ns[ROW_BY_ROW][SIZES - 1]);

    free(work);
    free_data(&d);
    return failed;
}
