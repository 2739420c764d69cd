/* test_e2e_builtins.c - end-to-end tests of every builtin, operator,
 * condition and statement form: each model is built by the dervish binary,
 * driven from C compiled by gcc and clang under strict flags, and its value
 * and gradient are compared with closed-form values and derivatives.
 *
 * Set DVS_E2E_REPORT=1 to print how many comparisons each test made. */
#include "e2eutil.h"

#include <float.h>

/* Constants recalled from memory; each agrees with mpmath 1.2.1 at 30 digits
 * (/usr/bin/python3 -c "import mpmath as m; m.mp.dps = 30;
 *  print(m.pi, 2/m.sqrt(m.pi), m.ln2, m.ln10, m.euler)"). */
#define PI 3.14159265358979323846
#define TWO_OVER_SQRT_PI 1.12837916709551257390 /* DLMF 7.2.1: erf' */
#define LN2 0.69314718055994530942
#define LN10 2.30258509299404568402
#define EULER_GAMMA 0.57721566490153286061 /* A&S 6.1.3 */

/* Relative tolerance where the libm functions involved are correct to an
 * ulp or two and the emitted code adds a few roundings. */
#define REL 1e-13

/* --------------------------------------------------------------- harness */

/* Checks one row: gradient returns the value, the value is near want_value
 * (tolerance value_tol), and gradient entry i is near want[i] within tol[i]. */
static void check_row(E2eTally *t, const E2eModel *m, const double *row,
                      const char *const *names, double want_value,
                      double value_tol, const double *want, const double *tol)
{
    e2e_expect_near(t, "gradient's return - value", row[1] - row[0], 0.0, 0.0);
    e2e_expect_near(t, "value", row[0], want_value, value_tol);
    for (int i = 0; i < m->count; i++) {
        char *what = tu_format("d/d%s", names[i]);
        e2e_expect_near(t, what, row[2 + i], want[i], tol[i]);
        free(what);
    }
}

/* ----------------------------------------------- table-driven pointwise cases */

#define NPTS 6

/* Weight of each case's term at point k: the output is
 * sum over cases of w_TAG * EXPR, so d/dw_TAG is the value of EXPR and
 * d/dTAG_i is w times its partial, which exercises the chain rule. Kept
 * within [-1, 1] so no term outgrows its builtin's value. */
static const double weight[NPTS] = {1, -0.5, 0.75, -1, 0.5, 1};

/* The value and the partials of a case's expression at arg. */
typedef void (*ExpectFn)(const double *arg, double *value, double *partial);

/* One builtin, operator or condition form: EXPR uses @0, @1, @2 for its
 * arguments, which become the params TAG_0, TAG_1, TAG_2. */
typedef struct Case {
    const char *tag;
    const char *expr;
    int arity;
    double arg[NPTS][3];
    ExpectFn expect;
    double abs_slope;   /* absolute slack on a partial, times |w| (see case) */
} Case;

/* EXPR with each @N replaced by TAG_N (malloc'd). */
static char *case_expr(const Case *c)
{
    char *s = NULL;
    for (const char *e = c->expr; *e; e++) {
        if (*e == '@')
            e2e_append(&s, "%s_%c", c->tag, *++e);
        else
            e2e_append(&s, "%c", *e);
    }
    return s;
}

/* Builds, runs and checks a model of the given cases, params laid out case
 * by case as TAG_0 .. TAG_{arity-1}, w_TAG. */
static void run_cases(const char *name, const Case *cases, int ncases)
{
    char *text = NULL, *sum = NULL;
    int count = 0;
    e2e_append(&text, "model %s\n", name);
    for (int c = 0; c < ncases; c++) {
        e2e_append(&text, "param ");
        for (int i = 0; i < cases[c].arity; i++)
            e2e_append(&text, "%s_%d, ", cases[c].tag, i);
        e2e_append(&text, "w_%s\n", cases[c].tag);
        count += cases[c].arity + 1;
    }
    for (int c = 0; c < ncases; c++) {
        char *e = case_expr(&cases[c]);
        e2e_append(&text, "t_%s = w_%s * (%s)\n", cases[c].tag, cases[c].tag,
                   e);
        e2e_append(&sum, "%st_%s", c ? " + " : "", cases[c].tag);
        free(e);
    }
    e2e_append(&text, "out = %s\noutput out\n", sum);
    free(sum);

    double *pts = malloc(sizeof(double) * NPTS * (size_t)count);
    char **names = malloc(sizeof(char *) * (size_t)count);
    double want_value[NPTS], value_tol[NPTS];
    double *want_grad = malloc(sizeof(double) * NPTS * (size_t)count);
    double *tol_grad = malloc(sizeof(double) * NPTS * (size_t)count);
    ck_assert(pts && names && want_grad && tol_grad);
    for (int k = 0; k < NPTS; k++) {
        double total = 0, magnitude = 0;
        int at = 0;
        for (int c = 0; c < ncases; c++) {
            const Case *cs = &cases[c];
            double v, d[3], w = weight[k];
            cs->expect(cs->arg[k], &v, d);
            for (int i = 0; i < cs->arity; i++) {
                pts[k * count + at] = cs->arg[k][i];
                want_grad[k * count + at] = w * d[i];
                tol_grad[k * count + at] =
                    REL * fabs(w * d[i]) + cs->abs_slope * fabs(w);
                if (k == 0)
                    names[at] = tu_format("%s_%d", cs->tag, i);
                at++;
            }
            pts[k * count + at] = w;
            want_grad[k * count + at] = v;
            tol_grad[k * count + at] = REL * fabs(v);
            if (k == 0)
                names[at] = tu_format("w_%s", cs->tag);
            at++;
            total += w * v;
            magnitude += fabs(w * v);
        }
        ck_assert_msg(isfinite(magnitude), "%s: point %d overflows", name, k);
        want_value[k] = total;
        value_tol[k] = REL * magnitude;
    }

    E2eModel m = {name, text, count, NPTS, pts, NULL};
    E2eRuns r = e2e_run_model(&m);
    E2eTally t = {name, NULL, 0, 0, 0};
    for (int c = 0; c < r.n; c++) {
        t.cc = r.cc[c];
        for (int k = 0; k < NPTS; k++) {
            t.point = k;
            check_row(&t, &m, E2E_ROW(&m, r.rows[c], k),
                      (const char *const *)names, want_value[k],
                      value_tol[k], want_grad + k * count,
                      tol_grad + k * count);
        }
    }
    e2e_runs_free(&r);
    for (int i = 0; i < count; i++)
        free(names[i]);
    free(names);
    free(pts);
    free(want_grad);
    free(tol_grad);
    free(text);
    e2e_tally_finish(&t);
}

/* ---------------------------------------- closed forms of the builtins */

/* UNARY(name, value, slope): f(x) and f'(x) with x = arg[0]. */
#define UNARY(fn, value_expr, slope_expr)                                   \
    static void fn(const double *arg, double *value, double *partial)      \
    {                                                                       \
        const double x = arg[0];                                            \
        (void)x;                /* unused by constant cases */              \
        *value = (value_expr);                                              \
        partial[0] = (slope_expr);                                          \
    }

/* BINARY(name, value, d/dx, d/dy) with x = arg[0], y = arg[1]. */
#define BINARY(fn, value_expr, dx_expr, dy_expr)                            \
    static void fn(const double *arg, double *value, double *partial)      \
    {                                                                       \
        const double x = arg[0], y = arg[1];                                \
        *value = (value_expr);                                              \
        partial[0] = (dx_expr);                                             \
        partial[1] = (dy_expr);                                             \
    }

