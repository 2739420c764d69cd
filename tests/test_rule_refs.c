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
#include "rulerun.h"

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

/* The committed data file is exactly what the generator prints. */
START_TEST(generator_reproduces_the_data_file)
{
    tu_expect_generated(REFS_PATH, GENERATOR);
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
