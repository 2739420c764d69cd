/* driver_util.h - helpers for the C drivers that tests/test_sizes.c compiles
 * and runs: reproducible data, buffers of exactly the size asked for (so
 * AddressSanitizer and valgrind see any access past them), errors scaled by
 * the terms of a sum, and a byte pattern that shows whether *grad changed. */
#ifndef SIZES_DRIVER_UTIL_H
#define SIZES_DRIVER_UTIL_H

#include <limits.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* Reproducible numbers in [-1, 1): a 64-bit linear congruential generator
 * (the multiplier and increment of Knuth's MMIX), top 53 bits. */
static unsigned long long du_state = 12345;

static inline double du_uniform(void)
{
    du_state = du_state * 6364136223846793005ULL + 1442695040888963407ULL;
    return (double)(du_state >> 11) / 4503599627370496.0 - 1.0;   /* 2^52 */
}

/* COUNT doubles from malloc, with no slack for an overrun to hide in;
 * NULL for 0, so code that must not touch the buffer cannot. */
static inline double *du_doubles(size_t count)
{
    if (count == 0)
        return NULL;
    double *p = malloc(count * sizeof *p);
    if (!p) {
        fprintf(stderr, "driver: cannot allocate %zu doubles\n", count);
        exit(2);
    }
    return p;
}

/* |got - want| as a fraction of SCALE, the sum of the magnitudes of the
 * terms that make up want (so cancellation inside want is not charged to
 * got); equal values give 0, and so do two equal infinities.  A NaN or a
 * difference with nothing to scale it gives +inf. */
static inline double du_err(double got, double want, double scale)
{
    if (got == want)
        return 0.0;
    double e = fabs(got - want) / scale;
    return e == e ? e : HUGE_VAL;
}

/* The pattern written over *grad before a call that must not write it. */
#define DU_POISON 0xA5

static inline void du_poison(void *p, size_t bytes)
{
    memset(p, DU_POISON, bytes);
}

/* 1 when every byte still holds the pattern. */
static inline int du_poisoned(const void *p, size_t bytes)
{
    const unsigned char *b = p;
    for (size_t k = 0; k < bytes; k++)
        if (b[k] != DU_POISON)
            return 0;
    return 1;
}

#endif
