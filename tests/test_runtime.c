/* test_runtime.c - unit tests of the runtime helpers in runtime/, the C
 * functions the emitter copies into generated code. Each helper file is
 * included here verbatim, the way emitted code carries it.
 *
 * Reference values: tests/runtime_refs.h, made by tests/gen_runtime_refs.py
 * with mpmath 1.2.1 at 50 significant digits (see that file's first line).
 * Other expected values are exact by the definitions in LANGUAGE.md and in
 * the helpers' own comments, or come from the handbook identities named
 * beside them.
 * Its numeric helpers are local static functions; tests/testutil.h serves
 * only the check that the data file is what its generator prints.
 *
 * Set DVS_RUNTIME_REPORT=1 to print the worst error seen in each table. */
#include "testutil.h"

#include <float.h>
#include <math.h>

#include "clamp.c"
#include "digamma.c"
#include "hypot_slope.c"
#include "max2.c"
#include "min2.c"
#include "relu.c"
#include "sigmoid.c"
#include "sign.c"
#include "softplus.c"
#include "trigamma.c"

#include "runtime_refs.h"

#define COUNT(a) (sizeof(a) / sizeof((a)[0]))
#define REFS_PATH "tests/runtime_refs.h"
#define GENERATOR "/usr/bin/python3 tests/gen_runtime_refs.py"

/* Relative tolerance for sigmoid, softplus and hypot_slope: each is a couple of
 * correctly rounded libm calls and one or two operations, so a few units of
 * 2^-53 are expected; 1e-14 leaves room for a weaker libm. */
#define REL_TOL 1e-14

/* Euler's constant gamma, recalled from memory (it agrees with mpmath's
 * mp.euler to 30 digits: 0.577215664901532860606512090082). */
#define EULER_GAMMA 0.57721566490153286061

/* pi rounded to double, recalled from memory (agrees with mpmath's mp.pi). */
#define PI_D 3.14159265358979323846

/* --------------------------------------------------------------- helpers */

static int report_wanted(void)
{
    return getenv("DVS_RUNTIME_REPORT") != NULL;
}

/* The gap between neighbouring doubles below DBL_MIN (2^-1074). Below
 * DBL_MIN relative accuracy is impossible, so such results may be off by
 * one gap. */
static double subnormal_gap(void)
{
    return ldexp(1.0, -1074);
}

/* Nonzero when got is within rel * |want| of want. Infinite values must
 * match exactly; a want below DBL_MIN (subnormal, or 0 after underflow)
 * may be off by one subnormal gap. */
static int close_rel(double got, double want, double rel)
{
    if (isnan(got) || isnan(want))
        return 0;
    if (isinf(got) || isinf(want))
        return got == want;
    if (fabs(want) < DBL_MIN)
        return fabs(got - want) <= subnormal_gap();
    return fabs(got - want) <= rel * fabs(want);
}

/* Relative error for the report; 0 where it has no meaning (exact
 * infinities, results below DBL_MIN) and infinite on a NaN. */
static double rel_err(double got, double want)
{
    if (isnan(got) || isnan(want))
        return HUGE_VAL;
    if (isinf(want) || fabs(want) < DBL_MIN)
        return close_rel(got, want, 0.0) ? 0.0 : HUGE_VAL;
    return fabs(got - want) / fabs(want);
}

/* Nonzero when got is want bit for bit as far as C can see: both NaN, or
 * equal with the same sign (so +0.0 and -0.0 are told apart). */
static int same(double got, double want)
{
    if (isnan(want))
        return isnan(got);
    return got == want && !signbit(got) == !signbit(want);
}

static void report(const char *name, size_t n, double worst)
{
    if (report_wanted())
        printf("%-10s %3zu points, worst relative error %.3g\n", name, n,
               worst);
}

/* Compares f with one mpmath table, to relative tolerance rel; prints every
 * miss to stderr and returns how many there were. */
static int check_table1(const char *name, double (*f)(double),
                        const struct ref1 *t, size_t n, double rel)
{
    size_t i;
    int bad = 0;
    double worst = 0.0;
    for (i = 0; i < n; i++) {
        double got = f(t[i].x);
        double e = rel_err(got, t[i].want);
        if (e > worst)
            worst = e;
        if (!close_rel(got, t[i].want, rel)) {
            bad++;
            fprintf(stderr, "%s(%.17g) = %.17g, want %.17g (rel err %.3g)\n",
                    name, t[i].x, got, t[i].want, e);
        }
    }
    report(name, n, worst);
    return bad;
}

