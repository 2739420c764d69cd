/* test_rules.c - unit tests of the derivative rules (rules.c) on hand-built
 * IR: every op's local partials, derivatives of composite expressions,
 * structural zeros, and the simplifying rules_add and rules_mul.  Results
 * are compared as ir_print text against the calculus identities named. */
#include "testutil.h"

#include "rules.h"

/* An IR holding params x, y, z, a stored value v (the node's own value that
 * rules may reuse), and a scalar d whose statement shows an expression. */
typedef struct Fixture {
    Arena arena;
    Source src;
    Ir *ir;
    NodeId x, y, z, v;
    int32_t d;
    int32_t scalar;     /* the empty tuple */
    DeriveMemo memo;
} Fixture;

static Fixture *fixture(void)
{
    Fixture *f = calloc(1, sizeof *f);
    arena_init(&f->arena);
    f->src.path = "t.dvs";
    f->src.text = "";
    f->ir = ir_new(&f->arena, &f->src);
    Span none = {0, 0};
    f->scalar = ir_tuple(f->ir, NULL, 0);
    const char *names[] = {"x", "y", "z", "v"};
    NodeId *reads[] = {&f->x, &f->y, &f->z, &f->v};
    for (int i = 0; i < 4; i++) {
        int32_t a = ir_add_array(f->ir, names[i], i < 3 ? ROLE_PARAM
                                                        : ROLE_VALUE,
                                 0, NULL, none);
        *reads[i] = ir_read(f->ir, a, f->scalar);
    }
    f->d = ir_add_array(f->ir, "d", ROLE_VALUE, 0, NULL, none);
    return f;
}

static void fixture_free(Fixture *f)
{
    rules_memo_free(&f->memo);
    arena_free(&f->arena);
    free(f);
}

/* The expression as ir_print writes it ("none" for a structural zero). */
static char *show(Fixture *f, NodeId n)
{
    if (n == NO_NODE)
        return tu_format("none");
    IrStmt s;
    memset(&s, 0, sizeof s);
    s.kind = SK_SET;
    s.target = f->d;
    s.tuple = s.domain = s.reduced = f->scalar;
    s.argpos = -1;
    s.expr = n;
    f->ir->forward.len = 0;
    ir_add_stmt(f->ir, &f->ir->forward, s);
    char *text = tu_ir_text(f->ir);
    /* "forward:\n  d = EXPR\n" -> "EXPR" */
    static const char head[] = "forward:\n  d = ";
    ck_assert_msg(strncmp(text, head, sizeof head - 1) == 0, "%s", text);
    char *expr = tu_format("%.*s", (int)(strlen(text) - (sizeof head - 1) - 1),
                           text + sizeof head - 1);
    free(text);
    return expr;
}

static void check_shown(Fixture *f, NodeId n, const char *expected,
                        const char *what)
{
    char *got = show(f, n);
    ck_assert_msg(strcmp(got, expected) == 0, "%s\n got: %s\nwant: %s", what,
                  got, expected);
    free(got);
}

/* True when some node below n has op OP. */
static int contains_op(const Ir *ir, NodeId n, IrOp op)
{
    const IrNode *nd = ir_at(ir, n);
    if (nd->op == op)
        return 1;
    for (int i = 0; i < nd->nargs; i++)
        if (contains_op(ir, nd->arg[i], op))
            return 1;
    return 0;
}

/* ------------------------------------------------------ local partials */

/* The expected partials of OP(x[, y[, z]]) with respect to each operand,
 * where v stands for the op's own value. */
typedef struct PartialCase {
    IrOp op;
    const char *d[3];
} PartialCase;

/* Every builtin and operator.  Identities: standard calculus unless noted;
 * A&S numbers refer to Abramowitz & Stegun (1964). */
