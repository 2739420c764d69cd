/* test_eval.c - the IR evaluator (compiler/eval.c): values and gradients of
 * small models against closed-form derivatives, the complex step op by op,
 * models with runtime sizes (0 included), and agreement with the emitted C
 * built by gcc and clang.
 *
 * Derivative formulas are the elementary ones tabulated in Abramowitz and
 * Stegun (1964), chapter 4 (elementary functions), 6.3 (psi) and 7.1 (erf);
 * section numbers are recalled from memory and named where they matter. */
#include "testutil.h"

#include "dervish.h"
#include "eval.h"

#include <math.h>

/* ------------------------------------------------------------ helpers */

#define SET(m, name, ...)                                                      \
    do {                                                                       \
        static const double v_[] = {__VA_ARGS__};                              \
        tu_model_set((m), (name), v_, sizeof v_ / sizeof v_[0]);             \
    } while (0)

/* |got - want| <= tol * max(1, |want|): relative for large values and
 * absolute near zero, where a relative error means nothing. */
static void assert_near(double got, double want, double tol, const char *what)
{
    ck_assert_msg(fabs(got - want) <= tol * fmax(1.0, fabs(want)),
                  "%s: got %.17g, want %.17g", what, got, want);
}

/* The gradient (malloc'd) and value of the model at its current values. */
static double *gradient(TuModel *m, double *value)
{
    long n = eval_param_count(m->ev);
    double *g = calloc((size_t)n, sizeof *g);
    ck_assert_ptr_nonnull(g);
    *value = eval_gradient(m->ev, g);
    return g;
}

/* ------------------------------------------------------ whole models */

START_TEST(product_and_sine)
{
    TuModel *m = tu_model("param a, b\ny = a * b + sin(a)\noutput y\n");
    SET(m, "a", 0.7);
    SET(m, "b", -1.3);
    double y, *g = gradient(m, &y);
    /* d/da (ab + sin a) = b + cos a (A&S 4.3.105); d/db = a */
    assert_near(y, 0.7 * -1.3 + sin(0.7), 1e-15, "value");
    assert_near(eval_value(m->ev), y, 0, "value without gradient");
    assert_near(g[0], -1.3 + cos(0.7), 1e-15, "dy/da");
    assert_near(g[1], 0.7, 0, "dy/db");
    free(g);
    tu_model_free(m);
}
END_TEST

/* A one-hidden-layer network in index notation:
 * y = sum_j v_j tanh(sum_i W_ji s_i + b_j) + c, so with h_j the hidden
 * values and tanh' = 1 - tanh^2 (A&S 4.5.? recalled; it follows from
 * cosh^2 - sinh^2 = 1): dy/dv_j = h_j, dy/db_j = v_j (1 - h_j^2),
 * dy/dW_ji = v_j (1 - h_j^2) s_i, dy/dc = 1. */
START_TEST(network_in_index_notation)
{
    TuModel *m = tu_model("input s[3]\n"
                         "param W[2,3], b[2], v[2], c\n"
                         "z[j] = sum(i: W[j,i] * s[i]) + b[j]\n"
                         "h = tanh(z)\n"
                         "y = sum(j: v[j] * h[j]) + c\n"
                         "output y\n");
    static const double s[3] = {0.5, -1.0, 2.0};
    static const double W[2][3] = {{0.1, 0.2, -0.3}, {-0.4, 0.5, 0.25}};
    static const double b[2] = {0.05, -0.1}, v[2] = {1.5, -0.5};
    tu_model_set(m, "s", s, 3);
    tu_model_set(m, "W", &W[0][0], 6);
    tu_model_set(m, "b", b, 2);
    tu_model_set(m, "v", v, 2);
    SET(m, "c", 0.25);
    double y, *g = gradient(m, &y);
    double want = 0.25;
    for (int j = 0; j < 2; j++) {
        double z = b[j];
        for (int i = 0; i < 3; i++)
            z += W[j][i] * s[i];
        double h = tanh(z);
        want += v[j] * h;
        for (int i = 0; i < 3; i++)
            assert_near(g[3 * j + i], v[j] * (1 - h * h) * s[i], 1e-15,
                        "dy/dW");
        assert_near(g[6 + j], v[j] * (1 - h * h), 1e-15, "dy/db");
        assert_near(g[8 + j], h, 1e-15, "dy/dv");
    }
    assert_near(g[10], 1, 0, "dy/dc");
    assert_near(y, want, 1e-15, "value");
    free(g);
    tu_model_free(m);
}
END_TEST

/* max and min reductions send the adjoint to their first winner: with
 * x = (1, 3, 3, 2) and w = 1, w_i x_i peaks at i = 1 and 2 and w_i - x_i
 * bottoms out at i = 1 and 2; both go to i = 1.  So y = 3 + (-2) = 1 and
 * dy/dw = (0, x_1 + 1, 0, 0) = (0, 4, 0, 0). */