struct exact1 { double x, want; };
struct exact2 { double a, b, want; };
struct exact3 { double x, lo, hi, want; };

static int check_exact1(const char *name, double (*f)(double),
                        const struct exact1 *t, size_t n)
{
    size_t i;
    int bad = 0;
    for (i = 0; i < n; i++) {
        double got = f(t[i].x);
        if (!same(got, t[i].want)) {
            bad++;
            fprintf(stderr, "%s(%g) = %g, want %g (case %zu)\n", name,
                    t[i].x, got, t[i].want, i);
        }
    }
    return bad;
}

static int check_exact2(const char *name, double (*f)(double, double),
                        const struct exact2 *t, size_t n)
{
    size_t i;
    int bad = 0;
    for (i = 0; i < n; i++) {
        double got = f(t[i].a, t[i].b);
        if (!same(got, t[i].want)) {
            bad++;
            fprintf(stderr, "%s(%g, %g) = %g, want %g (case %zu)\n", name,
                    t[i].a, t[i].b, got, t[i].want, i);
        }
    }
    return bad;
}

/* ---------------------------------------------------------------- sigmoid */

START_TEST(sigmoid_mpmath)
{
    int bad = check_table1("sigmoid", dvs_sigmoid, sigmoid_refs,
                           COUNT(sigmoid_refs), REL_TOL);
    ck_assert_msg(bad == 0, "%d sigmoid points out of tolerance", bad);
}
END_TEST

/* Exact by the definition 1/(1+e^-x) and its limits. */
START_TEST(sigmoid_exact)
{
    static const struct exact1 t[] = {
        {0.0, 0.5}, {-0.0, 0.5}, {HUGE_VAL, 1.0}, {-HUGE_VAL, 0.0},
        {NAN, NAN}, {800.0, 1.0}, {-800.0, 0.0},
    };
    int bad = check_exact1("sigmoid", dvs_sigmoid, t, COUNT(t));
    ck_assert_msg(bad == 0, "%d exact sigmoid cases wrong", bad);
}
END_TEST

/* On a grid over [-800, 800]: the values stay in [0, 1], never decrease,
 * and sigmoid(x) + sigmoid(-x) = 1 to within a few roundings. */
START_TEST(sigmoid_shape)
{
    double x, prev = 0.0;
    int bad = 0;
    for (x = -800.0; x <= 800.0; x += 0.125) {
        double s = dvs_sigmoid(x), m = dvs_sigmoid(-x);
        if (!(s >= 0.0 && s <= 1.0 && s >= prev)
            || !(fabs(s + m - 1.0) <= 2.0 * DBL_EPSILON)) {
            bad++;
            fprintf(stderr, "sigmoid(%g) = %.17g, sigmoid(%g) = %.17g\n",
                    x, s, -x, m);
        }
        prev = s;
    }
    ck_assert_msg(bad == 0, "%d grid points break sigmoid's shape", bad);
}
END_TEST

/* --------------------------------------------------------------- softplus */

START_TEST(softplus_mpmath)
{
    int bad = check_table1("softplus", dvs_softplus, softplus_refs,
                           COUNT(softplus_refs), REL_TOL);
    ck_assert_msg(bad == 0, "%d softplus points out of tolerance", bad);
}
END_TEST

/* Exact: log(1+e^x) = x once e^-x is below half an ulp of x, and the
 * limits; e^-800 is below the smallest subnormal, so softplus(-800) is 0. */
START_TEST(softplus_exact)
{
    static const struct exact1 t[] = {
        {800.0, 800.0}, {1e300, 1e300}, {DBL_MAX, DBL_MAX},
        {HUGE_VAL, HUGE_VAL}, {-HUGE_VAL, 0.0}, {NAN, NAN}, {-800.0, 0.0},
    };
    int bad = check_exact1("softplus", dvs_softplus, t, COUNT(t));
    ck_assert_msg(bad == 0, "%d exact softplus cases wrong", bad);
}
END_TEST

