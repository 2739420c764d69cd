/* test_float.c - `dervish build --real float`: every sample model, a model
 * using every builtin and sized models are built twice, for double and for
 * float, with value, gradient, tangent and hessvec; both are compiled by
 * gcc and clang with -Wdouble-promotion -Wfloat-conversion -Werror, run at
 * the same points, and the float results compared with the double ones.
 *
 * Tolerance: 1e-4 times the larger of 1 and the magnitude of what is
 * compared (the double value; the largest gradient or Hessian-vector entry;
 * the sum of |gradient * dir| terms of the tangent).  Float rounding is
 * 2^-24 (6e-8) per operation; the models chain at most a few dozen
 * operations on terms of order one at the chosen points (params, inputs
 * and directions in [0.5, 1.5]), and the longest sum has 90 terms, so the
 * expected error is below 1e-5 of those magnitudes; 1e-4 leaves margin and
 * still fails on a wrong formula or a lost term, which errs by order one.
 * The double build itself is checked against closed forms elsewhere
 * (test_e2e_builtins.c, test_rule_refs.c); here it is the reference.
 * The float runtime helpers (runtime/float/) are compared with the double
 * ones (runtime/, checked against mpmath in test_runtime.c) directly. */
#include "testutil.h"

#include <ctype.h>
#include <float.h>
#include <math.h>
#include <unistd.h>

/* The helpers of both precisions, the float ones renamed *_f. */
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
#define dvs_clamp dvs_clamp_f
#define dvs_digamma dvs_digamma_f
#define dvs_hypot_slope dvs_hypot_slope_f
#define dvs_max2 dvs_max2_f
#define dvs_min2 dvs_min2_f
#define dvs_relu dvs_relu_f
#define dvs_sigmoid dvs_sigmoid_f
#define dvs_sign dvs_sign_f
#define dvs_softplus dvs_softplus_f
#define dvs_trigamma dvs_trigamma_f
#include "float/clamp.c"
#include "float/digamma.c"
#include "float/hypot_slope.c"
#include "float/max2.c"
#include "float/min2.c"
#include "float/relu.c"
#include "float/sigmoid.c"
#include "float/sign.c"
#include "float/softplus.c"
#include "float/trigamma.c"
#undef dvs_clamp
#undef dvs_digamma
#undef dvs_hypot_slope
#undef dvs_max2
#undef dvs_min2
#undef dvs_relu
#undef dvs_sigmoid
#undef dvs_sign
#undef dvs_softplus
#undef dvs_trigamma

/* the double build (the reference) has no promotion warnings to heed */
#define DOUBLE_FLAGS "-std=c99 -Wall -Wextra -Wpedantic -Wshadow -Werror"
#define FLOAT_FLAGS DOUBLE_FLAGS " -Wdouble-promotion -Wfloat-conversion"
#define NPTS 4
#define TOL 1e-4

typedef struct Model {
    const char *name;       /* the model's name (its symbols' prefix) */
    const char *path;       /* a model file of the tree, or NULL */
    const char *text;       /* else the model's text */
    const char *options;    /* extra build options */
    int has_input;          /* there is an m_input */
    /* C statements filling `in` for point k (REAL is the real type), or
     * NULL to fill every member, the struct seen as an array of reals */
    const char *input_setup;
    int uses_work;          /* 1: the functions take work; 2: and some
                               arrays live in it (work count > 0) */
} Model;

/* Sized inputs for pumps: 12 rows of invented running hours and
 * temperatures around the model's midpoints, every third one failed. */
#define PUMPS_ROWS                                                          \
    "    static REAL hours[12], temp[12], failed[12];\n"                    \
    "    for (int j = 0; j < 12; j++) {\n"                                  \
    "        hours[j] = (REAL)(7000 + 250 * j + 40 * k);\n"                 \
    "        temp[j] = (REAL)(58 + j + k);\n"                               \
    "        failed[j] = (REAL)(j % 3 == 0);\n"                             \
    "    }\n"                                                               \
    "    in.n = 12;\n    in.hours = hours;\n    in.temp = temp;\n"          \
    "    in.failed = failed;\n"

/* Every builtin of LANGUAGE.md section 4 and every reduction, each
 * applied where it is defined for params in [0.5, 1.5], with conditions,
 * a whole-array form and an integer power. */
