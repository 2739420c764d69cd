/* test_published.c - test functions of Moré, Garbow & Hillstrom (1981),
 * "Testing Unconstrained Optimization Software", ACM TOMS 7(1):17-41,
 * written as models, built by dervish and run from C compiled by gcc and
 * clang: f and its gradient at the paper's standard starting point x0, and
 * a zero gradient and the published minimum f* at the published minimiser.
 *
 * References for f(x0) and grad f(x0): the value as published (see each
 * problem), closed-form gradients written here from the paper's
 * definitions, and mpmath values in e2e/mgh_refs.h (made by
 * tests/gen_mgh_refs.py). */
#include "testutil.h"

#include <math.h>

#include "e2e/mgh_refs.h"

#define MAXN 10

/* Relative tolerance against the references: f and the gradient are a few
 * dozen correctly rounded operations on moderate numbers. */
#define REL 1e-13

/* At x* the residuals vanish in exact arithmetic and, for these x*, also in
 * double arithmetic; the gradient must be zero to rounding. */
#define XSTAR_TOL 1e-15

#define COUNT(a) (sizeof(a) / sizeof((a)[0]))

/* f and its gradient from the closed form, in the paper's variable order. */
typedef void (*ClosedForm)(const double *x, double *f, double *g);

typedef struct Problem {
    const char *name;           /* the model's name */
    int number;                 /* its number in the paper */
    const char *model;
    int n;
    const int *order;           /* flat param k is x[order[k]] (NULL: k) */
    const char *input;          /* initializer of the input struct, or NULL */
    double x0[MAXN], xstar[MAXN];   /* in the paper's variable order */
    double f0_published, f0_published_tol;
    double fstar;               /* published minimum value */
    double f0_mp;
    const double *g0_mp;
    ClosedForm closed_form;
} Problem;

/* ----------------------------------------------------------- the problems */

/* 1. Rosenbrock: f1 = 10 (x2 - x1^2), f2 = 1 - x1. */
static const char rosenbrock_model[] =
    "model rosenbrock\n"
    "# Rosenbrock's function (More, Garbow & Hillstrom 1981, problem 1)\n"
    "param x1, x2\n"
    "f1 = 10 * (x2 - x1^2)\n"
    "f2 = 1 - x1\n"
    "f = f1^2 + f2^2\n"
    "output f\n";

static void rosenbrock_closed(const double *x, double *f, double *g)
{
    const double f1 = 10 * (x[1] - x[0] * x[0]), f2 = 1 - x[0];
    *f = f1 * f1 + f2 * f2;
    g[0] = 2 * f1 * (-20 * x[0]) - 2 * f2;
    g[1] = 2 * f1 * 10;
}

/* 2. Freudenstein and Roth. */
static const char freudenstein_roth_model[] =
    "model freudenstein_roth\n"
    "# Freudenstein and Roth function (MGH 1981, problem 2)\n"
    "param x1, x2\n"
    "f1 = -13 + x1 + ((5 - x2) * x2 - 2) * x2\n"
    "f2 = -29 + x1 + ((x2 + 1) * x2 - 14) * x2\n"
    "f = f1^2 + f2^2\n"
    "output f\n";

static void freudenstein_roth_closed(const double *x, double *f, double *g)
{
    const double u = x[1];
    const double f1 = -13 + x[0] + ((5 - u) * u - 2) * u;
    const double f2 = -29 + x[0] + ((u + 1) * u - 14) * u;
    *f = f1 * f1 + f2 * f2;
    g[0] = 2 * f1 + 2 * f2;
    g[1] = 2 * f1 * (10 * u - 3 * u * u - 2) + 2 * f2 * (3 * u * u + 2 * u - 14);
}

/* 4. Brown badly scaled: residuals of size 1e6 and 1e-6 together. */
static const char brown_badly_scaled_model[] =
    "model brown_badly_scaled\n"
    "# Brown badly scaled function (MGH 1981, problem 4)\n"
    "param x1, x2\n"
    "f1 = x1 - 1e6\n"
    "f2 = x2 - 2e-6\n"
    "f3 = x1 * x2 - 2\n"
    "f = f1^2 + f2^2 + f3^2\n"
    "output f\n";

static void brown_badly_scaled_closed(const double *x, double *f, double *g)
{
    const double f1 = x[0] - 1e6, f2 = x[1] - 2e-6, f3 = x[0] * x[1] - 2;
    *f = f1 * f1 + f2 * f2 + f3 * f3;
    g[0] = 2 * f1 + 2 * f3 * x[1];
    g[1] = 2 * f2 + 2 * f3 * x[0];
}