/* softplus(x) - softplus(-x) = x holds exactly in the reals; on a grid it
 * must hold to within a few roundings of the larger term. */
START_TEST(softplus_identity)
{
    double x;
    int bad = 0;
    for (x = -40.0; x <= 40.0; x += 0.125) {
        double p = dvs_softplus(x), m = dvs_softplus(-x);
        double big = p > m ? p : m;
        if (!(fabs(p - m - x) <= 4.0 * DBL_EPSILON * big)) {
            bad++;
            fprintf(stderr, "softplus(%g) - softplus(%g) - %g = %g\n", x,
                    -x, x, p - m - x);
        }
    }
    ck_assert_msg(bad == 0, "%d grid points break softplus(x) - "
                  "softplus(-x) = x", bad);
}
END_TEST

/* ------------------------------------------------------------ hypot_slope */

/* a / hypot(a, b) against mpmath, including subnormal arguments where a
 * plain quotient by the rounded hypot would lose every digit. */
START_TEST(hypot_slope_mpmath)
{
    size_t i;
    int bad = 0;
    double worst = 0.0;
    for (i = 0; i < COUNT(hypot_slope_refs); i++) {
        const struct ref2 *r = &hypot_slope_refs[i];
        double got = dvs_hypot_slope(r->a, r->b);
        double e = rel_err(got, r->want);
        if (e > worst)
            worst = e;
        if (!close_rel(got, r->want, REL_TOL)) {
            bad++;
            fprintf(stderr,
                    "hypot_slope(%.17g, %.17g) = %.17g, want %.17g (%.3g)\n",
                    r->a, r->b, got, r->want, e);
        }
    }
    report("hypot_slope", COUNT(hypot_slope_refs), worst);
    ck_assert_msg(bad == 0, "%d hypot_slope points out of tolerance", bad);
}
END_TEST

/* Exact cases: the slope along an axis is the sign of a (0 across it),
 * infinities give the limit where one exists, and NaN or 0/0 give NaN. */
START_TEST(hypot_slope_exact)
{
    static const struct exact2 t[] = {
        {1.0, 0.0, 1.0}, {-2.0, 0.0, -1.0}, {0.0, 5.0, 0.0},
        {5e-324, 0.0, 1.0}, {-5e-324, 0.0, -1.0}, {0.0, 5e-324, 0.0},
        {HUGE_VAL, 1.0, NAN}, {1.0, HUGE_VAL, 0.0}, {NAN, 1.0, NAN},
        {1.0, NAN, NAN}, {0.0, 0.0, NAN},
    };
    int bad = check_exact2("hypot_slope", dvs_hypot_slope, t, COUNT(t));
    ck_assert_msg(bad == 0, "%d exact hypot_slope cases wrong", bad);
}
END_TEST

/* ---------------------------------------------------------------- digamma */

/* Tolerance per point: 1e-14 * |want| + 2e-15 * scale. For x > 0, scale
 * is 0: a plain relative 1e-14. For x < 0 the helper (like any double
 * evaluation by reflection) forms psi(x) as psi(1-x) - pi cot(pi x); scale
 * is the size of those two terms (from mpmath), and rounding them costs a
 * few times 2^-52 * scale however psi(x) itself is small, as it is near
 * the root in every interval (-n-1, -n). Measured: at most 4.9 * 2^-52 *
 * scale = 1.1e-15 * scale, so 2e-15 * scale keeps a margin of about 2. */
START_TEST(digamma_mpmath)
{
    size_t i;
    int bad = 0;
    double worst = 0.0, worst_ratio = 0.0;
    for (i = 0; i < COUNT(digamma_refs); i++) {
        const struct refd *r = &digamma_refs[i];
        double got = dvs_digamma(r->x);
        double err = fabs(got - r->want);
        double tol = 1e-14 * fabs(r->want) + 2e-15 * r->scale;
        int ok;
        if (isinf(r->want)) {   /* overflow at x = +-2^-1074 */
            ok = got == r->want;
        } else {
            ok = err <= tol;
            if (r->scale == 0.0 && rel_err(got, r->want) > worst)
                worst = rel_err(got, r->want);
            if (err / tol > worst_ratio)
                worst_ratio = err / tol;
        }
        if (!ok) {
            bad++;
            fprintf(stderr, "digamma(%.17g) = %.17g, want %.17g "
                    "(err %.3g, tolerance %.3g)\n",
                    r->x, got, r->want, err, tol);
        }
    }
    report("digamma", COUNT(digamma_refs), worst);
    if (report_wanted())
        printf("digamma    worst error / tolerance %.3g (all points)\n",
               worst_ratio);
    ck_assert_msg(bad == 0, "%d digamma points out of tolerance", bad);
}
END_TEST