static const char builtins_text[] =
    "model allfn\n"
    "param a, b, c, v[3]\n"
    "t1 = abs(a - 1) + sqrt(a) + cbrt(b) + exp(c) + expm1(a) + log(b)\n"
    "t2 = log1p(c) + log2(a) + log10(b) + sin(a) + cos(b) + tan(c / 2)\n"
    "t3 = asin(a / 2) + acos(b / 2) + atan(c) + sinh(a) + cosh(b) + tanh(c)\n"
    "t4 = asinh(a) + acosh(1 + b) + atanh(c / 2) + atan2(a, b) + hypot(b, c)\n"
    "t5 = erf(a) + erfc(b) + floor(a) * b + ceil(b) * c\n"
    "t6 = round(c) * a + trunc(a) * c + min(a, b) + max(b, c) + clamp(a, 0.8, 1.2)\n"
    "t7 = sigmoid(a - b) + softplus(b - c) + relu(a - c) + sign(b - a) * c\n"
    "t8 = pow(a, b) + a^3 + (a < b ? a * b : a / b) + (b >= c && a != c ? c^2 : 1e-3)\n"
    "w = v * v + exp(-v)\n"
    "t9 = sum(i: w[i] * v[i]) + max(i: w[i]) + min(i: v[i] * a) + logsumexp(i: w[i])\n"
    "out = t1 + t2 + t3 + t4 + t5 + t6 + t7 + t8 + t9\n"
    "output out\n";

/* A sized model using the size as a real number, whose rows live in work
 * (each needs the mean of all). */
static const char sized_text[] =
    "model rows\n"
    "size n\n"
    "input x[n], y[n]\n"
    "param s, t\n"
    "mid = sum(i: x[i]) / n\n"
    "z = s * (x - mid) + t\n"
    "r = softplus(z) - y * z + 0.1 * relu(z)\n"
    "loss = sum(i: r[i]) / n\n"
    "output loss\n";

#define ROWS_INPUT                                                          \
    "    static REAL xs[7], ys[7];\n"                                       \
    "    for (int j = 0; j < 7; j++) {\n"                                   \
    "        xs[j] = (REAL)(0.25 * j - 0.5 + 0.125 * k);\n"                 \
    "        ys[j] = (REAL)(j % 2);\n"                                      \
    "    }\n"                                                               \
    "    in.n = 7;\n    in.x = xs;\n    in.y = ys;\n"

/* lgamma, whose gradient calls the digamma helper and whose Hessian the
 * trigamma helper. */
static const char lgamma_text[] =
    "model lg\n"
    "param a, b\n"
    "out = lgamma(a) * b + lgamma(10 * b) + lgamma(a - 2.5)\n"
    "output out\n";

static const Model models[] = {
    {"arm", "samples/arm/arm.dvs", NULL, "", 1, NULL, 0},
    {"arrhenius", "samples/arrhenius/arrhenius.dvs", NULL, "", 1, NULL, 0},
    {"tank", "samples/build-systems/tank.dvs", NULL, "", 1, NULL, 0},
    {"cooling", "samples/cooling/cooling.dvs", NULL, "", 1, NULL, 0},
    {"greeks", "samples/greeks/greeks.dvs", NULL, "", 1, NULL, 0},
    {"kiln", "samples/kiln/kiln.dvs", NULL, "", 1, NULL, 0},
    {"pump", "samples/pump/pump.dvs", NULL, "", 1, NULL, 0},
    {"pumps", "samples/pumps/pumps.dvs", NULL, "", 1, PUMPS_ROWS, 1},
    {"allfn", NULL, builtins_text, "", 0, NULL, 0},
    {"rows", NULL, sized_text, "", 1, ROWS_INPUT, 2},
    {"lg", NULL, lgamma_text, "", 0, NULL, 0},
    /* fixed arrays above the stack limit go to work; a long function is
     * written in parts sharing a frame */
    {"pump", "samples/pump/pump.dvs", NULL, "--stack-limit 8", 1, NULL, 2},
    {"allfn", NULL, builtins_text, "--part-size 3", 0, NULL, 0},
};

/* The driver, for REAL double or float: at each point it prints the
 * value, gradient's, tangent's and hessvec's returns, the tangent, the
 * work count (or 0), the gradient, dir and the Hessian times dir.  Points
 * and directions are floats, so both builds see the same numbers. */