START_TEST(max_and_min_go_to_the_first_winner)
{
    TuModel *m = tu_model("input x[4]\nparam w[4]\n"
                         "y = max(i: w[i] * x[i]) + min(i: w[i] - x[i])\n"
                         "output y\n");
    SET(m, "x", 1, 3, 3, 2);
    SET(m, "w", 1, 1, 1, 1);
    double y, *g = gradient(m, &y);
    assert_near(y, 1, 0, "value");
    static const double want[4] = {0, 4, 0, 0};
    for (int i = 0; i < 4; i++)
        assert_near(g[i], want[i], 0, "dy/dw");
    free(g);
    tu_model_free(m);
}
END_TEST

/* max over two indices: the winner's flat position is row-major, so the
 * adjoint lands on the right element of a 2-D array. */
START_TEST(max_over_two_indices)
{
    TuModel *m = tu_model("param A[2,3]\ny = max(i, j: A[i,j] * A[i,j])\n"
                         "output y\n");
    SET(m, "A", 0.1, -0.2, 0.3, 0.4, -0.9, 0.5);
    double y, *g = gradient(m, &y);
    assert_near(y, 0.81, 1e-15, "value");
    for (int k = 0; k < 6; k++)     /* d(A^2)/dA = 2A at A[1][1] only */
        assert_near(g[k], k == 4 ? -1.8 : 0, 1e-15, "dy/dA");
    free(g);
    tu_model_free(m);
}
END_TEST

/* logsumexp: y = log sum e^{a_i}; dy/da_i = e^{a_i} / sum e^{a_k}, the
 * softmax weights (differentiate the log of a sum). */
START_TEST(logsumexp_gives_softmax)
{
    TuModel *m = tu_model("param a[3]\ny = logsumexp(i: a[i])\noutput y\n");
    SET(m, "a", 1, 2, 3);
    double y, *g = gradient(m, &y);
    double total = exp(1) + exp(2) + exp(3);
    assert_near(y, log(total), 1e-15, "value");
    for (int i = 0; i < 3; i++)
        assert_near(g[i], exp(i + 1) / total, 1e-15, "softmax weight");
    /* far apart values: the max shift keeps it finite */
    SET(m, "a", 1000, 1001, -1000);
    free(g);
    g = gradient(m, &y);
    assert_near(y, 1001 + log1p(exp(-1)), 1e-15, "shifted value");
    /* the weight exp(a - y) inherits the rounding of y near 1001, whose
     * unit in the last place is 1.1e-13 */
    assert_near(g[0], 1 / (1 + exp(1)), 2e-13, "shifted weight");
    assert_near(g[2], 0, 1e-300, "negligible weight");
    free(g);
    tu_model_free(m);
}
END_TEST

/* The derivative of c ? p : q flows only into the branch taken. */
START_TEST(conditions_pick_a_branch)
{
    TuModel *m = tu_model("param a, b\n"
                         "y = a > b && !(a > 5) ? a * a : b * b * b\n"
                         "output y\n");
    SET(m, "a", 2);
    SET(m, "b", 1);
    double y, *g = gradient(m, &y);
    assert_near(y, 4, 0, "a branch");
    assert_near(g[0], 4, 0, "d(a^2)/da");
    assert_near(g[1], 0, 0, "b unused");
    free(g);
    SET(m, "a", 1);
    SET(m, "b", 2);
    g = gradient(m, &y);
    assert_near(y, 8, 0, "b branch");
    assert_near(g[0], 0, 0, "a unused");
    assert_near(g[1], 12, 0, "d(b^3)/db");
    free(g);
    tu_model_free(m);
}
END_TEST

/* Whole-array form feeding index notation:
 * y = sum_i r_i^2, r_i = sum_j e^{M_ij} x_j, so dy/dM_ij = 2 r_i e^{M_ij} x_j
 * and dy/dx_j = sum_i 2 r_i e^{M_ij}. */
START_TEST(whole_array_and_index_forms)
{
    TuModel *m = tu_model("param M[2,2], x[2]\n"
                         "E = exp(M)\n"
                         "r[i] = sum(j: E[i,j] * x[j])\n"
                         "y = sum(i: r[i] * r[i])\n"
                         "output y\n");
    static const double M[2][2] = {{0.1, -0.2}, {0.3, 0.05}};
    static const double x[2] = {1.5, -0.5};
    tu_model_set(m, "M", &M[0][0], 4);
    tu_model_set(m, "x", x, 2);
    double y, *g = gradient(m, &y);
    double r[2], want_y = 0, want_x[2] = {0, 0};
    for (int i = 0; i < 2; i++) {
        r[i] = exp(M[i][0]) * x[0] + exp(M[i][1]) * x[1];
        want_y += r[i] * r[i];
    }
    for (int i = 0; i < 2; i++)
        for (int j = 0; j < 2; j++) {
            assert_near(g[2 * i + j], 2 * r[i] * exp(M[i][j]) * x[j], 1e-15,
                        "dy/dM");
            want_x[j] += 2 * r[i] * exp(M[i][j]);
        }
    assert_near(g[4], want_x[0], 1e-15, "dy/dx0");
    assert_near(g[5], want_x[1], 1e-15, "dy/dx1");
    assert_near(y, want_y, 1e-15, "value");
    free(g);
    tu_model_free(m);
}
END_TEST

