/* test_rule_refs.c - every builtin, operator and reduction of the language
 * against mpmath: the value and each local partial derivative at 20 or more
 * points per function, computed by the emitted C (built by gcc and clang)
 * and by the built-in evaluator (compiler/eval.h).
 *
 * Reference values: tests/rule_refs.h, made by tests/gen_rule_refs.py with
 * mpmath 1.2.1 at 50 significant digits (see that file's first line).
 * After the checks it prints a table of the worst error per function. */
#include "testutil.h"

#include "dervish.h"
#include "eval.h"

#include <ctype.h>
#include <float.h>
#include <math.h>

#include "rule_refs.h"

#define COUNT(a) (sizeof(a) / sizeof((a)[0]))
#define MIN_POINTS 20
#define REFS_PATH "tests/rule_refs.h"
#define GENERATOR "/usr/bin/python3 tests/gen_rule_refs.py"

/* ------------------------------------------------------------ tolerances */

/* Every value and partial must be within REL relative error of mpmath's:
 * glibc's libm functions are accurate to an ulp or so, and a rule adds a
 * few roundings. Results below DBL_MIN cannot carry relative precision, so
 * an absolute error of REL * DBL_MIN (about 2e-321) is allowed too; and the
 * functions below allow an absolute error on their partials, for the
 * reasons given. */
#define REL 1e-13

/* pi, recalled from memory; it agrees with mpmath's mp.pi to 21 digits. */
#define PI 3.14159265358979323846

/* tanh' = 1 - h^2 from the stored h = tanh(x) (LANGUAGE.md §4 prescribes
 * it). glibc's tanh is within 2 ulps (its documented bound, recalled from
 * memory), so for h >= 0.5, h is within 2^-52 of tanh(x), h*h within
 * 2^-51 + 2^-54 of tanh(x)^2, and 1 - h*h is exact: the slope's error
 * stays below 2^-50 absolute, but that is all once the slope is small
 * (tanh'(20) = 1.7e-17 comes out as 0). */
static double tanh_allowance(const struct rr_point *p)
{
    (void)p;
    return 0x1p-50;
}

/* sigmoid' = s (1 - s) from the stored s = sigmoid(x) (§4 prescribes it).
 * runtime/sigmoid.c rounds 1 + e^-x (by at most 2^-53) and then the
 * quotient (2^-54), so for large x, s is within 2^-52 of sigmoid(x) and
 * 1 - s is exact: the slope has only this absolute accuracy
 * (sigmoid'(36.7) = 1.15e-16 comes out as 2.2e-16). */
static double sigmoid_allowance(const struct rr_point *p)
{
    (void)p;
    return 0x1p-52;
}

/* lgamma' = psi from runtime/digamma.c, which for x < 0 promises an
 * absolute error of at most 4.9 eps S, S = |psi(1-x)| + |pi cot(pi x)|:
 * psi(x) is the difference of those two terms, which cancel near the
 * negative roots of psi (at -1.5734984731623904 psi = 1.6e-16 comes out
 * as -4.4e-16). By the reflection psi(1-x) = psi(x) + pi cot(pi x)
 * (A&S 6.3.7), S <= |psi(x)| + 2 |pi cot(pi x)|. */
static double lgamma_allowance(const struct rr_point *p)
{
    const double x = p->arg[0];
    if (x >= 0)
        return 0;
    return 5 * DBL_EPSILON *
           (fabs(p->partial[0]) + 2 * fabs(PI / tan(PI * x)));
}

typedef struct Allowance {
    const char *tag;
    double (*partial_abs)(const struct rr_point *p);
} Allowance;

static const Allowance allowances[] = {
    {"tanh", tanh_allowance},
    {"sigmoid", sigmoid_allowance},
    {"lgamma", lgamma_allowance},
};

/* The allowance of function tag, or NULL when it has none. */
static const Allowance *allowance_of(const char *tag)
{
    for (size_t i = 0; i < COUNT(allowances); i++)
        if (strcmp(allowances[i].tag, tag) == 0)
            return &allowances[i];
    return NULL;
}