static char *driver_source(const Model *m, const char *real)
{
    const char *in = m->has_input ? ", &in" : "";
    const char *work = m->uses_work ? ", work" : "";
    const char *fmt = strcmp(real, "float") == 0 ? "%.9g" : "%.17g";
    char *upper = tu_format("%s", m->name);
    for (char *u = upper; *u; u++)
        *u = (char)toupper((unsigned char)*u);
    char *inputs = !m->has_input ? tu_format("%s", "")
        : tu_format("    %s_input in;\n%s", m->name, m->input_setup
              ? m->input_setup
              : "    REAL *flat = (REAL *)&in;\n"
                "    for (size_t j = 0; j < sizeof in / sizeof(REAL); j++)\n"
                "        flat[j] = point(k, (int)j + 50);\n");
    char *hessvec = tu_format("    put(%s_hessvec(&x.p%s, &dir.p, &g2.p, "
                              "&hv.p%s));\n", m->name, in, work);
    char *need = !m->uses_work ? tu_format("%s", "0")
        : tu_format("%s_work_count(%s)", m->name, m->has_input ? "&in" : "");
    char *s = tu_format(
        "#include <math.h>\n#include <stdio.h>\n#include \"%s.h\"\n\n"
        "typedef %s REAL;\n\n"
        "/* a float in [0.5, 1.5), the same in both builds */\n"
        "static REAL point(int k, int j)\n{\n"
        "    double f = (k * 7 + j * 3 + 1) * 0.6180339887;\n"
        "    return (REAL)(float)(0.5 + (f - floor(f)));\n}\n\n"
        "static void put(REAL x)\n{\n    printf(\" %s\", (double)x);\n}\n\n"
        "int main(void)\n{\n"
        "    static REAL work[100000];\n"
        "    (void)work;\n"
        "    for (int k = 0; k < %d; k++) {\n"
        "%s"
        "    %s_param_flat x, dir, g, g2, hv;\n"
        "    for (int j = 0; j < %s_PARAM_COUNT; j++) {\n"
        "        x.v[j] = point(k, j);\n"
        "        dir.v[j] = point(k + 11, j);\n"
        "        g.v[j] = g2.v[j] = hv.v[j] = (REAL)NAN;\n"
        "    }\n"
        "    REAL dv = (REAL)NAN;\n"
        "    size_t need = %s;\n"
        "    if (need > sizeof work / sizeof work[0])\n"
        "        return 1;\n"
        "    put(%s_value(&x.p%s%s));\n"
        "    put(%s_gradient(&x.p%s, &g.p%s));\n"
        "    put(%s_tangent(&x.p%s, &dir.p, &dv%s));\n"
        "%s"
        "    put(dv);\n"
        "    printf(\" %%zu\", need);\n"
        "    for (int j = 0; j < %s_PARAM_COUNT; j++)\n"
        "        put(g.v[j]);\n"
        "    for (int j = 0; j < %s_PARAM_COUNT; j++)\n"
        "        put(dir.v[j]);\n"
        "    for (int j = 0; j < %s_PARAM_COUNT; j++)\n"
        "        put(hv.v[j]);\n"
        "    printf(\"\\n\");\n"
        "    }\n    return 0;\n}\n",
        m->name, real, fmt, NPTS,
        inputs, m->name, upper, need,
        m->name, in, work, m->name, in, work, m->name, in, work, hessvec,
        upper, upper, upper);
    free(upper);
    free(inputs);
    free(need);
    free(hessvec);
    return s;
}

/* Builds m for REAL with dervish, compiles its driver with cc and the
 * float warnings, runs it; returns the numbers it printed (malloc'd) and
 * the header in *header. */
static double *run_build(const Model *m, const char *real, const char *cc,
                         int *count, char **header)
{
    char *dir = tu_tmpdir(), *err = NULL, *out = NULL;
    char cwd[4096];
    ck_assert_ptr_nonnull(getcwd(cwd, sizeof cwd));
    char *model = m->path ? tu_format("%s/%s", cwd, m->path)
                          : tu_format("%s.dvs", m->name);
    if (!m->path)
        tu_write_in(dir, model, m->text);
    int rc = tu_run_dervish(dir, NULL, &err, "build --real %s --emit "
                            "value,gradient,tangent,hessvec %s -o %s.c '%s'",
                            real, m->options, m->name, model);
    ck_assert_msg(rc == 0 && err && !err[0], "build %s (%s): %d\n%s",
                  m->name, real, rc, err ? err : "");
    free(err);
    char *src = driver_source(m, real);
    tu_write_in(dir, "driver.c", src);
    free(src);
    int is_float = strcmp(real, "float") == 0;
    char *cmd = tu_format("cd '%s' && %s %s -O1 -o driver driver.c %s.c -lm "
                          "2>&1 && ./driver", dir, cc,
                          is_float ? FLOAT_FLAGS : DOUBLE_FLAGS, m->name);
    rc = tu_run(cmd, &out, NULL);
    ck_assert_msg(rc == 0, "%s %s (%s): status %d\n%s", cc, m->name, real, rc,
                  out ? out : "");
    free(cmd);
    char *h = tu_format("%s.h", m->name);
    *header = tu_read_in(dir, h);
    free(h);
    size_t cap = 64, n = 0;
    double *v = malloc(cap * sizeof *v);
    for (char *at = out, *end;; at = end) {
        double x = strtod(at, &end);
        if (end == at)
            break;
        if (n == cap)
            v = realloc(v, (cap *= 2) * sizeof *v);
        ck_assert_ptr_nonnull(v);
        v[n++] = x;
    }
    *count = (int)n;
    free(out);
    free(model);
    tu_rmdir(dir);
    free(dir);
    return v;
}