/* 5. Beale: f_i = y_i - x1 (1 - x2^i), i = 1..3, in index notation with
 * the exponents i supplied as data. */
static const char beale_model[] =
    "model beale\n"
    "# Beale function (MGH 1981, problem 5)\n"
    "input y[3], e[3]     # y = (1.5, 2.25, 2.625), e = (1, 2, 3)\n"
    "param x1, x2\n"
    "r[i] = y[i] - x1 * (1 - x2^e[i])\n"
    "f = sum(i: r[i]^2)\n"
    "output f\n";

static void beale_closed(const double *x, double *f, double *g)
{
    static const double y[3] = {1.5, 2.25, 2.625};
    *f = g[0] = g[1] = 0;
    for (int i = 1; i <= 3; i++) {
        const double r = y[i - 1] - x[0] * (1 - pow(x[1], i));
        *f += r * r;
        g[0] += 2 * r * -(1 - pow(x[1], i));
        g[1] += 2 * r * x[0] * i * pow(x[1], i - 1);
    }
}

/* 7. Helical valley: theta(x1, x2) = atan(x2/x1) / 2pi, plus 1/2 when
 * x1 < 0 (a condition in the model). */
static const char helical_valley_model[] =
    "model helical_valley\n"
    "# Helical valley function (MGH 1981, problem 7)\n"
    "const PI = 3.14159265358979323846\n"
    "param x1, x2, x3\n"
    "theta = x1 > 0 ? atan(x2 / x1) / (2 * PI) : atan(x2 / x1) / (2 * PI) + 0.5\n"
    "f1 = 10 * (x3 - 10 * theta)\n"
    "f2 = 10 * (sqrt(x1^2 + x2^2) - 1)\n"
    "f = f1^2 + f2^2 + x3^2\n"
    "output f\n";

#define PI 3.14159265358979323846

static void helical_valley_closed(const double *x, double *f, double *g)
{
    const double r2 = x[0] * x[0] + x[1] * x[1], r = sqrt(r2);
    const double theta = atan(x[1] / x[0]) / (2 * PI) + (x[0] < 0 ? 0.5 : 0);
    const double f1 = 10 * (x[2] - 10 * theta), f2 = 10 * (r - 1);
    /* d theta/dx1 = -x2 / (2 pi r^2), d theta/dx2 = x1 / (2 pi r^2) */
    const double t1 = -x[1] / (2 * PI * r2), t2 = x[0] / (2 * PI * r2);
    *f = f1 * f1 + f2 * f2 + x[2] * x[2];
    g[0] = 2 * f1 * (-100 * t1) + 2 * f2 * (10 * x[0] / r);
    g[1] = 2 * f1 * (-100 * t2) + 2 * f2 * (10 * x[1] / r);
    g[2] = 2 * f1 * 10 + 2 * x[2];
}

/* 12. Box three-dimensional, m = 10: t_i = 0.1 i (each the double nearest
 * the decimal 0.1, 0.2, ..., 1.0). */
static const char box_3d_model[] =
    "model box_3d\n"
    "# Box three-dimensional function (MGH 1981, problem 12), m = 10\n"
    "const M = 10\n"
    "input t[M]\n"
    "param x1, x2, x3\n"
    "r[i] = exp(-t[i] * x1) - exp(-t[i] * x2) - x3 * (exp(-t[i]) - exp(-10 * t[i]))\n"
    "f = sum(i: r[i]^2)\n"
    "output f\n";

static const double box_t[10] = {0.1, 0.2, 0.3, 0.4, 0.5,
                                 0.6, 0.7, 0.8, 0.9, 1.0};

static void box_3d_closed(const double *x, double *f, double *g)
{
    *f = g[0] = g[1] = g[2] = 0;
    for (int i = 0; i < 10; i++) {
        const double t = box_t[i];
        const double c = exp(-t) - exp(-10 * t);
        const double r = exp(-t * x[0]) - exp(-t * x[1]) - x[2] * c;
        *f += r * r;
        g[0] += 2 * r * (-t * exp(-t * x[0]));
        g[1] += 2 * r * (t * exp(-t * x[1]));
        g[2] += 2 * r * -c;
    }
}