/* Rosenbrock's function, problem 1 of More, Garbow and Hillstrom (1981),
 * at its standard starting point (-1.2, 1): f = 24.2 and, from
 * f = 100 (x2 - x1^2)^2 + (1 - x1)^2 by hand,
 * grad = (-400 x1 (x2 - x1^2) - 2 (1 - x1), 200 (x2 - x1^2)) = (-215.6, -88). */
START_TEST(rosenbrock_at_the_standard_start)
{
    TuModel *m = tu_model("param x1, x2\n"
                         "f = 100 * (x2 - x1^2)^2 + (1 - x1)^2\n"
                         "output f\n");
    SET(m, "x1", -1.2);
    SET(m, "x2", 1);
    double y, *g = gradient(m, &y);
    assert_near(y, 24.2, 1e-14, "f(x0)");
    assert_near(g[0], -215.6, 1e-14, "df/dx1");
    assert_near(g[1], -88, 1e-14, "df/dx2");
    free(g);
    tu_model_free(m);
}
END_TEST

/* Beale's function, problem 5 of More, Garbow and Hillstrom (1981), with
 * data y = (1.5, 2.25, 2.625): at the published minimiser (3, 0.5) every
 * residual is exactly zero, so f = 0 and the gradient is exactly 0. */
START_TEST(beale_at_its_minimiser)
{
    TuModel *m = tu_model("input d1, d2, d3\nparam x1, x2\n"
                         "f = (d1 - x1 * (1 - x2))^2 +\n"
                         "    (d2 - x1 * (1 - x2^2))^2 +\n"
                         "    (d3 - x1 * (1 - x2^3))^2\n"
                         "output f\n");
    SET(m, "d1", 1.5);
    SET(m, "d2", 2.25);
    SET(m, "d3", 2.625);
    SET(m, "x1", 3);
    SET(m, "x2", 0.5);
    double y, *g = gradient(m, &y);
    ck_assert_double_eq(y, 0);
    ck_assert_double_eq(g[0], 0);
    ck_assert_double_eq(g[1], 0);
    /* one step away the gradient is not zero: the check can fail */
    SET(m, "x1", 3.5);
    free(g);
    g = gradient(m, &y);
    ck_assert(g[0] != 0 && y > 0);
    free(g);
    tu_model_free(m);
}
END_TEST

/* ------------------------------------------------ the ops, one by one */

/* Each case: a model y = EXPR(a), a point, and the closed form of the
 * value and of dy/da (A&S ch. 4 unless noted).  Both the reverse sweep and
 * the complex step must reproduce the derivative. */
