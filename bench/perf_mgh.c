/* perf_mgh.c - benchmark 3: gradient / value of dervish's code for seven
 * test functions of More, Garbow & Hillstrom (1981), the models of
 * tests/test_published.c (extended Rosenbrock at n = 1000), each at the
 * paper's standard starting point x0. */
#include "mgh_biggs_exp6.h"
#include "mgh_brown_dennis.h"
#include "mgh_ext_rosenbrock.h"
#include "mgh_helical_valley.h"
#include "mgh_powell_singular.h"
#include "mgh_rosenbrock.h"
#include "mgh_wood.h"
#include "perf_timing.h"

#include <math.h>
#include <stdio.h>

#define REPS 15

/* Per model m: its point, gradient and inputs, and one value call and one
 * gradient call as timed sides. */
#define PROBLEM_NO_INPUT(m)                                             \
    static m##_param_flat m##_x, m##_g;                                 \
    static void m##_val(void *ctx) { (void)ctx; perf_sink = m##_value(&m##_x.p); } \
    static void m##_grad(void *ctx) { (void)ctx; perf_sink = m##_gradient(&m##_x.p, &m##_g.p); }
#define PROBLEM_INPUT(m)                                                \
    static m##_param_flat m##_x, m##_g;                                 \
    static m##_input m##_in;                                            \
    static void m##_val(void *ctx) { (void)ctx; perf_sink = m##_value(&m##_x.p, &m##_in); } \
    static void m##_grad(void *ctx) { (void)ctx; perf_sink = m##_gradient(&m##_x.p, &m##_in, &m##_g.p); }

PROBLEM_NO_INPUT(mgh_rosenbrock)
PROBLEM_NO_INPUT(mgh_helical_valley)
PROBLEM_NO_INPUT(mgh_powell_singular)
PROBLEM_INPUT(mgh_wood)
PROBLEM_INPUT(mgh_brown_dennis)
PROBLEM_INPUT(mgh_biggs_exp6)
PROBLEM_NO_INPUT(mgh_ext_rosenbrock)

typedef struct problem {
    const char *name;
    int n;
    void (*value)(void *);
    void (*gradient)(void *);
} problem;

#define ENTRY(label, m, count) {label, count, m##_val, m##_grad}
static const problem problems[] = {
    ENTRY("1 Rosenbrock", mgh_rosenbrock, MGH_ROSENBROCK_PARAM_COUNT),
    ENTRY("7 helical valley", mgh_helical_valley, MGH_HELICAL_VALLEY_PARAM_COUNT),
    ENTRY("13 Powell singular", mgh_powell_singular, MGH_POWELL_SINGULAR_PARAM_COUNT),
    ENTRY("14 Wood", mgh_wood, MGH_WOOD_PARAM_COUNT),
    ENTRY("16 Brown and Dennis, m = 20", mgh_brown_dennis, MGH_BROWN_DENNIS_PARAM_COUNT),
    ENTRY("18 Biggs EXP6, m = 13", mgh_biggs_exp6, MGH_BIGGS_EXP6_PARAM_COUNT),
    ENTRY("21 extended Rosenbrock", mgh_ext_rosenbrock, MGH_EXT_ROSENBROCK_PARAM_COUNT),
};
#define PROBLEMS (int)(sizeof problems / sizeof problems[0])

/* The starting points x0 and data of MGH 1981, in each model's layout. */
static void set_points(void)
{
    mgh_rosenbrock_x.p = (mgh_rosenbrock_param){-1.2, 1.0};
    mgh_helical_valley_x.p = (mgh_helical_valley_param){-1.0, 0.0, 0.0};
    mgh_powell_singular_x.p = (mgh_powell_singular_param){3.0, -1.0, 0.0, 1.0};
    mgh_wood_x.p = (mgh_wood_param){{-3.0, -3.0}, {-1.0, -1.0}};
    mgh_wood_in = (mgh_wood_input){{100.0, 90.0}, {1.0, -1.0}};
    mgh_brown_dennis_x.p = (mgh_brown_dennis_param){25.0, 5.0, -5.0, -1.0};
    for (int i = 0; i < 20; i++)
        mgh_brown_dennis_in.t[i] = (i + 1) / 5.0;
    mgh_biggs_exp6_x.p = (mgh_biggs_exp6_param){1.0, 2.0, 1.0, 1.0, 1.0, 1.0};
    for (int i = 0; i < 13; i++)
        mgh_biggs_exp6_in.t[i] = 0.1 * (i + 1);
    for (int i = 0; i < 500; i++) {
        mgh_ext_rosenbrock_x.p.odd[i] = -1.2;
        mgh_ext_rosenbrock_x.p.even[i] = 1.0;
    }
}

int main(void)
{
    set_points();
    printf("3. More, Garbow & Hillstrom 1981 test functions at x0\n");
    printf("  %-32s %6s %12s %12s %10s\n", "problem", "n", "value/ns", "gradient/ns", "grad/value");
    double worst = 0.0;
    for (int k = 0; k < PROBLEMS; k++) {
        perf_side sides[2] = {{"value", problems[k].value, NULL},
                              {"gradient", problems[k].gradient, NULL}};
        double ns[2];
        perf_time_sides(sides, 2, REPS, ns);
        printf("  %-32s %6d %12.1f %12.1f %10.2f\n", problems[k].name, problems[k].n, ns[0],
               ns[1], ns[1] / ns[0]);
        worst = fmax(worst, ns[1] / ns[0]);
    }
    printf("  %-44s %9.2f   (target <= 3)\n", "largest gradient / value", worst);
    return 0;
}