/* 13. Powell singular: the Hessian is singular at x* = 0. */
static const char powell_singular_model[] =
    "model powell_singular\n"
    "# Powell singular function (MGH 1981, problem 13)\n"
    "param x1, x2, x3, x4\n"
    "f1 = x1 + 10 * x2\n"
    "f2 = sqrt(5) * (x3 - x4)\n"
    "f3 = (x2 - 2 * x3)^2\n"
    "f4 = sqrt(10) * (x1 - x4)^2\n"
    "f = f1^2 + f2^2 + f3^2 + f4^2\n"
    "output f\n";

static void powell_singular_closed(const double *x, double *f, double *g)
{
    const double a = x[0] + 10 * x[1], b = x[2] - x[3];
    const double c = x[1] - 2 * x[2], d = x[0] - x[3];
    *f = a * a + 5 * b * b + pow(c, 4) + 10 * pow(d, 4);
    g[0] = 2 * a + 40 * d * d * d;
    g[1] = 20 * a + 4 * c * c * c;
    g[2] = 10 * b - 8 * c * c * c;
    g[3] = -10 * b - 40 * d * d * d;
}

/* 14. Wood: the pairs (x1, x2) and (x3, x4) share their form, so they are
 * arrays lo = (x1, x3), hi = (x2, x4) with weights c = (10^2, sqrt(90)^2);
 * f5^2 = 10 (x2 + x4 - 2)^2 and f6^2 = (x2 - x4)^2 / 10, with s = (1, -1)
 * turning x2 - x4 into a sum. */
static const char wood_model[] =
    "model wood\n"
    "# Wood function (MGH 1981, problem 14)\n"
    "input c[2], s[2]\n"
    "param lo[2], hi[2]\n"
    "pairs = sum(k: c[k] * (hi[k] - lo[k]^2)^2 + (1 - lo[k])^2)\n"
    "f = pairs + 10 * (sum(k: hi[k]) - 2)^2 + 0.1 * sum(k: s[k] * hi[k])^2\n"
    "output f\n";

static const int wood_order[4] = {0, 2, 1, 3};

static void wood_closed(const double *x, double *f, double *g)
{
    const double a = x[1] - x[0] * x[0], b = x[3] - x[2] * x[2];
    const double u = x[1] + x[3] - 2, v = x[1] - x[3];
    *f = 100 * a * a + (1 - x[0]) * (1 - x[0]) + 90 * b * b +
         (1 - x[2]) * (1 - x[2]) + 10 * u * u + 0.1 * v * v;
    g[0] = -400 * x[0] * a - 2 * (1 - x[0]);
    g[1] = 200 * a + 20 * u + 0.2 * v;
    g[2] = -360 * x[2] * b - 2 * (1 - x[2]);
    g[3] = 180 * b + 20 * u - 0.2 * v;
}

/* 21. Extended Rosenbrock, n = 10: odd = (x1, x3, ...), even = (x2, x4, ...). */
static const char extended_rosenbrock_model[] =
    "model extended_rosenbrock\n"
    "# Extended Rosenbrock function (MGH 1981, problem 21), n = 10\n"
    "const HALF = 5\n"
    "param odd[HALF], even[HALF]\n"
    "f1[i] = 10 * (even[i] - odd[i]^2)\n"
    "f2 = 1 - odd\n"
    "f = sum(i: f1[i]^2 + f2[i]^2)\n"
    "output f\n";

static const int extended_rosenbrock_order[10] = {0, 2, 4, 6, 8,
                                                  1, 3, 5, 7, 9};

static void extended_rosenbrock_closed(const double *x, double *f, double *g)
{
    *f = 0;
    for (int i = 0; i < 10; i += 2) {
        double pf;
        rosenbrock_closed(x + i, &pf, g + i);
        *f += pf;
    }
}

/* The value of f(x0) as published is recalled from memory (these values are
 * quoted throughout the literature that uses this test set; the paper
 * itself gives x0, x* and f*); each is also exact from the definition at the
 * given x0, which the mpmath value confirms. Box 3-D's is quoted to six
 * digits, so it is compared to that precision. Every f* here is 0 (paper). */
