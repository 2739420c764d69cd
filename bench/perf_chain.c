/* perf_chain.c - benchmark 2: a chain of scalar statements made by
 * gen_chain.sh (model name chain). Times the generated gradient, the
 * generated value, and a gradient by central differences over every param
 * (2 value calls per param); and the same chain built with
 * --loop-repeats 0 (name chainflat), its statements written out instead of
 * in repeat loops. Exits 1 if the generated gradient and the differences
 * disagree beyond what the differences' own error allows, or if the two
 * builds' gradients differ at all. */
#include "chain.h"
#include "chainflat.h"
#include "perf_timing.h"
#include "sample_util.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#define REPS 15
#define STEP 1e-6  /* central-difference step, scaled by max(1, |x|) */
#define AGREE 1e-6 /* |generated - central| allowed, relative to max(1, |g|) */

typedef struct chain_case {
    chain_param_flat p, grad;
    chainflat_param_flat flat_p, flat_grad;     /* p again, for chainflat */
} chain_case;

static void call_gradient(void *ctx)
{
    chain_case *c = ctx;
    perf_sink = chain_gradient(&c->p.p, &c->grad.p);
}

static void call_value(void *ctx)
{
    chain_case *c = ctx;
    perf_sink = chain_value(&c->p.p);
}

static void call_flat_gradient(void *ctx)
{
    chain_case *c = ctx;
    perf_sink = chainflat_gradient(&c->flat_p.p, &c->flat_grad.p);
}

/* Fills c->grad by central differences, changing one param at a time. */
static void call_central_differences(void *ctx)
{
    chain_case *c = ctx;
    for (int k = 0; k < CHAIN_PARAM_COUNT; k++) {
        double x = c->p.v[k], h = STEP * fmax(1.0, fabs(x));
        c->p.v[k] = x + h;
        double up = chain_value(&c->p.p);
        c->p.v[k] = x - h;
        double down = chain_value(&c->p.p);
        c->p.v[k] = x;
        c->grad.v[k] = (up - down) / (2 * h);
    }
}

static int gradients_agree(chain_case *c)
{
    static chain_param_flat exact;
    chain_gradient(&c->p.p, &exact.p);
    call_central_differences(c);
    double worst = 0.0;
    for (int k = 0; k < CHAIN_PARAM_COUNT; k++)
        worst = fmax(worst, fabs(exact.v[k] - c->grad.v[k]) / fmax(1.0, fabs(exact.v[k])));
    printf("  generated gradient vs central differences: largest difference %.2e (limit %.0e)\n",
           worst, AGREE);
    chainflat_gradient(&c->flat_p.p, &c->flat_grad.p);
    int same = memcmp(c->flat_grad.v, exact.v, sizeof exact.v) == 0;
    printf("  gradient in repeat loops vs written out: %s\n",
           same ? "the same, bit for bit" : "DIFFERENT");
    return worst <= AGREE && same;
}

int main(void)
{
    static chain_case c;
    sample_rng rng;
    sample_rng_seed(&rng, 10000100u);
    for (int k = 0; k < CHAIN_PARAM_COUNT; k++)
        c.p.v[k] = c.flat_p.v[k] = sample_uniform(&rng, -1.0, 1.0);
    printf("2. scalar chain (bench/gen_chain.sh), n = %d params\n", CHAIN_PARAM_COUNT);
    if (!gradients_agree(&c))
        return 1;
    perf_side sides[4] = {{"generated gradient", call_gradient, &c},
                          {"generated value", call_value, &c},
                          {"central differences (2n values)", call_central_differences, &c},
                          {"gradient written out (--loop-repeats 0)", call_flat_gradient, &c}};
    double ns[4];
    perf_time_sides(sides, 4, REPS, ns);
    for (int k = 0; k < 4; k++)
        printf("  %-44s %9.0f ns (median of %d)\n", sides[k].name, ns[k], REPS);
    char target[32];
    snprintf(target, sizeof target, ">= n/2 = %d", CHAIN_PARAM_COUNT / 2);
    perf_ratio("generated gradient / generated value", ns[0], ns[1], "<= 3");
    perf_ratio("central differences / generated gradient", ns[2], ns[0], target);
    perf_ratio("gradient in repeat loops / written out", ns[0], ns[3], "about 1");
    return 0;
}
