/* test_random_outputs.c - randomized test of models whose outputs fill a
 * struct: each generated model of tests/randmodel.h gets a second output
 * statement naming up to three more of its values or params, so its
 * outputs are several, of mixed shapes, and some read by others.  The IR
 * evaluator then builds the Jacobian three ways, which must agree: rows by
 * reverse sweeps with unit seeds, columns by tangent sweeps along unit
 * directions, and entries by the complex step through the forward
 * statements (Squire & Trapp 1998, SIAM Review 40(1)) where no op without
 * a complex form is reached.  The first output is the model's own scalar
 * one: its value and gradient must match the one-output build.  The
 * emitted C of every model is compiled with gcc, warnings as errors. */
#include "randmodel.h"

#define MODELS 120
#define FIRST_SEED 1
#define TOL 1e-10

/* |a - b| / max(1, |b|), as randmodel.h judges. */
static double gap(double a, double b)
{
    return fabs(a - b) / fmax(1.0, fabs(b));
}

/* The model text with "output" statements for up to three more values or
 * params, chosen from the seed; returns how many were added. */
static int add_outputs(const RmModel *m, uint64_t seed, char *text,
                       size_t cap)
{
    uint64_t rng = seed * 0x9e3779b97f4a7c15ULL + 17;
    int chosen[RM_MAX_VALUES] = {0}, added = 0;
    size_t len = (size_t)snprintf(text, cap, "%s", m->text);
    for (int tries = 0; tries < 12 && added < 3; tries++) {
        int v = rm_below(&rng, m->nval);
        const RmValue *x = &m->val[v];
        if (chosen[v] || v == m->output ||
            (x->role != RV_DEF && x->role != RV_PARAM))
            continue;
        chosen[v] = 1;
        len += (size_t)snprintf(text + len, cap - len, "%s%s",
                                added ? ", " : "output ", x->name);
        added++;
    }
    if (added)
        snprintf(text + len, cap - len, "\n");
    return added;
}

/* Copy the generator's point into the evaluator. */
static void set_point(const RmModel *m, Evaluation *ev)
{
    for (int v = 0; v < m->nval; v++) {
        const RmValue *x = &m->val[v];
        if (x->role != RV_PARAM && x->role != RV_INPUT)
            continue;
        double *to = eval_slot(ev, x->name);
        const double *from = (x->role == RV_PARAM ? m->param : m->input) +
                             x->offset;
        memcpy(to, from, (size_t)rm_size(x) * sizeof *to);
    }
}

/* The one-output build's value and gradient, into *value and grad. */
static void scalar_reference(const RmModel *m, double *value, double *grad)
{
    DvCompilation c;
    DvOptions o;
    memset(&o, 0, sizeof o);
    ck_assert_int_eq(dv_compile(&c, "one.dvs", m->text, strlen(m->text), &o),
                     0);
    Evaluation *ev = eval_new(c.ir);
    set_point(m, ev);
    *value = eval_gradient(ev, grad);
    eval_free(ev);
    dv_free(&c);
}

typedef struct Tally {
    long models, entries, by_step, outputs;
} Tally;

/* Judge one model with outputs added; failures go to log. */
static int judge(const RmModel *m, const char *text, uint64_t seed,
                 Tally *t, FILE *log)
{
    DvCompilation c;
    DvOptions o;
    memset(&o, 0, sizeof o);
    o.emit = DV_EMIT_STRUCT_DEFAULT | DV_EMIT_TANGENT;
    if (dv_compile(&c, "many.dvs", text, strlen(text), &o)) {
        fprintf(log, "seed %llu: the model with more outputs is rejected\n",
                (unsigned long long)seed);
        dv_free(&c);
        return 1;
    }
    ck_assert(c.ir->struct_output);
    Evaluation *ev = eval_new(c.ir);
    set_point(m, ev);
    long n = eval_param_count(ev), nout = eval_output_count(ev);
    double *rows = calloc((size_t)(nout * n + 1), sizeof *rows);
    double *unit = calloc((size_t)(nout + n + 1), sizeof *unit);
    double *col = calloc((size_t)nout + 1, sizeof *col);
    double *y = calloc((size_t)nout + 1, sizeof *y);
    double *grad = calloc((size_t)n + 1, sizeof *grad);
    ck_assert(rows && unit && col && y && grad);
    int bad = 0;
    for (long i = 0; i < nout; i++) {
        unit[i] = 1;
        eval_set_seed(ev, unit);
        eval_gradient(ev, rows + i * n);
        unit[i] = 0;
    }
    eval_outputs(ev, y);
    /* the first output is the model's own: as in the one-output build */
    double value;
    scalar_reference(m, &value, grad);
    if (gap(y[0], value) > 1e-12) {
        fprintf(log, "seed %llu: first output %.17g, one-output value %.17g\n",
                (unsigned long long)seed, y[0], value);
        bad = 1;
    }
    for (long k = 0; k < n && !bad; k++)
        if (gap(rows[k], grad[k]) > 1e-12) {
            fprintf(log, "seed %llu: d first output / d param %ld: %.17g, "
                    "one-output gradient %.17g\n", (unsigned long long)seed,
                    k, rows[k], grad[k]);
            bad = 1;
        }
    for (long k = 0; k < n && !bad; k++) {
        double dvalue;
        unit[k] = 1;
        eval_tangent(ev, unit, &dvalue);
        eval_output_tangents(ev, col);
        unit[k] = 0;
        for (long i = 0; i < nout && !bad; i++) {
            double r = rows[i * n + k];
            t->entries++;
            if (gap(r, col[i]) > 1e-12) {
                fprintf(log, "seed %llu: J[%ld][%ld]: reverse %.17g, tangent "
                        "%.17g\n", (unsigned long long)seed, i, k, r, col[i]);
                bad = 1;
            }
            unit[i] = 1;
            eval_set_seed(ev, unit);
            unit[i] = 0;
            EvalStep s = eval_complex_step(ev, k, 1e-100);
            if (s.blocked >= 0 || !isfinite(s.slope))
                continue;
            t->by_step++;
            if (gap(r, s.slope) > TOL) {
                fprintf(log, "seed %llu: J[%ld][%ld]: reverse %.17g, complex "
                        "step %.17g\n", (unsigned long long)seed, i, k, r,
                        s.slope);
                bad = 1;
            }
        }
    }
    t->models++;
    t->outputs += nout;
    free(rows);
    free(unit);
    free(col);
    free(y);
    free(grad);
    eval_free(ev);
    dv_free(&c);
    return bad;
}