static double max_abs(const double *v, int n)
{
    double m = 0.0;
    for (int i = 0; i < n; i++)
        m = fmax(m, fabs(v[i]));
    return m;
}

static int checks;

static void expect_near(const Model *m, const char *cc, int k,
                        const char *what, double got, double want,
                        double scale)
{
    double tol = TOL * fmax(1.0, scale);
    checks++;
    ck_assert_msg(isfinite(want), "%s, point %d: double %s is %g", m->name,
                  k, what, want);
    ck_assert_msg(fabs(got - want) <= tol,
                  "%s %s (%s), point %d: float %s = %.9g, double %.17g "
                  "(tol %.3g)", m->name, m->options, cc, k, what, got, want,
                  tol);
}

/* The float build's results against the double build's at every point. */
static void compare(const Model *m, const char *cc)
{
    int nd, nf;
    char *hd, *hf;
    double *d = run_build(m, "double", cc, &nd, &hd);
    double *f = run_build(m, "float", cc, &nf, &hf);
    /* the header declares float members, counts and functions only */
    ck_assert_msg(!strstr(hf, "double"), "%s: float header says double:\n%s",
                  m->name, hf);
    ck_assert_ptr_nonnull(strstr(hf, "floats in"));
    char *fn = tu_format("float %s_gradient(", m->name);
    ck_assert_ptr_nonnull(strstr(hf, fn));
    free(fn);
    ck_assert_int_eq(nd, nf);
    ck_assert_int_eq(nd % NPTS, 0);
    int row = nd / NPTS, np = (row - 6) / 3;
    ck_assert_int_eq(row, 6 + 3 * np);
    for (int k = 0; k < NPTS; k++) {
        const double *rd = d + k * row, *rf = f + k * row;
        const double *gd = rd + 6, *dir = rd + 6 + np, *hvd = rd + 6 + 2 * np;
        /* the same points and directions (%.9g reads back as the same
         * float), and the same work size */
        for (int j = 0; j < np; j++)
            ck_assert((float)rf[6 + np + j] == (float)dir[j]);
        ck_assert(rf[5] == rd[5]);
        ck_assert(m->uses_work < 2 || rd[5] > 0);
        double value_scale = fabs(rd[0]), tangent_scale = 0.0;
        for (int j = 0; j < np; j++)
            tangent_scale += fabs(gd[j] * dir[j]);
        for (int i = 0; i < 4; i++)
            expect_near(m, cc, k, "value/gradient/tangent/hessvec return",
                        rf[i], rd[0], value_scale);
        expect_near(m, cc, k, "tangent", rf[4], rd[4], tangent_scale);
        for (int j = 0; j < np; j++) {
            expect_near(m, cc, k, "gradient", rf[6 + j], gd[j],
                        max_abs(gd, np));
            expect_near(m, cc, k, "hessvec", rf[6 + 2 * np + j], hvd[j],
                        max_abs(hvd, np));
        }
    }
    free(d);
    free(f);
    free(hd);
    free(hf);
}

START_TEST(float_matches_double)
{
    const Model *m = &models[_i];
    int ran = 0;
    checks = 0;
    for (size_t c = 0; c < sizeof tu_compilers / sizeof *tu_compilers; c++)
        if (tu_have(tu_compilers[c])) {
            compare(m, tu_compilers[c]);
            ran++;
        }
    ck_assert_msg(ran > 0, "no C compiler found");
    if (getenv("DVS_E2E_REPORT"))
        printf("%s %s: %d comparisons\n", m->name, m->options, checks);
}
END_TEST

/* ---------------------------------------------------- runtime helpers */

/* |f - d| <= ulps * FLT_EPSILON * scale (scale at least FLT_MIN), or
 * both NaN, or equal. */
