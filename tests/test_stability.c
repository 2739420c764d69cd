/* test_stability.c - where a naive formula overflows, underflows or cancels
 * (sigmoid and softplus at +-800, logsumexp near +-1000, log1p and expm1
 * near 0, powers of negative numbers, hypot of 1e200 and 1e-200, asinh's
 * slope at 1e200, atanh's near +-1), values and gradients stay finite and
 * agree with mpmath, both in the emitted C (gcc and clang) and in the
 * evaluator. References: stability_refs in tests/rule_refs.h, made by
 * tests/gen_rule_refs.py with mpmath 1.2.1 at 50 significant digits. */
#include "testutil.h"

#include "dervish.h"
#include "eval.h"

#include <ctype.h>
#include <float.h>
#include <math.h>

#include "rule_refs.h"

#define COUNT(a) (sizeof(a) / sizeof((a)[0]))
#define NCASES ((int)COUNT(stability_refs))

/* Relative error allowed: each case is one or two libm calls and a few
 * roundings. Below DBL_MIN an absolute REL * DBL_MIN is allowed instead,
 * as a subnormal result has fewer significant bits. */
#define REL 1e-13

/* ------------------------------------------------------------ harness */

/* One model holds every function of a table (this block is the same as
 * in tests/test_rule_refs.c): for the tag T with arguments a, b, c
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

static Run run;

/* Unchecked fixture: one model for every stability case. */
static void run_stability_refs(void)
{
    run_everywhere(&run, stability_refs, NCASES, "st");
}

static void free_run(void)
{
    run_free(&run);
}

/* ------------------------------------------------------------- checks */

/* got is finite and within max(REL |want|, REL DBL_MIN, allowance) of
 * want; the failure names the case, the source and the point. */
static int check_one(const char *tag, const char *src, int k,
                     const char *what, double got, double want,
                     double allowance)
{
    double tol = fmax(REL * fabs(want), fmax(REL * DBL_MIN, allowance));
    if (isfinite(got) && fabs(got - want) <= tol)
        return 1;
    fprintf(stderr, "%s (%s) at point %d: %s %.17g, want %.17g\n", tag, src,
            k, what, got, want);
    return 0;
}

/* Every value and partial of the case TAG, from every source; partials may
 * be off by an absolute `allowance` (0 for none). */
static void check_case(const char *tag, double allowance)
{
    int c = 0;
    while (c < NCASES && strcmp(stability_refs[c].tag, tag) != 0)
        c++;
    ck_assert_msg(c < NCASES, "no stability case %s", tag);
    const struct rr_function *fn = &stability_refs[c];
    int bad = 0, checks = 0;
    for (int s = 0; s < run.nsources; s++)
        for (int k = 0; k < fn->npoints; k++) {
            const struct rr_point *p = &fn->points[k];
            const double *g = run.grad[s];
            bad += !check_one(tag, run.source[s], k, "value",
                              g[run.weight_at[c] + k], p->value, 0);
            checks++;
            for (int i = 0; i < fn->nargs; i++, checks++)
                bad += !check_one(tag, run.source[s], k, "partial",
                                  g[run_arg(&run, c, i, k)], p->partial[i],
                                  allowance);
        }
    ck_assert_msg(bad == 0, "%s: %d of %d comparisons failed (listed above)",
                  tag, bad, checks);
}

/* sigmoid(+-800): at -800 the naive slope e^-x/(1+e^-x)^2 is inf/inf;
 * at 800 so is e^x/(1+e^x), the form that keeps tiny values exact for
 * x < 0. The slope is s (1 - s) from the stored s (LANGUAGE.md §4), which
 * for x = 40 leaves only an absolute accuracy of 2^-52 (see
 * tests/test_rule_refs.c): the true 4.2e-18 comes out as 0. */
START_TEST(sigmoid_far_out)
{
    check_case("sigmoid", 0x1p-52);
}
END_TEST

/* softplus(800): naive log(1 + e^800) is inf; softplus(-800) underflows
 * to 0 cleanly. */
START_TEST(softplus_far_out)
{
    check_case("softplus", 0);
}
END_TEST

/* Cross-entropy of a logit z for label 1, written stably as softplus(-z):
 * finite at z = -800, where -log(sigmoid(z)) would be inf. */
START_TEST(cross_entropy_from_a_logit)
{
    check_case("bce_logit", 0);
}
END_TEST

/* logsumexp over [1000, 1000.5, 999], [800, -800, 0] and three times -800,
 * and over [-1000, -1001] and [1000, 1000]: every e^x overflows or
 * underflows, the max shift keeps the value and the softmax weights
 * finite. */
START_TEST(logsumexp_near_a_thousand)
{
    check_case("lse3", 0);
    check_case("lse2", 0);
}
END_TEST

/* log1p and expm1 at 1e-10, -1e-12 and 1e-300, where log(1+x) and e^x - 1
 * lose every digit; their slopes 1/(1+x) and e^x stay accurate. */
START_TEST(log1p_and_expm1_near_zero)
{
    check_case("log1p", 0);
    check_case("expm1", 0);
}
END_TEST

/* x^2, x^3 and pow(x, 3) at negative x: the power rule, no log(x). */
START_TEST(integer_powers_of_negative_numbers)
{
    check_case("square", 0);
    check_case("cube", 0);
    check_case("cube_call", 0);
}
END_TEST

/* hypot(1e200, 1e200) and hypot(1e-200, 1e-200): x^2 + y^2 would overflow
 * or underflow; the partials x / hypot stay accurate to an ulp or two. */
START_TEST(hypot_of_huge_and_tiny)
{
    check_case("hypot", 0);
}
END_TEST

/* asinh'(1e200) = 1e-200: 1/sqrt(1 + x^2) would give 0 (x^2 overflows). */
START_TEST(asinh_slope_far_out)
{
    check_case("asinh", 0);
}
END_TEST

/* atanh'(x) = 1/(1 - x^2) near +-1: 1 - x*x keeps only 6 digits at
 * 1 - 1e-10; (1 - x)(1 + x) keeps them all. */
START_TEST(atanh_slope_near_one)
{
    check_case("atanh", 0);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("stability");
    TCase *tc = tcase_create("cases");
    tcase_add_unchecked_fixture(tc, run_stability_refs, free_run);
    tcase_add_test(tc, sigmoid_far_out);
    tcase_add_test(tc, softplus_far_out);
    tcase_add_test(tc, cross_entropy_from_a_logit);
    tcase_add_test(tc, logsumexp_near_a_thousand);
    tcase_add_test(tc, log1p_and_expm1_near_zero);
    tcase_add_test(tc, integer_powers_of_negative_numbers);
    tcase_add_test(tc, hypot_of_huge_and_tiny);
    tcase_add_test(tc, asinh_slope_far_out);
    tcase_add_test(tc, atanh_slope_near_one);
    suite_add_tcase(s, tc);
    return tu_main(s);
}