/* ------------------------------------------------------------ harness */

/* One model holds every function of a table (this block is the same as
 * in tests/test_stability.c): for the tag T with arguments a, b, c
 *     param a_T[N], b_T[N], w_T[N]        (a reduction: a_T[N, nargs])
 *     r_T[k] = w_T[k] * (EXPR)
 * and the output is the sum over k of every r_T[k]. With every w_T[k] = 1
 * the gradient entry of a_T[k] is exactly the partial of EXPR with respect
 * to its first argument at point k, and that of w_T[k] is EXPR's value
 * there, as the emitted code computes it. One gradient call per source
 * gives every value and partial. */
typedef struct Run {
    const struct rr_function *fns;
    int nfns;
    char *name;                 /* the model's name */
    Buf text;                   /* the model */
    long nparams;
    double *params;             /* the flat param vector: points, weights */
    long *arg_at;               /* [f * RR_NARGS_MAX + i]: offset of arg i */
    long *weight_at;            /* [f]: offset of w_T */
    int nsources;
    const char *source[COUNT(tu_compilers) + 1];  /* who computed grad[] */
    double *grad[COUNT(tu_compilers) + 1];
} Run;

/* Argument i of function f at point k in the flat param vector. */
static long run_arg(const Run *r, int f, int i, int k)
{
    const struct rr_function *fn = &r->fns[f];
    if (fn->reduce)
        return r->arg_at[f * RR_NARGS_MAX] + (long)k * fn->nargs + i;
    return r->arg_at[f * RR_NARGS_MAX + i] + k;
}

/* The model text, and the param layout with its values. */
static void run_make_model(Run *r)
{
    Buf sum = {0};
    long at = 0;
    r->arg_at = calloc((size_t)r->nfns * RR_NARGS_MAX, sizeof *r->arg_at);
    r->weight_at = calloc((size_t)r->nfns, sizeof *r->weight_at);
    ck_assert(r->arg_at && r->weight_at);
    buf_printf(&r->text, "# one term per function, one param per point\n");
    for (int f = 0; f < r->nfns; f++) {
        const struct rr_function *fn = &r->fns[f];
        buf_put(&r->text, "param ");
        for (int i = 0; i < (fn->reduce ? 1 : fn->nargs); i++) {
            r->arg_at[f * RR_NARGS_MAX + i] = at;
            if (fn->reduce)
                buf_printf(&r->text, "a_%s[%d, %d], ", fn->tag, fn->npoints,
                           fn->nargs);
            else
                buf_printf(&r->text, "%c_%s[%d], ", 'a' + i, fn->tag,
                           fn->npoints);
            at += (long)fn->npoints * (fn->reduce ? fn->nargs : 1);
        }
        r->weight_at[f] = at;
        at += fn->npoints;
        buf_printf(&r->text, "w_%s[%d]\nr_%s[k] = w_%s[k] * (", fn->tag,
                   fn->npoints, fn->tag, fn->tag);
        for (const char *e = fn->expr; *e; e++) {
            if (*e != '@')
                buf_putn(&r->text, e, 1);
            else if (fn->reduce && *++e)    /* a reduction has only @0 */
                buf_printf(&r->text, "a_%s[k, j]", fn->tag);
            else
                buf_printf(&r->text, "%c_%s[k]", 'a' + (*++e - '0'), fn->tag);
        }
        buf_put(&r->text, ")\n");
        buf_printf(&sum, "%s sum(k: r_%s[k])", f ? " +\n   " : "y =",
                   fn->tag);
    }
    buf_printf(&r->text, "%s\noutput y\n", sum.data);
    buf_free(&sum);
    r->nparams = at;
    r->params = calloc((size_t)at, sizeof *r->params);
    ck_assert_ptr_nonnull(r->params);
    for (int f = 0; f < r->nfns; f++)
        for (int k = 0; k < r->fns[f].npoints; k++) {
            for (int i = 0; i < r->fns[f].nargs; i++)
                r->params[run_arg(r, f, i, k)] = r->fns[f].points[k].arg[i];
            r->params[r->weight_at[f] + k] = 1.0;
        }
}