/* Poles at 0, -1, -2, ... (and -inf) give NaN, as do NaN arguments;
 * psi(x) ~ ln x gives +inf at +inf. */
START_TEST(digamma_exact)
{
    static const struct exact1 t[] = {
        {0.0, NAN}, {-0.0, NAN}, {-1.0, NAN}, {-2.0, NAN}, {-3.0, NAN},
        {-10.0, NAN}, {-100.0, NAN}, {-1e10, NAN},
        {-4503599627370496.0, NAN}, {-1e300, NAN}, {-DBL_MAX, NAN},
        {-HUGE_VAL, NAN}, {NAN, NAN}, {HUGE_VAL, HUGE_VAL},
    };
    int bad = check_exact1("digamma", dvs_digamma, t, COUNT(t));
    ck_assert_msg(bad == 0, "%d exact digamma cases wrong", bad);
}
END_TEST

/* Handbook values (equation numbers recalled from memory): Abramowitz &
 * Stegun 6.3.2, psi(1) = -gamma and psi(n) = -gamma + sum_{k<n} 1/k;
 * A&S 6.3.3, psi(1/2) = -gamma - 2 ln 2; A&S 6.3.4, psi(n + 1/2) =
 * -gamma - 2 ln 2 + 2 sum_{k=1..n} 1/(2k-1). The right sides are summed
 * here in double, so the tolerance is 1e-14 times the sum of the sizes of
 * their terms (psi(3/2) = 0.036... is a difference of terms near 2). */
START_TEST(digamma_handbook)
{
    int n, k;
    double sum, size, got, want;
    for (n = 1; n <= 20; n++) {
        sum = 0.0;
        for (k = 1; k < n; k++)
            sum += 1.0 / k;
        want = -EULER_GAMMA + sum;
        size = EULER_GAMMA + sum;
        got = dvs_digamma((double)n);
        ck_assert_msg(fabs(got - want) <= 1e-14 * size,
                      "digamma(%d) = %.17g, want %.17g", n, got, want);
    }
    for (n = 0; n <= 10; n++) {
        sum = 0.0;
        for (k = 1; k <= n; k++)
            sum += 2.0 / (2 * k - 1);
        want = -EULER_GAMMA - 2.0 * log(2.0) + sum;
        size = EULER_GAMMA + 2.0 * log(2.0) + sum;
        got = dvs_digamma(n + 0.5);
        ck_assert_msg(fabs(got - want) <= 1e-14 * size,
                      "digamma(%d.5) = %.17g, want %.17g", n, got, want);
    }
}
END_TEST

/* Identities that tie the helper's different methods (reflection, the fit
 * near the root, the recurrence plus series) to each other. Arguments are
 * dyadic so that x + 1, 1 - x, 2x and x + 1/2 are exact.
 *   A&S 6.3.5  psi(x + 1) = psi(x) + 1/x
 *   A&S 6.3.7  psi(1 - x) - psi(x) = pi cot(pi x)
 *   A&S 6.3.8  psi(2x) = psi(x)/2 + psi(x + 1/2)/2 + ln 2
 * (equation numbers recalled from memory). Tolerance: 1e-14 times the sum
 * of the sizes of the terms, the scale of their rounding errors. */