#define OP_CASES(X)                                                            \
    X(sqrt_, "sqrt(a)", 0.7, sqrt(a), 0.5 / sqrt(a))                           \
    X(cbrt_neg, "cbrt(a)", -0.6, cbrt(a), 1 / (3 * cbrt(a) * cbrt(a)))         \
    X(cbrt_pos, "cbrt(a)", 0.6, cbrt(a), 1 / (3 * cbrt(a) * cbrt(a)))         \
    X(exp_, "exp(a)", -0.4, exp(a), exp(a))                                    \
    X(expm1_, "expm1(a)", 1e-4, expm1(a), exp(a))                              \
    X(log_, "log(a)", 0.3, log(a), 1 / a)                                      \
    X(log1p_, "log1p(a)", -1e-5, log1p(a), 1 / (1 + a))                        \
    X(log2_, "log2(a)", 3.5, log2(a), 1 / (a * log(2.0)))                      \
    X(log10_, "log10(a)", 0.02, log10(a), 1 / (a * log(10.0)))                 \
    X(sin_, "sin(a)", 0.9, sin(a), cos(a))                                     \
    X(cos_, "cos(a)", 0.9, cos(a), -sin(a))                                    \
    X(tan_, "tan(a)", 0.9, tan(a), 1 / (cos(a) * cos(a)))                      \
    X(asin_, "asin(a)", 0.6, asin(a), 1 / sqrt(1 - a * a))                     \
    X(acos_, "acos(a)", 0.6, acos(a), -1 / sqrt(1 - a * a))                    \
    X(atan_, "atan(a)", 2.0, atan(a), 1 / (1 + a * a))                         \
    X(sinh_, "sinh(a)", 0.8, sinh(a), cosh(a))                                 \
    X(cosh_, "cosh(a)", 0.8, cosh(a), sinh(a))                                 \
    X(tanh_, "tanh(a)", 0.8, tanh(a), 1 / (cosh(a) * cosh(a)))                 \
    X(asinh_, "asinh(a)", -1.5, asinh(a), 1 / sqrt(1 + a * a))                 \
    X(acosh_, "acosh(a)", 1.7, acosh(a), 1 / sqrt(a * a - 1))                  \
    X(atanh_, "atanh(a)", -0.4, atanh(a), 1 / (1 - a * a))                     \
    X(cube_neg, "a^3", -1.5, -3.375, 6.75)                                     \
    X(pow_frac, "a^2.5", 1.3, pow(a, 2.5), 2.5 * pow(a, 1.5))                  \
    X(pow_exp, "2^a", 0.3, pow(2, a), pow(2, a) * log(2.0))                    \
    X(pow_self, "pow(a, a)", 1.2, pow(a, a), pow(a, a) * (log(a) + 1))         \
    X(recip, "1 / (1 + a * a)", 0.8, 1 / (1 + a * a),                          \
      -2 * a / ((1 + a * a) * (1 + a * a)))                                    \
    X(hypot_, "hypot(a, 2)", 1.5, 2.5, a / 2.5)                                \
    X(sigmoid_, "sigmoid(a)", -0.7, 1 / (1 + exp(-a)),                         \
      exp(-a) / ((1 + exp(-a)) * (1 + exp(-a))))                               \
    X(sigmoid_far, "sigmoid(a)", -30, exp(a) / (1 + exp(a)),                   \
      exp(a) / ((1 + exp(a)) * (1 + exp(a))))                                  \
    X(softplus_, "softplus(a)", 2.5, log1p(exp(a)), 1 / (1 + exp(-a)))         \
    X(softplus_far, "softplus(a)", 40, a + log1p(exp(-a)), 1 / (1 + exp(-a)))  \
    X(abs_, "abs(a)", -0.3, 0.3, -1)                                           \
    X(relu_on, "relu(a)", 0.4, a, 1)                                           \
    X(relu_off, "relu(a)", -0.4, 0, 0)                                         \
    X(max_, "max(a, 0.5)", 0.7, a, 1)                                          \
    X(min_, "min(a, 0.5)", 0.7, 0.5, 0)                                        \
    X(clamp_in, "clamp(a, 0, 1)", 0.3, a, 1)                                   \
    X(clamp_out, "clamp(a, 0, 1)", 1.4, 1, 0)                                  \
    X(floor_, "floor(a) + a", 1.3, 2.3, 1)                                     \
    X(round_, "round(a) * a", 1.7, 2 * a, 2)                                   \
    X(branch_on, "a > 0.5 ? a * a : -a", 0.7, a * a, 2 * a)                    \
    X(branch_off, "a > 0.5 ? a * a : -a", 0.2, -a, -1)                         \
    X(identity, "sin(a)^2 + cos(a)^2", 0.3, 1, 0)

#define DEFINE_CASE(id, text, at, f, df)                                       \
    static double id##value(double a) { (void)a; return f; }                   \
    static double id##slope(double a) { (void)a; return df; }
OP_CASES(DEFINE_CASE)

typedef struct OpCase {
    const char *expr;
    double at;
    double (*value)(double);
    double (*slope)(double);
} OpCase;

#define LIST_CASE(id, text, at, f, df) {text, at, id##value, id##slope},
static const OpCase op_cases[] = {OP_CASES(LIST_CASE)};

START_TEST(each_op_by_reverse_sweep_and_complex_step)
{
    const OpCase *oc = &op_cases[_i];
    char *text = tu_format("param a\ny = %s\noutput y\n", oc->expr);
    TuModel *m = tu_model(text);
    tu_model_set(m, "a", &oc->at, 1);
    double y, *g = gradient(m, &y);
    double f = oc->value(oc->at), df = oc->slope(oc->at);
    char *what = tu_format("%s at %g", oc->expr, oc->at);
    assert_near(y, f, 1e-14, what);
    assert_near(g[0], df, 1e-13, what);
    EvalStep cs = eval_complex_step(m->ev, 0, 1e-200);
    ck_assert_int_eq(cs.blocked, -1);
    assert_near(cs.value, f, 1e-14, what);
    assert_near(cs.slope, df, 1e-13, what);
    free(what);
    free(g);
    free(text);
    tu_model_free(m);
}
END_TEST

/* erf, erfc, lgamma and atan2 have no complex form here: the complex step
 * reports them when the perturbation reaches them, and not otherwise. */