static const Problem problems[] = {
    {"rosenbrock", 1, rosenbrock_model, 2, NULL, NULL,
     {-1.2, 1}, {1, 1}, 24.2, 24.2 * REL, 0, mp_rosenbrock_f0,
     mp_rosenbrock_g0, rosenbrock_closed},
    {"freudenstein_roth", 2, freudenstein_roth_model, 2, NULL, NULL,
     {0.5, -2}, {5, 4}, 400.5, 0, 0, mp_freudenstein_roth_f0,
     mp_freudenstein_roth_g0, freudenstein_roth_closed},
    /* f(x0) = (1 - 10^6)^2 + (1 - 2e-6)^2 + 1 = 999998000002.999996 (by
     * hand; rounds to 999998000003 in double) */
    {"brown_badly_scaled", 4, brown_badly_scaled_model, 2, NULL, NULL,
     {1, 1}, {1e6, 2e-6}, 999998000002.999996, 999998000003.0 * REL, 0,
     mp_brown_badly_scaled_f0, mp_brown_badly_scaled_g0,
     brown_badly_scaled_closed},
    {"beale", 5, beale_model, 2, NULL, "{{1.5, 2.25, 2.625}, {1, 2, 3}}",
     {1, 1}, {3, 0.5}, 14.203125, 0, 0, mp_beale_f0, mp_beale_g0,
     beale_closed},
    {"helical_valley", 7, helical_valley_model, 3, NULL, NULL,
     {-1, 0, 0}, {1, 0, 0}, 2500, 0, 0, mp_helical_valley_f0,
     mp_helical_valley_g0, helical_valley_closed},
    {"box_3d", 12, box_3d_model, 3, NULL,
     "{{0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 1.0}}",
     {0, 10, 20}, {1, 10, 1}, 1031.15, 0.005, 0, mp_box_3d_f0, mp_box_3d_g0,
     box_3d_closed},
    {"powell_singular", 13, powell_singular_model, 4, NULL, NULL,
     {3, -1, 0, 1}, {0, 0, 0, 0}, 215, 215 * REL, 0, mp_powell_singular_f0,
     mp_powell_singular_g0, powell_singular_closed},
    {"wood", 14, wood_model, 4, wood_order, "{{100, 90}, {1, -1}}",
     {-3, -1, -3, -1}, {1, 1, 1, 1}, 19192, 0, 0, mp_wood_f0, mp_wood_g0,
     wood_closed},
    /* f(x0) = 5 times Rosenbrock's 24.2 */
    {"extended_rosenbrock", 21, extended_rosenbrock_model, 10,
     extended_rosenbrock_order, NULL,
     {-1.2, 1, -1.2, 1, -1.2, 1, -1.2, 1, -1.2, 1}, {1, 1, 1, 1, 1, 1, 1, 1, 1, 1},
     121, 121 * REL, 0, mp_extended_rosenbrock_f0, mp_extended_rosenbrock_g0,
     extended_rosenbrock_closed},
};

/* --------------------------------------------------------------- harness */

static int var_of(const Problem *p, int k)
{
    return p->order ? p->order[k] : k;
}

/* The driver: value and gradient at x0 and at x*, one line each with
 * %.17g: value, the gradient's return value, the gradient in flat param
 * order (pre-filled with NaN, so an entry left unwritten shows). */
static char *driver_source(const Problem *p)
{
    const char *in = p->input ? ", &in" : "";
    char *pts = tu_format("%s", "");
    for (int point = 0; point < 2; point++) {
        const double *x = point ? p->xstar : p->x0;
        char *row = tu_format("%s", "");
        for (int k = 0; k < p->n; k++) {
            char *next = tu_format("%s%s%.17g", row, k ? ", " : "",
                                   x[var_of(p, k)]);
            free(row);
            row = next;
        }
        char *next = tu_format("%s    {%s},\n", pts, row);
        free(pts);
        free(row);
        pts = next;
    }
    char *input = p->input ? tu_format("    static const %s_input in = %s;\n",
                                       p->name, p->input)
                           : tu_format("%s", "");
    char *src = tu_format(
        "#include <math.h>\n#include <stdio.h>\n#include \"%s.h\"\n\n"
        "static const double pts[2][%d] = {\n%s};\n\n"
        "int main(void)\n{\n%s"
        "    for (int k = 0; k < 2; k++) {\n"
        "        %s_param_flat x, g;\n"
        "        for (int i = 0; i < %d; i++) {\n"
        "            x.v[i] = pts[k][i];\n"
        "            g.v[i] = nan(\"\");\n"
        "        }\n"
        "        double v = %s_value(&x.p%s);\n"
        "        double r = %s_gradient(&x.p%s, &g.p);\n"
        "        printf(\"%%.17g %%.17g\", v, r);\n"
        "        for (int i = 0; i < %d; i++)\n"
        "            printf(\" %%.17g\", g.v[i]);\n"
        "        printf(\"\\n\");\n"
        "    }\n"
        "    return 0;\n}\n",
        p->name, p->n, pts, input, p->name, p->n, p->name, in, p->name, in,
        p->n);
    free(pts);
    free(input);
    return src;
}

