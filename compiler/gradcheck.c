/* gradcheck.c - `dervish check`: the gradient from the reverse sweep (run
 * by the IR evaluator, eval.c) against numerical derivatives, at a point
 * read from a file or drawn at random (checkpoint.c).
 *
 * Numerical derivatives, for every param entry x:
 *  - central differences D(h) = (f(x+h) - f(x-h)) / 2h at h = 1e-3 max(1,|x|)
 *    (shrunk where x - h leaves a function's domain) and h/2, combined by
 *    Richardson extrapolation R = (4 D(h/2) - D(h)) / 3, with an error
 *    estimate |D(h/2) - D(h)| / 3 plus the rounding error 8 eps max|f| / h;
 *  - the complex-step derivative Im f(x + i 1e-200) / 1e-200 (Squire and
 *    Trapp 1998, SIAM Review 40(1)), exact to rounding, unless the step
 *    reaches an op with no complex form here (erf, erfc, lgamma, atan2).
 *
 * Agreement.  The error of an entry is |reverse - numerical| / max(1,
 * |numerical|): relative for large derivatives and absolute for small ones,
 * so zero derivatives are judged sensibly.  An entry agrees when that is
 * within the tolerance (plus Richardson's own estimate when Richardson is
 * the reference).  The reference is the complex step when Richardson agrees
 * with it in the same sense, else Richardson.  The two disagree at a kink
 * or jump within h of the point; there the reverse mode follows the
 * language's convention (floor' = 0, relu'(0) = 0), and an entry whose
 * slope central differences see differently is a mismatch, flagged with a
 * star.  Exit status 0 when every entry agrees, else 1. */
#include "gradcheck.h"
#include "checkpoint.h"
#include "eval.h"
#include "products.h"

#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#define COMPLEX_STEP 1e-200

typedef enum Status { ST_OK, ST_MISMATCH, ST_NOT_SMOOTH, ST_UNCHECKED } Status;

typedef struct Entry {
    long k;             /* flat param position */
    double reverse;     /* from the reverse sweep */
    double numeric;     /* the reference numerical derivative */
    const char *method;
    double estimate;    /* Richardson's error estimate, when it is used */
    double abs_err, rel_err;
    Status status;
} Entry;

/* -------------------------------------------------- numerical slopes */

/* (f(x+h) - f(x-h)) / (the step actually taken), with x at *p; *fbig
 * grows to the largest |f| seen. */
static double central(Evaluation *ev, double *p, double h, double *fbig)
{
    double x = *p;
    *p = x + h;
    double up = eval_value(ev), step = *p - x;
    *p = x - h;
    double down = eval_value(ev);
    step += x - *p;
    *p = x;
    *fbig = fmax(*fbig, fmax(fabs(up), fabs(down)));
    return (up - down) / step;
}

/* Richardson's value and its error estimate.  Near the edge of a
 * function's domain (log(x) at x = 1e-4) x - h may fall outside it; h then
 * shrinks tenfold, a few times at most, until both differences are finite. */
static double richardson(Evaluation *ev, long k, double *estimate)
{
    double *p = eval_param(ev, k);
    double h = 1e-3 * fmax(1.0, fabs(*p)), d1 = NAN, d2 = NAN, fm = 0;
    for (int tries = 0; tries < 4; tries++, h *= 0.1) {
        fm = 0;
        d1 = central(ev, p, h, &fm);
        d2 = central(ev, p, 0.5 * h, &fm);
        if (isfinite(d1) && isfinite(d2))
            break;
    }
    *estimate = fabs(d2 - d1) / 3 + 8 * DBL_EPSILON * fm / h;
    return (4 * d2 - d1) / 3;
}

static int within(double a, double n, double tol, double slack)
{
    return fabs(a - n) <= tol * fmax(1.0, fabs(n)) + slack;
}

static Entry check_entry(Evaluation *ev, long k, double reverse, double f0,
                         double tol, char *blocked_ops)
{
    Entry e;
    memset(&e, 0, sizeof e);
    e.k = k;
    e.reverse = reverse;
    double est;
    double r = richardson(ev, k, &est);
    EvalStep cs = eval_complex_step(ev, k, COMPLEX_STEP);
    if (cs.blocked >= 0)
        blocked_ops[cs.blocked] = 1;
    /* the complex run must reproduce the real value to be trusted */
    int c_ok = cs.blocked < 0 && isfinite(cs.slope) &&
               fabs(cs.value - f0) <= 1e-8 * fmax(1.0, fabs(f0));
    int r_ok = isfinite(r) && isfinite(est);
    if (c_ok && (!r_ok || within(r, cs.slope, tol, est))) {
        e.numeric = cs.slope;
        e.method = "complex step";
        e.status = within(reverse, e.numeric, tol, 0) ? ST_OK : ST_MISMATCH;
    } else if (r_ok) {
        e.numeric = r;
        e.method = "richardson";
        e.estimate = est;
        if (within(reverse, r, tol, est))
            e.status = ST_OK;
        else if (c_ok && within(reverse, cs.slope, tol, 0))
            e.status = ST_NOT_SMOOTH;
        else
            e.status = ST_MISMATCH;
    } else {
        e.numeric = NAN;
        e.method = "none";
        e.status = ST_UNCHECKED;
    }
    e.abs_err = fabs(reverse - e.numeric);
    e.rel_err = e.abs_err / fmax(1.0, fabs(e.numeric));
    if (isnan(e.rel_err))
        e.rel_err = e.abs_err = HUGE_VAL;
    return e;
}