START_TEST(complex_step_stops_at_erf_and_friends)
{
    static const struct {
        const char *expr;
        int op;
        double slope;   /* dy/da at a = 0.5, b = 2 */
    } cases[] = {
        /* 2/sqrt(pi) e^{-a^2} (A&S 7.1.19, recalled) */
        {"erf(a) * b", IR_ERF, 2 * 1.1283791670955126 * 0.77880078307140487},
        {"erfc(a) * b", IR_ERFC, -2 * 1.1283791670955126 * 0.77880078307140487},
        /* atan2(a, 2) = atan(a / 2): 2 / (a^2 + 4) */
        {"atan2(a, 2) * b", IR_ATAN2, 2 * 2 / 4.25},
        /* psi(0.5) = -gamma - 2 ln 2 (A&S 6.3.3), gamma = 0.5772156649015329
         * (recalled) */
        {"lgamma(a) * b", IR_LGAMMA,
         2 * (-0.5772156649015329 - 2 * 0.69314718055994531)},
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        char *text = tu_format("param a, b\ny = %s\noutput y\n",
                               cases[i].expr);
        TuModel *m = tu_model(text);
        SET(m, "a", 0.5);
        SET(m, "b", 2);
        double y, *g = gradient(m, &y);
        assert_near(g[0], cases[i].slope, 1e-14, cases[i].expr);
        EvalStep cs = eval_complex_step(m->ev, 0, 1e-200);
        ck_assert_int_eq(cs.blocked, cases[i].op);
        /* perturbing b leaves the blocked op's argument real */
        cs = eval_complex_step(m->ev, 1, 1e-200);
        ck_assert_int_eq(cs.blocked, -1);
        assert_near(cs.slope, g[1], 1e-15, cases[i].expr);
        assert_near(cs.value, y, 1e-15, cases[i].expr);
        free(g);
        free(text);
        tu_model_free(m);
    }
}
END_TEST

START_TEST(slots_and_flat_params)
{
    TuModel *m = tu_model("input s[2]\nparam a, W[2,2]\n"
                         "y = a * sum(i, j: W[i,j] * s[j])\noutput y\n");
    ck_assert_int_eq(eval_param_count(m->ev), 5);
    ck_assert_ptr_null(eval_slot(m->ev, "y"));       /* a value, not settable */
    ck_assert_ptr_null(eval_slot(m->ev, "nosuch"));
    ck_assert_ptr_eq(eval_param(m->ev, 0), eval_slot(m->ev, "a"));
    ck_assert_ptr_eq(eval_param(m->ev, 3), eval_slot(m->ev, "W") + 2);
    tu_model_free(m);
}
END_TEST

/* ------------------------------------------------------ runtime sizes */

/* Invented data for the sized models (only the closed forms computed from
 * it are checked). */
static double data_value(long k, double shift)
{
    return sin(0.37 * (double)k + shift) + 0.001 * (double)k;
}

/* Fill the input NAME with n data values. */
static double *set_data(TuModel *m, const char *name, long n, double shift)
{
    double *slot = eval_slot(m->ev, name);
    ck_assert_msg(slot != NULL, "no input '%s'", name);
    for (long k = 0; k < n; k++)
        slot[k] = data_value(k, shift);
    return slot;
}

static const char *const least_squares =
    "size n\ninput x[n], y[n]\nparam a, b\n"
    "pred[k] = a * x[k] + b\n"
    "loss = sum(k: (pred[k] - y[k])^2) / n\noutput loss\n";

/* Least squares over n points: L = (1/n) sum r_k^2 with r_k = a x_k + b -
 * y_k, so dL/da = (2/n) sum r_k x_k and dL/db = (2/n) sum r_k (the chain
 * rule, standard calculus).  The reverse sweep and the complex step must
 * both give them. */
START_TEST(least_squares_over_n_points)
{
    static const long ns[] = {1, 2, 300};
    long n = ns[_i];
    TuModel *m = tu_model_sized(least_squares, &n);
    const double *x = set_data(m, "x", n, 0.0);
    const double *y = set_data(m, "y", n, 1.3);
    SET(m, "a", 0.8);
    SET(m, "b", -0.25);
    double sse = 0, ga = 0, gb = 0;
    for (long k = 0; k < n; k++) {
        double r = 0.8 * x[k] - 0.25 - y[k];
        sse += r * r;
        ga += r * x[k];
        gb += r;
    }
    double want[3] = {sse / n, 2 * ga / n, 2 * gb / n};
    double value, *g = gradient(m, &value);
    assert_near(value, want[0], 1e-13, "L");
    assert_near(g[0], want[1], 1e-13, "dL/da");
    assert_near(g[1], want[2], 1e-13, "dL/db");
    for (long k = 0; k < 2; k++) {
        EvalStep cs = eval_complex_step(m->ev, k, 1e-200);
        ck_assert_int_eq(cs.blocked, -1);
        assert_near(cs.value, want[0], 1e-13, "complex L");
        assert_near(cs.slope, want[1 + k], 1e-13, "complex slope");
    }
    /* a second sweep starts from fresh adjoints */
    double again, *g2 = gradient(m, &again);
    ck_assert_double_eq(again, value);
    ck_assert_double_eq(g2[0], g[0]);
    ck_assert_double_eq(g2[1], g[1]);
    free(g2);
    free(g);
    tu_model_free(m);
}
END_TEST

/* No data at all: an empty sum is 0, so the sum of squares and its
 * gradient are exactly 0, and the mean is 0/0, NaN by IEEE 754. */