/* TERNARY(name, value, d/dx, d/dy, d/dz) with x, y, z = arg[0..2]. */
#define TERNARY(fn, value_expr, dx_expr, dy_expr, dz_expr)                  \
    static void fn(const double *arg, double *value, double *partial)      \
    {                                                                       \
        const double x = arg[0], y = arg[1], z = arg[2];                    \
        *value = (value_expr);                                              \
        partial[0] = (dx_expr);                                             \
        partial[1] = (dy_expr);                                             \
        partial[2] = (dz_expr);                                             \
    }

/* The closed forms below avoid overflow for huge x where the textbook
 * form would overflow while the true result is representable. */

/* 1/(1+x^2) (A&S 4.4, d/dx arctan) */
static double atan_slope(double x)
{
    return fabs(x) > 1e150 ? 1.0 / x / x : 1.0 / (1.0 + x * x);
}

/* 1/sqrt(1+x^2) (A&S 4.6, d/dx arsinh); for |x| > 1e8, 1+x^2 is x^2 in
 * double precision, so the result is 1/|x|. */
static double asinh_slope(double x)
{
    return fabs(x) > 1e8 ? 1.0 / fabs(x) : 1.0 / sqrt(1.0 + x * x);
}

/* 1/sqrt(x^2-1) (A&S 4.6, d/dx arcosh), as 1/sqrt((x-1)(x+1)) whose
 * factors are exact near 1; 1/x for x > 1e8 as above. */
static double acosh_slope(double x)
{
    return x > 1e8 ? 1.0 / x : 1.0 / sqrt((x - 1.0) * (x + 1.0));
}

/* 1/sqrt(1-x^2) (A&S 4.4, d/dx arcsin) with exact factors near |x| = 1 */
static double asin_slope(double x)
{
    return 1.0 / sqrt((1.0 - x) * (1.0 + x));
}

/* The logistic function, split so the exp never overflows. */
static double logistic(double x)
{
    return x >= 0 ? 1.0 / (1.0 + exp(-x)) : exp(x) / (1.0 + exp(x));
}

/* log(1 + e^x) = max(x, 0) + log1p(e^-|x|), an identity without overflow */
static double soft_plus(double x)
{
    return (x > 0 ? x : 0.0) + log1p(exp(-fabs(x)));
}

static double sign_of(double x)
{
    return x > 0 ? 1.0 : x < 0 ? -1.0 : 0.0;
}

/* Sum of 1/k for k = 1 .. n. */
static double harmonic(int n)
{
    double h = 0;
    for (int k = 1; k <= n; k++)
        h += 1.0 / k;
    return h;
}

/* lgamma and its derivative psi (digamma) at the points where the handbook
 * gives closed forms (all recalled from memory, and checked against
 * mpmath's loggamma and digamma):
 *   positive integer n:  ln Gamma(n) = ln (n-1)!, psi(n) = -gamma + H(n-1)
 *                        (A&S 6.1.6, 6.3.2)
 *   n + 1/2, n >= 0:     Gamma(n+1/2) = 1*3*...*(2n-1) sqrt(pi) / 2^n
 *                        (A&S 6.1.12), psi(n+1/2) = -gamma - 2 ln 2
 *                        + 2 (1 + 1/3 + ... + 1/(2n-1)) (A&S 6.3.4)
 *   1/2 - n, n >= 1:     reflection Gamma(x) Gamma(1-x) = pi / sin(pi x)
 *                        (A&S 6.1.17) and psi(1-x) = psi(x) + pi cot(pi x)
 *                        (A&S 6.3.7), where cot vanishes
 *   x = 1000:            Stirling's series (A&S 6.1.41) and the asymptotic
 *                        series of psi (A&S 6.3.18); the omitted terms are
 *                        below 1e-20 relative there. */
static void e_lgamma(const double *arg, double *value, double *partial)
{
    const double x = arg[0];
    if (x == 1000) {
        const double z2 = x * x;
        *value = (x - 0.5) * log(x) - x + 0.5 * log(2 * PI) + 1 / (12 * x) -
                 1 / (360 * x * z2) + 1 / (1260 * x * z2 * z2);
        partial[0] = log(x) - 1 / (2 * x) - 1 / (12 * z2) +
                     1 / (120 * z2 * z2) - 1 / (252 * z2 * z2 * z2);
    } else if (x > 0 && x == floor(x)) {
        double fact = 1;
        for (int k = 2; k < (int)x; k++)
            fact *= k;
        *value = log(fact);
        partial[0] = -EULER_GAMMA + harmonic((int)x - 1);
    } else {
        /* a half-integer: work with h = n + 1/2 = max(x, 1 - x) */
        const double h = x > 0 ? x : 1 - x;
        const int n = (int)(h - 0.5);
        double odd = 1, recip = 0;
        for (int k = 1; k <= n; k++) {
            odd *= 2 * k - 1;
            recip += 1.0 / (2 * k - 1);
        }
        const double lg_h = log(odd / ldexp(1.0, n)) + 0.5 * log(PI);
        partial[0] = -EULER_GAMMA - 2 * LN2 + 2 * recip;
        /* |Gamma(x)| = pi / (|sin(pi x)| Gamma(1-x)), |sin| = 1 here */
        *value = x > 0 ? lg_h : log(PI) - lg_h;
    }
}

/* hypot's partials x/r and y/r, and atan2's y/r^2-style partials, from
 * arguments scaled by a power of two (exact), so nothing overflows or
 * underflows on the way; this is independent of libm's hypot. */
static double scale_of(double x, double y)
{
    int e;
    frexp(fabs(x) > fabs(y) ? x : y, &e);
    return ldexp(1.0, -e);
}

static void e_hypot(const double *arg, double *value, double *partial)
{
    const double s = scale_of(arg[0], arg[1]);
    const double x = arg[0] * s, y = arg[1] * s, r = sqrt(x * x + y * y);
    *value = hypot(arg[0], arg[1]);
    partial[0] = x / r;         /* d/dx sqrt(x^2+y^2) = x / r */
    partial[1] = y / r;
}

static void e_atan2(const double *arg, double *value, double *partial)
{
    const double s = scale_of(arg[0], arg[1]);
    const double y = arg[0] * s, x = arg[1] * s, r2 = x * x + y * y;
    *value = atan2(arg[0], arg[1]);
    /* d/dy atan2(y, x) = x / (x^2+y^2), d/dx = -y / (x^2+y^2)
     * (from A&S 4.4's arctan derivative and the quotient rule) */
    partial[0] = x / r2 * s;
    partial[1] = -y / r2 * s;
}

/* 1 - 2^-30 and friends: arguments next to a branch point or pole. */
#define NEAR1 (1.0 - 0x1p-30)