/* Worst first: disagreements, then larger errors, then flat order. */
static int cmp_entry(const void *pa, const void *pb)
{
    const Entry *a = pa, *b = pb;
    int bad_a = a->status != ST_OK, bad_b = b->status != ST_OK;
    if (bad_a != bad_b)
        return bad_b - bad_a;
    if (a->rel_err != b->rel_err)
        return a->rel_err < b->rel_err ? 1 : -1;
    return (a->k > b->k) - (a->k < b->k);
}

/* ------------------------------------------------------------ report */

/* Where a number's decimal point (or exponent, or end) falls. */
static int integer_digits(const char *s)
{
    return (int)strcspn(s, ".e");
}

/* The table, one row per entry.  Values line up on their decimal points;
 * names and methods read left to right. */
static void print_table(FILE *out, const Ir *ir, const Entry *es, long n)
{
    static const char *const head[] = {"entry", "reverse mode", "numerical",
                                       "method", "abs error", "rel error"};
    static const char *const status[] = {"ok", "MISMATCH", "MISMATCH*",
                                         "unchecked"};
    enum { NCOL = 6 };
    const char **cell = check_alloc((size_t)n * NCOL * sizeof *cell);
    int width[NCOL], left[NCOL] = {0}, right[NCOL] = {0};
    for (long i = 0; i < n; i++) {
        const char **row = cell + i * NCOL;
        row[0] = check_entry_name(ir, es[i].k, 0);
        row[1] = arena_printf(ir->arena, "%.15g", es[i].reverse);
        int none = es[i].status == ST_UNCHECKED;
        row[2] = none ? "-" : arena_printf(ir->arena, "%.15g", es[i].numeric);
        row[3] = es[i].estimate > 0 ? arena_printf(ir->arena, "%s +-%.0e",
                                                   es[i].method, es[i].estimate)
                                    : es[i].method;
        row[4] = none ? "-" : arena_printf(ir->arena, "%.1e", es[i].abs_err);
        row[5] = none ? "-" : arena_printf(ir->arena, "%.1e", es[i].rel_err);
        for (int j = 0; j < NCOL; j++) {
            int l = j == 1 || j == 2 ? integer_digits(row[j]) : 0;
            left[j] = l > left[j] ? l : left[j];
            int r = (int)strlen(row[j]) - l;
            right[j] = r > right[j] ? r : right[j];
        }
    }
    for (int j = 0; j < NCOL; j++) {
        int h = (int)strlen(head[j]);
        width[j] = left[j] + right[j] > h ? left[j] + right[j] : h;
    }
    fprintf(out, "%-*s  %*s  %*s  %-*s  %*s  %*s\n", width[0], head[0],
            width[1], head[1], width[2], head[2], width[3], head[3],
            width[4], head[4], width[5], head[5]);
    for (long i = 0; i < n; i++) {
        const char **row = cell + i * NCOL;
        fprintf(out, "%-*s", width[0], row[0]);
        for (int j = 1; j <= 2; j++) {
            int l = integer_digits(row[j]);
            int r = (int)strlen(row[j]) - l;
            fprintf(out, "  %*s%s%*s", width[j] - right[j] - l, "", row[j],
                    right[j] - r, "");
        }
        fprintf(out, "  %-*s  %*s  %*s  %s\n", width[3], row[3], width[4],
                row[4], width[5], row[5], status[es[i].status]);
    }
    free(cell);
}