/* The driver: the params as exact hex literals, one gradient call, the
 * gradient printed exactly (pre-filled with NaN, so an entry the emitted
 * code fails to write shows up). */
static void run_write_driver(const Run *r, const char *dir)
{
    Buf s = {0};
    char upper[64];
    size_t n = 0;
    for (; r->name[n] && n + 1 < sizeof upper; n++)
        upper[n] = (char)toupper((unsigned char)r->name[n]);
    upper[n] = '\0';
    buf_printf(&s, "#include <math.h>\n#include <stdio.h>\n#include \"%s.h\"\n"
               "\nstatic const double init[%s_PARAM_COUNT] = {\n", r->name,
               upper);
    for (long i = 0; i < r->nparams; i++)
        buf_printf(&s, "%a,%s", r->params[i], i % 4 == 3 ? "\n" : " ");
    buf_printf(&s, "};\n\nint main(void)\n{\n"
               "    static %s_param_flat x, g;\n"
               "    for (int i = 0; i < %s_PARAM_COUNT; i++) {\n"
               "        x.v[i] = init[i];\n"
               "        g.v[i] = nan(\"\");\n"
               "    }\n"
               "    %s_gradient(&x.p, &g.p);\n"
               "    for (int i = 0; i < %s_PARAM_COUNT; i++)\n"
               "        printf(\"%%a\\n\", g.v[i]);\n"
               "    return 0;\n}\n", r->name, upper, r->name, upper);
    char *path = tu_format("%s/driver.c", dir);
    tu_write(path, s.data);
    free(path);
    buf_free(&s);
}

static void run_add_source(Run *r, const char *name, double *grad)
{
    r->source[r->nsources] = name;
    r->grad[r->nsources++] = grad;
}

static double *run_parse(const Run *r, const char *out, const char *cc)
{
    double *g = malloc((size_t)r->nparams * sizeof *g);
    ck_assert_ptr_nonnull(g);
    const char *at = out;
    for (long i = 0; i < r->nparams; i++) {
        char *end;
        g[i] = strtod(at, &end);
        ck_assert_msg(end != at, "the driver built by %s printed %ld "
                      "numbers, want %ld", cc, i, r->nparams);
        at = end;
    }
    return g;
}

/* Builds the model of table fns[nfns] under NAME and takes its gradient
 * with each C compiler found and with the evaluator. */
static void run_everywhere(Run *r, const struct rr_function *fns, int nfns,
                           const char *name)
{
    r->fns = fns;
    r->nfns = nfns;
    r->name = tu_format("%s", name);
    run_make_model(r);
    char *dir = tu_tmpdir(), *err = NULL;
    int rc = tu_build_model(dir, name, r->text.data, &err);
    ck_assert_msg(rc == 0 && err && err[0] == '\0',
                  "dervish build: status %d\n%s", rc, err ? err : "");
    free(err);
    run_write_driver(r, dir);
    for (size_t c = 0; c < COUNT(tu_compilers); c++) {
        if (!tu_have(tu_compilers[c]))
            continue;
        char *out = tu_compile_and_run(dir, name, tu_compilers[c]);
        run_add_source(r, tu_compilers[c], run_parse(r, out, tu_compilers[c]));
        free(out);
    }
    ck_assert_msg(r->nsources > 0, "no C compiler found");
    tu_rmdir(dir);
    free(dir);

    DvCompilation comp;
    DvOptions opt = {NULL, stderr, 0};
    char *path = tu_format("%s.dvs", name);
    rc = dv_compile(&comp, path, r->text.data, r->text.len, &opt);
    ck_assert_msg(rc == 0, "the model does not compile");
    free(path);
    Evaluation *ev = eval_new(comp.ir);
    ck_assert_int_eq(eval_param_count(ev), r->nparams);
    for (long i = 0; i < r->nparams; i++)
        *eval_param(ev, i) = r->params[i];
    double *grad = malloc((size_t)r->nparams * sizeof *grad);
    ck_assert_ptr_nonnull(grad);
    eval_gradient(ev, grad);
    run_add_source(r, "evaluator", grad);
    eval_free(ev);
    dv_free(&comp);
}