UNARY(e_abs, fabs(x), sign_of(x))            /* abs' = sign, 0 at 0 (§4) */
UNARY(e_sqrt, sqrt(x), 0.5 / sqrt(x))        /* infinite at 0 (IEEE 1/0) */
UNARY(e_cbrt, cbrt(x), 1.0 / (3 * cbrt(x) * cbrt(x))) /* (1/3) x^(-2/3) */
UNARY(e_exp, exp(x), exp(x))                 /* A&S 4.2 */
UNARY(e_expm1, expm1(x), exp(x))
UNARY(e_log, log(x), 1.0 / x)                /* A&S 4.1 */
UNARY(e_log1p, log1p(x), 1.0 / (1.0 + x))
UNARY(e_log2, log2(x), 1.0 / (x * LN2))      /* log2 x = ln x / ln 2 */
UNARY(e_log10, log10(x), 1.0 / (x * LN10))
UNARY(e_sin, sin(x), cos(x))                 /* A&S 4.3 */
UNARY(e_cos, cos(x), -sin(x))
UNARY(e_tan, tan(x), 1.0 / (cos(x) * cos(x))) /* sec^2 */
UNARY(e_asin, asin(x), asin_slope(x))
UNARY(e_acos, acos(x), -asin_slope(x))       /* A&S 4.4: -(1-x^2)^(-1/2) */
UNARY(e_atan, atan(x), atan_slope(x))
UNARY(e_sinh, sinh(x), cosh(x))              /* A&S 4.5 */
UNARY(e_cosh, cosh(x), sinh(x))
UNARY(e_tanh, tanh(x), 1.0 / (cosh(x) * cosh(x))) /* sech^2 */
UNARY(e_asinh, asinh(x), asinh_slope(x))
UNARY(e_acosh, acosh(x), acosh_slope(x))
UNARY(e_atanh, atanh(x), 1.0 / ((1.0 - x) * (1.0 + x))) /* A&S 4.6 */
/* erf' = 2/sqrt(pi) e^(-x^2), erfc = 1 - erf (DLMF 7.2.1, 7.2.2); the
 * points are chosen so that x^2 is exact in double */
UNARY(e_erf, erf(x), TWO_OVER_SQRT_PI * exp(-x * x))
UNARY(e_erfc, erfc(x), -TWO_OVER_SQRT_PI * exp(-x * x))
/* sigmoid' = sigmoid(x) sigmoid(-x) = sigmoid (1 - sigmoid) */
UNARY(e_sigmoid, logistic(x), logistic(x) * logistic(-x))
UNARY(e_softplus, soft_plus(x), logistic(x))  /* softplus' = sigmoid */
UNARY(e_relu, x > 0 ? x : 0.0, x > 0 ? 1.0 : 0.0) /* 0 at 0 (§4) */
/* step functions: derivative 0 everywhere by the language's convention */
UNARY(e_floor, floor(x), 0.0)
UNARY(e_ceil, ceil(x), 0.0)
UNARY(e_round, round(x), 0.0)                /* C99: halves away from 0 */
UNARY(e_trunc, trunc(x), 0.0)
UNARY(e_sign, sign_of(x), 0.0)

/* pow(x, y) = e^(y ln x): partials y x^(y-1) and x^y ln x */
BINARY(e_pow, pow(x, y), y * pow(x, y - 1), pow(x, y) * log(x))
/* min and max: ties go to the first argument (§4) */
BINARY(e_min, x <= y ? x : y, x <= y ? 1.0 : 0.0, x <= y ? 0.0 : 1.0)
BINARY(e_max, x >= y ? x : y, x >= y ? 1.0 : 0.0, x >= y ? 0.0 : 1.0)
/* clamp(x, lo, hi): 1 for x inside [lo, hi], ends included; else the
 * bound that was hit gets the 1 (§4) */
TERNARY(e_clamp, x < y ? y : x > z ? z : x,
        x >= y && x <= z ? 1.0 : 0.0, x < y ? 1.0 : 0.0, x > z ? 1.0 : 0.0)

/* Every builtin of LANGUAGE.md §4 with one argument, at six points each:
 * ordinary, negative, near-boundary and large arguments, and the special
 * points where a convention decides the derivative. Huge results are put at
 * different points so the summed output stays finite. */
static const Case unary_cases[] = {
    {"abs", "abs(@0)", 1, {{-2.5}, {0}, {3}, {-0.0}, {1e300}, {-1e-300}},
     e_abs, 0},
    {"sqrt", "sqrt(@0)", 1, {{4}, {0}, {2}, {1e-300}, {1e300}, {0.25}},
     e_sqrt, 0},
    {"cbrt", "cbrt(@0)", 1, {{-8}, {27}, {0}, {-1e-9}, {1e300}, {2}},
     e_cbrt, 0},
    {"exp", "exp(@0)", 1, {{0}, {1}, {-700}, {709}, {-1e-20}, {3.5}},
     e_exp, 0},
    /* x <= -20 is in expm1_slope_far_left */
    {"expm1", "expm1(@0)", 1, {{1e-10}, {-1e-10}, {0}, {5}, {-3}, {700}},
     e_expm1, 0},
    {"log", "log(@0)", 1,
     {{1}, {1e-300}, {1e300}, {0.5}, {2.75}, {1 + 0x1p-40}}, e_log, 0},
    {"log1p", "log1p(@0)", 1,
     {{0}, {1e-17}, {-0.5}, {-1 + 0x1p-40}, {1e10}, {3}}, e_log1p, 0},
    {"log2", "log2(@0)", 1, {{8}, {0.1}, {1e-300}, {1e300}, {1}, {3}},
     e_log2, 0},
    {"log10", "log10(@0)", 1, {{1000}, {0.2}, {1e-300}, {1e300}, {1}, {7}},
     e_log10, 0},
    {"sin", "sin(@0)", 1,
     {{0}, {1}, {-2}, {1e6}, {1.5707963267948966}, {100}}, e_sin, 0},
    {"cos", "cos(@0)", 1,
     {{0}, {1}, {-2}, {1e6}, {1.5707963267948966}, {100}}, e_cos, 0},
    {"tan", "tan(@0)", 1, {{0}, {1}, {-1.5}, {1.57}, {1e-8}, {10}},
     e_tan, 0},
    {"asin", "asin(@0)", 1,
     {{0}, {0.5}, {-0.9}, {NEAR1}, {-NEAR1}, {1e-10}}, e_asin, 0},
    {"acos", "acos(@0)", 1,
     {{0}, {0.5}, {-0.9}, {NEAR1}, {-NEAR1}, {1e-10}}, e_acos, 0},
    {"atan", "atan(@0)", 1, {{0}, {1}, {-1}, {1e150}, {-1e-8}, {20}},
     e_atan, 0},
    {"sinh", "sinh(@0)", 1, {{0}, {1}, {-2}, {-20}, {710}, {1e-9}},
     e_sinh, 0},
    {"cosh", "cosh(@0)", 1, {{0}, {1}, {-2}, {20}, {-3}, {710}},
     e_cosh, 0},
    /* tanh' is 1 - h^2 from the stored h (LANGUAGE.md §4 prescribes it):
     * h carries up to half an ulp of error, so for |x| >= 5, where 1 - h^2
     * is small, the absolute error of the slope is up to about 2^-52 even
     * though its relative error is large. */
    {"tanh", "tanh(@0)", 1, {{0}, {0.5}, {-1}, {3}, {-20}, {300}},
     e_tanh, 0x1p-51},
    {"asinh", "asinh(@0)", 1, {{0}, {1}, {-2}, {1e300}, {-1e-10}, {1e8}},
     e_asinh, 0},
    {"acosh", "acosh(@0)", 1,
     {{1}, {1 + 0x1p-40}, {2}, {10}, {1e300}, {1.5}}, e_acosh, 0},
    {"atanh", "atanh(@0)", 1,
     {{0}, {0.5}, {-0.9}, {NEAR1}, {-NEAR1}, {1e-10}}, e_atanh, 0},
    {"erf", "erf(@0)", 1, {{0}, {0.5}, {-1.5}, {3}, {-26}, {6}}, e_erf, 0},
    {"erfc", "erfc(@0)", 1, {{0}, {0.5}, {-1.5}, {3}, {26}, {10}},
     e_erfc, 0},
    {"lgamma", "lgamma(@0)", 1,
     {{0.5}, {1}, {4}, {3.5}, {-2.5}, {1000}}, e_lgamma, 0},
    /* sigmoid' is sigma (1 - sigma) from the stored sigma (§4 prescribes
     * it); for large x, 1 - sigma is tiny and carries sigma's rounding,
     * so the slope's absolute error is up to about 2^-53. */
    {"sigmoid", "sigmoid(@0)", 1, {{0}, {1}, {-3}, {5}, {-30}, {30}},
     e_sigmoid, 0x1p-52},
    {"softplus", "softplus(@0)", 1, {{0}, {1}, {-1}, {40}, {-700}, {700}},
     e_softplus, 0},
    {"relu", "relu(@0)", 1, {{-1}, {0}, {2}, {-0.0}, {1e300}, {-1e-300}},
     e_relu, 0},
    {"floor", "floor(@0)", 1, {{-2.5}, {2.5}, {-0.5}, {0.5}, {3}, {-7.25}},
     e_floor, 0},
    {"ceil", "ceil(@0)", 1, {{-2.5}, {2.5}, {-0.5}, {0.5}, {3}, {-7.25}},
     e_ceil, 0},
    {"round", "round(@0)", 1, {{-2.5}, {2.5}, {-0.5}, {0.5}, {3}, {-7.25}},
     e_round, 0},
    {"trunc", "trunc(@0)", 1, {{-2.5}, {2.5}, {-0.5}, {0.5}, {3}, {-7.75}},
     e_trunc, 0},
    {"sign", "sign(@0)", 1, {{-3}, {0}, {2}, {-0.0}, {1e-300}, {-1e300}},
     e_sign, 0},
};