static void print_notes(FILE *out, const Entry *es, long n,
                        const char *blocked_ops)
{
    int not_smooth = 0, unchecked = 0;
    for (long i = 0; i < n; i++) {
        not_smooth |= es[i].status == ST_NOT_SMOOTH;
        unchecked |= es[i].status == ST_UNCHECKED;
    }
    if (not_smooth)
        fputs("* the complex step agrees with the reverse mode but central "
              "differences do not:\n  the model has a kink or a jump within "
              "h of this point\n", out);
    if (unchecked)
        fputs("unchecked: no finite numerical derivative here: f(x +- h) is "
              "not finite\n  and the complex step is not available\n", out);
    int count = 0;
    for (int op = 0; op < IR_OP_COUNT; op++)
        if (blocked_ops[op]) {
            fprintf(out, "%s%s", count ? ", " : "note: no complex step "
                    "through ", ir_ops[op].model_name ? ir_ops[op].model_name
                                                      : "digamma");
            count++;
        }
    if (count)
        fprintf(out, ": the entries that reach %s\n  are checked by "
                "Richardson extrapolation alone\n", count > 1 ? "them" : "it");
}

/* The outputs (the first few), the random seed weighting them, and the
 * weighted sum the table's derivatives are of. */
static void print_outputs(FILE *out, const Ir *ir, Evaluation *ev,
                          const double *seed, unsigned long seed_option,
                          double sum)
{
    enum { SHOWN = 12 };
    long n = eval_output_count(ev);
    double *y = check_alloc((size_t)n * sizeof *y);
    eval_outputs(ev, y);
    fprintf(out, "outputs, each with a random weight (seed %lu):\n",
            seed_option);
    for (long k = 0; k < n && k < SHOWN; k++)
        fprintf(out, "  %s = %.15g  (weight %.15g)\n",
                check_entry_name(ir, k, 1), y[k], seed[k]);
    if (n > SHOWN)
        fprintf(out, "  ... and %ld more\n", n - SHOWN);
    fprintf(out, "value: the weighted sum of the outputs = %.15g\n"
                 "  (the adjoint sweep seeded with the weights gives its "
                 "gradient)\n\n", sum);
    free(y);
}

int check_run(const DvCompilation *c, const CheckOptions *opt)
{
    const Ir *ir = c->ir;
    FILE *out = opt->out;
    Point pt;
    int status = point_read(&pt, ir, opt);
    if (status)
        return status;
    Evaluation *ev = eval_new_sized(ir, pt.sizes);
    point_apply(ev, &pt, opt->seed);
    point_print(out, c, opt, ev, &pt);
    fputc('\n', out);

    long n = eval_param_count(ev);
    double *grad = check_alloc((size_t)n * sizeof *grad);
    double *seed = NULL;
    const char *output = ir->arrays.items[ir->output].name;
    if (ir->struct_output) {
        /* the adjoint with a random seed is the gradient of the outputs
         * weighted by it: a scalar like any other */
        seed = products_random_vector(eval_output_count(ev), opt->seed,
                                      0x73656564ULL);
        eval_set_seed(ev, seed);
        output = "the weighted sum";
    }
    double f0 = eval_gradient(ev, grad);
    if (seed)
        print_outputs(out, ir, ev, seed, opt->seed, f0);
    else
        fprintf(out, "value: %s = %.15g\n\n", output, f0);
    if (!isfinite(f0)) {
        fprintf(out, "check: %s is not finite at this point, so no derivative "
                "can be compared;\n  choose other values with --at\n", output);
        status = 1;
    } else {
        char blocked_ops[IR_OP_COUNT] = {0};
        Entry *es = check_alloc((size_t)n * sizeof *es);
        long agree = 0;
        for (long k = 0; k < n; k++) {
            es[k] = check_entry(ev, k, grad[k], f0, opt->tolerance,
                                blocked_ops);
            agree += es[k].status == ST_OK;
        }
        qsort(es, (size_t)n, sizeof *es, cmp_entry);
        print_table(out, ir, es, n);
        print_notes(out, es, n, blocked_ops);
        fputc('\n', out);
        fprintf(out, "check: %ld of %ld derivatives agree within tolerance "
                "%g\n", agree, n, opt->tolerance);
        if (agree < n)
            fprintf(out, "check: %ld derivative%s\n", n - agree,
                    n - agree == 1 ? " disagrees" : "s disagree");
        status = agree < n;
        free(es);
        if (c->emit & DV_EMIT_TANGENT) {
            fputc('\n', out);
            status |= products_check_tangent(ev, grad, opt->seed,
                                             opt->tolerance, out);
        }
        if (c->emit & DV_EMIT_HESSVEC) {
            fputc('\n', out);
            status |= products_check_hessvec(ev, grad, opt->seed,
                                             opt->tolerance, out);
        }
        if (c->emit & DV_EMIT_JACOBIAN) {
            fputc('\n', out);
            status |= products_check_jacobian(ir, ev, seed, opt->tolerance,
                                              out);
        }
    }
    free(seed);
    free(grad);
    point_free(&pt);
    eval_free(ev);
    return status;
}
