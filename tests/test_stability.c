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
#include "rulerun.h"

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