START_TEST(unary_builtins)
{
    run_cases("unary", unary_cases, (int)COUNT(unary_cases));
}
END_TEST

/* expm1' = e^x. For x <= -20 expm1(x) + 1 is not an accurate way to get it
 * (expm1 is within 2e-9 of -1 there, and all but a few bits cancel), so the
 * derivative must not be formed from the stored value. */
static const Case expm1_far_cases[] = {
    {"expm1", "expm1(@0)", 1, {{-20}, {-30}, {-38}, {-40}, {-50}, {-700}},
     e_expm1, 0},
};

START_TEST(expm1_slope_far_left)
{
    run_cases("expm1far", expm1_far_cases, (int)COUNT(expm1_far_cases));
}
END_TEST

/* ------------------------------------ builtins of several args, operators */

BINARY(e_add, x + y, 1.0, 1.0)
BINARY(e_sub, x - y, 1.0, -1.0)
BINARY(e_mul, x * y, y, x)
BINARY(e_div, x / y, 1.0 / y, -x / (y * y))      /* quotient rule */
UNARY(e_neg, -x, -1.0)
/* power rule n x^(n-1) for constant exponents; negative x is fine because
 * no log(x) is involved */
UNARY(e_cube, x * x * x, 3 * x * x)
UNARY(e_inv_square, 1.0 / (x * x), -2.0 / (x * x * x))
UNARY(e_square, x * x, 2 * x)
UNARY(e_pow0, 1.0, 0.0)                          /* C99: pow(x, 0) = 1 */
UNARY(e_pow1, x, 1.0)
UNARY(e_root, sqrt(x), 0.5 / sqrt(x))            /* x^0.5 */
UNARY(e_pow_m15, pow(x, -1.5), -1.5 * pow(x, -2.5))
UNARY(e_two_to, pow(2, x), pow(2, x) * LN2)      /* d/dx a^x = a^x ln a */
UNARY(e_neg_square, -(x * x), -2 * x)            /* -x^2 is -(x^2) */
UNARY(e_pow8, pow(x, 8), 8 * pow(x, 7))          /* x^2^3 is x^(2^3) */
TERNARY(e_sub_chain, x - y - z, 1.0, -1.0, -1.0)   /* left-associative */
TERNARY(e_div_chain, x / y / z, 1.0 / (y * z), -x / (y * y * z),
        -x / (y * z * z))
BINARY(e_neg_operands, 2 * -x + y * -3, -2.0, -3.0)
/* compositions: the chain rule inside one expression, and a param that
 * occurs several times, also as base and exponent of one power */
BINARY(e_comp_trig, exp(sin(x)) * cos(y) * cos(y),
       exp(sin(x)) * cos(x) * cos(y) * cos(y),
       -2 * exp(sin(x)) * cos(y) * sin(y))
BINARY(e_comp_log, log(1 + x * x) / sqrt(y),
       2 * x / ((1 + x * x) * sqrt(y)), -0.5 * log(1 + x * x) / (y * sqrt(y)))
/* d/dx x^x = x^x (ln x + 1) */
UNARY(e_comp_self, pow(x, x) + x * sin(x),
      pow(x, x) * (log(x) + 1) + sin(x) + x * cos(x))

