/* rows_driver.c - a sized model (built with --name sz) against the same
 * model with each size made the constant 1 (--name one), evaluated on every
 * row, or every (row, column) cell with two sizes, and combined: summed, or
 * the first largest row when SZ_COMBINE_MAX is 1.  sz_model.h, written by
 * the test, lists the inputs: SZ_INPUTS(IN) with IN(name, doubles per row,
 * BY_N | BY_M | BY_NM, UNIFORM | LABEL).  Output lines: see main. */
#include "sz_model.h"

#include "one.h"
#include "sized_calls.h"

#ifndef SZ_COMBINE_MAX
#define SZ_COMBINE_MAX 0
#endif

/* What an input's rows are counted by: n, m, or n * m in row-major order. */
enum { BY_N, BY_M, BY_NM };
/* What fills it: numbers in [-1, 1), or labels 0 and 1. */
enum { UNIFORM, LABEL };

typedef char same_params[SZ_PARAM_COUNT == ONE_PARAM_COUNT ? 1 : -1];

/* Each input of the one-row model holds exactly one row. */
#define ROW_FITS(name, cols, by, fill)                                        \
    typedef char fits_##name[sizeof(((one_input *)0)->name) ==                \
                             (cols) * sizeof(double) ? 1 : -1];
SZ_INPUTS(ROW_FITS)

typedef struct Data {
#define DECLARE(name, cols, by, fill) double *name;
    SZ_INPUTS(DECLARE)
} Data;

static size_t rows_by(int by, long n, long m)
{
    return (size_t)(by == BY_N ? n : by == BY_M ? m : n * m);
}

/* The row of an input that cell (i, k) reads. */
static size_t row_of(int by, long i, long k, long m)
{
    return (size_t)(by == BY_N ? i : by == BY_M ? k : i * m + k);
}

static Data make_data(long n, long m)
{
    Data d;
#define FILL(name, cols, by, fill)                                            \
    d.name = du_doubles(rows_by(by, n, m) * (cols));                          \
    for (size_t t = 0; t < rows_by(by, n, m) * (cols); t++)                   \
        d.name[t] = (fill) == LABEL ? (double)(du_uniform() > 0) : du_uniform();
    SZ_INPUTS(FILL)
    return d;
}

static void free_data(Data *d)
{
#define FREE(name, cols, by, fill) free(d->name);
    SZ_INPUTS(FREE)
}

/* Evaluates both models on data of n rows (and m columns) and prints
 * "case N M WORK VALUE COMBINED VALUE_ERR GRAD_ERR SAME_RETURN GRAD_MAX
 * TANGENT_ERR TANGENT_SAME_RETURN": the errors of the sized model against
 * the combined rows, scaled by the terms combined; SAME_RETURN is 1 when
 * the gradient function returned the value; GRAD_MAX the largest
 * |gradient| member; TANGENT_ERR the tangent's error against the gradient
 * times the direction, scaled by the products' magnitudes. */
static void run_case(long n, long m)
{
    const long width = SZ_TWO_SIZES ? m : 1;    /* cells per row */
    Data d = make_data(n, width);
    static sz_input zero;
    sz_input in = zero;
    SZ_SET_SIZES(in, n, m);
#define POINT(name, cols, by, fill) in.name = d.name;
    SZ_INPUTS(POINT)
    size_t count = sz_work_count(&in);
    double *work = du_doubles(count);   /* NULL when count is 0 */

    sz_param_flat p, g;
    sz_set_params(p.v, SZ_PARAM_COUNT);
    for (int k = 0; k < SZ_PARAM_COUNT; k++)
        g.v[k] = nan("");
    double value = sz_value(&p.p, &in, work);
    double ret = sz_gradient(&p.p, &in, &g.p, work);
    /* the tangent along dir against the gradient times dir */
    sz_param_flat dir;
    double dot = 0.0, dscale = 0.0, dv;
    for (int k = 0; k < SZ_PARAM_COUNT; k++) {
        dir.v[k] = sin(0.7 * k + 0.2);
        dot += g.v[k] * dir.v[k];
        dscale += fabs(g.v[k] * dir.v[k]);
    }
    double tret = sz_tangent(&p.p, &in, &dir.p, &dv, work);

    one_param_flat q, h;
    memcpy(q.v, p.v, sizeof q.v);
    double comb = SZ_COMBINE_MAX ? -HUGE_VAL : 0.0, vscale = 0.0;
    double cg[SZ_PARAM_COUNT] = {0}, gscale[SZ_PARAM_COUNT] = {0};
    for (long i = 0; i < n; i++)
        for (long k = 0; k < width; k++) {
            one_input o;
#define COPY(name, cols, by, fill)                                            \
    memcpy(&o.name, d.name + row_of(by, i, k, width) * (cols), sizeof o.name);
            SZ_INPUTS(COPY)
            double v = one_gradient(&q.p, &o, &h.p);
            if (SZ_COMBINE_MAX) {
                if (v > comb) {
                    comb = v;
                    memcpy(cg, h.v, sizeof cg);
                }
                continue;
            }
            comb += v;
            vscale += fabs(v);
            for (int j = 0; j < SZ_PARAM_COUNT; j++) {
                cg[j] += h.v[j];
                gscale[j] += fabs(h.v[j]);
            }
        }
    if (SZ_COMBINE_MAX) {
        vscale = fabs(comb);
        for (int j = 0; j < SZ_PARAM_COUNT; j++)
            gscale[j] = fabs(cg[j]);
    }

    double gerr = 0.0, gmax = 0.0;
    for (int j = 0; j < SZ_PARAM_COUNT; j++) {
        gerr = fmax(gerr, du_err(g.v[j], cg[j], gscale[j]));
        gmax = isnan(g.v[j]) ? HUGE_VAL : fmax(gmax, fabs(g.v[j]));
    }
    printf("case %ld %ld %zu %.17g %.17g %.3e %.3e %d %.17g %.3e %d\n", n,
           width, count, value, comb, du_err(value, comb, vscale), gerr,
           ret == value, gmax, du_err(dv, dot, dscale), tret == value);
    free(work);
    free_data(&d);
}

/* Prints every case, then "work" lines at 1 and 10^5 rows, then
 * "invalid" lines (sized_calls.h). */
int main(void)
{
    static const long rows[] = {0, 1, 7, 10000};
    for (size_t r = 0; r < sizeof rows / sizeof rows[0]; r++)
        run_case(rows[r], 3);
    if (SZ_TWO_SIZES)
        run_case(7, 0);
    sz_print_work(1, 3);
    sz_print_work(100000, 3);
    sz_print_invalid(-1, 3);
    if (SZ_TWO_SIZES)
        sz_print_invalid(3, -1);
#if defined SZ_OVERFLOW_N && LONG_MAX > 0x7fffffffL   /* 2^40 fits */
    sz_print_invalid(SZ_OVERFLOW_N, SZ_OVERFLOW_M);
#endif
    return 0;
}