static const PartialCase partial_cases[] = {
    {IR_NEG, {"-1"}},
    {IR_ADD, {"1", "1"}},
    {IR_SUB, {"1", "-1"}},
    {IR_MUL, {"y", "x"}},
    /* d/dy (x/y) = -x/y^2 = -(x/y)/y, reusing the quotient */
    {IR_DIV, {"(1 / y)", "(-(v / y))"}},
    /* d/dx x^y = y x^(y-1); d/dy x^y = x^y ln x, reusing x^y */
    {IR_POW, {"(y * pow(x, (y - 1)))", "(v * log(x))"}},
    {IR_ABS, {"sign(x)"}},
    /* sqrt' = 1/(2 sqrt x); cbrt' = 1/(3 cbrt(x)^2) */
    {IR_SQRT, {"(0.5 / v)"}},
    {IR_CBRT, {"(1 / (3 * (v * v)))"}},
    /* exp' = exp, the stored value; expm1' = exp(x) (not expm1 + 1, which
     * cancels for x << 0) */
    {IR_EXP, {"v"}},
    {IR_EXPM1, {"exp(x)"}},
    /* log' = 1/x; log2' = (1/ln 2)/x; log10' = (1/ln 10)/x (the constant
     * first, so x * ln 10 cannot overflow).  1/ln 2 = 1.442695040888963407...
     * and 1/ln 10 = 0.434294481903251827... (mpmath 1.2.1), printed here as
     * the nearest doubles at 17 digits. */
    {IR_LOG, {"(1 / x)"}},
    {IR_LOG1P, {"(1 / (1 + x))"}},
    {IR_LOG2, {"(1.4426950408889634 / x)"}},
    {IR_LOG10, {"(0.43429448190325176 / x)"}},
    {IR_SIN, {"cos(x)"}},
    {IR_COS, {"(-sin(x))"}},
    /* tan' = 1 + tan^2 */
    {IR_TAN, {"(1 + (v * v))"}},
    /* asin' = 1/sqrt(1-x^2), acos' = -1/sqrt(1-x^2), 1-x^2 = (1-x)(1+x) */
    {IR_ASIN, {"(1 / sqrt(((1 - x) * (1 + x))))"}},
    {IR_ACOS, {"(-(1 / sqrt(((1 - x) * (1 + x)))))"}},
    {IR_ATAN, {"(1 / (1 + (x * x)))"}},
    {IR_SINH, {"cosh(x)"}},
    {IR_COSH, {"sinh(x)"}},
    /* d/dx tanh x = 1 - tanh^2 x, reusing the stored value */
    {IR_TANH, {"(1 - (v * v))"}},
    /* asinh' = 1/sqrt(x^2+1) = 1/hypot(x, 1) */
    {IR_ASINH, {"(1 / hypot(x, 1))"}},
    /* acosh' = 1/sqrt(x^2-1) = 1/(sqrt(x-1) sqrt(x+1)) */
    {IR_ACOSH, {"(1 / (sqrt((x - 1)) * sqrt((x + 1))))"}},
    /* atanh' = 1/(1-x^2) */
    {IR_ATANH, {"(1 / ((1 - x) * (1 + x)))"}},
    /* atan2(x, y): d/dx = y/(x^2+y^2), d/dy = -x/(x^2+y^2) */
    {IR_ATAN2, {"((y / hypot(x, y)) / hypot(x, y))",
                "(-((x / hypot(x, y)) / hypot(x, y)))"}},
    /* hypot(x, y)' = x/hypot and y/hypot */
    /* hypot' = x/h and y/h, by a helper that also keeps full accuracy
     * where h would underflow or overflow */
    {IR_HYPOT, {"hypot_slope(x, y)", "hypot_slope(y, x)"}},
    /* erf' = (2/sqrt(pi)) exp(-x^2) (A&S 7.1.1 differentiated);
     * 2/sqrt(pi) = 1.128379167095512573896... (recalled from memory; agrees
     * with mpmath's 2/sqrt(pi)); erfc = 1 - erf */
    {IR_ERF, {"(1.1283791670955126 * exp((-(x * x))))"}},
    {IR_ERFC, {"(-1.1283791670955126 * exp((-(x * x))))"}},
    /* d/dx ln Gamma(x) = psi(x), the digamma function (A&S 6.3.1) */
    {IR_LGAMMA, {"digamma(x)"}},
    /* piecewise constant: zero everywhere (LANGUAGE.md section 4) */
    {IR_FLOOR, {"none"}},
    {IR_CEIL, {"none"}},
    {IR_ROUND, {"none"}},
    {IR_TRUNC, {"none"}},
    {IR_SIGN, {"none"}},
    /* selectors: ties go to the first argument; clamp is 1 inside [lo, hi]
     * with the ends inside; relu is 0 at 0 */
    {IR_MIN, {"((x <= y) ? 1 : 0)", "((x <= y) ? 0 : 1)"}},
    {IR_MAX, {"((x >= y) ? 1 : 0)", "((x >= y) ? 0 : 1)"}},
    /* clamp tests x < lo first, so hi is the value only when x is not below
     * lo too; written with the helper's own comparisons, so NaN bounds
     * give the same branch as the value */
    {IR_CLAMP, {"(((!(x < y)) && (!(x > z))) ? 1 : 0)", "((x < y) ? 1 : 0)",
                "(((!(x < y)) && (x > z)) ? 1 : 0)"}},
    {IR_RELU, {"((x > 0) ? 1 : 0)"}},
    /* sigmoid' = s (1 - s); softplus' = sigmoid */
    {IR_SIGMOID, {"(v * (1 - v))"}},
    {IR_SOFTPLUS, {"sigmoid(x)"}},
};

