/* perf_net.c - benchmark 1: the generated gradient of net2.dvs against the
 * hand-written one (perf_net_hand.c) and against the generated value, and
 * the generated Hessian times a direction against the gradient, all timed
 * in one process. Exits 1 if the two gradients disagree. */
#include "net2.h"
#include "perf_net_hand.h"
#include "perf_timing.h"
#include "sample_util.h"

#include <math.h>
#include <stdio.h>

#define REPS 15
#define AGREE 1e-12 /* |generated - hand| allowed, relative to max(1, |hand|) */

typedef struct net_case {
    net2_param_flat p, grad, dir, hv;
    net2_input in;
} net_case;

static void call_generated_gradient(void *ctx)
{
    net_case *c = ctx;
    perf_sink = net2_gradient(&c->p.p, &c->in, &c->grad.p);
}

static void call_hand_gradient(void *ctx)
{
    net_case *c = ctx;
    perf_sink = net_hand_gradient(&c->p.p, &c->in, &c->grad.p);
}

static void call_generated_hessvec(void *ctx)
{
    net_case *c = ctx;
    perf_sink = net2_hessvec(&c->p.p, &c->in, &c->dir.p, &c->grad.p, &c->hv.p);
}

static void call_generated_value(void *ctx)
{
    net_case *c = ctx;
    perf_sink = net2_value(&c->p.p, &c->in);
}

/* Invented weights and data, scaled so the hidden units are not saturated. */
static void make_case(net_case *c)
{
    sample_rng rng;
    sample_rng_seed(&rng, 640256010u);
    for (int k = 0; k < NET2_PARAM_COUNT; k++) {
        c->p.v[k] = sample_normal(&rng, 0.0, 0.15);
        c->dir.v[k] = sample_uniform(&rng, -1.0, 1.0);
    }
    for (int i = 0; i < 64; i++)
        c->in.x[i] = sample_uniform(&rng, -1.0, 1.0);
    for (int k = 0; k < 10; k++)
        c->in.label[k] = k == 3;
}

static int gradients_agree(net_case *c)
{
    static net2_param_flat hand;
    double fg = net2_gradient(&c->p.p, &c->in, &c->grad.p);
    double fh = net_hand_gradient(&c->p.p, &c->in, &hand.p);
    double worst = fabs(fg - fh) / fmax(1.0, fabs(fh));
    for (int k = 0; k < NET2_PARAM_COUNT; k++)
        worst = fmax(worst, fabs(c->grad.v[k] - hand.v[k]) / fmax(1.0, fabs(hand.v[k])));
    printf("  generated vs hand-written gradient: largest difference %.2e (limit %.0e)\n",
           worst, AGREE);
    return worst <= AGREE;
}

int main(void)
{
    static net_case c;
    make_case(&c);
    printf("1. two-layer network 64-256-10, tanh, softmax cross-entropy (%d params)\n",
           NET2_PARAM_COUNT);
    if (!gradients_agree(&c))
        return 1;
    perf_side sides[4] = {{"generated gradient", call_generated_gradient, &c},
                          {"hand-written gradient", call_hand_gradient, &c},
                          {"generated value", call_generated_value, &c},
                          {"generated Hessian times a direction",
                           call_generated_hessvec, &c}};
    double ns[4];
    perf_time_sides(sides, 4, REPS, ns);
    for (int k = 0; k < 4; k++)
        printf("  %-44s %9.0f ns (median of %d)\n", sides[k].name, ns[k], REPS);
    perf_ratio("generated gradient / hand-written gradient", ns[0], ns[1], "<= 1.1");
    perf_ratio("generated gradient / generated value", ns[0], ns[2], "<= 3");
    perf_ratio("Hessian times a direction / gradient", ns[3], ns[0], "<= 2.5");
    return 0;
}