static const Case multi_cases[] = {
    {"atan2", "atan2(@0, @1)", 2,
     {{1, 1}, {-1, -1}, {-2, 0}, {1e300, 1e300}, {1e-300, -1e-300}, {3, -4}},
     e_atan2, 0},
    {"hypot", "hypot(@0, @1)", 2,
     {{3, 4}, {-5, 12}, {1e300, 1e300}, {1e-300, 2e-300}, {0, 2}, {-7, 0}},
     e_hypot, 0},
    {"pow", "pow(@0, @1)", 2,
     {{2, 3}, {0.5, -1.5}, {10, 0.5}, {1.5, 100}, {3, 0}, {7.25, 2.5}},
     e_pow, 0},
    {"powv", "@0^@1", 2,
     {{2, 3}, {0.5, -1.5}, {10, 0.5}, {1.5, 100}, {3, 0}, {7.25, 2.5}},
     e_pow, 0},
    {"min", "min(@0, @1)", 2,
     {{1, 2}, {2, 1}, {3, 3}, {-1, -1}, {-5, 1e300}, {0.5, -0.5}}, e_min, 0},
    {"max", "max(@0, @1)", 2,
     {{1, 2}, {2, 1}, {3, 3}, {-1, -1}, {-5, 1e300}, {0.5, -0.5}}, e_max, 0},
    {"clamp", "clamp(@0, @1, @2)", 3,
     {{0.5, 0, 1}, {-1, 0, 1}, {2, 0, 1}, {0, 0, 1}, {1, 0, 1}, {-3, -5, -4}},
     e_clamp, 0},
    {"add", "@0 + @1", 2,
     {{1, 2}, {-3.5, 0.25}, {1e300, -1e300}, {0, 0}, {-1, -2}, {7, 1e-20}},
     e_add, 0},
    {"sub", "@0 - @1", 2,
     {{1, 2}, {-3.5, 0.25}, {1e300, 1e300}, {0, 0}, {-1, -2}, {7, 1e-20}},
     e_sub, 0},
    {"mul", "@0 * @1", 2,
     {{1, 2}, {-3.5, 0.25}, {1e150, -1e150}, {0, 5}, {-1, -2}, {7, 1e-20}},
     e_mul, 0},
    {"div", "@0 / @1", 2,
     {{1, 2}, {-3, 0.5}, {7, -1e-3}, {0, 5}, {-1, -8}, {1e100, 1e-100}},
     e_div, 0},
    {"neg", "-@0", 1, {{1}, {-2.5}, {0}, {1e300}, {-1e-300}, {3}}, e_neg, 0},
    {"cube", "@0^3", 1, {{-2}, {-0.5}, {3}, {0}, {-1e50}, {1.1}}, e_cube, 0},
    {"cubef", "pow(@0, 3)", 1, {{-2}, {-0.5}, {3}, {0}, {-1e50}, {1.1}},
     e_cube, 0},
    {"invsq", "@0^(-2)", 1, {{-2}, {-0.5}, {3}, {4}, {-1e-50}, {10}},
     e_inv_square, 0},
    {"square", "@0^2", 1, {{-3}, {0}, {2.5}, {-1e100}, {1e-100}, {7}},
     e_square, 0},
    {"pow0", "@0^0", 1, {{-3}, {0}, {2.5}, {-1e100}, {1e-100}, {7}},
     e_pow0, 0},
    {"pow1", "@0^1", 1, {{-3}, {0}, {2.5}, {-1e100}, {1e-100}, {7}},
     e_pow1, 0},
    {"root", "@0^0.5", 1, {{4}, {2}, {1e-300}, {1e300}, {0.25}, {9}},
     e_root, 0},
    {"powm15", "@0^(-1.5)", 1, {{4}, {2}, {0.01}, {1e100}, {0.25}, {9}},
     e_pow_m15, 0},
    {"twoto", "2^@0", 1, {{0}, {1}, {-3}, {10.5}, {1000}, {-1000}},
     e_two_to, 0},
    {"negsq", "-@0^2", 1, {{-3}, {0}, {2.5}, {-1e100}, {1e-100}, {7}},
     e_neg_square, 0},
    {"pow8", "@0^2^3", 1, {{-1.5}, {2}, {0.5}, {-1}, {3}, {1.25}},
     e_pow8, 0},
    {"subs", "@0 - @1 - @2", 3,
     {{1, 2, 3}, {-1, 0.5, 4}, {0, 0, 0}, {10, -10, 2.5}, {1, 1, 1},
      {1e300, 1e300, -1}},
     e_sub_chain, 0},
    {"divs", "@0 / @1 / @2", 3,
     {{1, 2, 3}, {-1, 0.5, 4}, {0, 1, 1}, {10, -10, 2.5}, {1, 1, 1},
      {7, -0.25, 8}},
     e_div_chain, 0},
    {"negops", "2 * -@0 + @1 * -3", 2,
     {{1, 2}, {-1, 0.5}, {0, 0}, {10, -10}, {1, 1}, {7, -0.25}},
     e_neg_operands, 0},
    {"comptrig", "exp(sin(@0)) * cos(@1)^2", 2,
     {{1, 2}, {-0.5, 0.25}, {0, 0}, {3, -1}, {10, 1.5}, {-2, 7}},
     e_comp_trig, 0},
    {"complog", "log(1 + @0^2) / sqrt(@1)", 2,
     {{1, 2}, {-0.5, 0.25}, {0, 1}, {3, 9}, {1e10, 1e-10}, {-2, 7}},
     e_comp_log, 0},
    {"compself", "@0^@0 + @0 * sin(@0)", 1,
     {{0.5}, {1}, {2}, {3.5}, {0.1}, {10}}, e_comp_self, 0},
};

START_TEST(multi_argument_builtins_and_operators)
{
    run_cases("multi", multi_cases, (int)COUNT(multi_cases));
}
END_TEST

/* ----------------------------------------------------------- conditions */

/* Every condition below selects between u^2 v and 5u - 2v, whose partials
 * (2uv, u^2) and (5, -2) tell which branch the derivative went into. */
static void branch(int taken, const double *arg, double *value, double *partial)
{
    const double u = arg[0], v = arg[1];
    *value = taken ? u * u * v : 5 * u - 2 * v;
    partial[0] = taken ? 2 * u * v : 5.0;
    partial[1] = taken ? u * u : -2.0;
}

#define CONDITION(fn, cond)                                                 \
    static void fn(const double *arg, double *value, double *partial)      \
    {                                                                       \
        const double u = arg[0], v = arg[1];                                \
        branch(cond, arg, value, partial);                                  \
    }

CONDITION(e_lt, u < v)
CONDITION(e_le, u <= v)
CONDITION(e_gt, u > v)
CONDITION(e_ge, u >= v)
CONDITION(e_eq, u == v)
CONDITION(e_ne, u != v)
CONDITION(e_and, u > 0 && v > 0)
CONDITION(e_or, u > 0 || v > 0)
CONDITION(e_not, !(u < v))
/* && binds tighter than || (§4 precedence table) */
CONDITION(e_andor, u < v || (u > 2 && v < 0))

/* u < 0 ? -u : v < 0 ? u v : u + v, `?:` being right-associative */
static void e_nested(const double *arg, double *value, double *partial)
{
    const double u = arg[0], v = arg[1];
    *value = u < 0 ? -u : v < 0 ? u * v : u + v;
    partial[0] = u < 0 ? -1.0 : v < 0 ? v : 1.0;
    partial[1] = u < 0 ? 0.0 : v < 0 ? u : 1.0;
}

/* The branch not taken has an infinite or NaN derivative at these points
 * (sqrt' at 0, sqrt and log of negatives): none of it may leak into the
 * gradient. */
UNARY(e_guard_sqrt, x > 0 ? sqrt(x) : -x, x > 0 ? 0.5 / sqrt(x) : -1.0)
BINARY(e_guard_log, x > 0 ? log(x) : x * y, x > 0 ? 1.0 / x : y,
       x > 0 ? 0.0 : x)

#define COND_POINTS {{1, 2}, {2, 1}, {3, 3}, {-1, -1}, {0, 0.5}, {-2.5, -4}}
#define COND_BRANCHES " ? @0^2 * @1 : 5 * @0 - 2 * @1"

static const Case condition_cases[] = {
    {"lt", "@0 < @1" COND_BRANCHES, 2, COND_POINTS, e_lt, 0},
    {"le", "@0 <= @1" COND_BRANCHES, 2, COND_POINTS, e_le, 0},
    {"gt", "@0 > @1" COND_BRANCHES, 2, COND_POINTS, e_gt, 0},
    {"ge", "@0 >= @1" COND_BRANCHES, 2, COND_POINTS, e_ge, 0},
    {"eq", "@0 == @1" COND_BRANCHES, 2, COND_POINTS, e_eq, 0},
    {"ne", "@0 != @1" COND_BRANCHES, 2, COND_POINTS, e_ne, 0},
    {"and", "@0 > 0 && @1 > 0" COND_BRANCHES, 2, COND_POINTS, e_and, 0},
    {"or", "@0 > 0 || @1 > 0" COND_BRANCHES, 2, COND_POINTS, e_or, 0},
    {"not", "!(@0 < @1)" COND_BRANCHES, 2, COND_POINTS, e_not, 0},
    {"andor", "@0 < @1 || @0 > 2 && @1 < 0" COND_BRANCHES, 2,
     {{1, 2}, {3, -1}, {3, 1}, {-1, -1}, {0, 0.5}, {2.5, -4}}, e_andor, 0},
    {"nested", "@0 < 0 ? -@0 : @1 < 0 ? @0 * @1 : @0 + @1", 2,
     {{-1, 2}, {2, -1}, {3, 3}, {-1, -1}, {0, 0.5}, {0, -4}}, e_nested, 0},
    {"gsqrt", "@0 > 0 ? sqrt(@0) : -@0", 1,
     {{4}, {0}, {-9}, {1e-300}, {2.25}, {-0.0}}, e_guard_sqrt, 0},
    {"glog", "@0 > 0 ? log(@0) : @0 * @1", 2,
     {{-1, 2}, {0, 3}, {2.718281828459045, 1}, {0.5, -1}, {-0.0, 4},
      {1e-300, 1}},
     e_guard_log, 0},
};

