/* gradcheck.h - `dervish check`: evaluate a compiled model with the IR
 * evaluator, take its gradient by the reverse pass, and compare that with
 * numerical derivatives. */
#ifndef DERVISH_GRADCHECK_H
#define DERVISH_GRADCHECK_H

#include "dervish.h"

#include <stdio.h>

typedef struct CheckOptions {
    const char *at_path;    /* --at FILE: values of params and inputs, or NULL */
    unsigned long seed;     /* --seed N: for random values (default 1) */
    double tolerance;       /* --tolerance X: largest accepted error (default 1e-6) */
    FILE *out;              /* where the report goes (stdout) */
    const char *const *sizes;   /* --size NAME=N, each as given */
    int nsizes;
} CheckOptions;

/* Returns the exit status: 0 when every derivative agrees, 1 when some do
 * not (or the model has errors), 3 when the --at file cannot be read.
 * Problems in the --at file are reported as file:line:col: error: ... and
 * give status 1. */
int check_run(const DvCompilation *c, const CheckOptions *opt);

#endif