START_TEST(partial_of_every_op)
{
    Fixture *f = fixture();
    for (size_t c = 0; c < sizeof partial_cases / sizeof partial_cases[0];
         c++) {
        const PartialCase *pc = &partial_cases[c];
        int arity = ir_ops[pc->op].arity;
        NodeId n = ir_node(f->ir, pc->op, f->x, arity > 1 ? f->y : NO_NODE,
                           arity > 2 ? f->z : NO_NODE);
        for (int arg = 0; arg < arity; arg++) {
            char *what = tu_format("op %d (%s), operand %d", (int)pc->op,
                                   ir_ops[pc->op].c_spelling
                                       ? ir_ops[pc->op].c_spelling : "-",
                                   arg);
            check_shown(f, rules_partial(f->ir, n, arg, f->v), pc->d[arg],
                        what);
            free(what);
        }
    }
    fixture_free(f);
}
END_TEST

START_TEST(every_builtin_has_a_case)
{
    /* a new builtin in ops.def must get its expected partials above */
    for (int op = 0; op < IR_OP_COUNT; op++) {
        if (!ir_ops[op].model_name)
            continue;
        int found = 0;
        for (size_t c = 0;
             c < sizeof partial_cases / sizeof partial_cases[0]; c++)
            found |= (int)partial_cases[c].op == op;
        ck_assert_msg(found, "builtin %s has no case in partial_cases",
                      ir_ops[op].model_name);
    }
}
END_TEST

START_TEST(rules_reuse_the_value_node)
{
    Fixture *f = fixture();
    /* tanh: 1 - v*v with both factors the value node itself */
    NodeId d = rules_partial(f->ir, ir_node(f->ir, IR_TANH, f->x, NO_NODE,
                                            NO_NODE), 0, f->v);
    const IrNode *sub = ir_at(f->ir, d);
    ck_assert_int_eq(sub->op, IR_SUB);
    const IrNode *sq = ir_at(f->ir, sub->arg[1]);
    ck_assert_int_eq(sq->op, IR_MUL);
    ck_assert_int_eq(sq->arg[0], f->v);
    ck_assert_int_eq(sq->arg[1], f->v);
    /* exp: the value node itself, nothing new */
    NodeId e = ir_node(f->ir, IR_EXP, f->x, NO_NODE, NO_NODE);
    ck_assert_int_eq(rules_partial(f->ir, e, 0, f->v), f->v);
    /* with the node as its own value, exp' is the node */
    ck_assert_int_eq(rules_partial(f->ir, e, 0, e), e);
    fixture_free(f);
}
END_TEST

/* x^K for a constant K: the power rule K x^(K-1), with no log(x) so a
 * negative base works (LANGUAGE.md section 4). */
START_TEST(constant_exponents_use_the_power_rule)
{
    static const struct { double k; const char *d; } cases[] = {
        {3, "(3 * pow(x, 2))"},
        {2, "(2 * x)"},
        {1, "1"},
        {0, "none"},
        {0.5, "(0.5 * pow(x, -0.5))"},
        {-1, "(-pow(x, -2))"},
        {-2, "(-2 * pow(x, -3))"},
    };
    Fixture *f = fixture();
    for (size_t c = 0; c < sizeof cases / sizeof cases[0]; c++) {
        NodeId p = ir_node(f->ir, IR_POW, f->x, ir_const(f->ir, cases[c].k),
                           NO_NODE);
        NodeId d = rules_partial(f->ir, p, 0, f->v);
        char *what = tu_format("x^%g", cases[c].k);
        check_shown(f, d, cases[c].d, what);
        free(what);
        if (d != NO_NODE)
            ck_assert(!contains_op(f->ir, d, IR_LOG));
    }
    fixture_free(f);
}
END_TEST