static void expect_ulps(const char *what, float x, float y, double f,
                        double d, double ulps, double scale)
{
    if (isinf((float)d))
        d = (float)d;   /* beyond float's range: the float result overflows */
    if (isnan(d) || isinf(d) || f == d) {
        ck_assert_msg(f == d || (isnan(f) && isnan(d)),
                      "%s(%.9g, %.9g): float %.9g, double %.17g", what, x, y,
                      f, d);
        return;
    }
    scale = fmax(scale, FLT_MIN);   /* subnormal results: absolute */
    ck_assert_msg(fabs(f - d) <= ulps * FLT_EPSILON * scale,
                  "%s(%.9g, %.9g): float %.9g, double %.17g (%.1f eps)", what,
                  x, y, f, d, fabs(f - d) / (FLT_EPSILON * scale));
}

/* 200,000 floats over [-30, 30] and further ones out to +-3e38, with the
 * special values; each helper's float form is compared with its double
 * form at the same float.  The double results are exact to ~1e-15, so
 * the difference is the float helper's own error.  Bounds, in float eps
 * (2^-23) relative to the result: 4 for the short helpers (measured <= 1.4),
 * 8 for trigamma (measured 3.1), and 24 for digamma relative to the size
 * of its terms (measured 16, at x near 1 where the recurrence's sum and
 * the series cancel to a third, and near the roots for x < 0; the double
 * helper states the same bound, 23 eps, for itself). */
START_TEST(float_helpers_match_double)
{
    static const float special[] = {0.0f, -0.0f, 1.0f, -1.0f, 0.5f, -2.0f,
                                    1.4616321f, 1e-30f, -1e-30f, 1e30f,
                                    -1e30f, FLT_MAX, -FLT_MAX, FLT_MIN,
                                    HUGE_VALF, -HUGE_VALF, NAN};
    int n = 200000 + (int)(sizeof special / sizeof *special) + 2 * 60;
    for (int i = 0; i < n; i++) {
        float x;
        if (i < 200000)
            x = (float)(-30.0 + 60.0 * i / 200000.0 + 1e-7);
        else if (i < 200000 + 120)
            x = (i % 2 ? -1.0f : 1.0f) * (float)pow(10.0, (i - 200000) / 2 - 29);
        else
            x = special[i - 200120];
        float y = (float)(1.3 * cos(i * 0.37)), s = ldexpf(1.0f, i % 280 - 140);
        float lo = (float)(-0.5 + sin(i * 0.11)), hi = lo + 0.25f;
        double d = dvs_digamma(x);
        double terms = x < 0 && !isinf(x)
            ? fabs(dvs_digamma(1.0 - x)) + fabs(d - dvs_digamma(1.0 - x))
            : fabs(d);
        expect_ulps("digamma", x, 0, dvs_digamma_f(x), d, 24, terms);
        d = dvs_trigamma(x);
        expect_ulps("trigamma", x, 0, dvs_trigamma_f(x), d, 8, fabs(d));
        d = dvs_sigmoid(x);
        expect_ulps("sigmoid", x, 0, dvs_sigmoid_f(x), d, 4, fabs(d));
        d = dvs_softplus(x);
        expect_ulps("softplus", x, 0, dvs_softplus_f(x), d, 4, fabs(d));
        if (isfinite(x * s)) {
            d = dvs_hypot_slope(x * s, y * s);
            expect_ulps("hypot_slope", x * s, y * s,
                        dvs_hypot_slope_f(x * s, y * s), d, 4, fabs(d));
        }
        /* the exact helpers agree bit for bit (signs of zero included) */
        float got[5] = {dvs_clamp_f(x, lo, hi), dvs_max2_f(x, y),
                        dvs_min2_f(x, y), dvs_relu_f(x), dvs_sign_f(x)};
        double want[5] = {dvs_clamp(x, lo, hi), dvs_max2(x, y),
                          dvs_min2(x, y), dvs_relu(x), dvs_sign(x)};
        for (int k = 0; k < 5; k++)
            ck_assert_msg((got[k] == want[k] &&
                           !signbit(got[k]) == !signbit(want[k])) ||
                          (isnan(got[k]) && isnan(want[k])),
                          "exact helper %d at %.9g: %.9g, %.17g", k, x,
                          got[k], want[k]);
    }
}
END_TEST

int main(void)
{
    Suite *s = suite_create("float");
    TU_ADD_TESTS(tu_case(s, "helpers", 60), float_helpers_match_double);
    TCase *tc = tu_case(s, "builds", 120);
    tcase_add_loop_test(tc, float_matches_double, 0,
                        (int)(sizeof models / sizeof *models));
    return tu_main(s);
}
