/* sized_calls.h - what every driver of a sized model (built with --name sz)
 * reports besides its values: the work count at given sizes, and calls with
 * invalid sizes, which must return NaN, count 0 doubles of work and leave
 * *grad and *dvalue untouched without reading any array (all of them are
 * NULL here).  Every sized model is built with its tangent. */
#ifndef SIZES_SIZED_CALLS_H
#define SIZES_SIZED_CALLS_H

#include "driver_util.h"
#include "sz.h"

/* Models with a second size m define SZ_TWO_SIZES as 1. */
#ifndef SZ_TWO_SIZES
#define SZ_TWO_SIZES 0
#endif
#if SZ_TWO_SIZES
#define SZ_SET_SIZES(in, n_, m_) ((in).n = (n_), (in).m = (m_))
#else
#define SZ_SET_SIZES(in, n_, m_) ((in).n = (n_), (void)(m_))
#endif

/* The params every driver evaluates at: no special values, mixed signs. */
static inline void sz_set_params(double *v, int count)
{
    for (int k = 0; k < count; k++)
        v[k] = 0.6 * cos(1.3 * k + 0.4);
}

/* Prints "work N M COUNT". */
static inline void sz_print_work(long n, long m)
{
    static sz_input zero;   /* every pointer NULL */
    sz_input in = zero;
    SZ_SET_SIZES(in, n, m);
    printf("work %ld %ld %zu\n", n, m, sz_work_count(&in));
}

/* Prints "invalid N M VALUE_IS_NAN GRADIENT_IS_NAN GRAD_UNTOUCHED COUNT
 * TANGENT_IS_NAN DVALUE_UNTOUCHED". */
static inline void sz_print_invalid(long n, long m)
{
    static sz_input zero;
    sz_input in = zero;
    SZ_SET_SIZES(in, n, m);
    sz_param_flat p;
    sz_param g;
    sz_set_params(p.v, SZ_PARAM_COUNT);
    du_poison(&g, sizeof g);
    double v = sz_value(&p.p, &in, NULL);
    double r = sz_gradient(&p.p, &in, &g, NULL);
    double dv;
    du_poison(&dv, sizeof dv);
    double t = sz_tangent(&p.p, &in, &p.p, &dv, NULL);
    printf("invalid %ld %ld %d %d %d %zu %d %d\n", n, m, isnan(v) != 0,
           isnan(r) != 0, du_poisoned(&g, sizeof g), sz_work_count(&in),
           isnan(t) != 0, du_poisoned(&dv, sizeof dv));
}

#endif