START_TEST(conditions)
{
    run_cases("cond", condition_cases, (int)COUNT(condition_cases));
}
END_TEST

/* ----------------------------------------------------------- reductions */

/* sum, max, min and logsumexp over one index, each weighted by a param so
 * its value is checked through d/dw. */
static const char reduce_model[] =
    "model reduce\n"
    "const N = 5\n"
    "input c[N]\n"
    "param x[N], w_sum, w_max, w_min, w_lse\n"
    "s1  = sum(i: c[i] * x[i]^2)\n"
    "mx  = max(i: c[i] * x[i])\n"
    "mn  = min(i: x[i] + c[i])\n"
    "lse = logsumexp(i: x[i])\n"
    "out = w_sum * s1 + w_max * mx + w_min * mn + w_lse * lse\n"
    "output out\n";

#define RN 5
#define REDUCE_COUNT (RN + 4)

/* Per point: x, the four weights, and the input c. Point 1 ties every
 * c x for the max and every x + c for the min (first index wins); points
 * 2 and 4 are far from 0, where logsumexp needs its max shift; point 3
 * makes all softmax weights 1/5. */
static const double reduce_x[][RN] = {
    {0.5, -1, 2, 0.25, 1},
    {1, 2, 1, 2, 0},
    {1000, 1001, 999, 1000.5, -1000},
    {3, 3, 3, 3, 3},
    {-1000, -1001, -1002, -999.5, -1000.25},
};
static const double reduce_c[][RN] = {
    {1, 2, -1, 4, 0.5},
    {2, 1, 2, 1, 3},
    {1, 1, 1, 1, 1},
    {-1, -1, -1, -1, -1},
    {0.1, -0.2, 0.3, -0.4, 0.5},
};
static const double reduce_w[][4] = {
    {1, -0.5, 0.75, 2}, {0.5, 2, -1, 1}, {1, 1, 1, -0.5}, {-2, 0.5, 1.5, 1},
    {0.25, -1, 2, 3},
};
#define REDUCE_INPUTS                                                       \
    "{{1, 2, -1, 4, 0.5}}, {{2, 1, 2, 1, 3}}, {{1, 1, 1, 1, 1}}, "          \
    "{{-1, -1, -1, -1, -1}}, {{0.1, -0.2, 0.3, -0.4, 0.5}}"

START_TEST(reductions)
{
    enum { NP = (int)COUNT(reduce_x) };
    double pts[NP][REDUCE_COUNT];
    const char *names[REDUCE_COUNT] = {"x[0]", "x[1]", "x[2]", "x[3]", "x[4]",
                                       "w_sum", "w_max", "w_min", "w_lse"};
    for (int k = 0; k < NP; k++) {
        memcpy(pts[k], reduce_x[k], sizeof reduce_x[k]);
        memcpy(pts[k] + RN, reduce_w[k], sizeof reduce_w[k]);
    }
    E2eModel m = {"reduce", reduce_model, REDUCE_COUNT, NP, &pts[0][0],
               REDUCE_INPUTS};
    E2eRuns r = e2e_run_model(&m);
    E2eTally t = {"reduce", NULL, 0, 0, 0};
    for (int k = 0; k < NP; k++) {
        const double *x = reduce_x[k], *c = reduce_c[k], *w = reduce_w[k];
        double s1 = 0, s1_mag = 0, top = x[0];
        int amax = 0, amin = 0;
        for (int i = 0; i < RN; i++) {
            s1 += c[i] * x[i] * x[i];
            s1_mag += fabs(c[i] * x[i] * x[i]);
            if (c[i] * x[i] > c[amax] * x[amax])
                amax = i;   /* strict: the first arg-max stays on ties */
            if (x[i] + c[i] < x[amin] + c[amin])
                amin = i;
            if (x[i] > top)
                top = x[i];
        }
        /* log sum e^x = m + log sum e^(x - m), m = max x */
        double shifted = 0;
        for (int i = 0; i < RN; i++)
            shifted += exp(x[i] - top);
        const double lse = top + log(shifted);
        const double parts[4] = {s1, c[amax] * x[amax], x[amin] + c[amin], lse};
        const double parts_mag[4] = {s1_mag, fabs(parts[1]), fabs(parts[2]),
                                     fabs(lse)};
        double want[REDUCE_COUNT], tol[REDUCE_COUNT], value = 0, mag = 0;
        for (int i = 0; i < RN; i++) {
            /* the softmax weight; exp(x - lse) inherits lse's absolute
             * rounding error (a few ulps of |lse| after n steps), which
             * for |lse| near 1000 is far more than 1e-13 relative */
            const double p = exp(x[i] - lse);
            const double terms[4] = {
                w[0] * 2 * c[i] * x[i],
                i == amax ? w[1] * c[i] : 0.0,
                i == amin ? w[2] : 0.0,
                w[3] * p,
            };
            want[i] = terms[0] + terms[1] + terms[2] + terms[3];
            tol[i] = REL * (fabs(terms[0]) + fabs(terms[1]) + fabs(terms[2]) +
                            fabs(terms[3])) +
                     fabs(terms[3]) * 16 * DBL_EPSILON * fmax(1.0, fabs(lse));
        }
        for (int j = 0; j < 4; j++) {
            want[RN + j] = parts[j];
            tol[RN + j] = REL * parts_mag[j];
            value += w[j] * parts[j];
            mag += fabs(w[j]) * parts_mag[j];
        }
        for (int c2 = 0; c2 < r.n; c2++) {
            t.cc = r.cc[c2];
            t.point = k;
            check_row(&t, &m, E2E_ROW(&m, r.rows[c2], k), names, value,
                      REL * mag, want, tol);
        }
    }
    e2e_runs_free(&r);
    e2e_tally_finish(&t);
}
END_TEST

/* max and min over several indices at once (3-D and 2-D), whole and per
 * row: the adjoint goes to the first arg-max or arg-min in row-major
 * order (the reductions list their indices in subscript order, so "first"
 * means the same in loop order). */
static const char argmax_model[] =
    "model argmax\n"
    "param Y[2, 3, 2], U[2, 3]\n"
    "param w_ymax, w_ymin, w_umax, w_umin, w_rows\n"
    "ymax = max(k, i, j: Y[k, i, j])\n"
    "ymin = min(k, i, j: Y[k, i, j])\n"
    "umax = max(j, i: U[j, i])\n"
    "umin = min(j, i: U[j, i])\n"
    "m[k] = max(i, j: Y[k, i, j])\n"
    "out = w_ymax * ymax + w_ymin * ymin + w_umax * umax + w_umin * umin +\n"
    "      w_rows * sum(k: m[k])\n"
    "output out\n";

