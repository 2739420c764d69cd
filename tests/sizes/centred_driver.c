/* centred_driver.c - centred.dvs (built with --name sz), whose rows are kept
 * in work, against its closed form (z = a x + b, so z - mean z = a (x -
 * mean x)): loss = a^2 Sxx, d/da = 2 a Sxx, d/db = 0, with Sxx the sum of
 * squared deviations of x, computed here in long double. */
#include "sized_calls.h"

#include <float.h>

/* Prints "case N WORK VALUE CLOSED VALUE_ERR A_ERR B_ERR SAME_RETURN":
 * the value and d/da relative to the closed form, d/db (closed form 0) as a
 * fraction of the sum of |2 (z[i] - mean z)|, the terms that cancel in it. */
static void run_case(long n)
{
    double *x = du_doubles((size_t)n);
    for (long i = 0; i < n; i++)
        x[i] = du_uniform();
    sz_input in;
    in.n = n;
    in.x = x;
    size_t count = sz_work_count(&in);
    double *work = du_doubles(count);   /* NULL when count is 0 */

    sz_param_flat p, g;
    p.p.a = 0.7;
    p.p.b = -0.4;
    g.p.a = g.p.b = nan("");
    double value = sz_value(&p.p, &in, work);
    double ret = sz_gradient(&p.p, &in, &g.p, work);

    long double mean = 0, sxx = 0, spread = 0;
    for (long i = 0; i < n; i++)
        mean += x[i];
    mean = n > 0 ? mean / n : 0;
    for (long i = 0; i < n; i++) {
        sxx += (x[i] - mean) * (x[i] - mean);
        spread += fabsl(x[i] - mean);
    }
    const double a = p.p.a;
    double closed = (double)(a * a * sxx), closed_a = (double)(2 * a * sxx);
    double cancel = (double)(2 * fabs(a) * spread);
    printf("case %ld %zu %.17g %.17g %.3e %.3e %.3e %d\n", n, count, value,
           closed, du_err(value, closed, fabs(closed)),
           du_err(g.p.a, closed_a, fabs(closed_a)),
           du_err(g.p.b, 0.0, cancel), ret == value);
    free(work);
    free(x);
}

/* Prints the cases, "work" lines for 1 and 10^5 rows and an "invalid"
 * line for n = -1 (sized_calls.h). */
int main(void)
{
    static const long rows[] = {0, 1, 7, 10000};
    for (size_t r = 0; r < sizeof rows / sizeof rows[0]; r++)
        run_case(rows[r]);
    sz_print_work(1, 0);
    sz_print_work(100000, 0);
    sz_print_invalid(-1, 0);
    return 0;
}
