/* sample_util.c - the seeded generator and the finite-difference gradient
 * check shared by the sample drivers (see sample_util.h). */
#include "sample_util.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

void sample_rng_seed(sample_rng *rng, uint64_t seed)
{
    rng->state = seed;
}

static uint64_t next_bits(sample_rng *rng)
{
    uint64_t z = (rng->state += 0x9e3779b97f4a7c15u);
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9u;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebu;
    return z ^ (z >> 31);
}

/* Uniform in [lo, hi): the top 53 bits fill a double's mantissa exactly. */
double sample_uniform(sample_rng *rng, double lo, double hi)
{
    double u = (double)(next_bits(rng) >> 11) * (1.0 / 9007199254740992.0);
    return lo + (hi - lo) * u;
}

/* Box-Muller; 1 - u keeps the logarithm's argument away from 0. */
double sample_normal(sample_rng *rng, double mean, double sd)
{
    const double two_pi = 6.283185307179586;
    double u = 1.0 - sample_uniform(rng, 0.0, 1.0);
    double w = sample_uniform(rng, 0.0, 1.0);
    return mean + sd * sqrt(-2.0 * log(u)) * cos(two_pi * w);
}

#define GRADCHECK_MAX 256

int sample_gradcheck(const char *what, sample_flat_fn f, const void *ctx,
                     const double *x, const double *grad, double *numeric, int n,
                     double tol)
{
    double work[GRADCHECK_MAX];
    double worst = 0.0, noise_floor;
    int worst_at = 0;
    if (n > GRADCHECK_MAX) {
        printf("gradient check (%s): %d params, more than the %d it handles\n", what, n,
               GRADCHECK_MAX);
        return 1;
    }
    memcpy(work, x, (size_t)n * sizeof *work);
    /* Central differences carry an absolute error of roughly 1e-11 (1 + |f|)
     * (rounding of f over a step of 1e-5 plus truncation); floor keeps tiny
     * entries from being judged on that noise alone. */
    noise_floor = 1e-8 * (1.0 + fabs(f(x, ctx)));
    for (int k = 0; k < n; k++) {
        /* A step scaled to the entry keeps both errors small. */
        double h = 1e-5 * (fabs(x[k]) > 1.0 ? fabs(x[k]) : 1.0);
        double up, down, central, err;
        work[k] = x[k] + h;
        up = f(work, ctx);
        work[k] = x[k] - h;
        down = f(work, ctx);
        work[k] = x[k];
        central = (up - down) / (2.0 * h);
        if (numeric)
            numeric[k] = central;
        err = fabs(grad[k] - central) / (fabs(grad[k]) + noise_floor);
        if (!(err <= worst)) { /* NaN counts as the worst */
            worst = err;
            worst_at = k;
        }
    }
    printf("gradient check (%s): %d params, worst error %.1e at entry %d%s\n", what, n,
           worst, worst_at, worst <= tol ? "" : "  ** TOO LARGE **");
    return worst <= tol ? 0 : 1;
}