enum { AY = 12, AROW = 6, AU = 6, AW = 5, ARGMAX_COUNT = AY + AU + AW };

/* Y, U and the weights per point. Point 0 has distinct maxima away from the
 * start and ties in U; point 1 ties everything; point 2 ties the maximum of
 * Y at flat positions 8 and 9. */
static const double argmax_points[][ARGMAX_COUNT] = {
    {0.5, -1, 2, 0.25, 1, 3, -2, 1.5, 0.75, -0.5, 2.5, 4,
     1, -3, 2, 0.5, 2, -3, 1, -0.5, 0.75, 2, -1.25},
    {1.5, 1.5, 1.5, 1.5, 1.5, 1.5, 1.5, 1.5, 1.5, 1.5, 1.5, 1.5,
     -2, -2, -2, -2, -2, -2, 0.5, 2, -1, 1, 0.25},
    {-1, -2, -3, -4, -5, -6, 7, 8, 9, 9, 8, -7,
     0, 0, 1, 1, -1, -1, -1, 1.5, 0.5, -0.75, 2},
};

/* Flat position of the first maximum (sign 1) or minimum (sign -1) of
 * v[0..n-1]. */
static int first_extreme(const double *v, int n, double sign)
{
    int best = 0;
    for (int f = 1; f < n; f++)
        if (sign * v[f] > sign * v[best])
            best = f;
    return best;
}

START_TEST(multi_index_max_min)
{
    enum { NP = (int)COUNT(argmax_points) };
    char *names[ARGMAX_COUNT];
    static const char *const weights[AW] = {"w_ymax", "w_ymin", "w_umax",
                                            "w_umin", "w_rows"};
    for (int f = 0; f < AY; f++)
        names[f] = tu_format("Y[%d][%d][%d]", f / 6, f / 2 % 3, f % 2);
    for (int f = 0; f < AU; f++)
        names[AY + f] = tu_format("U[%d][%d]", f / 3, f % 3);
    for (int k = 0; k < AW; k++)
        names[AY + AU + k] = tu_format("%s", weights[k]);
    E2eModel m = {"argmax", argmax_model, ARGMAX_COUNT, NP,
                  &argmax_points[0][0], NULL};
    E2eRuns r = e2e_run_model(&m);
    E2eTally t = {"argmax", NULL, 0, 0, 0};
    for (int k = 0; k < NP; k++) {
        const double *Y = argmax_points[k], *U = Y + AY, *w = U + AU;
        const int ymax = first_extreme(Y, AY, 1), ymin = first_extreme(Y, AY, -1);
        const int umax = first_extreme(U, AU, 1), umin = first_extreme(U, AU, -1);
        const int row0 = first_extreme(Y, AROW, 1);
        const int row1 = AROW + first_extreme(Y + AROW, AROW, 1);
        const double parts[AW] = {Y[ymax], Y[ymin], U[umax], U[umin],
                                  Y[row0] + Y[row1]};
        double want[ARGMAX_COUNT] = {0}, tol[ARGMAX_COUNT], value = 0, mag = 0;
        want[ymax] += w[0];
        want[ymin] += w[1];
        want[AY + umax] += w[2];
        want[AY + umin] += w[3];
        want[row0] += w[4];
        want[row1] += w[4];
        for (int j = 0; j < AW; j++) {
            want[AY + AU + j] = parts[j];
            value += w[j] * parts[j];
            mag += fabs(w[j] * parts[j]);
        }
        for (int f = 0; f < ARGMAX_COUNT; f++)
            tol[f] = REL * fabs(want[f]);
        for (int c = 0; c < r.n; c++) {
            t.cc = r.cc[c];
            t.point = k;
            check_row(&t, &m, E2E_ROW(&m, r.rows[c], k),
                      (const char *const *)names, value, REL * mag, want, tol);
        }
    }
    e2e_runs_free(&r);
    for (int f = 0; f < ARGMAX_COUNT; f++)
        free(names[f]);
    e2e_tally_finish(&t);
}
END_TEST

/* ------------------------------------------------------- statement forms */

/* consts (in expressions, as dimensions, defined from earlier consts),
 * scalar and array inputs and params (1-D and 2-D), a scalar definition,
 * index form, whole-array form with scalar broadcast (1-D and 2-D),
 * multi-index sum, nested reductions, an inner reduction that does not
 * depend on the outer index, a min reduction over an intermediate array,
 * an integer const as exponent, and a statement continued after an
 * operator. */
static const char forms_model[] =
    "model forms\n"
    "const R = 2\n"
    "const K = R + 1\n"
    "const SCALE = 1.5\n"
    "input  s[K], t\n"
    "param  W[R, K], b[R], x[K], g\n"
    "param  w_tot, w_nest, w_shared, w_bc, w_esum, w_q, w_th, w_lo\n"
    "z[j]    = sum(i: W[j, i] * x[i] * s[i]) + b[j]\n"
    "h       = g * z + t\n"
    "P[j, i] = W[j, i] * x[i]\n"
    "Q       = tanh(P) * SCALE\n"
    "tot     = sum(i, j: P[j, i]^2)\n"
    "nest    = sum(j: max(i: P[j, i]))\n"
    "shared  = sum(j: b[j] * sum(i: s[i] * x[i]))\n"
    "bc      = sum(j: h[j] * SCALE)\n"
    "e       = exp(x) * s + g\n"
    "q       = K * g^K + SCALE * t\n"
    "th      = sum(j, i: Q[j, i])\n"
    "lo      = min(j: h[j])\n"
    "out = w_tot * tot + w_nest * nest + w_shared * shared + w_bc * bc +\n"
    "      w_esum * sum(i: e[i]) + w_q * q + w_th * th + w_lo * lo\n"
    "output out\n";

enum { FR = 2, FK = 3, FW = 8 };
enum { F_W = 0, F_B = F_W + FR * FK, F_X = F_B + FR, F_G = F_X + FK,
       F_WEIGHTS = F_G + 1, FORMS_COUNT = F_WEIGHTS + FW };
#define F_SCALE 1.5

typedef struct FormsPoint {
    double W[FR][FK], b[FR], x[FK], g, w[FW];
    double s[FK], t;
} FormsPoint;

/* Point 0 ties P[0][0] = P[0][1] for the row max; point 1 makes both rows
 * of P and both h[j] equal (ties everywhere, the first index wins) with a
 * negative g for the g^K power rule. */
static const FormsPoint forms_points[] = {
    {{{1, 2, -1}, {0.5, -1, 3}}, {0.3, -0.7}, {2, 1, 0.5}, -1.5,
     {1, -0.5, 0.75, 2, -1, 0.5, 1.25, -2}, {0.5, -1, 2}, 0.25},
    {{{1, 1, 1}, {1, 1, 1}}, {0.5, 0.5}, {0.25, 0.25, -1}, -2,
     {0.5, 1, -1, 1, 0.25, -2, 1, 1.5}, {1, 1, 1}, -3},
    {{{0.2, -0.4, 0.9}, {-1.1, 0.6, 0.3}}, {-0.25, 1.75}, {-0.8, 1.3, 0.45},
     0.8, {-1, 2, 0.5, -0.75, 1, 1, -1.5, 0.5}, {1.5, 0.75, -0.5}, 2},
};
#define FORMS_INPUTS                                                        \
    "{{0.5, -1, 2}, 0.25}, {{1, 1, 1}, -3}, {{1.5, 0.75, -0.5}, 2}"