START_TEST(least_squares_without_data)
{
    long n = 0;
    TuModel *m = tu_model_sized(least_squares, &n);
    ck_assert_ptr_nonnull(eval_slot(m->ev, "x"));
    SET(m, "a", 0.8);
    SET(m, "b", -0.25);
    ck_assert(isnan(eval_value(m->ev)));
    tu_model_free(m);

    m = tu_model_sized("size n\ninput x[n], y[n]\nparam a, b\n"
                    "pred[k] = a * x[k] + b\n"
                    "loss = sum(k: (pred[k] - y[k])^2)\noutput loss\n", &n);
    SET(m, "a", 0.8);
    SET(m, "b", -0.25);
    double value, *g = gradient(m, &value);
    ck_assert_double_eq(value, 0);
    ck_assert_double_eq(g[0], 0);
    ck_assert_double_eq(g[1], 0);
    EvalStep cs = eval_complex_step(m->ev, 1, 1e-200);
    ck_assert_double_eq(cs.value, 0);
    ck_assert_double_eq(cs.slope, 0);
    free(g);
    tu_model_free(m);
}
END_TEST

/* A size as a real number: the negative log-likelihood of n normal
 * samples (constant dropped), L = sum (x_k - mu)^2 / (2 s^2) + n log s,
 * so dL/dmu = -sum (x_k - mu) / s^2 and dL/ds = -sum (x_k - mu)^2 / s^3
 * + n / s (standard calculus).  At n = 0 all three are 0. */
START_TEST(size_as_a_number)
{
    static const long ns[] = {0, 1, 7};
    long n = ns[_i];
    TuModel *m = tu_model_sized("size n\ninput x[n]\nparam mu, s\n"
                           "nll = sum(k: ((x[k] - mu) / s)^2) / 2 + "
                           "n * log(s)\noutput nll\n", &n);
    const double *x = set_data(m, "x", n, 0.4);
    double mu = 0.2, s = 1.7;
    SET(m, "mu", 0.2);
    SET(m, "s", 1.7);
    double sq = 0, lin = 0;
    for (long k = 0; k < n; k++) {
        sq += (x[k] - mu) * (x[k] - mu);
        lin += x[k] - mu;
    }
    double value, *g = gradient(m, &value);
    assert_near(value, sq / (2 * s * s) + (double)n * log(s), 1e-14, "L");
    assert_near(g[0], -lin / (s * s), 1e-14, "dL/dmu");
    assert_near(g[1], -sq / (s * s * s) + (double)n / s, 1e-14, "dL/ds");
    EvalStep cs = eval_complex_step(m->ev, 1, 1e-200);
    assert_near(cs.slope, -sq / (s * s * s) + (double)n / s, 1e-14,
                "complex dL/ds");
    free(g);
    tu_model_free(m);
}
END_TEST

/* Reductions over no points keep their starting values: sum 0, max -inf,
 * min +inf, and logsumexp log(0) = -inf; with no point to send an adjoint
 * to, the gradient is 0. */
START_TEST(empty_reductions)
{
    static const struct {
        const char *reduction;
        double value;
    } cases[] = {
        {"sum", 0}, {"max", -HUGE_VAL}, {"min", HUGE_VAL},
        {"logsumexp", -HUGE_VAL},
    };
    long n = 0;
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        char *text = tu_format("size n\ninput x[n]\nparam w\n"
                               "y = %s(k: w * x[k])\noutput y\n",
                               cases[i].reduction);
        TuModel *m = tu_model_sized(text, &n);
        SET(m, "w", 0.5);
        double value, *g = gradient(m, &value);
        ck_assert_msg(value == cases[i].value, "%s: %g", cases[i].reduction,
                      value);
        ck_assert_double_eq(g[0], 0);
        EvalStep cs = eval_complex_step(m->ev, 0, 1e-200);
        ck_assert(cs.value == cases[i].value);
        free(g);
        free(text);
        tu_model_free(m);
    }
}
END_TEST

/* Rows of a sized matrix: r = X w - y, L = sum r_k^2, so dL/dw = 2 X^T r
 * (standard calculus).  X[k, j] is row-major with k over n rows. */
START_TEST(sized_rows_of_a_matrix)
{
    long n = 7;
    TuModel *m = tu_model_sized("size n\ninput X[n, 3], y[n]\nparam w[3]\n"
                           "pred[k] = sum(j: X[k, j] * w[j])\n"
                           "r = pred - y\n"
                           "loss = sum(k: r[k]^2)\noutput loss\n", &n);
    const double *X = set_data(m, "X", 3 * n, 0.0);
    const double *y = set_data(m, "y", n, 2.0);
    static const double w[3] = {0.3, -1.1, 0.6};
    tu_model_set(m, "w", w, 3);
    double want = 0, want_g[3] = {0, 0, 0};
    for (long k = 0; k < n; k++) {
        double r = -y[k];
        for (int j = 0; j < 3; j++)
            r += X[3 * k + j] * w[j];
        want += r * r;
        for (int j = 0; j < 3; j++)
            want_g[j] += 2 * r * X[3 * k + j];
    }
    double value, *g = gradient(m, &value);
    assert_near(value, want, 1e-14, "L");
    for (int j = 0; j < 3; j++)
        assert_near(g[j], want_g[j], 1e-14, "dL/dw");
    free(g);
    tu_model_free(m);
}
END_TEST