/* --------------------------------------------- derivatives of composites */

/* d ROOT / d LEAF with v as the root's value. */
static char *derivative(Fixture *f, NodeId root, NodeId leaf)
{
    return show(f, rules_derivative(f->ir, &f->memo, root, leaf, f->v));
}

static void check_derivative(Fixture *f, NodeId root, NodeId leaf,
                             const char *expected)
{
    char *got = derivative(f, root, leaf);
    char *root_text = show(f, root);
    ck_assert_msg(strcmp(got, expected) == 0, "d(%s)\n got: %s\nwant: %s",
                  root_text, got, expected);
    free(root_text);
    free(got);
}

START_TEST(derivatives_of_composites)
{
    Fixture *f = fixture();
    Ir *ir = f->ir;
    NodeId two = ir_const(ir, 2), three = ir_const(ir, 3);
    NodeId xx = ir_node(ir, IR_MUL, f->x, f->x, NO_NODE);
    /* product rule: d(x x) = x + x */
    check_derivative(f, xx, f->x, "(x + x)");
    /* chain rule: d sin(x^2) = cos(x^2) 2x */
    NodeId x2 = ir_node(ir, IR_POW, f->x, two, NO_NODE);
    check_derivative(f, ir_node(ir, IR_SIN, x2, NO_NODE, NO_NODE), f->x,
                     "(cos(pow(x, 2)) * (2 * x))");
    /* d exp(2x) = 2 exp(2x), with the root's stored value v */
    NodeId ex = ir_node(ir, IR_EXP, ir_node(ir, IR_MUL, two, f->x, NO_NODE),
                        NO_NODE, NO_NODE);
    check_derivative(f, ex, f->x, "(2 * v)");
    /* d tanh(x y)/dx = (1 - tanh^2) y */
    NodeId th = ir_node(ir, IR_TANH, ir_node(ir, IR_MUL, f->x, f->y, NO_NODE),
                        NO_NODE, NO_NODE);
    check_derivative(f, th, f->x, "((1 - (v * v)) * y)");
    check_derivative(f, th, f->y, "((1 - (v * v)) * x)");
    /* only the root uses the stored value; inner nodes are recomputed */
    NodeId tt = ir_node(ir, IR_TANH, ir_node(ir, IR_TANH, f->x, NO_NODE,
                                             NO_NODE), NO_NODE, NO_NODE);
    check_derivative(f, tt, f->x,
                     "((1 - (v * v)) * (1 - (tanh(x) * tanh(x))))");
    /* quotient: d(x/y)/dy = -(x/y)/y */
    NodeId q = ir_node(ir, IR_DIV, f->x, f->y, NO_NODE);
    check_derivative(f, q, f->y, "(-(v / y))");
    check_derivative(f, q, f->x, "(1 / y)");
    /* sums: d(x y + x)/dx = y + 1; d(y - x x)/dx = -(x + x) */
    NodeId s = ir_node(ir, IR_ADD, ir_node(ir, IR_MUL, f->x, f->y, NO_NODE),
                       f->x, NO_NODE);
    check_derivative(f, s, f->x, "(y + 1)");
    NodeId t = ir_node(ir, IR_SUB, f->y, xx, NO_NODE);
    check_derivative(f, t, f->x, "(-(x + x))");
    check_derivative(f, t, f->y, "1");
    /* x^3 as a whole right side: 3 x^2 */
    check_derivative(f, ir_node(ir, IR_POW, f->x, three, NO_NODE), f->x,
                     "(3 * pow(x, 2))");
    fixture_free(f);
}
END_TEST

START_TEST(derivative_flows_only_into_the_branch_taken)
{
    Fixture *f = fixture();
    Ir *ir = f->ir;
    NodeId zero = ir_const(ir, 0);
    NodeId cond = ir_node(ir, IR_GT, f->x, zero, NO_NODE);
    NodeId xx = ir_node(ir, IR_MUL, f->x, f->x, NO_NODE);
    NodeId sel = ir_node(ir, IR_SELECT, cond, xx, ir_const(ir, 3));
    check_derivative(f, sel, f->x, "((x > 0) ? (x + x) : 0)");
    NodeId sel2 = ir_node(ir, IR_SELECT, cond, f->y, f->x);
    check_derivative(f, sel2, f->x, "((x > 0) ? 0 : 1)");
    check_derivative(f, sel2, f->y, "((x > 0) ? 1 : 0)");
    /* relu(x) * y: the selector keeps the zero out of the product */
    NodeId r = ir_node(ir, IR_MUL, ir_node(ir, IR_RELU, f->x, NO_NODE,
                                           NO_NODE), f->y, NO_NODE);
    check_derivative(f, r, f->x, "((x > 0) ? y : 0)");
    fixture_free(f);
}
END_TEST