/* Adds term to *want and |term| to *mag. */
static void acc(double *want, double *mag, double term)
{
    *want += term;
    *mag += fabs(term);
}

/* The forms model's value, gradient and tolerance scale, derived by hand
 * from its definitions (chain rule through each statement). */
static void forms_expect(const FormsPoint *p, double *value, double *value_mag,
                         double *want, double *mag)
{
    double P[FR][FK], z[FR], h[FR], th_slope[FR][FK];
    double tot = 0, nest = 0, sx = 0, bsum = 0, bc = 0, esum = 0, th = 0;
    int amax[FR], jlo = 0;
    for (int i = 0; i < FK; i++)
        sx += p->s[i] * p->x[i];
    for (int j = 0; j < FR; j++) {
        z[j] = p->b[j];
        amax[j] = 0;
        for (int i = 0; i < FK; i++) {
            P[j][i] = p->W[j][i] * p->x[i];
            z[j] += p->W[j][i] * p->x[i] * p->s[i];
            tot += P[j][i] * P[j][i];
            th += F_SCALE * tanh(P[j][i]);
            th_slope[j][i] = F_SCALE / (cosh(P[j][i]) * cosh(P[j][i]));
            if (P[j][i] > P[j][amax[j]])
                amax[j] = i;
        }
        nest += P[j][amax[j]];
        h[j] = p->g * z[j] + p->t;
        bc += F_SCALE * h[j];
        bsum += p->b[j];
        if (h[j] < h[jlo])
            jlo = j;
    }
    for (int i = 0; i < FK; i++)
        esum += exp(p->x[i]) * p->s[i] + p->g;
    const double q = FK * pow(p->g, FK) + F_SCALE * p->t;
    const double parts[FW] = {tot, nest, bsum * sx, bc, esum, q, th, h[jlo]};
    const double *w = p->w;

    for (int i = 0; i < FORMS_COUNT; i++)
        want[i] = mag[i] = 0;
    *value = *value_mag = 0;
    for (int k = 0; k < FW; k++) {
        want[F_WEIGHTS + k] = parts[k];
        mag[F_WEIGHTS + k] = fabs(parts[k]);
        acc(value, value_mag, w[k] * parts[k]);
    }
    for (int j = 0; j < FR; j++) {
        for (int i = 0; i < FK; i++) {
            double *gw = &want[F_W + j * FK + i], *mw = &mag[F_W + j * FK + i];
            double *gx = &want[F_X + i], *mx = &mag[F_X + i];
            const double x = p->x[i], W = p->W[j][i], s = p->s[i];
            /* tot: d P^2 = 2 P dP, with dP/dW = x, dP/dx = W */
            acc(gw, mw, w[0] * 2 * P[j][i] * x);
            acc(gx, mx, w[0] * 2 * P[j][i] * W);
            /* nest: the row max's adjoint goes to its first arg-max */
            if (i == amax[j]) {
                acc(gw, mw, w[1] * x);
                acc(gx, mx, w[1] * W);
            }
            /* bc and lo through h = g z + t, z = sum W x s + b */
            acc(gw, mw, w[3] * F_SCALE * p->g * x * s);
            acc(gx, mx, w[3] * F_SCALE * p->g * W * s);
            if (j == jlo) {
                acc(gw, mw, w[7] * p->g * x * s);
                acc(gx, mx, w[7] * p->g * W * s);
            }
            /* th: SCALE tanh'(P) = SCALE sech^2 P */
            acc(gw, mw, w[6] * th_slope[j][i] * x);
            acc(gx, mx, w[6] * th_slope[j][i] * W);
        }
        acc(&want[F_B + j], &mag[F_B + j], w[2] * sx);
        acc(&want[F_B + j], &mag[F_B + j], w[3] * F_SCALE * p->g);
        if (j == jlo)
            acc(&want[F_B + j], &mag[F_B + j], w[7] * p->g);
        acc(&want[F_G], &mag[F_G], w[3] * F_SCALE * z[j]);
    }
    for (int i = 0; i < FK; i++) {
        acc(&want[F_X + i], &mag[F_X + i], w[2] * p->s[i] * bsum);
        acc(&want[F_X + i], &mag[F_X + i], w[4] * exp(p->x[i]) * p->s[i]);
    }
    acc(&want[F_G], &mag[F_G], w[4] * FK);                      /* esum */
    acc(&want[F_G], &mag[F_G], w[5] * FK * FK * pow(p->g, FK - 1)); /* q */
    acc(&want[F_G], &mag[F_G], w[7] * z[jlo]);                  /* lo */
}

START_TEST(statement_forms)
{
    enum { NP = (int)COUNT(forms_points) };
    double pts[NP][FORMS_COUNT];
    const char *names[FORMS_COUNT] = {
        "W[0][0]", "W[0][1]", "W[0][2]", "W[1][0]", "W[1][1]", "W[1][2]",
        "b[0]", "b[1]", "x[0]", "x[1]", "x[2]", "g", "w_tot", "w_nest",
        "w_shared", "w_bc", "w_esum", "w_q", "w_th", "w_lo"};
    for (int k = 0; k < NP; k++) {
        const FormsPoint *p = &forms_points[k];
        memcpy(pts[k] + F_W, p->W, sizeof p->W);
        memcpy(pts[k] + F_B, p->b, sizeof p->b);
        memcpy(pts[k] + F_X, p->x, sizeof p->x);
        pts[k][F_G] = p->g;
        memcpy(pts[k] + F_WEIGHTS, p->w, sizeof p->w);
    }
    E2eModel m = {"forms", forms_model, FORMS_COUNT, NP, &pts[0][0],
               FORMS_INPUTS};
    E2eRuns r = e2e_run_model(&m);
    E2eTally t = {"forms", NULL, 0, 0, 0};
    for (int k = 0; k < NP; k++) {
        double value, value_mag, want[FORMS_COUNT], mag[FORMS_COUNT];
        double tol[FORMS_COUNT];
        forms_expect(&forms_points[k], &value, &value_mag, want, mag);
        for (int i = 0; i < FORMS_COUNT; i++)
            tol[i] = REL * mag[i];
        for (int c = 0; c < r.n; c++) {
            t.cc = r.cc[c];
            t.point = k;
            check_row(&t, &m, E2E_ROW(&m, r.rows[c], k), names, value,
                      REL * value_mag, want, tol);
        }
    }
    e2e_runs_free(&r);
    e2e_tally_finish(&t);
}
END_TEST

static Suite *e2e_suite(void)
{
    Suite *s = suite_create("e2e_builtins");
    TCase *tc = tcase_create("e2e_builtins");
    tcase_set_timeout(tc, 120);
    tcase_add_test(tc, unary_builtins);
    tcase_add_test(tc, expm1_slope_far_left);
    tcase_add_test(tc, multi_argument_builtins_and_operators);
    tcase_add_test(tc, conditions);
    tcase_add_test(tc, reductions);
    tcase_add_test(tc, multi_index_max_min);
    tcase_add_test(tc, statement_forms);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return tu_main(e2e_suite());
}