START_TEST(digamma_identities)
{
    static const double rec[] = {
        0.375, 1.3125, 2.75, 7.5, 12.25, 1.0 / 1024, 0.4609375, 9.5,
        -0.625, -3.3125, -50.375,
    };
    static const double refl[] = {0.125, 0.3125, 0.375, 0.4609375, 0.8125};
    static const double dup[] = {
        0.0625, 0.6875, 0.734375, 3.25, 20.5, -0.3125, -2.6875,
    };
    size_t i;
    for (i = 0; i < COUNT(rec); i++) {
        double x = rec[i], a = dvs_digamma(x + 1.0), b = dvs_digamma(x);
        double size = fabs(a) + fabs(b) + fabs(1.0 / x);
        ck_assert_msg(fabs(a - b - 1.0 / x) <= 1e-14 * size,
                      "recurrence fails at %g: %g", x, a - b - 1.0 / x);
    }
    for (i = 0; i < COUNT(refl); i++) {
        double x = refl[i], a = dvs_digamma(1.0 - x), b = dvs_digamma(x);
        double c = PI_D / tan(PI_D * x);
        double size = fabs(a) + fabs(b) + fabs(c);
        ck_assert_msg(fabs(a - b - c) <= 1e-14 * size,
                      "reflection fails at %g: %g", x, a - b - c);
    }
    for (i = 0; i < COUNT(dup); i++) {
        double x = dup[i], a = dvs_digamma(2.0 * x);
        double b = 0.5 * dvs_digamma(x), c = 0.5 * dvs_digamma(x + 0.5);
        double size = fabs(a) + fabs(b) + fabs(c) + log(2.0);
        ck_assert_msg(fabs(a - b - c - log(2.0)) <= 1e-14 * size,
                      "duplication fails at %g: %g", x, a - b - c - log(2.0));
    }
}
END_TEST

/* --------------------------------------------------------------- trigamma */

/* Relative tolerance for trigamma: runtime/trigamma.c measured at most
 * 6.6e-16 (3 units of 2^-52) over 240,000 points, since psi' > 0 lets no
 * step cancel; 2e-15 keeps a margin of 3. The table includes subnormal
 * results and overflows to +inf, judged as close_rel says. */
#define TRIGAMMA_TOL 2e-15

START_TEST(trigamma_mpmath)
{
    int bad = check_table1("trigamma", dvs_trigamma, trigamma_refs,
                           COUNT(trigamma_refs), TRIGAMMA_TOL);
    ck_assert_msg(bad == 0, "%d trigamma points out of tolerance", bad);
}
END_TEST

/* psi'(x) = sum 1/(x+k)^2 tends to +inf at each pole 0, -1, -2, ... from
 * both sides, so a pole gives +inf (every double from -2^53 down is one);
 * at -inf there is no limit (NaN); at +inf it is 0. */
START_TEST(trigamma_exact)
{
    static const struct exact1 t[] = {
        {0.0, HUGE_VAL}, {-0.0, HUGE_VAL}, {-1.0, HUGE_VAL},
        {-2.0, HUGE_VAL}, {-3.0, HUGE_VAL}, {-10.0, HUGE_VAL},
        {-1e10, HUGE_VAL}, {-4503599627370496.0, HUGE_VAL},
        {-1e300, HUGE_VAL}, {-DBL_MAX, HUGE_VAL}, {-HUGE_VAL, NAN},
        {NAN, NAN}, {HUGE_VAL, 0.0},
    };
    int bad = check_exact1("trigamma", dvs_trigamma, t, COUNT(t));
    ck_assert_msg(bad == 0, "%d exact trigamma cases wrong", bad);
}
END_TEST

/* Handbook values from psi'(x) = sum_{k>=0} 1/(x+k)^2 (A&S 6.4.10) with
 * zeta(2) = pi^2/6 and the odd squares' sum pi^2/8 (recalled from memory):
 * psi'(n) = pi^2/6 - sum_{k<n} 1/k^2 and psi'(n + 1/2) = pi^2/2 -
 * 4 sum_{k=1..n} 1/(2k-1)^2. The right sides are summed here in double, so
 * the tolerance is 1e-14 times the sum of the sizes of their terms. */
START_TEST(trigamma_handbook)
{
    int n, k;
    double sum, got, want;
    for (n = 1; n <= 20; n++) {
        sum = 0.0;
        for (k = 1; k < n; k++)
            sum += 1.0 / ((double)k * k);
        want = PI_D * PI_D / 6.0 - sum;
        got = dvs_trigamma((double)n);
        ck_assert_msg(fabs(got - want) <= 1e-14 * (PI_D * PI_D / 6.0 + sum),
                      "trigamma(%d) = %.17g, want %.17g", n, got, want);
    }
    for (n = 0; n <= 10; n++) {
        sum = 0.0;
        for (k = 1; k <= n; k++)
            sum += 4.0 / ((2.0 * k - 1.0) * (2.0 * k - 1.0));
        want = PI_D * PI_D / 2.0 - sum;
        got = dvs_trigamma(n + 0.5);
        ck_assert_msg(fabs(got - want) <= 1e-14 * (PI_D * PI_D / 2.0 + sum),
                      "trigamma(%d.5) = %.17g, want %.17g", n, got, want);
    }
}
END_TEST