START_TEST(structural_zeros)
{
    Fixture *f = fixture();
    Ir *ir = f->ir;
    NodeId fl = ir_node(ir, IR_FLOOR, f->x, NO_NODE, NO_NODE);
    ck_assert_int_eq(rules_derivative(ir, &f->memo, fl, f->x, f->v), NO_NODE);
    /* floor(x) + y depends on x only through floor */
    NodeId s = ir_node(ir, IR_ADD, fl, f->y, NO_NODE);
    ck_assert_int_eq(rules_derivative(ir, &f->memo, s, f->x, f->v), NO_NODE);
    check_derivative(f, s, f->y, "1");
    /* an expression without the leaf */
    NodeId xy = ir_node(ir, IR_MUL, f->x, f->y, NO_NODE);
    ck_assert_int_eq(rules_derivative(ir, &f->memo, xy, f->z, f->v), NO_NODE);
    /* a comparison carries no derivative to its operands */
    NodeId sel = ir_node(ir, IR_SELECT, ir_node(ir, IR_LT, f->x, f->y,
                                                NO_NODE),
                         f->z, ir_const(ir, 1));
    ck_assert_int_eq(rules_derivative(ir, &f->memo, sel, f->x, f->v),
                     NO_NODE);
    fixture_free(f);
}
END_TEST

START_TEST(memo_is_reset_between_calls)
{
    /* one memo, several leaves and roots in turn: each answer is its own */
    Fixture *f = fixture();
    Ir *ir = f->ir;
    NodeId xy = ir_node(ir, IR_MUL, f->x, f->y, NO_NODE);
    NodeId e = ir_node(ir, IR_ADD, ir_node(ir, IR_SIN, xy, NO_NODE, NO_NODE),
                       xy, NO_NODE);
    for (int round = 0; round < 3; round++) {
        check_derivative(f, e, f->x, "((cos((x * y)) * y) + y)");
        check_derivative(f, e, f->y, "((cos((x * y)) * x) + x)");
        check_derivative(f, xy, f->y, "x");
    }
    fixture_free(f);
}
END_TEST

/* ---------------------------------------------- simplifying constructors */

START_TEST(mul_simplifications)
{
    Fixture *f = fixture();
    Ir *ir = f->ir;
    NodeId one = ir_const(ir, 1), zero = ir_const(ir, 0);
    NodeId m1 = ir_const(ir, -1);
    /* x 1 = 1 x = x, the same node */
    ck_assert_int_eq(rules_mul(ir, one, f->x), f->x);
    ck_assert_int_eq(rules_mul(ir, f->x, one), f->x);
    /* a structural zero absorbs */
    ck_assert_int_eq(rules_mul(ir, NO_NODE, f->x), NO_NODE);
    ck_assert_int_eq(rules_mul(ir, f->x, NO_NODE), NO_NODE);
    /* constants fold */
    check_shown(f, rules_mul(ir, ir_const(ir, 2), ir_const(ir, 3)), "6",
                "2*3");
    /* x 0 is not 0 in IEEE arithmetic (x may be inf or NaN): kept */
    check_shown(f, rules_mul(ir, f->x, zero), "(0 * x)", "x*0");
    check_shown(f, rules_mul(ir, zero, f->x), "(0 * x)", "0*x");
    /* the constant goes first */
    check_shown(f, rules_mul(ir, f->x, ir_const(ir, 2)), "(2 * x)", "x*2");
    check_shown(f, rules_mul(ir, f->x, f->y), "(x * y)", "x*y");
    /* -1 times a constant is a constant too */
    check_shown(f, rules_mul(ir, m1, ir_const(ir, 2)), "-2", "-1*2");
    check_shown(f, rules_mul(ir, ir_const(ir, -2), m1), "2", "-2*-1");
    /* -1 x = -x, and -1 (-x) = x */
    check_shown(f, rules_mul(ir, m1, f->x), "(-x)", "-1*x");
    check_shown(f, rules_mul(ir, f->x, m1), "(-x)", "x*-1");
    NodeId nx = ir_node(ir, IR_NEG, f->x, NO_NODE, NO_NODE);
    ck_assert_int_eq(rules_mul(ir, m1, nx), f->x);
    ck_assert_int_eq(rules_mul(ir, nx, m1), f->x);
    /* a factor moves into a selector's nonzero branch */
    NodeId cond = ir_node(ir, IR_GT, f->x, zero, NO_NODE);
    NodeId sel = ir_node(ir, IR_SELECT, cond, f->x, zero);
    check_shown(f, rules_mul(ir, f->y, sel), "((x > 0) ? (y * x) : 0)",
                "y*sel");
    check_shown(f, rules_mul(ir, sel, f->y), "((x > 0) ? (y * x) : 0)",
                "sel*y");
    NodeId sel1 = ir_node(ir, IR_SELECT, cond, zero, one);
    check_shown(f, rules_mul(ir, f->y, sel1), "((x > 0) ? 0 : y)",
                "y*sel1");
    fixture_free(f);
}
END_TEST