static void run_free(Run *r)
{
    for (int s = 0; s < r->nsources; s++)
        free(r->grad[s]);
    free(r->name);
    buf_free(&r->text);
    free(r->params);
    free(r->arg_at);
    free(r->weight_at);
}

/* ------------------------------------------------ the reference tables */

#define NFUNCS ((int)COUNT(rule_refs))

static Run run;

/* Unchecked fixture: one model for every function of rule_refs. */
static void run_rule_refs(void)
{
    run_everywhere(&run, rule_refs, NFUNCS, "rr");
}

/* ------------------------------------------------------- comparisons */

/* Worst errors of one function over every point and source. */
typedef struct Worst {
    double value_rel;       /* relative error of the value */
    double partial_rel;     /* relative error of a partial, where the
                               relative bound applies */
    double partial_abs;     /* absolute error of a partial, where an
                               absolute allowance is the larger bound */
    int bad;                /* comparisons out of tolerance */
} Worst;

/* Compares got with want under |got - want| <= max(REL |want|,
 * REL DBL_MIN, allowance); an infinite want must be matched exactly.
 * Records the error in *rel_err or *abs_err, whichever bound decided. */
static int within(double got, double want, double allowance,
                  double *rel_err, double *abs_err)
{
    if (isnan(got) || isnan(want) || isinf(want) || isinf(got)) {
        int ok = got == want;
        if (!ok)
            *rel_err = HUGE_VAL;
        return ok;
    }
    double err = fabs(got - want), floor_abs = fmax(allowance, REL * DBL_MIN);
    if (REL * fabs(want) >= floor_abs)
        *rel_err = fmax(*rel_err, err / fabs(want));
    else
        *abs_err = fmax(*abs_err, err);
    return err <= fmax(REL * fabs(want), floor_abs);
}

/* Every comparison for function f; mismatches are listed on stderr when
 * loud is set. */
static Worst compare_function(int f, int loud)
{
    const struct rr_function *fn = &rule_refs[f];
    const Allowance *extra = allowance_of(fn->tag);
    Worst w = {0, 0, 0, 0};
    double ignored = 0;
    for (int s = 0; s < run.nsources; s++) {
        const double *g = run.grad[s];
        for (int k = 0; k < fn->npoints; k++) {
            const struct rr_point *p = &fn->points[k];
            double got = g[run.weight_at[f] + k];
            if (!within(got, p->value, 0, &w.value_rel, &ignored)) {
                w.bad++;
                if (loud)
                    fprintf(stderr, "%s (%s) at point %d: value %.17g, "
                            "want %.17g\n", fn->tag, run.source[s], k, got,
                            p->value);
            }
            double allowance = extra ? extra->partial_abs(p) : 0;
            for (int i = 0; i < fn->nargs; i++) {
                got = g[run_arg(&run, f, i, k)];
                if (!within(got, p->partial[i], allowance, &w.partial_rel,
                            &w.partial_abs)) {
                    w.bad++;
                    if (loud)
                        fprintf(stderr, "%s (%s) at point %d (x = %.17g): "
                                "partial %d %.17g, want %.17g\n", fn->tag,
                                run.source[s], k, p->arg[i], i, got,
                                p->partial[i]);
                }
            }
        }
    }
    return w;
}

START_TEST(function_matches_mpmath)
{
    Worst w = compare_function(_i, 1);
    ck_assert_msg(w.bad == 0, "%s: %d comparisons out of tolerance (listed "
                  "above)", rule_refs[_i].tag, w.bad);
}
END_TEST