START_TEST(jacobian_three_ways)
{
    Tally t = {0, 0, 0, 0};
    char *log = NULL;
    size_t loglen = 0;
    FILE *out = open_memstream(&log, &loglen);
    ck_assert_ptr_nonnull(out);
    int failed = 0;
    char *text = malloc(RM_MAX_TEXT + 256);
    ck_assert_ptr_nonnull(text);
    for (uint64_t seed = FIRST_SEED; seed < FIRST_SEED + MODELS; seed++) {
        RmModel *m = rm_generate(seed);
        if (add_outputs(m, seed, text, RM_MAX_TEXT + 256))
            failed += judge(m, text, seed, &t, out);
        rm_free(m);
    }
    fclose(out);
    /* the first failures only: Check's messages have a size limit */
    ck_assert_msg(failed == 0, "%d models failed:\n%.3000s", failed, log);
    printf("random models with several outputs: %ld models, %ld output "
           "entries, %ld Jacobian entries (%ld also by complex step)\n",
           t.models, t.outputs, t.entries, t.by_step);
    /* most models got more outputs, and most entries a complex step */
    ck_assert_int_gt(t.models, MODELS * 3 / 4);
    ck_assert_int_gt(t.by_step, t.entries / 2);
    free(log);
    free(text);
}
END_TEST

/* The emitted C of models with several outputs compiles warning-free:
 * whole and in parts, with every function. */
START_TEST(emitted_c_compiles)
{
    if (!tu_have("gcc"))
        return;
    char *dir = tu_tmpdir();
    char *text = malloc(RM_MAX_TEXT + 256);
    ck_assert_ptr_nonnull(text);
    int built = 0;
    for (uint64_t seed = FIRST_SEED; seed < FIRST_SEED + 40; seed++) {
        RmModel *m = rm_generate(seed);
        if (add_outputs(m, seed, text, RM_MAX_TEXT + 256)) {
            char *name = tu_format("m%llu.dvs", (unsigned long long)seed);
            tu_write_in(dir, name, text);
            char *err = NULL;
            int rc = tu_run_dervish(dir, NULL, &err,
                                    "build --emit value,adjoint,tangent,"
                                    "jacobian%s --name m%llu %s",
                                    seed % 2 ? " --part-size 2" : "",
                                    (unsigned long long)seed, name);
            ck_assert_msg(rc == 0, "seed %llu: %s", (unsigned long long)seed,
                          err);
            free(err);
            free(name);
            built++;
        }
        rm_free(m);
    }
    char *cmd = tu_format("cd '%s' && for f in m*.c; do gcc -std=c99 -Wall "
                          "-Wextra -Wpedantic -Wshadow -Werror -O0 -c \"$f\" "
                          "|| exit 1; done", dir);
    ck_assert_msg(system(cmd) == 0, "gcc rejected emitted code in %s", dir);
    ck_assert_int_gt(built, 30);
    free(cmd);
    free(text);
    tu_rmdir(dir);
    free(dir);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("random_outputs");
    TCase *tc = tcase_create("outputs");
    tcase_set_timeout(tc, 120);
    tcase_add_test(tc, jacobian_three_ways);
    tcase_add_test(tc, emitted_c_compiles);
    suite_add_tcase(s, tc);
    return tu_main(s);
}