START_TEST(product_of_two_selects)
{
    /* neither factor has a zero branch, so neither moves into the other:
     * a plain product (a loop here would hang the compiler) */
    Fixture *f = fixture();
    Ir *ir = f->ir;
    NodeId zero = ir_const(ir, 0);
    NodeId c1 = ir_node(ir, IR_GT, f->x, zero, NO_NODE);
    NodeId c2 = ir_node(ir, IR_LT, f->y, zero, NO_NODE);
    NodeId s1 = ir_node(ir, IR_SELECT, c1, f->x, f->y);
    NodeId s2 = ir_node(ir, IR_SELECT, c2, ir_const(ir, 2), ir_const(ir, 3));
    check_shown(f, rules_mul(ir, s1, s2),
                "(((x > 0) ? x : y) * ((y < 0) ? 2 : 3))", "s1*s2");
    /* as met in practice: d/dx of (x > 0 ? x : 2x) (y < 0 ? 3x : x) */
    NodeId two_x = ir_node(ir, IR_MUL, ir_const(ir, 2), f->x, NO_NODE);
    NodeId three_x = ir_node(ir, IR_MUL, ir_const(ir, 3), f->x, NO_NODE);
    NodeId p = ir_node(ir, IR_MUL, ir_node(ir, IR_SELECT, c1, f->x, two_x),
                       ir_node(ir, IR_SELECT, c2, three_x, f->x), NO_NODE);
    ck_assert_int_ne(rules_derivative(ir, &f->memo, p, f->x, f->v), NO_NODE);
    fixture_free(f);
}
END_TEST

START_TEST(add_simplifications)
{
    Fixture *f = fixture();
    Ir *ir = f->ir;
    ck_assert_int_eq(rules_add(ir, NO_NODE, f->x), f->x);
    ck_assert_int_eq(rules_add(ir, f->x, NO_NODE), f->x);
    ck_assert_int_eq(rules_add(ir, NO_NODE, NO_NODE), NO_NODE);
    check_shown(f, rules_add(ir, ir_const(ir, 2), ir_const(ir, 3)), "5",
                "2+3");
    /* x + (-y) = x - y */
    NodeId ny = ir_node(ir, IR_NEG, f->y, NO_NODE, NO_NODE);
    check_shown(f, rules_add(ir, f->x, ny), "(x - y)", "x+-y");
    /* x + 0 is kept: -0 + 0 is +0, so it is not always x */
    check_shown(f, rules_add(ir, f->x, ir_const(ir, 0)), "(x + 0)", "x+0");
    check_shown(f, rules_add(ir, f->x, f->x), "(x + x)", "x+x");
    fixture_free(f);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("rules");
    TU_ADD_TESTS(tu_case(s, "rules", 0),
                 partial_of_every_op, every_builtin_has_a_case,
                 rules_reuse_the_value_node,
                 constant_exponents_use_the_power_rule,
                 derivatives_of_composites,
                 derivative_flows_only_into_the_branch_taken, structural_zeros,
                 memo_is_reset_between_calls, mul_simplifications,
                 add_simplifications);
    /* a case of its own with a short timeout: its failure mode is a hang */
    TU_ADD_TESTS(tu_case(s, "termination", 5), product_of_two_selects);
    return tu_main(s);
}