/* Identities that tie the helper's methods (reflection, recurrence, the
 * series) to each other; arguments are dyadic so that x + 1, 1 - x, 2x
 * and x + 1/2 are exact (equation numbers recalled from memory):
 *   A&S 6.4.6  psi'(x + 1) = psi'(x) - 1/x^2
 *   A&S 6.4.7  psi'(1 - x) + psi'(x) = pi^2 / sin^2(pi x)
 *   A&S 6.4.8  psi'(2x) = (psi'(x) + psi'(x + 1/2)) / 4
 * Tolerance: 1e-14 times the sum of the sizes of the terms. */
START_TEST(trigamma_identities)
{
    static const double rec[] = {
        0.375, 1.3125, 2.75, 7.5, 9.25, 12.25, 1.0 / 1024, -0.625, -3.3125,
        -50.375,
    };
    static const double refl[] = {0.125, 0.3125, 0.5, 0.6875, -2.75, 11.5};
    static const double dup[] = {
        0.0625, 0.6875, 3.25, 4.875, 20.5, -0.3125, -2.6875, -7.125,
    };
    size_t i;
    for (i = 0; i < COUNT(rec); i++) {
        double x = rec[i], a = dvs_trigamma(x + 1.0), b = dvs_trigamma(x);
        double c = 1.0 / (x * x), size = a + b + c;
        ck_assert_msg(fabs(a - b + c) <= 1e-14 * size,
                      "recurrence fails at %g: %g", x, a - b + c);
    }
    for (i = 0; i < COUNT(refl); i++) {
        double x = refl[i], a = dvs_trigamma(1.0 - x), b = dvs_trigamma(x);
        double s = PI_D / sin(PI_D * x), c = s * s;
        ck_assert_msg(fabs(a + b - c) <= 1e-14 * (a + b + c),
                      "reflection fails at %g: %g", x, a + b - c);
    }
    for (i = 0; i < COUNT(dup); i++) {
        double x = dup[i], a = dvs_trigamma(2.0 * x);
        double b = 0.25 * dvs_trigamma(x), c = 0.25 * dvs_trigamma(x + 0.5);
        ck_assert_msg(fabs(a - b - c) <= 1e-14 * (a + b + c),
                      "duplication fails at %g: %g", x, a - b - c);
    }
}
END_TEST

/* psi' is positive wherever it is defined and decreasing on (0, inf): on
 * a grid of dyadic points over [-20, 40] that skips the poles. */
START_TEST(trigamma_shape)
{
    double x, prev = HUGE_VAL;
    int bad = 0;
    for (x = -20.0 + 1.0 / 64; x <= 40.0; x += 1.0 / 64) {
        double v = dvs_trigamma(x);
        if (x == floor(x) && x <= 0.0)
            continue;
        if (!(v > 0.0) || (x > 0.0 && !(v < prev))) {
            bad++;
            fprintf(stderr, "trigamma(%g) = %.17g after %.17g\n", x, v,
                    prev);
        }
        if (x > 0.0)
            prev = v;
    }
    ck_assert_msg(bad == 0, "%d grid points break trigamma's shape", bad);
}
END_TEST

/* ----------------------------------------------------------- the data */

/* The committed data file is exactly what the generator prints. */
START_TEST(generator_reproduces_the_data_file)
{
    tu_expect_generated(REFS_PATH, GENERATOR);
}
END_TEST

/* ------------------------------------------- min2, max2, clamp, relu, sign
 * Expected values follow the definitions in the brief and LANGUAGE.md:
 * min/max ties go to the first argument (seen with +0.0 / -0.0), a NaN
 * makes the comparison false so the second argument comes back. */

