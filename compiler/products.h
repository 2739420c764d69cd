/* products.h - dervish check's checks of the derivative products a model
 * emits besides the gradient: the tangent and the Hessian times a
 * direction, each against the gradient, and the Jacobian's rows against
 * its columns. */
#ifndef DERVISH_PRODUCTS_H
#define DERVISH_PRODUCTS_H

#include "eval.h"

#include <stdint.h>
#include <stdio.h>

/* The tangent along a random direction (from SEED) against the gradient
 * GRAD times that direction, relative to the sum of the magnitudes of the
 * products; reported on OUT.  Returns 1 when they differ by more than
 * TOLERANCE, else 0. */
int products_check_tangent(Evaluation *ev, const double *grad,
                           unsigned long seed, double tolerance, FILE *out);

/* The Hessian times a random direction (from SEED) against Richardson
 * differences of the gradient along it, entry by entry as the gradient is
 * checked (relative above 1, absolute below), and its gradient against
 * GRAD; reported on OUT.  Returns 1 when any entry is off by more than
 * TOLERANCE, else 0.  The params are left as they were. */
int products_check_hessvec(Evaluation *ev, const double *grad,
                           unsigned long seed, double tolerance, FILE *out);

/* n random numbers from SEED and SALT, uniform in [-1, 1) and 2^-20
 * apart, so exact in print and in sums (malloc'd). */
double *products_random_vector(long n, unsigned long seed, uint64_t salt);

/* For outputs in a struct: the Jacobian's rows from reverse sweeps with
 * unit seeds against its columns from tangent sweeps along unit
 * directions, entry by entry (relative above 1, absolute below); the
 * seed is set back to SEED after.  Reported on OUT; returns 1 when any
 * entry is off by more than TOLERANCE, else 0. */
int products_check_jacobian(const Ir *ir, Evaluation *ev, const double *seed,
                            double tolerance, FILE *out);

#endif
