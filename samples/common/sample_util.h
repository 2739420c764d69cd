/* sample_util.h - what every sample driver shares: a seeded random generator
 * that gives the same invented data on every platform, and a central-
 * difference check of a generated gradient, run before a driver trusts it. */
#ifndef SAMPLE_UTIL_H
#define SAMPLE_UTIL_H

#include <stdint.h>

/* A splitmix64 stream: 64 bits of state, identical output everywhere. */
typedef struct sample_rng {
    uint64_t state;
} sample_rng;

void sample_rng_seed(sample_rng *rng, uint64_t seed);
double sample_uniform(sample_rng *rng, double lo, double hi);
double sample_normal(sample_rng *rng, double mean, double sd);

/* The model's value with its params given as a flat vector; ctx carries the
 * inputs. Drivers wrap <m>_value in one of these for the check below. */
typedef double (*sample_flat_fn)(const double *x, const void *ctx);

/* Compares grad (the generated gradient at x, n entries) with central
 * differences of f, stored in numeric[] unless it is NULL. Prints the worst
 * relative error; returns 0 when every entry agrees within tol, else 1. */
int sample_gradcheck(const char *what, sample_flat_fn f, const void *ctx,
                     const double *x, const double *grad, double *numeric, int n,
                     double tol);

#endif