START_TEST(min2_exact)
{
    static const struct exact2 t[] = {
        {1.0, 2.0, 1.0}, {2.0, 1.0, 1.0}, {-1.0, 1.0, -1.0},
        {3.0, 3.0, 3.0}, {0.0, -0.0, 0.0}, {-0.0, 0.0, -0.0},
        {-HUGE_VAL, 5.0, -HUGE_VAL}, {5.0, -HUGE_VAL, -HUGE_VAL},
        {HUGE_VAL, HUGE_VAL, HUGE_VAL}, {HUGE_VAL, 1.0, 1.0},
        {NAN, 1.0, 1.0}, {1.0, NAN, NAN}, {NAN, NAN, NAN},
        {-1e-300, 1e-300, -1e-300}, {DBL_MAX, HUGE_VAL, DBL_MAX},
        {2.5, -7.25, -7.25}, {4.9406564584124654e-324, 0.0, 0.0},
        {0.0, 4.9406564584124654e-324, 0.0}, {-HUGE_VAL, NAN, NAN},
        {-0.0, -0.0, -0.0},
    };
    int bad = check_exact2("min2", dvs_min2, t, COUNT(t));
    ck_assert_msg(bad == 0, "%d min2 cases wrong", bad);
}
END_TEST

START_TEST(max2_exact)
{
    static const struct exact2 t[] = {
        {1.0, 2.0, 2.0}, {2.0, 1.0, 2.0}, {-1.0, 1.0, 1.0},
        {3.0, 3.0, 3.0}, {0.0, -0.0, 0.0}, {-0.0, 0.0, -0.0},
        {-HUGE_VAL, 5.0, 5.0}, {5.0, -HUGE_VAL, 5.0},
        {HUGE_VAL, HUGE_VAL, HUGE_VAL}, {HUGE_VAL, 1.0, HUGE_VAL},
        {NAN, 1.0, 1.0}, {1.0, NAN, NAN}, {NAN, NAN, NAN},
        {-1e-300, 1e-300, 1e-300}, {DBL_MAX, HUGE_VAL, HUGE_VAL},
        {2.5, -7.25, 2.5}, {4.9406564584124654e-324, 0.0,
        4.9406564584124654e-324}, {0.0, 4.9406564584124654e-324,
        4.9406564584124654e-324}, {HUGE_VAL, NAN, NAN}, {-0.0, -0.0, -0.0},
    };
    int bad = check_exact2("max2", dvs_max2, t, COUNT(t));
    ck_assert_msg(bad == 0, "%d max2 cases wrong", bad);
}
END_TEST

/* clamp: lo if x < lo, hi if x > hi, else x itself (so a tie returns x,
 * seen with signed zeros); comparisons with NaN are false. */
START_TEST(clamp_exact)
{
    static const struct exact3 t[] = {
        {0.5, 0.0, 1.0, 0.5}, {-1.0, 0.0, 1.0, 0.0}, {2.0, 0.0, 1.0, 1.0},
        {0.0, 0.0, 1.0, 0.0}, {-0.0, 0.0, 1.0, -0.0}, {0.0, -0.0, 1.0, 0.0},
        {1.0, 0.0, 1.0, 1.0}, {0.0, -1.0, -0.0, 0.0},
        {HUGE_VAL, 0.0, 1.0, 1.0}, {-HUGE_VAL, 0.0, 1.0, 0.0},
        {NAN, 0.0, 1.0, NAN}, {5.0, -HUGE_VAL, HUGE_VAL, 5.0},
        {-1e300, -1.0, 1.0, -1.0}, {1e-300, 0.0, 1.0, 1e-300},
        {-3.0, -2.0, -2.0, -2.0}, {-2.0, -2.0, -2.0, -2.0},
        {0.5, NAN, 1.0, 0.5}, {2.0, NAN, 1.0, 1.0}, {-2.0, 0.0, NAN, 0.0},
        {7.25, 7.5, 10.0, 7.5},
    };
    size_t i;
    int bad = 0;
    for (i = 0; i < COUNT(t); i++) {
        double got = dvs_clamp(t[i].x, t[i].lo, t[i].hi);
        if (!same(got, t[i].want)) {
            bad++;
            fprintf(stderr, "clamp(%g, %g, %g) = %g, want %g\n", t[i].x,
                    t[i].lo, t[i].hi, got, t[i].want);
        }
    }
    ck_assert_msg(bad == 0, "%d clamp cases wrong", bad);
}
END_TEST