/* Two sizes, and a max over both: the winner's flat position i m + j uses
 * the size m, so the adjoint must land on the right element.  With
 * y = max_ij c A_ij + c^2 sum_ij A_ij / (n m) and c > 0, dy/dc = max A +
 * 2 c mean(A). */
START_TEST(max_over_two_sizes)
{
    long sizes[2] = {3, 4};
    TuModel *m = tu_model_sized("size n, m\ninput A[n, m]\nparam c\n"
                           "y = max(i, j: c * A[i, j]) + "
                           "sum(i, j: A[i, j]) * c^2 / (n * m)\noutput y\n",
                           sizes);
    double *A = set_data(m, "A", 12, 0.0);
    A[2 * 4 + 1] = 5;   /* the one winner, in the last row */
    double top = 5, total = 0;
    for (int k = 0; k < 12; k++)
        total += A[k];
    SET(m, "c", 0.5);
    double value, *g = gradient(m, &value);
    assert_near(value, 0.5 * top + 0.25 * total / 12, 1e-14, "y");
    assert_near(g[0], top + 2 * 0.5 * total / 12, 1e-14, "dy/dc");
    free(g);
    tu_model_free(m);
}
END_TEST

START_TEST(extents_and_element_counts)
{
    long sizes[2] = {5, 0};
    TuModel *m = tu_model_sized("size n, m\ninput X[n, 2], E[n, m], s\n"
                           "param w[2]\n"
                           "y = sum(k, j: X[k, j] * w[j]) + s * "
                           "sum(k, j: E[k, j])\noutput y\n",
                           sizes);
    const Ir *ir = m->c.ir;
    const IrArray *X = tu_array(ir, "X", ROLE_INPUT);
    const IrArray *E = tu_array(ir, "E", ROLE_INPUT);
    const IrArray *s = tu_array(ir, "s", ROLE_INPUT);
    ck_assert_int_eq(eval_extent(X->dim[0], sizes), 5);
    ck_assert_int_eq(eval_extent(X->dim[1], sizes), 2);
    ck_assert_int_eq(eval_elements(X, sizes), 10);
    ck_assert_int_eq(eval_elements(E, sizes), 0);
    ck_assert_int_eq(eval_elements(s, NULL), 1);
    /* params keep fixed extents: the flat vector ignores the sizes */
    ck_assert_int_eq(eval_param_count(m->ev), 2);
    long huge[2] = {EVAL_MAX_ELEMENTS, 2};
    ck_assert_int_eq(eval_elements(X, huge), -1);
    huge[1] = 0;
    ck_assert_int_eq(eval_elements(E, huge), 0);
    tu_model_free(m);
}
END_TEST

/* --------------------------------------- agreement with the emitted C */

/* Models with inputs, reductions over one and two indices, conditions and
 * the runtime helpers; named m so the emitted symbols are m_*. */
static const char *const c_models[] = {
    "model m\ninput s[3], target\nparam W[4,3], b[4], v[4], c\n"
    "z[j] = sum(i: W[j,i] * s[i]) + b[j]\nh = tanh(z)\n"
    "pred = sum(j: v[j] * h[j]) + c\nloss = 0.5 * (pred - target)^2\n"
    "output loss\n",

    "model m\ninput x[3]\nparam A[2,3], u[3], Y[2,3,2]\n"
    "top = max(i, j: A[i,j] * x[j])\nlow[i] = min(j: A[i,j] - u[j])\n"
    "soft = logsumexp(j: u[j] * x[j])\n"
    "deep = min(k, i, j: Y[k,i,j] * x[i]) + max(k, i, j: Y[k,i,j] * x[i]) +\n"
    "       sum(k: max(i, j: Y[k,i,j]))\n"
    "y = top + sum(i: low[i] * low[i]) + soft + deep\noutput y\n",

    "model m\nparam a, b, p[3]\n"
    "q = clamp(a, -0.2, 0.4) * relu(b) + softplus(a * b) + sigmoid(b)\n"
    "r = a < b || a > 1 ? abs(a - b)^3 : hypot(a, b)\n"
    "t = sum(i: max(p[i], a) * min(p[i], b) + floor(3 * p[i]) * p[i])\n"
    "y = q + r + t + log1p(a * a) * atan(b) + cbrt(b - 2)\noutput y\n",
};

/* Invented but varied values; entry k of a kind gets value(k, shift). */
static double test_value(int k, double shift)
{
    return 0.4 * sin(1.7 * k + shift) + 0.1 * (k % 3) - 0.05;
}