/* Counts the comparisons made and the failed ones, listing each failure. */
typedef struct Tally {
    const Problem *p;
    const char *cc;
    int checks;
    int bad;
} Tally;

static void expect_near(Tally *t, const char *what, double got, double want,
                        double tol)
{
    t->checks++;
    if (fabs(got - want) <= tol)    /* false for NaN */
        return;
    t->bad++;
    fprintf(stderr, "MGH %d %s (%s): %s = %.17g, want %.17g (tol %.3g)\n",
            t->p->number, t->p->name, t->cc, what, got, want, tol);
}

/* Parses the driver's two rows and checks them. */
static void check_output(Tally *t, const char *out)
{
    const Problem *p = t->p;
    double row[2][MAXN + 2];
    const char *at = out;
    for (int point = 0; point < 2; point++)
        for (int i = 0; i < p->n + 2; i++) {
            char *end;
            row[point][i] = strtod(at, &end);
            ck_assert_msg(end != at, "%s: short driver output:\n%s", p->name,
                          out);
            at = end;
        }

    double f, g[MAXN], gscale = 0;
    p->closed_form(p->x0, &f, g);
    for (int i = 0; i < p->n; i++)
        gscale = fmax(gscale, fabs(g[i]));
    const double *r0 = row[0], *rs = row[1];
    expect_near(t, "gradient's return - value at x0", r0[1] - r0[0], 0, 0);
    expect_near(t, "f(x0) vs published", r0[0], p->f0_published,
                p->f0_published_tol);
    expect_near(t, "f(x0) vs mpmath", r0[0], p->f0_mp, REL * fabs(p->f0_mp));
    expect_near(t, "f(x0) vs closed form", r0[0], f, REL * fabs(f));
    for (int k = 0; k < p->n; k++) {
        const int v = var_of(p, k);
        char *what = tu_format("df/dx%d at x0 vs closed form", v + 1);
        expect_near(t, what, r0[2 + k], g[v], REL * gscale);
        free(what);
        what = tu_format("df/dx%d at x0 vs mpmath", v + 1);
        expect_near(t, what, r0[2 + k], p->g0_mp[v], REL * gscale);
        free(what);
    }
    expect_near(t, "gradient's return - value at x*", rs[1] - rs[0], 0, 0);
    expect_near(t, "f(x*) vs published f*", rs[0], p->fstar, 0);
    for (int k = 0; k < p->n; k++) {
        char *what = tu_format("df/dx%d at x*", var_of(p, k) + 1);
        expect_near(t, what, rs[2 + k], 0, XSTAR_TOL);
        free(what);
    }
}

START_TEST(published_problem)
{
    const Problem *p = &problems[_i];
    char *dir = tu_tmpdir(), *err = NULL;
    int rc = tu_build_model(dir, p->name, p->model, &err);
    ck_assert_msg(rc == 0 && err && err[0] == '\0',
                  "dervish build %s: status %d\n%s", p->name, rc,
                  err ? err : "");
    free(err);
    char *path = tu_format("%s/driver.c", dir), *src = driver_source(p);
    tu_write(path, src);
    free(path);
    free(src);
    Tally t = {p, NULL, 0, 0};
    int compilers = 0;
    for (size_t c = 0; c < COUNT(tu_compilers); c++) {
        if (!tu_have(tu_compilers[c]))
            continue;
        compilers++;
        t.cc = tu_compilers[c];
        char *out = tu_compile_and_run(dir, p->name, t.cc);
        check_output(&t, out);
        free(out);
    }
    ck_assert_msg(compilers > 0, "no C compiler found");
    tu_rmdir(dir);
    free(dir);
    if (getenv("DVS_E2E_REPORT")) {
        printf("MGH %d %s: %d comparisons, %d failed\n", p->number, p->name,
               t.checks, t.bad);
        fflush(stdout);     /* a failed assertion ends the forked test */
    }
    ck_assert_msg(t.bad == 0, "MGH %d %s: %d of %d comparisons failed "
                  "(listed above)", p->number, p->name, t.bad, t.checks);
}
END_TEST

static Suite *published_suite(void)
{
    Suite *s = suite_create("published");
    TCase *tc = tcase_create("published");
    tcase_set_timeout(tc, 60);
    tcase_add_loop_test(tc, published_problem, 0, (int)COUNT(problems));
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return tu_main(published_suite());
}