/* Unchecked teardown: the summary for the report. */
static void summarize(void)
{
    int points = 0;
    for (int f = 0; f < NFUNCS; f++)
        points += rule_refs[f].npoints;
    printf("rule references: %d functions, %d points, each checked by",
           NFUNCS, points);
    for (int s = 0; s < run.nsources; s++)
        printf(" %s%s", run.source[s], s + 1 < run.nsources ? "," : "");
    printf("\nworst errors against mpmath (relative; absolute where an "
           "absolute bound applies)\n");
    printf("  %-16s %6s %10s %10s %10s %6s\n", "function", "points",
           "value", "partials", "abs", "failed");
    for (int f = 0; f < NFUNCS; f++) {
        Worst w = compare_function(f, 0);
        printf("  %-16s %6d %10.2g %10.2g ", rule_refs[f].tag,
               rule_refs[f].npoints, w.value_rel, w.partial_rel);
        if (allowance_of(rule_refs[f].tag))
            printf("%10.2g", w.partial_abs);
        else
            printf("%10s", "-");
        printf(" %6d\n", w.bad);
    }
    fflush(stdout);
    run_free(&run);
}

/* ----------------------------------------------------- the data itself */

/* Every builtin named in compiler/ops.def has a reference table. */
START_TEST(every_builtin_has_references)
{
    static const char *const builtins[] = {
#define OP(id, name, arity, kind, c) name,
#include "ops.def"
#undef OP
    };
    for (size_t b = 0; b < COUNT(builtins); b++) {
        if (!builtins[b])
            continue;
        char *call = tu_format("%s(", builtins[b]);
        int found = 0;
        for (int f = 0; f < NFUNCS; f++)
            found |= strstr(rule_refs[f].expr, call) != NULL;
        ck_assert_msg(found, "no reference table uses %s", builtins[b]);
        free(call);
    }
}
END_TEST

START_TEST(enough_points_per_function)
{
    for (int f = 0; f < NFUNCS; f++)
        ck_assert_msg(rule_refs[f].npoints >= MIN_POINTS,
                      "%s has %d points", rule_refs[f].tag,
                      rule_refs[f].npoints);
}
END_TEST

/* The committed data file is exactly what the generator prints. Needs
 * Debian's python3 with mpmath; without it the check is skipped. */
START_TEST(generator_reproduces_the_data_file)
{
    if (tu_run("/usr/bin/python3 -c 'import mpmath'", NULL, NULL) != 0) {
        printf("note: /usr/bin/python3 with mpmath not found; %s was not "
               "regenerated and compared\n", REFS_PATH);
        return;
    }
    char *committed = tu_read(REFS_PATH), *out = NULL, *err = NULL;
    ck_assert_msg(committed != NULL, "cannot read %s (run from the project "
                  "root)", REFS_PATH);
    int rc = tu_run(GENERATOR, &out, &err);
    ck_assert_msg(rc == 0, "%s failed with status %d:\n%s", GENERATOR, rc,
                  err ? err : "");
    ck_assert_msg(strcmp(out, committed) == 0, "%s differs from the output "
                  "of %s: regenerate it", REFS_PATH, GENERATOR);
    free(committed);
    free(out);
    free(err);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("rule references");
    TCase *data = tcase_create("data");
    tcase_set_timeout(data, 60);
    tcase_add_test(data, every_builtin_has_references);
    tcase_add_test(data, enough_points_per_function);
    tcase_add_test(data, generator_reproduces_the_data_file);
    suite_add_tcase(s, data);
    TCase *fns = tcase_create("functions");
    tcase_add_unchecked_fixture(fns, run_rule_refs, summarize);
    tcase_add_loop_test(fns, function_matches_mpmath, 0, NFUNCS);
    suite_add_tcase(s, fns);
    return tu_main(s);
}
