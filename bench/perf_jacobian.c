/* perf_jacobian.c - benchmark 5: the dense Jacobian of jac40.dvs (4
 * outputs, 40 params), emitted with every function it may use.  Times the
 * value, the emitted jac40_jacobian, 4 adjoint sweeps with unit seeds and
 * 40 tangent sweeps along unit directions (the two ways to fill it), and
 * checks that the emitted Jacobian equals both. */
#include "jac40.h"
#include "perf_timing.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#define REPS 15

static jac40_param_flat x;
static jac40_input in;
static double jac[JAC40_OUTPUT_COUNT][JAC40_PARAM_COUNT];
static double by_rows[JAC40_OUTPUT_COUNT][JAC40_PARAM_COUNT];
static double by_cols[JAC40_OUTPUT_COUNT][JAC40_PARAM_COUNT];

static void value(void *ctx)
{
    jac40_output out;
    (void)ctx;
    jac40_value(&x.p, &in, &out);
    perf_sink = out.y[0];
}

static void jacobian(void *ctx)
{
    jac40_output out;
    (void)ctx;
    jac40_jacobian(&x.p, &in, &out, jac);
    perf_sink = jac[0][0];
}

static void reverse_sweeps(void *ctx)
{
    jac40_output out;
    jac40_output_flat seed;
    jac40_param_flat row;
    (void)ctx;
    memset(&seed, 0, sizeof seed);
    for (int i = 0; i < JAC40_OUTPUT_COUNT; i++) {
        seed.v[i] = 1.0;
        jac40_adjoint(&x.p, &in, &seed.o, &out, &row.p);
        seed.v[i] = 0.0;
        memcpy(by_rows[i], row.v, sizeof row.v);
    }
    perf_sink = by_rows[0][0];
}

static void tangent_sweeps(void *ctx)
{
    jac40_output out;
    jac40_output_flat col;
    jac40_param_flat dir;
    (void)ctx;
    memset(&dir, 0, sizeof dir);
    for (int k = 0; k < JAC40_PARAM_COUNT; k++) {
        dir.v[k] = 1.0;
        jac40_tangent(&x.p, &in, &dir.p, &out, &col.o);
        dir.v[k] = 0.0;
        for (int i = 0; i < JAC40_OUTPUT_COUNT; i++)
            by_cols[i][k] = col.v[i];
    }
    perf_sink = by_cols[0][0];
}

int main(void)
{
    for (int k = 0; k < JAC40_PARAM_COUNT; k++)
        x.v[k] = 0.1 * sin(1.0 + k);        /* invented weights */
    for (int i = 0; i < 10; i++)
        in.u[i] = 0.5 + 0.25 * cos(2.0 * i);
    perf_side sides[] = {{"value", value, NULL},
                         {"emitted Jacobian", jacobian, NULL},
                         {"4 reverse sweeps", reverse_sweeps, NULL},
                         {"40 tangent sweeps", tangent_sweeps, NULL}};
    double ns[4];
    perf_time_sides(sides, 4, REPS, ns);
    double worst = 0;
    for (int i = 0; i < JAC40_OUTPUT_COUNT; i++)
        for (int k = 0; k < JAC40_PARAM_COUNT; k++)
            worst = fmax(worst, fmax(fabs(jac[i][k] - by_rows[i][k]),
                                     fabs(jac[i][k] - by_cols[i][k])));
    printf("5. dense Jacobian, 4 outputs x 40 params (jac40.dvs)\n");
    printf("  median ns per call: value %.0f, emitted Jacobian %.0f, 4 "
           "reverse sweeps %.0f, 40 tangent sweeps %.0f\n", ns[0], ns[1],
           ns[2], ns[3]);
    perf_ratio("  emitted Jacobian / value", ns[1], ns[0], "none");
    perf_ratio("  40 tangent sweeps / emitted Jacobian", ns[3], ns[1],
               "> 1, so reverse was the right choice");
    printf("  largest difference between the three Jacobians: %.1e\n", worst);
    return worst > 1e-13;
}