/* relu: x > 0 ? x : 0.0, so -0.0 gives +0.0 and NaN gives +0.0. */
START_TEST(relu_exact)
{
    static const struct exact1 t[] = {
        {1.0, 1.0}, {-1.0, 0.0}, {0.0, 0.0}, {-0.0, 0.0},
        {1e-300, 1e-300}, {-1e-300, 0.0},
        {4.9406564584124654e-324, 4.9406564584124654e-324},
        {-4.9406564584124654e-324, 0.0}, {HUGE_VAL, HUGE_VAL},
        {-HUGE_VAL, 0.0}, {NAN, 0.0}, {DBL_MAX, DBL_MAX}, {-DBL_MAX, 0.0},
        {0.5, 0.5}, {-0.5, 0.0}, {123.25, 123.25}, {-123.25, 0.0},
        {1e300, 1e300}, {-1e300, 0.0}, {2.0, 2.0},
    };
    int bad = check_exact1("relu", dvs_relu, t, COUNT(t));
    ck_assert_msg(bad == 0, "%d relu cases wrong", bad);
}
END_TEST

/* sign: 1 above zero, -1 below, +0.0 for either zero, NaN for NaN. */
START_TEST(sign_exact)
{
    static const struct exact1 t[] = {
        {1.0, 1.0}, {-1.0, -1.0}, {0.0, 0.0}, {-0.0, 0.0},
        {4.9406564584124654e-324, 1.0}, {-4.9406564584124654e-324, -1.0},
        {HUGE_VAL, 1.0}, {-HUGE_VAL, -1.0}, {NAN, NAN}, {DBL_MAX, 1.0},
        {-DBL_MAX, -1.0}, {0.5, 1.0}, {-0.5, -1.0}, {1e-300, 1.0},
        {-1e-300, -1.0}, {1e300, 1.0}, {-1e300, -1.0}, {42.0, 1.0},
        {-42.0, -1.0}, {DBL_MIN, 1.0},
    };
    int bad = check_exact1("sign", dvs_sign, t, COUNT(t));
    ck_assert_msg(bad == 0, "%d sign cases wrong", bad);
}
END_TEST

/* ------------------------------------------------------------------ main */

static Suite *runtime_suite(void)
{
    Suite *s = suite_create("runtime");
    TCase *tc;

    tc = tcase_create("sigmoid");
    tcase_add_test(tc, sigmoid_mpmath);
    tcase_add_test(tc, sigmoid_exact);
    tcase_add_test(tc, sigmoid_shape);
    suite_add_tcase(s, tc);

    tc = tcase_create("softplus");
    tcase_add_test(tc, softplus_mpmath);
    tcase_add_test(tc, softplus_exact);
    tcase_add_test(tc, softplus_identity);
    suite_add_tcase(s, tc);

    tc = tcase_create("hypot_slope");
    tcase_add_test(tc, hypot_slope_mpmath);
    tcase_add_test(tc, hypot_slope_exact);
    suite_add_tcase(s, tc);

    tc = tcase_create("digamma");
    tcase_add_test(tc, digamma_mpmath);
    tcase_add_test(tc, digamma_exact);
    tcase_add_test(tc, digamma_handbook);
    tcase_add_test(tc, digamma_identities);
    suite_add_tcase(s, tc);

    tc = tcase_create("trigamma");
    tcase_add_test(tc, trigamma_mpmath);
    tcase_add_test(tc, trigamma_exact);
    tcase_add_test(tc, trigamma_handbook);
    tcase_add_test(tc, trigamma_identities);
    tcase_add_test(tc, trigamma_shape);
    suite_add_tcase(s, tc);

    tc = tcase_create("data");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, generator_reproduces_the_data_file);
    suite_add_tcase(s, tc);

    tc = tcase_create("piecewise");
    tcase_add_test(tc, min2_exact);
    tcase_add_test(tc, max2_exact);
    tcase_add_test(tc, clamp_exact);
    tcase_add_test(tc, relu_exact);
    tcase_add_test(tc, sign_exact);
    suite_add_tcase(s, tc);

    return s;
}

int main(void)
{
    return tu_main(runtime_suite());
}