static void compare_with_emitted(const char *model)
{
    TuModel *m = tu_model(model);
    const Ir *ir = m->c.ir;
    long np = eval_param_count(m->ev), ni = 0;
    char *pv = tu_format(""), *iv = tu_format("0");
    for (long k = 0; k < np; k++) {
        *eval_param(m->ev, k) = test_value((int)k, 0.3);
        char *more = tu_format("%s%.17g,", pv, *eval_param(m->ev, k));
        free(pv);
        pv = more;
    }
    for (int i = 0; i < ir->arrays.len; i++) {
        const IrArray *a = &ir->arrays.items[i];
        if (a->role != ROLE_INPUT)
            continue;
        double *slot = eval_slot(m->ev, a->name);
        for (long e = 0; e < ir_array_size(a); e++, ni++) {
            slot[e] = test_value((int)ni, 1.1);
            char *more = tu_format("%s,%.17g", iv, slot[e]);
            free(iv);
            iv = more;
        }
    }
    double *want = calloc((size_t)np + 1, sizeof *want);
    want[0] = eval_gradient(m->ev, want + 1);
    ck_assert_double_eq(eval_value(m->ev), want[0]);

    char *dir = tu_tmpdir();
    char *err = NULL;
    ck_assert_msg(tu_build_model(dir, "m", model, &err) == 0, "%s", err);
    free(err);
    /* inputs are all doubles, so m_input is a flat vector too; iv starts
     * with a spare 0 so an empty list stays valid C */
    char *in_decl = tu_format("typedef char in_flat[sizeof(m_input) == %ld "
                              "* sizeof(double) ? 1 : -1];\n", ni);
    char *driver = tu_format(
        "#include <stdio.h>\n#include <string.h>\n#include \"m.h\"\n"
        "static const double pv[] = {%s};\n"
        "static const double iv[] = {%s};\n%s"
        "int main(void)\n{\n"
        "    m_param_flat p, g;\n    memcpy(p.v, pv, sizeof p.v);\n%s"
        "    double y = m_value(&p.p%s), y2 = m_gradient(&p.p%s, &g.p);\n"
        "    printf(\"%%.17g\\n\", y);\n    (void)iv;\n"
        "    if (y2 != y)\n        return 1;\n"
        "    for (int k = 0; k < M_PARAM_COUNT; k++)\n"
        "        printf(\"%%.17g\\n\", g.v[k]);\n    return 0;\n}\n",
        pv, iv,
        ni ? in_decl : "",
        ni ? "    m_input in;\n    memcpy(&in, iv + 1, sizeof in);\n" : "",
        ni ? ", &in" : "", ni ? ", &in" : "");
    tu_write_in(dir, "driver.c", driver);
    int compilers = 0;
    for (size_t c = 0; c < sizeof tu_compilers / sizeof tu_compilers[0]; c++) {
        if (!tu_have(tu_compilers[c]))
            continue;
        compilers++;
        char *out = tu_compile_and_run(dir, "m", tu_compilers[c]);
        char *p = out;
        for (long k = 0; k <= np; k++) {
            char *end;
            double got = strtod(p, &end);
            ck_assert_msg(end != p, "%s: short output:\n%s", tu_compilers[c],
                          out);
            ck_assert_msg(fabs(got - want[k]) <=
                              1e-14 * fmax(fabs(got), fabs(want[k])),
                          "%s: %s %ld: emitted C %.17g, evaluator %.17g",
                          tu_compilers[c], k ? "gradient entry" : "value",
                          k - 1, got, want[k]);
            p = end;
        }
        free(out);
    }
    ck_assert_msg(compilers > 0, "no C compiler found");
    tu_rmdir(dir);
    free(dir);
    free(driver);
    free(in_decl);
    free(want);
    free(pv);
    free(iv);
    tu_model_free(m);
}

START_TEST(agrees_with_the_emitted_c)
{
    compare_with_emitted(c_models[_i]);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("eval");
    TU_ADD_TESTS(tu_case(s, "models", 0),
                 product_and_sine, network_in_index_notation,
                 max_and_min_go_to_the_first_winner, max_over_two_indices,
                 logsumexp_gives_softmax, conditions_pick_a_branch,
                 whole_array_and_index_forms, rosenbrock_at_the_standard_start,
                 beale_at_its_minimiser, slots_and_flat_params);
    TCase *tc = tu_case(s, "ops", 0);
    tcase_add_loop_test(tc, each_op_by_reverse_sweep_and_complex_step, 0,
                        (int)(sizeof op_cases / sizeof op_cases[0]));
    tcase_add_test(tc, complex_step_stops_at_erf_and_friends);
    tc = tu_case(s, "sizes", 0);
    tcase_add_loop_test(tc, least_squares_over_n_points, 0, 3);
    tcase_add_loop_test(tc, size_as_a_number, 0, 3);
    TU_ADD_TESTS(tc, least_squares_without_data, empty_reductions,
                 sized_rows_of_a_matrix, max_over_two_sizes,
                 extents_and_element_counts);
    tcase_add_loop_test(tu_case(s, "emitted", 60), agrees_with_the_emitted_c,
                        0, (int)(sizeof c_models / sizeof c_models[0]));
    return tu_main(s);
}
