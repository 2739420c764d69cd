/* randmodel.h - random well-formed dervish models for the randomized tests
 * (test_random_models.c and soak.c): a seeded generator that writes a
 * model's text while keeping its expression tree, an evaluator of that tree
 * of its own (complex arithmetic, for values and complex-step derivatives
 * that do not go through dervish), and the batch check that builds many
 * models with the dervish binary, runs their emitted C and judges it. */
#ifndef DERVISH_RANDMODEL_H
#define DERVISH_RANDMODEL_H

#include "testutil.h"

#include "dervish.h"
#include "eval.h"
#include "splitmix.h"

#include <complex.h>
#include <math.h>
#include <stdint.h>

/* ================================================================ PRNG */

/* splitmix64 (Steele, Lea and Flood 2014; compiler/splitmix.h) drives
 * everything: tiny, and every seed is good. */

static inline double rm_unit(uint64_t *s)      /* uniform in [0, 1) */
{
    return (double)(splitmix64(s) >> 11) * 0x1.0p-53;
}

static inline int rm_below(uint64_t *s, int n)  /* uniform in 0..n-1 */
{
    return (int)(splitmix64(s) % (uint64_t)n);
}

static inline int rm_chance(uint64_t *s, double p)
{
    return rm_unit(s) < p;
}

/* ======================================================= the model tree */

#define RM_MAX_NODES 6000
#define RM_MAX_VALUES 40
#define RM_MAX_SLOTS 400
#define RM_MAX_TEXT 200000

/* The builtins, each with its model spelling and arity. */
#define RM_FUNCS(X)                                                            \
    X(ABS, "abs", 1) X(SQRT, "sqrt", 1) X(CBRT, "cbrt", 1) X(EXP, "exp", 1)    \
    X(EXPM1, "expm1", 1) X(LOG, "log", 1) X(LOG1P, "log1p", 1)                 \
    X(LOG2, "log2", 1) X(LOG10, "log10", 1) X(SIN, "sin", 1)                   \
    X(COS, "cos", 1) X(TAN, "tan", 1) X(ASIN, "asin", 1) X(ACOS, "acos", 1)    \
    X(ATAN, "atan", 1) X(SINH, "sinh", 1) X(COSH, "cosh", 1)                   \
    X(TANH, "tanh", 1) X(ASINH, "asinh", 1) X(ACOSH, "acosh", 1)               \
    X(ATANH, "atanh", 1) X(ATAN2, "atan2", 2) X(HYPOT, "hypot", 2)             \
    X(POW, "pow", 2) X(ERF, "erf", 1) X(ERFC, "erfc", 1)                       \
    X(LGAMMA, "lgamma", 1) X(MIN, "min", 2) X(MAX, "max", 2)                   \
    X(CLAMP, "clamp", 3) X(SIGMOID, "sigmoid", 1) X(SOFTPLUS, "softplus", 1)   \
    X(RELU, "relu", 1) X(FLOOR, "floor", 1) X(CEIL, "ceil", 1)                 \
    X(ROUND, "round", 1) X(TRUNC, "trunc", 1) X(SIGN, "sign", 1)

#define RM_ENUM(id, name, arity) RF_##id,
typedef enum { RM_FUNCS(RM_ENUM) RF_COUNT } RmFunc;
#undef RM_ENUM
#define RM_NAME(id, name, arity) name,
static const char *const rm_func_name[] = {RM_FUNCS(RM_NAME)};
#undef RM_NAME

typedef enum {
    RK_NUM,     /* a number literal */
    RK_READ,    /* a value: scalar, whole array, or subscripted element */
    RK_NEG,     /* -a */
    RK_BIN,     /* a op b, op one of + - * / ^ */
    RK_CALL,    /* a builtin */
    RK_SEL,     /* a ? b : c, a a condition */
    RK_CMP,     /* a op b, op one of < <= > >= == != */
    RK_AND,
    RK_OR,
    RK_NOT,
    RK_RED      /* a reduction over the slots red[] of the body arg[0] */
} RmKind;

typedef enum { RR_SUM, RR_MAX, RR_MIN, RR_LSE } RmRed;
static const char *const rm_red_name[] = {"sum", "max", "min", "logsumexp"};
static const char *const rm_cmp_name[] = {"<", "<=", ">", ">=", "==", "!="};

typedef struct RmNode {
    int kind;           /* RmKind */
    int op;             /* RK_BIN: the operator char; RK_CALL: RmFunc;
                           RK_CMP: index into rm_cmp_name; RK_RED: RmRed */
    double num;         /* RK_NUM: the value, as the printed text reads */
    int value;          /* RK_READ: which value */
    int nsub, sub[3];   /* RK_READ: the subscripts (index slots) */
    int narg, arg[3];   /* operands */
    int nred, red[4];   /* RK_RED: the slots the reduction binds */
    double bound;       /* an upper bound of |value| at every point */
} RmNode;

/* RV_PENDING: a definition whose right side is being generated (it may
 * not read itself). */
typedef enum { RV_CONST, RV_PARAM, RV_INPUT, RV_DEF, RV_PENDING } RmRole;

typedef struct RmValue {
    char name[32];
    int role;           /* RmRole */
    int rank, dim[3];
    char dimtext[3][16];/* how each extent is written: a number or a const */
    int expr;           /* RV_CONST, RV_DEF: the right side */
    int nfree, free[3]; /* index-form definition: the slots on the left */
    int uses;           /* reads by later statements */
    double bound;
    double num;         /* RV_CONST: its value */
    long offset;        /* RV_PARAM, RV_INPUT: first entry in the point */
    double complex *data;   /* evaluator storage, row-major */
} RmValue;

typedef struct RmModel {
    uint64_t rng;
    RmValue val[RM_MAX_VALUES];
    int nval;
    RmNode node[RM_MAX_NODES];
    int nnode;
    int slot_extent[RM_MAX_SLOTS];
    char slot_name[RM_MAX_SLOTS][8];
    int slot_used[RM_MAX_SLOTS];
    int nslot;
    int stmt_first_slot;    /* slots of the statement being generated */
    int output;             /* the value named by `output` */
    int extents[3], nextents;   /* the extents arrays of this model share */
    char *text;             /* the model file */
    size_t len;
    long nparam, ninput;    /* entries in the point */
    double *param, *input;  /* the point: flat, declaration order */
    /* evaluator state */
    long slotval[RM_MAX_SLOTS];
    long elem;              /* whole-array form: the element being computed */
    uint64_t sig;           /* hash of every discrete decision taken */
    int blocked;            /* a perturbed operand reached atan2, erf, erfc
                               or lgamma, which have no complex form here */
} RmModel;

/* ------------------------------------------------------------- text */

static inline void rm_put(RmModel *m, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    int n = vsnprintf(m->text + m->len, RM_MAX_TEXT - m->len, fmt, ap);
    va_end(ap);
    if (n < 0 || m->len + (size_t)n >= RM_MAX_TEXT) {
        fputs("randmodel: model text too long\n", stderr);
        abort();
    }
    m->len += (size_t)n;
}

/* Precedence levels of the language (docs/language.md section 6); 10 is
 * a primary.  A child printed below the level its place needs gets
 * parentheses, so the text has exactly the parentheses it needs. */
static inline int rm_prec(const RmNode *n)
{
    switch (n->kind) {
    case RK_SEL: return 1;
    case RK_OR: return 2;
    case RK_AND: return 3;
    case RK_CMP: return n->op >= 4 ? 4 : 5;
    case RK_BIN:
        return n->op == '^' ? 9 : n->op == '*' || n->op == '/' ? 7 : 6;
    case RK_NEG: case RK_NOT: return 8;
    default: return 10;
    }
}

static inline void rm_print(RmModel *m, int id, int need);

/* After a binary operator a statement may go on on the next line. */
static inline void rm_print_op(RmModel *m, const char *op)
{
    if (rm_chance(&m->rng, 0.02))
        rm_put(m, " %s\n        ", op);
    else
        rm_put(m, " %s ", op);
}

static inline void rm_print_slots(RmModel *m, const int *slot, int n)
{
    for (int k = 0; k < n; k++)
        rm_put(m, "%s%s", k ? ", " : "", m->slot_name[slot[k]]);
}

static inline void rm_print(RmModel *m, int id, int need)
{
    const RmNode *n = &m->node[id];
    int p = rm_prec(n), paren = p < need;
    if (paren)
        rm_put(m, "(");
    switch (n->kind) {
    case RK_NUM:
        rm_put(m, "%.15g", n->num);
        break;
    case RK_READ:
        rm_put(m, "%s", m->val[n->value].name);
        if (n->nsub) {
            rm_put(m, "[");
            rm_print_slots(m, n->sub, n->nsub);
            rm_put(m, "]");
        }
        break;
    case RK_NEG:
        rm_put(m, "-");
        rm_print(m, n->arg[0], 9);
        break;
    case RK_NOT:
        rm_put(m, "!");
        rm_print(m, n->arg[0], 8);
        break;
    case RK_BIN: {
        char op[2] = {(char)n->op, 0};
        if (n->op == '^') {         /* right-associative; x^-1 is allowed */
            rm_print(m, n->arg[0], 10);
            rm_put(m, "^");
            rm_print(m, n->arg[1], 8);
        } else {
            rm_print(m, n->arg[0], p);
            rm_print_op(m, op);
            rm_print(m, n->arg[1], p + 1);
        }
        break;
    }
    case RK_CMP:
        rm_print(m, n->arg[0], 6);
        rm_print_op(m, rm_cmp_name[n->op]);
        rm_print(m, n->arg[1], 6);
        break;
    case RK_AND:
    case RK_OR:
        rm_print(m, n->arg[0], p);
        rm_print_op(m, n->kind == RK_AND ? "&&" : "||");
        rm_print(m, n->arg[1], p + 1);
        break;
    case RK_SEL:
        rm_print(m, n->arg[0], 2);
        rm_put(m, " ? ");
        rm_print(m, n->arg[1], 1);
        rm_put(m, " : ");
        rm_print(m, n->arg[2], 1);
        break;
    case RK_CALL:
        rm_put(m, "%s(", rm_func_name[n->op]);
        for (int k = 0; k < n->narg; k++) {
            if (k)
                rm_put(m, ", ");
            rm_print(m, n->arg[k], 1);
        }
        rm_put(m, ")");
        break;
    case RK_RED:
        rm_put(m, "%s(", rm_red_name[n->op]);
        rm_print_slots(m, n->red, n->nred);
        rm_put(m, ": ");
        rm_print(m, n->arg[0], 1);
        rm_put(m, ")");
        break;
    }
    if (paren)
        rm_put(m, ")");
}

/* ----------------------------------------------------------- building */

static inline int rm_node(RmModel *m, int kind, int op, double bound)
{
    if (m->nnode >= RM_MAX_NODES) {
        fputs("randmodel: too many nodes\n", stderr);
        abort();
    }
    RmNode *n = &m->node[m->nnode];
    memset(n, 0, sizeof *n);
    n->kind = kind;
    n->op = op;
    n->bound = bound;
    return m->nnode++;
}

static inline int rm_num(RmModel *m, double v)
{
    char text[32];
    snprintf(text, sizeof text, "%.15g", v);
    int id = rm_node(m, RK_NUM, 0, 0);
    m->node[id].num = strtod(text, NULL);   /* what the model file says */
    m->node[id].bound = fabs(m->node[id].num);
    return id;
}

static inline int rm_un(RmModel *m, int kind, int op, int a, double bound)
{
    int id = rm_node(m, kind, op, bound);
    m->node[id].narg = 1;
    m->node[id].arg[0] = a;
    return id;
}

static inline int rm_bin(RmModel *m, int kind, int op, int a, int b,
                         double bound)
{
    int id = rm_node(m, kind, op, bound);
    m->node[id].narg = 2;
    m->node[id].arg[0] = a;
    m->node[id].arg[1] = b;
    return id;
}

static inline double rm_bnd(const RmModel *m, int id)
{
    return m->node[id].bound;
}

/* a + b, a - b, a * b with their bounds */
static inline int rm_arith(RmModel *m, int op, int a, int b)
{
    double ba = rm_bnd(m, a), bb = rm_bnd(m, b);
    return rm_bin(m, RK_BIN, op, a, b, op == '*' ? ba * bb : ba + bb);
}

static int rm_call1(RmModel *m, RmFunc f, int a, double bound)
{
    return rm_un(m, RK_CALL, f, a, bound);
}

static int rm_call2(RmModel *m, RmFunc f, int a, int b, double bound)
{
    return rm_bin(m, RK_CALL, f, a, b, bound);
}

static inline int rm_read(RmModel *m, int value, const int *sub, int nsub)
{
    int id = rm_node(m, RK_READ, 0, m->val[value].bound);
    RmNode *n = &m->node[id];
    n->value = value;
    n->nsub = nsub;
    for (int k = 0; k < nsub; k++) {
        n->sub[k] = sub[k];
        m->slot_used[sub[k]] = 1;
    }
    m->val[value].uses++;
    return id;
}

static inline int rm_new_slot(RmModel *m, int extent)
{
    if (m->nslot >= RM_MAX_SLOTS) {
        fputs("randmodel: too many indices\n", stderr);
        abort();
    }
    int s = m->nslot++;
    m->slot_extent[s] = extent;
    m->slot_used[s] = 0;
    snprintf(m->slot_name[s], sizeof m->slot_name[s], "i%d",
             s - m->stmt_first_slot);
    return s;
}

/* --------------------------------------------------------- generation */

/* Where an expression is being generated: which index slots are in scope,
 * and in whole-array form the shape unsubscripted arrays must have. */
typedef struct RmCtx {
    int whole;          /* whole-array form, outside any reduction */
    int rank, dim[3];   /* whole: the shape */
    int nscope, scope[16];
    int red_depth;      /* reductions around this point */
} RmCtx;

static inline int rm_expr(RmModel *m, const RmCtx *c, int depth);
static inline double complex rm_eval_node(RmModel *m, int id);

/* Values too large to feed exp or a product are squashed into a bounded
 * range first: this keeps every model finite at every point.  sin and cos
 * get arguments below RM_WAVE: beyond that they oscillate faster than any
 * difference step can follow where the complex step is blocked. */
#define RM_BIG 1e3
#define RM_WAVE 50

static inline int rm_squash(RmModel *m, int a)
{
    switch (rm_below(&m->rng, 5)) {
    case 0: return rm_call1(m, RF_TANH, a, 1);
    case 1: return rm_call1(m, RF_ATAN, a, 1.6);
    case 2: return rm_call1(m, RF_ERF, a, 1);
    case 3: return rm_call1(m, RF_SIGMOID, a, 1);
    default: {    /* a / (1 + abs(a)) */
        int den = rm_arith(m, '+', rm_num(m, 1),
                           rm_call1(m, RF_ABS, a, rm_bnd(m, a)));
        return rm_bin(m, RK_BIN, '/', a, den, 1);
    }
    }
}

/* a, squashed when its bound exceeds lim */
static inline int rm_limit(RmModel *m, int a, double lim)
{
    return rm_bnd(m, a) > lim ? rm_squash(m, a) : a;
}

/* An expression in [-1, 1]. */
static inline int rm_unit_expr(RmModel *m, int a)
{
    switch (rm_below(&m->rng, 5)) {
    case 0: return rm_call1(m, RF_TANH, a, 1);
    case 1: return rm_call1(m, RF_SIN, rm_limit(m, a, RM_WAVE), 1);
    case 2: return rm_call1(m, RF_COS, rm_limit(m, a, RM_WAVE), 1);
    case 3: return rm_call1(m, RF_ERF, a, 1);
    default: {    /* 2 sigmoid(a) - 1 */
        int s = rm_call1(m, RF_SIGMOID, a, 1);
        return rm_arith(m, '-', rm_arith(m, '*', rm_num(m, 2), s),
                        rm_num(m, 1));
    }
    }
}

/* c * (expression in [-1, 1]), with |c| < 1: inside (-1, 1) for asin,
 * acos, atanh and log1p. */
static inline int rm_inside_one(RmModel *m, int a)
{
    static const double c[] = {0.5, 0.9, 0.95};
    double k = c[rm_below(&m->rng, 3)];
    return rm_bin(m, RK_BIN, '*', rm_num(m, k), rm_unit_expr(m, a), k);
}

/* An expression no smaller than *lo > 0 and no larger than *hi. */
static inline int rm_positive(RmModel *m, int a, double *lo, double *hi)
{
    static const double cs[] = {0.5, 1, 1.5, 2};
    double c = cs[rm_below(&m->rng, 4)], b = rm_bnd(m, a);
    int shape = rm_below(&m->rng, 7);
    int cn = shape == 2 || shape == 4 ? -1 : rm_num(m, c);
    switch (shape) {
    case 0: {       /* c + a^2 */
        a = rm_limit(m, a, 30);
        b = rm_bnd(m, a);
        *lo = c, *hi = c + b * b;
        return rm_arith(m, '+', cn, rm_bin(m, RK_BIN, '^', a, rm_num(m, 2),
                                           b * b));
    }
    case 1:         /* c + abs(a) */
        *lo = c, *hi = c + b;
        return rm_arith(m, '+', cn, rm_call1(m, RF_ABS, a, b));
    case 2:         /* exp(a), a kept small */
        a = rm_limit(m, a, 3);
        b = rm_bnd(m, a);
        *lo = exp(-b), *hi = exp(b);
        return rm_call1(m, RF_EXP, a, *hi);
    case 3:         /* c + softplus(a) */
        *lo = c, *hi = c + b + 1;
        return rm_arith(m, '+', cn, rm_call1(m, RF_SOFTPLUS, a, b + 1));
    case 4:         /* cosh(a) */
        a = rm_limit(m, a, 3);
        b = rm_bnd(m, a);
        *lo = 1, *hi = cosh(b);
        return rm_call1(m, RF_COSH, a, *hi);
    case 5:         /* hypot(a, c) */
        *lo = c, *hi = b + c;
        return rm_call2(m, RF_HYPOT, a, cn, *hi);
    default:        /* c + erfc(a) */
        *lo = c, *hi = c + 2;
        return rm_arith(m, '+', cn, rm_call1(m, RF_ERFC, a, 2));
    }
}

static inline int rm_pos(RmModel *m, int a)
{
    double lo, hi;
    return rm_positive(m, a, &lo, &hi);
}

/* A builtin applied to a (and sometimes a second expression), with its
 * arguments kept inside the function's domain. */
static inline int rm_call(RmModel *m, const RmCtx *c, int depth, int a)
{
    double b = rm_bnd(m, a), lo, hi;
    RmFunc f = (RmFunc)rm_below(&m->rng, RF_COUNT);
    switch (f) {
    case RF_ABS: case RF_RELU: case RF_FLOOR: case RF_CEIL: case RF_ROUND:
    case RF_TRUNC:
        return rm_call1(m, f, a, b + 1);
    case RF_SIGN:
        return rm_call1(m, f, a, 1);
    case RF_SIN: case RF_COS:
        return rm_call1(m, f, rm_limit(m, a, RM_WAVE), 1);
    case RF_TANH: case RF_ERF: case RF_SIGMOID:
        return rm_call1(m, f, a, 1);
    case RF_ATAN:
        return rm_call1(m, f, a, 1.6);
    case RF_ERFC:
        return rm_call1(m, f, a, 2);
    case RF_ASINH:
        return rm_call1(m, f, a, asinh(b));
    case RF_SOFTPLUS:
        return rm_call1(m, f, a, b + 1);
    case RF_SQRT: {
        int p = rm_positive(m, a, &lo, &hi);
        return rm_call1(m, f, p, sqrt(hi));
    }
    case RF_CBRT: {
        int p = rm_positive(m, a, &lo, &hi);
        if (rm_chance(&m->rng, 0.5))
            p = rm_un(m, RK_NEG, 0, p, hi);
        return rm_call1(m, f, p, cbrt(hi));
    }
    case RF_EXP: case RF_EXPM1: case RF_SINH: case RF_COSH:
        a = rm_limit(m, a, 4);
        return rm_call1(m, f, a, exp(rm_bnd(m, a)));
    case RF_LOG: case RF_LOG2: case RF_LOG10: {
        int p = rm_positive(m, a, &lo, &hi);
        return rm_call1(m, f, p, fmax(fabs(log(lo)), fabs(log(hi))) * 1.5);
    }
    case RF_LOG1P:
        if (rm_chance(&m->rng, 0.5))
            return rm_call1(m, f, rm_inside_one(m, a), 3.0);
        {
            int p = rm_positive(m, a, &lo, &hi);
            return rm_call1(m, f, p, log1p(hi));
        }
    case RF_TAN:
        if (b > 1.3)
            a = rm_arith(m, '*', rm_num(m, 1.3), rm_unit_expr(m, a));
        return rm_call1(m, f, a, 4);
    case RF_ASIN: case RF_ACOS: case RF_ATANH:
        return rm_call1(m, f, rm_inside_one(m, a), 4);
    case RF_ACOSH: {    /* acosh(1 + positive) */
        int p = rm_positive(m, a, &lo, &hi);
        return rm_call1(m, f, rm_arith(m, '+', rm_num(m, 1), p),
                        acosh(1 + hi));
    }
    case RF_LGAMMA:
        if (rm_chance(&m->rng, 0.2)) {  /* (-0.8, -0.2): negative, no pole */
            int u = rm_arith(m, '*', rm_num(m, 0.3), rm_unit_expr(m, a));
            return rm_call1(m, f, rm_arith(m, '+', rm_un(m, RK_NEG, 0,
                                                         rm_num(m, 0.5), 0.5),
                                           u), 2);
        } else {
            int p = rm_positive(m, a, &lo, &hi);
            return rm_call1(m, f, p, fabs(lgamma(hi)) + 1);
        }
    case RF_ATAN2: case RF_HYPOT: {  /* one argument positive: no origin */
        int o = rm_expr(m, c, depth - 1);
        int p = rm_positive(m, o, &lo, &hi);
        int first = rm_chance(&m->rng, 0.5);
        double bound = f == RF_ATAN2 ? 3.2 : b + hi;
        return rm_call2(m, f, first ? a : p, first ? p : a, bound);
    }
    case RF_POW: {      /* positive base and bounded exponent, or a number
                           as the base */
        if (rm_chance(&m->rng, 0.2)) {
            a = rm_limit(m, a, 3);
            static const double bases[] = {2, 0.5, 10, 1.5};
            int base = rm_num(m, bases[rm_below(&m->rng, 4)]);
            return rm_call2(m, f, base, a, pow(10, rm_bnd(m, a)));
        }
        int e = rm_limit(m, rm_expr(m, c, depth - 1), 3);
        int p = rm_positive(m, a, &lo, &hi);
        return rm_call2(m, f, p, e, pow(fmax(hi, 1 / lo), rm_bnd(m, e)));
    }
    case RF_MIN: case RF_MAX: {
        int o = rm_expr(m, c, depth - 1);
        return rm_call2(m, f, a, o, fmax(b, rm_bnd(m, o)));
    }
    case RF_CLAMP: {
        /* mostly hi = lo + positive; lo > hi is allowed and gives lo */
        int l = rm_expr(m, c, depth - 1), h;
        if (rm_chance(&m->rng, 0.7))
            h = rm_arith(m, '+', l, rm_pos(m, rm_expr(m, c, depth - 1)));
        else
            h = rm_expr(m, c, depth - 1);
        int id = rm_node(m, RK_CALL, f, fmax(b, fmax(rm_bnd(m, l),
                                                     rm_bnd(m, h))));
        m->node[id].narg = 3;
        m->node[id].arg[0] = a;
        m->node[id].arg[1] = l;
        m->node[id].arg[2] = h;
        return id;
    }
    case RF_COUNT:
        break;
    }
    abort();
}

/* a ^ constant, or positive ^ expression, or positive ^ scalar input */
static inline int rm_power(RmModel *m, const RmCtx *c, int depth, int a)
{
    static const double ints[] = {2, 3, 2, 1, 0};
    static const double reals[] = {0.5, 1.5, -0.5, -1, -2, 2.5};
    double lo, hi;
    switch (rm_below(&m->rng, 4)) {
    case 0: {       /* any base, integer exponent: the power rule */
        double k = ints[rm_below(&m->rng, 5)];
        a = rm_limit(m, a, 30);
        /* an integer const as exponent, when one of that value exists */
        for (int v = 0; v < m->nval; v++)
            if (m->val[v].role == RV_CONST && m->val[v].rank == 0 &&
                m->val[v].num == k && k >= 2 &&
                rm_chance(&m->rng, 0.5))
                return rm_bin(m, RK_BIN, '^', a, rm_read(m, v, NULL, 0),
                              pow(rm_bnd(m, a), k));
        return rm_bin(m, RK_BIN, '^', a, rm_num(m, k),
                      fmax(1, pow(rm_bnd(m, a), k)));
    }
    case 1: {       /* positive base, real constant exponent */
        double k = reals[rm_below(&m->rng, 6)];
        int p = rm_positive(m, a, &lo, &hi);
        int e = k < 0 ? rm_un(m, RK_NEG, 0, rm_num(m, -k), -k) : rm_num(m, k);
        return rm_bin(m, RK_BIN, '^', p, e, pow(fmax(hi, 1 / lo), fabs(k)));
    }
    default: {      /* positive base; exponent an expression or an input */
        int p = rm_positive(m, a, &lo, &hi);
        int e = -1;
        if (rm_chance(&m->rng, 0.4))
            for (int v = 0; v < m->nval; v++)
                if (m->val[v].role == RV_INPUT && m->val[v].rank == 0) {
                    e = rm_read(m, v, NULL, 0);
                    break;
                }
        if (e < 0)
            e = rm_limit(m, rm_expr(m, c, depth - 1), 3);
        return rm_bin(m, RK_BIN, '^', p, e,
                      pow(fmax(hi, 1 / lo), rm_bnd(m, e)));
    }
    }
}

/* Can value v be read here: whole-array shape, or every dimension matched
 * by an index in scope?  sub[] receives the subscripts chosen. */
static inline int rm_readable(RmModel *m, const RmCtx *c, int v, int *sub,
                              int *nsub)
{
    const RmValue *x = &m->val[v];
    *nsub = 0;
    if (x->rank == 0)
        return 1;
    if (c->whole) {
        if (x->rank != c->rank)
            return 0;
        for (int d = 0; d < x->rank; d++)
            if (x->dim[d] != c->dim[d])
                return 0;
        return 1;
    }
    for (int d = 0; d < x->rank; d++) {
        int pick = -1, seen = 0;
        for (int k = 0; k < c->nscope; k++)
            if (m->slot_extent[c->scope[k]] == x->dim[d] &&
                rm_below(&m->rng, ++seen) == 0)
                pick = c->scope[k];
        if (pick < 0)
            return 0;
        sub[d] = pick;
    }
    *nsub = x->rank;
    return 1;
}

static inline int rm_leaf(RmModel *m, const RmCtx *c)
{
    /* half the time, a param nothing reads yet: every param gets used */
    for (int v = 0; v < m->nval && rm_chance(&m->rng, 0.5); v++) {
        int sub[3], nsub;
        if (m->val[v].role == RV_PARAM && m->val[v].uses == 0 &&
            rm_readable(m, c, v, sub, &nsub))
            return rm_read(m, v, sub, nsub);
    }
    if (rm_chance(&m->rng, 0.15)) {
        static const double nums[] = {1, 2, 3, 0.5, 0.25, 0.1, 1.5, 0.75};
        if (rm_chance(&m->rng, 0.5))
            return rm_num(m, nums[rm_below(&m->rng, 8)]);
        return rm_num(m, rm_below(&m->rng, 300) / 100.0);
    }
    for (int tries = 0; tries < 20; tries++) {
        int v = rm_below(&m->rng, m->nval), sub[3], nsub;
        int role = m->val[v].role;
        int data = role == RV_DEF || role == RV_PARAM || role == RV_INPUT;
        if (!data && !(role == RV_CONST && rm_chance(&m->rng, 0.5)))
            continue;   /* consts come half as often as other values */
        if (rm_readable(m, c, v, sub, &nsub))
            return rm_read(m, v, sub, nsub);
    }
    return rm_num(m, 1 + rm_below(&m->rng, 40) / 8.0);
}

static inline int rm_cond(RmModel *m, const RmCtx *c, int depth)
{
    int r = rm_below(&m->rng, 10);
    if (depth > 0 && r == 0)
        return rm_bin(m, RK_AND, 0, rm_cond(m, c, depth - 1),
                      rm_cond(m, c, depth - 1), 1);
    if (depth > 0 && r == 1)
        return rm_bin(m, RK_OR, 0, rm_cond(m, c, depth - 1),
                      rm_cond(m, c, depth - 1), 1);
    if (depth > 0 && r == 2)
        return rm_un(m, RK_NOT, 0, rm_cond(m, c, depth - 1), 1);
    if (r == 3) {       /* == and != between values that can be equal */
        static const RmFunc steps[] = {RF_FLOOR, RF_ROUND, RF_SIGN};
        RmFunc f = steps[rm_below(&m->rng, 3)];
        int x = rm_expr(m, c, depth);
        int a = rm_call1(m, f, x, rm_bnd(m, x) + 1), b;
        if (rm_chance(&m->rng, 0.5)) {
            int y = rm_expr(m, c, depth);
            b = rm_call1(m, f, y, rm_bnd(m, y) + 1);
        } else {
            b = rm_num(m, rm_below(&m->rng, 2));
        }
        return rm_bin(m, RK_CMP, 4 + rm_below(&m->rng, 2), a, b, 1);
    }
    int a = rm_expr(m, c, depth);
    int b = rm_chance(&m->rng, 0.3) ? rm_num(m, rm_below(&m->rng, 3) * 0.5)
                                   : rm_expr(m, c, depth);
    return rm_bin(m, RK_CMP, rm_below(&m->rng, 4), a, b, 1);
}

/* A reduction over an array: each of its dimensions subscripted by an
 * index in scope of that extent or by one the reduction binds, with a
 * body that may read more arrays through the new indices. */
static inline int rm_reduce(RmModel *m, const RmCtx *c, int depth)
{
    int cand[RM_MAX_VALUES], ncand = 0;
    for (int v = 0; v < m->nval; v++)
        if (m->val[v].rank > 0 && m->val[v].role != RV_CONST &&
            m->val[v].role != RV_PENDING)
            cand[ncand++] = v;
    if (ncand == 0)
        return rm_leaf(m, c);
    int v = cand[rm_below(&m->rng, ncand)];
    const RmValue *x = &m->val[v];
    RmCtx body = *c;
    body.whole = 0;
    body.red_depth++;
    int sub[3], red[4], nred = 0;
    for (int d = 0; d < x->rank; d++) {
        sub[d] = -1;
        if (rm_chance(&m->rng, 0.3))        /* an index already in scope */
            for (int k = 0; k < c->nscope && !c->whole; k++)
                if (m->slot_extent[c->scope[k]] == x->dim[d])
                    sub[d] = c->scope[k];
        if (sub[d] < 0 && rm_chance(&m->rng, 0.3))  /* repeat a new one */
            for (int k = 0; k < nred; k++)
                if (m->slot_extent[red[k]] == x->dim[d])
                    sub[d] = red[k];
        if (sub[d] < 0)
            sub[d] = red[nred++] = rm_new_slot(m, x->dim[d]);
    }
    if (nred == 0)
        sub[0] = red[nred++] = rm_new_slot(m, x->dim[0]);
    /* sometimes reuse the name of a sibling reduction's index: names are
     * local to a reduction, so only the ones bound around it are taken */
    for (int k = 0; k < nred; k++)
        for (int t = m->stmt_first_slot; t < red[k]; t++) {
            int taken = 0;
            for (int j = 0; j < c->nscope; j++)
                taken |= strcmp(m->slot_name[c->scope[j]],
                                m->slot_name[t]) == 0;
            for (int j = 0; j < nred; j++)
                taken |= j != k && strcmp(m->slot_name[red[j]],
                                          m->slot_name[t]) == 0;
            if (!taken && rm_chance(&m->rng, 0.2)) {
                memcpy(m->slot_name[red[k]], m->slot_name[t],
                       sizeof m->slot_name[t]);
                break;
            }
        }
    /* the listed order is the loop order: shuffle it */
    for (int k = nred - 1; k > 0; k--) {
        int j = rm_below(&m->rng, k + 1), t = red[k];
        red[k] = red[j];
        red[j] = t;
    }
    for (int k = 0; k < nred; k++)
        body.scope[body.nscope++] = red[k];
    int rd = rm_read(m, v, sub, x->rank), e = rd;
    switch (rm_below(&m->rng, 5)) {
    case 0: break;
    case 1: e = rm_arith(m, '*', rd, rm_expr(m, &body, depth - 1)); break;
    case 2: e = rm_arith(m, '+', rm_expr(m, &body, depth - 1), rd); break;
    case 3: e = rm_call(m, &body, depth - 1, rd); break;
    default: e = rm_arith(m, '-', rd, rm_expr(m, &body, depth - 1)); break;
    }
    e = rm_limit(m, e, RM_BIG);
    int op = rm_below(&m->rng, 4);
    long n = 1;
    for (int k = 0; k < nred; k++)
        n *= m->slot_extent[red[k]];
    double b = rm_bnd(m, e);
    int id = rm_un(m, RK_RED, op, e,
                   op == RR_SUM ? b * (double)n
                                : op == RR_LSE ? b + log((double)n) : b);
    m->node[id].nred = nred;
    memcpy(m->node[id].red, red, sizeof red);
    return id;
}

static inline int rm_expr(RmModel *m, const RmCtx *c, int depth)
{
    if (depth <= 0 || rm_chance(&m->rng, 0.2))
        return rm_leaf(m, c);
    int r = rm_below(&m->rng, 100), e;
    if (r < 30) {
        static const int ops[] = {'+', '-', '*'};
        e = rm_arith(m, ops[rm_below(&m->rng, 3)], rm_expr(m, c, depth - 1),
                     rm_expr(m, c, depth - 1));
    } else if (r < 36) {    /* a / positive */
        double lo, hi;
        int a = rm_expr(m, c, depth - 1);
        int d = rm_positive(m, rm_expr(m, c, depth - 1), &lo, &hi);
        e = rm_bin(m, RK_BIN, '/', a, d, rm_bnd(m, a) / lo);
    } else if (r < 40) {
        int a = rm_expr(m, c, depth - 1);
        e = rm_un(m, RK_NEG, 0, a, rm_bnd(m, a));
    } else if (r < 65) {
        e = rm_call(m, c, depth, rm_expr(m, c, depth - 1));
    } else if (r < 73) {
        e = rm_power(m, c, depth, rm_expr(m, c, depth - 1));
    } else if (r < 83) {
        int cond = rm_cond(m, c, depth - 1 > 1 ? 1 : depth - 1);
        int a = rm_expr(m, c, depth - 1), b = rm_expr(m, c, depth - 1);
        e = rm_node(m, RK_SEL, 0, fmax(rm_bnd(m, a), rm_bnd(m, b)));
        m->node[e].narg = 3;
        m->node[e].arg[0] = cond;
        m->node[e].arg[1] = a;
        m->node[e].arg[2] = b;
    } else if (c->red_depth < 2) {
        e = rm_reduce(m, c, depth - 1);
    } else {
        e = rm_leaf(m, c);
    }
    return rm_limit(m, e, RM_BIG);
}

/* ------------------------------------------------------ declarations */

/* Names some C libraries or the emitted code might trip over; the
 * language promises they all work (docs/language.md section 3). */
static const char *const rm_risky[] = {"p", "in", "grad", "x", "work", "y0",
                                       "j1", "gamma", "time", "index",
                                       "exp_rate", "jn", "y1", "abs_x"};

static inline int rm_add_value(RmModel *m, int role, const char *prefix)
{
    if (m->nval >= RM_MAX_VALUES) {
        fputs("randmodel: too many values\n", stderr);
        abort();
    }
    int v = m->nval++;
    RmValue *x = &m->val[v];
    memset(x, 0, sizeof *x);
    x->role = role;
    x->expr = -1;
    snprintf(x->name, sizeof x->name, "%s%d", prefix, v);
    if (rm_chance(&m->rng, 0.1)) {
        const char *r = rm_risky[rm_below(&m->rng, 14)];
        int taken = 0;
        for (int k = 0; k < v; k++)
            taken |= strcmp(m->val[k].name, r) == 0;
        if (!taken)
            snprintf(x->name, sizeof x->name, "%s", r);
    }
    return v;
}

/* A random shape using the model's extents, sometimes written through an
 * integer const of the same value. */
static inline void rm_shape(RmModel *m, RmValue *x, int maxrank)
{
    x->rank = rm_below(&m->rng, maxrank + 1);
    for (int d = 0; d < x->rank; d++) {
        x->dim[d] = m->extents[rm_below(&m->rng, m->nextents)];
        snprintf(x->dimtext[d], sizeof x->dimtext[d], "%d", x->dim[d]);
        for (int v = 0; v < m->nval; v++)
            if (m->val[v].role == RV_CONST && m->val[v].rank == 0 &&
                m->val[v].num == x->dim[d] &&
                rm_chance(&m->rng, 0.5))
                snprintf(x->dimtext[d], sizeof x->dimtext[d], "%s",
                         m->val[v].name);
    }
}

static inline long rm_size(const RmValue *x)
{
    long n = 1;
    for (int d = 0; d < x->rank; d++)
        n *= x->dim[d];
    return n;
}

/* const NAME = EXPR: whole numbers usable as extents, and a few real
 * constants written with operators and builtins. */
static inline void rm_gen_const(RmModel *m)
{
    int v = rm_add_value(m, RV_CONST, "K");
    RmValue *x = &m->val[v];
    int e;
    switch (rm_below(&m->rng, 4)) {
    case 0:     /* an extent, sometimes as a sum folded at compile time */
        if (rm_chance(&m->rng, 0.5))
            e = rm_num(m, m->extents[rm_below(&m->rng, m->nextents)]);
        else {
            int k = m->extents[rm_below(&m->rng, m->nextents)];
            e = rm_arith(m, '+', rm_num(m, k - 1), rm_num(m, 1));
        }
        break;
    case 1:
        e = rm_num(m, rm_below(&m->rng, 400) / 100.0 + 0.01);
        break;
    case 2: {   /* a builtin of a number */
        static const RmFunc fs[] = {RF_EXP, RF_SQRT, RF_LOG, RF_ATAN, RF_ERF,
                                    RF_LGAMMA, RF_COS};
        RmFunc f = fs[rm_below(&m->rng, 7)];
        e = rm_call1(m, f, rm_num(m, 0.25 + rm_below(&m->rng, 8) * 0.25), 0);
        break;
    }
    default:    /* 2 * atan(1), 1 / 3, 2^0.5 */
        e = rm_bin(m, RK_BIN, "*/^"[rm_below(&m->rng, 3)],
                   rm_num(m, 1 + rm_below(&m->rng, 3)),
                   rm_num(m, 0.5 + rm_below(&m->rng, 4)), 0);
        break;
    }
    x->expr = e;
    x->num = creal(rm_eval_node(m, e));
    x->bound = fabs(x->num);
    rm_put(m, "const %s = ", x->name);
    rm_print(m, e, 0);
    rm_put(m, "\n");
}

static inline void rm_declare(RmModel *m, int role)
{
    int n = 1 + rm_below(&m->rng, 3);
    rm_put(m, "%s ", role == RV_PARAM ? "param" : "input");
    for (int k = 0; k < n; k++) {
        int v = rm_add_value(m, role, role == RV_PARAM ? "w" : "d");
        RmValue *x = &m->val[v];
        rm_shape(m, x, 3);
        x->bound = 2;   /* the point is drawn from [-2, 2] */
        rm_put(m, "%s%s", k ? ", " : "", x->name);
        for (int d = 0; d < x->rank; d++)
            rm_put(m, "%s%s", d ? ", " : "[", x->dimtext[d]);
        if (x->rank)
            rm_put(m, "]");
    }
    rm_put(m, "\n");
}

/* ------------------------------------------------------- definitions */

static inline int rm_array_values(const RmModel *m, int *out)
{
    int n = 0;
    for (int v = 0; v < m->nval; v++)
        if (m->val[v].rank > 0 && m->val[v].role != RV_CONST)
            out[n++] = v;
    return n;
}

/* NAME[free] = EXPR: the free indices are some dimensions of an anchor
 * array, in a random order; its other dimensions are reduced over. */
static inline int rm_index_def(RmModel *m, RmValue *x, int anchor, int depth)
{
    const RmValue *a = &m->val[anchor];
    int order[3] = {0, 1, 2};
    for (int k = a->rank - 1; k > 0; k--) {
        int j = rm_below(&m->rng, k + 1), t = order[k];
        order[k] = order[j];
        order[j] = t;
    }
    int nfree = 1 + rm_below(&m->rng, a->rank), sub[3];
    RmCtx c;
    memset(&c, 0, sizeof c);
    for (int k = 0; k < nfree; k++) {
        int s = rm_new_slot(m, a->dim[order[k]]);
        x->free[k] = sub[order[k]] = s;
        x->dim[k] = a->dim[order[k]];
        snprintf(x->dimtext[k], sizeof x->dimtext[k], "%d", x->dim[k]);
        c.scope[c.nscope++] = s;
    }
    x->nfree = x->rank = nfree;
    int e = rm_expr(m, &c, depth), all = 1;
    for (int k = 0; k < nfree; k++)
        all &= m->slot_used[x->free[k]];
    if (all && rm_chance(&m->rng, 0.5))
        return rm_limit(m, e, RM_BIG);
    /* the anchor, its other dimensions reduced over, uses every free index */
    RmCtx inner = c;
    int red[4] = {0, 0, 0, 0}, nred = 0;
    for (int k = nfree; k < a->rank; k++) {
        int s = rm_new_slot(m, a->dim[order[k]]);
        sub[order[k]] = red[nred++] = s;
        inner.scope[inner.nscope++] = s;
    }
    int anchor_term = rm_read(m, anchor, sub, a->rank);
    if (nred) {
        int body = rm_chance(&m->rng, 0.5)
                       ? anchor_term
                       : rm_arith(m, '*', anchor_term,
                                  rm_expr(m, &inner, depth - 2));
        body = rm_limit(m, body, RM_BIG);
        int op = rm_below(&m->rng, 4);
        long n = 1;
        for (int k = 0; k < nred; k++)
            n *= m->slot_extent[red[k]];
        double b = rm_bnd(m, body);
        anchor_term = rm_un(m, RK_RED, op, body,
                            op == RR_SUM ? b * (double)n : b + log((double)n));
        m->node[anchor_term].nred = nred;
        memcpy(m->node[anchor_term].red, red, sizeof red);
    }
    switch (rm_below(&m->rng, 4)) {
    case 0: e = rm_arith(m, '+', anchor_term, e); break;
    case 1: e = rm_arith(m, '*', e, anchor_term); break;
    case 2: e = rm_arith(m, '-', e, anchor_term); break;
    default: e = rm_call(m, &c, 1, rm_arith(m, '+', e, anchor_term)); break;
    }
    return rm_limit(m, e, RM_BIG);
}

/* NAME = EXPR over arrays of the anchor's shape (whole-array form). */
static inline int rm_whole_def(RmModel *m, RmValue *x, int anchor, int depth)
{
    const RmValue *a = &m->val[anchor];
    RmCtx c;
    memset(&c, 0, sizeof c);
    c.whole = 1;
    c.rank = x->rank = a->rank;
    for (int d = 0; d < a->rank; d++) {
        c.dim[d] = x->dim[d] = a->dim[d];
        snprintf(x->dimtext[d], sizeof x->dimtext[d], "%d", x->dim[d]);
    }
    int e = rm_expr(m, &c, depth), has_array = 0;
    /* is some array read unsubscripted outside any reduction? */
    int stack[RM_MAX_NODES], top = 0;
    stack[top++] = e;
    while (top > 0 && !has_array) {
        const RmNode *n = &m->node[stack[--top]];
        if (n->kind == RK_READ && n->nsub == 0 && m->val[n->value].rank > 0)
            has_array = 1;
        if (n->kind != RK_RED)
            for (int k = 0; k < n->narg; k++)
                stack[top++] = n->arg[k];
    }
    if (!has_array || rm_chance(&m->rng, 0.3)) {
        int rd = rm_read(m, anchor, NULL, 0);
        if (rm_chance(&m->rng, 0.5))
            e = rm_arith(m, '+', e, rd);
        else
            e = rm_call(m, &c, 1, rm_arith(m, '*', rd, e));
    }
    return rm_limit(m, e, RM_BIG);
}

static inline void rm_gen_def(RmModel *m)
{
    int arrays[RM_MAX_VALUES], na = rm_array_values(m, arrays);
    int v = rm_add_value(m, RV_PENDING, "v");
    RmValue *x = &m->val[v];
    int depth = 2 + rm_below(&m->rng, 3), r = rm_below(&m->rng, 10);
    m->stmt_first_slot = m->nslot;
    if (na > 0 && r < 4) {
        int anchor = arrays[rm_below(&m->rng, na)];
        x->expr = rm_index_def(m, x, anchor, depth);
    } else if (na > 0 && r < 7) {
        int anchor = arrays[rm_below(&m->rng, na)];
        x->expr = rm_whole_def(m, x, anchor, depth);
    } else {
        RmCtx c;
        memset(&c, 0, sizeof c);
        x->expr = rm_limit(m, rm_expr(m, &c, depth), RM_BIG);
    }
    x->bound = rm_bnd(m, x->expr);
    x->role = RV_DEF;
    rm_put(m, "%s", x->name);
    if (x->nfree) {
        rm_put(m, "[");
        rm_print_slots(m, x->free, x->nfree);
        rm_put(m, "]");
    }
    rm_put(m, " = ");
    rm_print(m, x->expr, 0);
}

/* total = a weighted sum over every value nothing else reads (every param
 * nothing reads included), so the output depends on every param. */
static inline void rm_gen_output(RmModel *m)
{
    int v = rm_add_value(m, RV_PENDING, "total");
    snprintf(m->val[v].name, sizeof m->val[v].name, "total");
    m->stmt_first_slot = m->nslot;
    int e = -1;
    for (int u = 0; u < v; u++) {
        const RmValue *x = &m->val[u];
        if (x->uses > 0 || (x->role != RV_DEF && x->role != RV_PARAM))
            continue;
        int sub[3], t;
        for (int d = 0; d < x->rank; d++)
            sub[d] = rm_new_slot(m, x->dim[d]);
        t = rm_read(m, u, sub, x->rank);
        if (x->rank) {
            t = rm_un(m, RK_RED, RR_SUM, t, x->bound * (double)rm_size(x));
            m->node[t].nred = x->rank;
            memcpy(m->node[t].red, sub, sizeof sub);
        }
        t = rm_arith(m, '*', rm_num(m, (1 + rm_below(&m->rng, 20)) / 10.0), t);
        e = e < 0 ? t : rm_arith(m, '+', e, t);
    }
    m->val[v].expr = e;
    m->val[v].role = RV_DEF;
    m->output = v;
    rm_put(m, "total = ");
    rm_print(m, e, 0);
    rm_put(m, "\noutput total\n");
}

/* The point: params and inputs uniform in [-2, 2]. */
static inline void rm_draw_point(RmModel *m)
{
    m->nparam = m->ninput = 0;
    for (int v = 0; v < m->nval; v++) {
        RmValue *x = &m->val[v];
        if (x->role == RV_PARAM)
            x->offset = m->nparam, m->nparam += rm_size(x);
        if (x->role == RV_INPUT)
            x->offset = m->ninput, m->ninput += rm_size(x);
    }
    m->param = calloc((size_t)m->nparam + 1, sizeof *m->param);
    m->input = calloc((size_t)m->ninput + 1, sizeof *m->input);
    for (long k = 0; k < m->nparam; k++)
        m->param[k] = 4 * rm_unit(&m->rng) - 2;
    for (long k = 0; k < m->ninput; k++)
        m->input[k] = 4 * rm_unit(&m->rng) - 2;
}

/* The model for SEED (free it with rm_free).  Same seed, same model. */
static inline RmModel *rm_generate(uint64_t seed)
{
    RmModel *m = calloc(1, sizeof *m);
    m->text = malloc(RM_MAX_TEXT);
    m->rng = seed;
    m->text[0] = '\0';
    rm_put(m, "# random model, seed %llu\n", (unsigned long long)seed);
    if (rm_chance(&m->rng, 0.3))
        rm_put(m, "model seed%llu\n", (unsigned long long)seed);
    m->nextents = 1 + rm_below(&m->rng, 3);
    for (int k = 0; k < m->nextents; k++)
        m->extents[k] = 1 + rm_below(&m->rng, 5);
    int nconst = rm_below(&m->rng, 3);
    for (int k = 0; k < nconst; k++)
        rm_gen_const(m);
    int nparam = 1 + rm_below(&m->rng, 2), ninput = rm_below(&m->rng, 3);
    while (nparam + ninput > 0) {
        int role = rm_below(&m->rng, nparam + ninput) < nparam ? RV_PARAM
                                                               : RV_INPUT;
        rm_declare(m, role);
        *(role == RV_PARAM ? &nparam : &ninput) -= 1;
    }
    int ndef = 1 + rm_below(&m->rng, 6);
    for (int k = 0; k < ndef; k++) {
        rm_gen_def(m);
        /* end the statement: a newline, a ';', or a comment */
        int r = rm_below(&m->rng, 20);
        rm_put(m, r == 0 ? "; " : r == 1 ? "   # a comment\n" : "\n");
    }
    rm_put(m, "\n");
    rm_gen_output(m);
    rm_draw_point(m);
    return m;
}

static inline void rm_free(RmModel *m)
{
    if (!m)
        return;
    for (int v = 0; v < m->nval; v++)
        free(m->val[v].data);
    free(m->text);
    free(m->param);
    free(m->input);
    free(m);
}

/* ============================================== the model's own evaluator
 *
 * Evaluates the tree the text was printed from, following the language
 * reference (docs/language.md), in complex arithmetic: with a param entry
 * moved by i*h, the imaginary part of the output over h is the complex-step
 * derivative (Squire and Trapp 1998, SIAM Review 40(1):110-112).  It shares
 * no code with dervish.  Every discrete decision (a comparison, a floor, a
 * branch of abs, min, max, clamp or relu, the winner of a max or min
 * reduction) is hashed into m->sig, so two evaluations that took the same
 * decisions have the same signature: that is how a kink between two points
 * is detected. */

static inline void rm_decide(RmModel *m, double what)
{
    uint64_t bits;
    memcpy(&bits, &what, sizeof bits);
    m->sig = (m->sig ^ bits) * 0x100000001B3u + 0x9E3779B97F4A7C15u;
}

/* z^w: an integer exponent multiplies, as the power rule does (through
 * clog, a negative base would add an imaginary part of pi * w rounding
 * that swamps the step); any other exponent goes through exp(w log z). */
static inline double complex rm_cpow(double complex z, double complex w)
{
    double n = creal(w);
    if (cimag(w) == 0 && n == floor(n) && fabs(n) <= 64) {
        double complex r = 1;
        for (int k = 0; k < (int)fabs(n); k++)
            r *= z;
        return n < 0 ? 1 / r : r;
    }
    return cexp(w * clog(z));
}

static inline double complex rm_csigmoid(double complex z)
{
    if (creal(z) >= 0)
        return 1 / (1 + cexp(-z));
    return cexp(z) / (1 + cexp(z));
}

static inline double complex rm_csoftplus(double complex z)
{
    if (creal(z) > 0)
        return z + clog(1 + cexp(-z));
    return clog(1 + cexp(z));
}

/* log(e^a + e^b) as the language defines the logsumexp step:
 * max + log(1 + e^-|a - b|). */
static inline double complex rm_clogaddexp(double complex a, double complex b)
{
    if (creal(a) == -INFINITY)
        return b;
    double complex hi = creal(a) >= creal(b) ? a : b;
    double complex lo = creal(a) >= creal(b) ? b : a;
    return hi + clog(1 + cexp(lo - hi));
}

/* A function with no complex form here: computed on the real part; a
 * perturbed argument blocks the complex step. */
static inline double complex rm_real_only(RmModel *m, const double complex *z,
                                   int n, double value)
{
    for (int k = 0; k < n; k++)
        if (cimag(z[k]) != 0)
            m->blocked = 1;
    return value;
}

static inline double complex rm_ccall(RmModel *m, RmFunc f,
                                      const double complex *z)
{
    double complex a = z[0];
    double x = creal(a), y = creal(z[1]);
    switch (f) {
    case RF_ABS:
        rm_decide(m, x > 0 ? 1 : x < 0 ? -1 : 0);
        return x > 0 ? a : x < 0 ? -a : 0;
    case RF_SQRT: return csqrt(a);
    case RF_CBRT: return x >= 0 ? cexp(clog(a) / 3) : -cexp(clog(-a) / 3);
    case RF_EXP: return cexp(a);
    case RF_EXPM1: return cexp(a) - 1;
    case RF_LOG: return clog(a);
    case RF_LOG1P: return clog(1 + a);
    case RF_LOG2: return clog(a) / log(2.0);
    case RF_LOG10: return clog(a) / log(10.0);
    case RF_SIN: return csin(a);
    case RF_COS: return ccos(a);
    case RF_TAN: return ctan(a);
    case RF_ASIN: return casin(a);
    case RF_ACOS: return cacos(a);
    case RF_ATAN: return catan(a);
    case RF_SINH: return csinh(a);
    case RF_COSH: return ccosh(a);
    case RF_TANH: return ctanh(a);
    case RF_ASINH: return casinh(a);
    case RF_ACOSH: return cacosh(a);
    case RF_ATANH: return catanh(a);
    case RF_ATAN2: return rm_real_only(m, z, 2, atan2(x, y));
    case RF_HYPOT: return csqrt(a * a + z[1] * z[1]);
    case RF_POW: return rm_cpow(a, z[1]);
    case RF_ERF: return rm_real_only(m, z, 1, erf(x));
    case RF_ERFC: return rm_real_only(m, z, 1, erfc(x));
    case RF_LGAMMA: return rm_real_only(m, z, 1, lgamma(x));
    case RF_MIN:    /* ties to the first; a NaN picks the second */
        rm_decide(m, x <= y);
        return x <= y ? a : z[1];
    case RF_MAX:
        rm_decide(m, x >= y);
        return x >= y ? a : z[1];
    case RF_CLAMP:
        rm_decide(m, x < y ? 1 : x > creal(z[2]) ? 2 : 3);
        return x < y ? z[1] : x > creal(z[2]) ? z[2] : a;
    case RF_SIGMOID: return rm_csigmoid(a);
    case RF_SOFTPLUS: return rm_csoftplus(a);
    case RF_RELU:
        rm_decide(m, x > 0);
        return x > 0 ? a : 0;
    case RF_FLOOR: rm_decide(m, floor(x)); return floor(x);
    case RF_CEIL: rm_decide(m, ceil(x)); return ceil(x);
    case RF_ROUND: rm_decide(m, round(x)); return round(x);
    case RF_TRUNC: rm_decide(m, trunc(x)); return trunc(x);
    case RF_SIGN: {
        double s = x > 0 ? 1 : x < 0 ? -1 : 0;
        rm_decide(m, s);
        return s;
    }
    case RF_COUNT:
        break;
    }
    abort();
}

/* Row-major offset of the element a read names at the current point. */
static inline long rm_offset(const RmModel *m, const RmNode *n)
{
    const RmValue *x = &m->val[n->value];
    if (x->rank == 0)
        return 0;
    if (n->nsub == 0)
        return m->elem;
    long off = 0;
    for (int d = 0; d < x->rank; d++)
        off = off * x->dim[d] + m->slotval[n->sub[d]];
    return off;
}

static inline double complex rm_eval_reduce(RmModel *m, const RmNode *n)
{
    double complex acc = n->op == RR_SUM ? 0
                         : n->op == RR_MIN ? INFINITY : -INFINITY;
    long point = 0, best = 0;
    for (int k = 0; k < n->nred; k++)
        m->slotval[n->red[k]] = 0;
    for (;;) {
        double complex e = rm_eval_node(m, n->arg[0]);
        switch (n->op) {
        case RR_SUM: acc += e; break;
        case RR_LSE: acc = rm_clogaddexp(acc, e); break;
        case RR_MAX:
            if (creal(e) > creal(acc))
                acc = e, best = point;
            break;
        case RR_MIN:
            if (creal(e) < creal(acc))
                acc = e, best = point;
            break;
        }
        point++;
        /* the next point, the last listed index fastest */
        int k = n->nred - 1;
        for (; k >= 0; k--) {
            if (++m->slotval[n->red[k]] < m->slot_extent[n->red[k]])
                break;
            m->slotval[n->red[k]] = 0;
        }
        if (k < 0)
            break;
    }
    if (n->op == RR_MAX || n->op == RR_MIN)
        rm_decide(m, (double)best);
    return acc;
}

static inline double complex rm_eval_node(RmModel *m, int id)
{
    const RmNode *n = &m->node[id];
    double complex z[3] = {0, 0, 0};
    if (n->kind == RK_SEL) {    /* only the branch taken is evaluated */
        double c = creal(rm_eval_node(m, n->arg[0]));
        return rm_eval_node(m, n->arg[c != 0 ? 1 : 2]);
    }
    if (n->kind == RK_RED)
        return rm_eval_reduce(m, n);
    for (int k = 0; k < n->narg; k++)
        z[k] = rm_eval_node(m, n->arg[k]);
    double a = creal(z[0]), b = creal(z[1]);
    switch (n->kind) {
    case RK_NUM: return n->num;
    case RK_READ: return m->val[n->value].data[rm_offset(m, n)];
    case RK_NEG: return -z[0];
    case RK_BIN:
        switch (n->op) {
        case '+': return z[0] + z[1];
        case '-': return z[0] - z[1];
        case '*': return z[0] * z[1];
        case '/': return z[0] / z[1];
        default: return rm_cpow(z[0], z[1]);
        }
    case RK_CALL: return rm_ccall(m, (RmFunc)n->op, z);
    case RK_CMP: {
        int r = n->op == 0 ? a < b : n->op == 1 ? a <= b : n->op == 2 ? a > b
              : n->op == 3 ? a >= b : n->op == 4 ? a == b : a != b;
        rm_decide(m, r);
        return r;
    }
    case RK_AND: return a != 0 && b != 0;
    case RK_OR: return a != 0 || b != 0;
    case RK_NOT: return a == 0;
    default: abort();
    }
}

/* Evaluate every statement with param entry k (flat, declaration order)
 * moved by delta (k < 0: none); returns the output. */
static inline double complex rm_eval(RmModel *m, long k, double complex delta)
{
    m->sig = 0;
    m->blocked = 0;
    for (int v = 0; v < m->nval; v++) {
        RmValue *x = &m->val[v];
        long size = rm_size(x);
        if (!x->data)
            x->data = calloc((size_t)size, sizeof *x->data);
        if (x->role == RV_PARAM || x->role == RV_INPUT) {
            const double *src = (x->role == RV_PARAM ? m->param : m->input)
                                + x->offset;
            for (long e = 0; e < size; e++)
                x->data[e] = src[e];
            if (x->role == RV_PARAM && k >= x->offset && k < x->offset + size)
                x->data[k - x->offset] += delta;
        } else if (x->nfree) {      /* index form: loop over the left side */
            for (int d = 0; d < x->nfree; d++)
                m->slotval[x->free[d]] = 0;
            for (long e = 0; e < size; e++) {
                x->data[e] = rm_eval_node(m, x->expr);
                for (int d = x->nfree - 1; d >= 0; d--) {
                    if (++m->slotval[x->free[d]] < x->dim[d])
                        break;
                    m->slotval[x->free[d]] = 0;
                }
            }
        } else {                    /* scalar, const or whole-array form */
            for (m->elem = 0; m->elem < size; m->elem++)
                x->data[m->elem] = rm_eval_node(m, x->expr);
        }
    }
    return m->val[m->output].data[0];
}

/* ===================================================== the batch check
 *
 * A batch of models is built with the dervish binary, their emitted C is
 * compiled in two parallel gcc processes (warnings are errors) together
 * with one driver that prints each model's value and gradient at the
 * point, and the printout is judged against references that do not come
 * from the emitted C:
 *   - dervish's IR evaluator (eval_value, eval_gradient): the same program
 *     run without a C compiler, so agreement to rounding (1e-12);
 *   - the complex step through the IR evaluator (eval_complex_step) for
 *     each param entry, and the same through the generator's own
 *     evaluator; both agree with the gradient to rounding (1e-10);
 *   - where the step reaches atan2, erf, erfc or lgamma, which have no
 *     complex form, central differences with Richardson extrapolation;
 *   - the generator's own evaluation of the value (1e-10).
 * Errors are measured as |a - b| / max(1, |b|): relative for large values,
 * absolute near zero, where cancellation makes relative errors
 * meaningless.
 *
 * Kinks (abs or relu at 0, floor jumps, min/max/clamp ties, a ?: switching
 * branch) need no care for the complex step: its real part takes exactly
 * the decisions the point takes, as the reverse sweep does, so the two
 * agree at any point that is not itself a tie.  Central differences do
 * straddle kinks: each difference step is checked against the generator's
 * evaluator, which hashes every decision it takes; a step h at which an
 * evaluation at x +- h decided anything differently from x is not used,
 * and an entry left without three successive clean steps (down to 1e-9
 * relative) is skipped and counted (n_skipped).  Regression files have no
 * tree: their models are written to stay away from kinks at every point
 * in [-2, 2]. */

#define RM_STEP 1e-100      /* complex step: far below every value */
#define RM_TOL_SAME 1e-12   /* emitted C against the IR evaluator */
#define RM_TOL_CS 1e-10     /* against a complex-step derivative */
/* entry k of the direction the driver takes the tangent along */
#define RM_DIRECTION(k) (((k) * 7 % 11 - 5) / 4.0)
#define RM_CFLAGS "-std=c99 -Wall -Wextra -Wpedantic -Wshadow -Werror -O1"

typedef struct RmCase {
    char *label;        /* "seed N", or a regression file's path */
    char *text;         /* the model */
    RmModel *tree;      /* the generator's tree, or NULL */
    uint64_t seed;      /* for a file: draws the point */
    /* results */
    int failed;
    char *why;          /* what went wrong (malloc'd) */
    long n_cs, n_fd, n_skipped;     /* gradient entries judged each way */
    /* private to the check */
    int have_comp;      /* comp needs dv_free */
    int built;          /* dervish built it and comp holds its IR */
    DvCompilation comp;
    int compiled;
    int ran;
    double c_value, c_gvalue, *c_grad;
    double c_tvalue, c_dvalue;  /* the tangent function's value, and its
                                   derivative along RM_DIRECTION */
    double c_hvalue, *c_hv;     /* the Hessian-vector function's value, and
                                   the Hessian times RM_DIRECTION */
    long c_count;
} RmCase;

/* Record a failure of case c; the first few reasons are kept. */
static inline void rm_fail(RmCase *c, const char *fmt, ...)
{
    char msg[1024];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    c->failed++;
    if (c->failed > 6)
        return;
    char *old = c->why;
    c->why = tu_format("%s%s%s", old ? old : "", old ? "\n    " : "", msg);
    free(old);
}

static inline double rm_err(double got, double want)
{
    if (isnan(got) && isnan(want))
        return 0;
    return fabs(got - want) / fmax(1.0, fabs(want));
}

/* The params and inputs of the compiled model, in IR (declaration) order. */
typedef struct RmSlot {
    const char *name;
    int param;
    long size;
    double *vals;       /* into the case's point */
} RmSlot;

static inline int rm_slots(RmCase *c, RmSlot *out, int cap, double **store)
{
    const Ir *ir = c->comp.ir;
    int n = 0;
    long total = 0;
    for (int i = 0; i < ir->arrays.len; i++) {
        const IrArray *a = &ir->arrays.items[i];
        if ((a->role == ROLE_PARAM || a->role == ROLE_INPUT) && n < cap) {
            out[n].name = a->name;
            out[n].param = a->role == ROLE_PARAM;
            out[n].size = ir_array_size(a);
            total += out[n].size;
            n++;
        }
    }
    *store = calloc((size_t)total + 1, sizeof **store);
    uint64_t rng = c->seed;
    long at = 0;
    for (int k = 0; k < n; k++) {
        out[k].vals = *store + at;
        at += out[k].size;
        const RmValue *x = NULL;
        for (int v = 0; c->tree && v < c->tree->nval; v++)
            if (strcmp(c->tree->val[v].name, out[k].name) == 0)
                x = &c->tree->val[v];
        const double *given = NULL;     /* the tree's point, if any */
        if (x)
            given = (x->role == RV_PARAM ? c->tree->param : c->tree->input) +
                    x->offset;
        for (long e = 0; e < out[k].size; e++)
            out[k].vals[e] = given ? given[e] : 4 * rm_unit(&rng) - 2;
    }
    return n;
}

#define RM_MAX_SLOTS_IO 64

/* The driver's function for case k: set the point, print
 * "k value gradient-value count g0 g1 ..." in hexadecimal floating point. */
static inline void rm_driver_case(FILE *f, RmCase *c, int k)
{
    RmSlot slot[RM_MAX_SLOTS_IO];
    double *store;
    int n = rm_slots(c, slot, RM_MAX_SLOTS_IO, &store), inputs = 0;
    fprintf(f, "static void run_m%d(void)\n{\n", k);
    fprintf(f, "    m%d_param_flat p, g;\n", k);
    for (int s = 0; s < n; s++)
        inputs |= !slot[s].param;
    if (inputs)
        fprintf(f, "    m%d_input in;\n", k);
    for (int s = 0; s < n; s++) {
        fprintf(f, "    static const double v_%s[] = {", slot[s].name);
        for (long e = 0; e < slot[s].size; e++)
            fprintf(f, "%s%a", e ? ", " : "", slot[s].vals[e]);
        fprintf(f, "};\n    memcpy(&%s.%s, v_%s, sizeof v_%s);\n",
                slot[s].param ? "p.p" : "in", slot[s].name, slot[s].name,
                slot[s].name);
    }
    const char *in = inputs ? ", &in" : "";
    fprintf(f, "    double value = m%d_value(&p.p%s);\n"
               "    double y = m%d_gradient(&p.p%s, &g.p);\n"
               "    printf(\"%d %%a %%a %%d\", value, y, M%d_PARAM_COUNT);\n"
               "    for (int k = 0; k < M%d_PARAM_COUNT; k++)\n"
               "        printf(\" %%a\", g.v[k]);\n", k, in, k, in, k, k, k);
    /* the tangent along RM_DIRECTION(k) */
    fprintf(f, "    m%d_param_flat d;\n"
               "    for (int k = 0; k < M%d_PARAM_COUNT; k++)\n"
               "        d.v[k] = ((k * 7) %% 11 - 5) / 4.0;\n"
               "    double dv, ty = m%d_tangent(&p.p%s, &d.p, &dv);\n"
               "    printf(\" %%a %%a\", ty, dv);\n", k, k, k, in);
    /* the Hessian times the same direction */
    fprintf(f, "    m%d_param_flat hg, hv;\n"
               "    double hy = m%d_hessvec(&p.p%s, &d.p, &hg.p, &hv.p);\n"
               "    printf(\" %%a\", hy);\n"
               "    for (int k = 0; k < M%d_PARAM_COUNT; k++)\n"
               "        printf(\" %%a\", hv.v[k]);\n"
               "    printf(\"\\n\");\n}\n\n", k, k, in, k);
    free(store);
}

static inline int rm_sh(const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    char cmd[8192];
    vsnprintf(cmd, sizeof cmd, fmt, ap);
    va_end(ap);
    int rc = system(cmd);
    return rc == -1 || !WIFEXITED(rc) ? -1 : WEXITSTATUS(rc);
}

/* Compile the emitted C of the cases built so far into objects: the odd
 * and even cases in two gcc processes at once.  0 when all compiled
 * cleanly. */
static inline int rm_compile_all(RmCase *cs, int n, const char *dir)
{
    char *group[2] = {tu_format(":"), tu_format(":")};
    for (int k = 0; k < n; k++)
        if (cs[k].built) {
            char *g = strcmp(group[k % 2], ":") == 0
                          ? tu_format("gcc " RM_CFLAGS " -c m%d.c", k)
                          : tu_format("%s m%d.c", group[k % 2], k);
            free(group[k % 2]);
            group[k % 2] = g;
        }
    int rc = rm_sh("cd '%s' && { %s 2>cc0.err & %s 2>cc1.err; b=$?; "
                   "wait $!; a=$?; [ $a -eq 0 ] && [ $b -eq 0 ] && "
                   "! [ -s cc0.err ] && ! [ -s cc1.err ]; }",
                   dir, group[0], group[1]);
    free(group[0]);
    free(group[1]);
    return rc;
}

static inline void rm_write_driver(RmCase *cs, int n, const char *dir)
{
    char *path = tu_format("%s/driver.c", dir);
    FILE *f = fopen(path, "w");
    ck_assert_msg(f != NULL, "cannot write %s", path);
    fputs("/* driver.c - prints each model's value and gradient */\n"
          "#include <stdio.h>\n#include <stdlib.h>\n#include <string.h>\n",
          f);
    for (int k = 0; k < n; k++)
        if (cs[k].compiled)
            fprintf(f, "#include \"m%d.h\"\n", k);
    fputs("\n", f);
    for (int k = 0; k < n; k++)
        if (cs[k].compiled)
            rm_driver_case(f, &cs[k], k);
    fputs("int main(int argc, char **argv)\n{\n"
          "    int only = argc > 1 ? atoi(argv[1]) : -1;\n", f);
    for (int k = 0; k < n; k++)
        if (cs[k].compiled)
            fprintf(f, "    if (only < 0 || only == %d)\n        run_m%d();\n",
                    k, k);
    fputs("    return 0;\n}\n", f);
    fclose(f);
    free(path);
}

/* The Hessian times a direction: the emitted C's equals the IR
 * evaluator's, which is symmetric: u.(H v) = v.(H u) for a second
 * direction u, to rounding relative to the sizes of the terms (absolute
 * below 1e-12). */
static inline void rm_check_hessvec(RmCase *c, Evaluation *ev, long np)
{
    double *dir = calloc((size_t)np + 1, sizeof *dir);
    double *u = calloc((size_t)np + 1, sizeof *u);
    double *g = calloc((size_t)np + 1, sizeof *g);
    double *hv = calloc((size_t)np + 1, sizeof *hv);
    double *hu = calloc((size_t)np + 1, sizeof *hu);
    for (long k = 0; k < np; k++) {
        dir[k] = RM_DIRECTION(k);
        u[k] = sin(1.7 * (double)k + 0.3);
    }
    double hy = eval_hessvec(ev, dir, g, hv);
    if (rm_err(c->c_hvalue, hy) > RM_TOL_SAME)
        rm_fail(c, "the Hessian-vector function returns %.17g, the IR "
                "evaluator %.17g", c->c_hvalue, hy);
    for (long k = 0; k < np; k++)
        if (rm_err(c->c_hv[k], hv[k]) > RM_TOL_SAME)
            rm_fail(c, "Hessian times the direction, entry %ld: emitted C "
                    "%.17g, IR evaluator %.17g", k, c->c_hv[k], hv[k]);
    eval_hessvec(ev, u, g, hu);
    double uhv = 0, vhu = 0, scale = 0;
    for (long k = 0; k < np; k++) {
        uhv += u[k] * hv[k];
        vhu += dir[k] * hu[k];
        scale += fabs(u[k] * hv[k]) + fabs(dir[k] * hu[k]);
    }
    /* the generator keeps values of order one, so a Hessian that is zero
     * but for rounding (terms that cancel) may differ by some 1e-16 */
    if (fabs(uhv - vhu) > 1e-10 * scale + 1e-12)
        rm_fail(c, "the Hessian is not symmetric: u.(H v) = %.17g, v.(H u) = "
                "%.17g", uhv, vhu);
    free(dir);
    free(u);
    free(g);
    free(hv);
    free(hu);
}

/* Parse the driver's lines into the cases. */
static inline void rm_read_output(RmCase *cs, int n, const char *text)
{
    const char *p = text;
    while (p && *p) {
        char *end;
        long k = strtol(p, &end, 10);
        if (end == p || k < 0 || k >= n)
            break;
        RmCase *c = &cs[k];
        c->c_value = strtod(end, &end);
        c->c_gvalue = strtod(end, &end);
        c->c_count = strtol(end, &end, 10);
        free(c->c_grad);
        c->c_grad = calloc((size_t)c->c_count + 1, sizeof *c->c_grad);
        for (long e = 0; e < c->c_count; e++)
            c->c_grad[e] = strtod(end, &end);
        c->c_tvalue = strtod(end, &end);
        c->c_dvalue = strtod(end, &end);
        c->c_hvalue = strtod(end, &end);
        free(c->c_hv);
        c->c_hv = calloc((size_t)c->c_count + 1, sizeof *c->c_hv);
        for (long e = 0; e < c->c_count; e++)
            c->c_hv[e] = strtod(end, &end);
        c->ran = 1;
        p = strchr(end, '\n');
        if (p)
            p++;
    }
}

/* Richardson's extrapolation of central differences of the IR evaluator's
 * value in param entry k (stored at *x, value x0), steps h and h/2: the
 * h^2 error term cancels.  Returns 0 when, with a tree, an evaluation at
 * one of the four points took another decision than the point itself (a
 * kink or jump within h). */
static inline int rm_richardson(RmCase *c, Evaluation *ev, long k, double *x,
                                double x0, double h, uint64_t sig0, double *r)
{
    double d[2];
    int kinked = 0;
    for (int s = 0; s < 2; s++) {
        double step = s ? h / 2 : h, f[2];
        for (int side = 0; side < 2; side++) {
            *x = x0 + (side ? -step : step);
            f[side] = eval_value(ev);
            if (c->tree) {
                rm_eval(c->tree, k, side ? -step : step);
                kinked |= c->tree->sig != sig0;
            }
        }
        d[s] = (f[0] - f[1]) / (2 * step);
    }
    *x = x0;
    *r = d[1] + (d[1] - d[0]) / 3;
    return !kinked;
}

/* The derivative in param entry k by Richardson differences at the steps
 * h = 1e-2 .. 1e-9 (relative to max(1, |x|)).  Three successive clean
 * steps must agree (two agreeing by chance is not rare for a function that
 * oscillates on a scale below h); the tolerance is the larger of their two
 * disagreements (how far the extrapolation still moves), plus 1e-7
 * relative, plus the rounding of f over the smallest h of the three (a few
 * units of 1e-16 |f|).  The triple with the smallest tolerance wins.  Steps
 * that straddle a kink are left out; returns 0 when no three successive
 * steps were clean. */
static inline int rm_differences(RmCase *c, Evaluation *ev, long k,
                                 double *deriv, double *tol)
{
    double *x = eval_param(ev, k), x0 = *x, f0 = eval_value(ev);
    double scale = fmax(1, fabs(x0)), r[8], h = 1e-2 * scale;
    uint64_t sig0 = 0;
    int found = 0;
    if (c->tree) {
        rm_eval(c->tree, -1, 0);
        sig0 = c->tree->sig;
    }
    for (int s = 0; s < 8; s++, h /= 10) {
        if (!rm_richardson(c, ev, k, x, x0, h, sig0, &r[s]))
            r[s] = NAN;
        if (s < 2 || isnan(r[s]) || isnan(r[s - 1]) || isnan(r[s - 2]))
            continue;
        double moved = fmax(fabs(r[s] - r[s - 1]), fabs(r[s - 1] - r[s - 2]));
        double t = moved + 1e-7 * fmax(1, fabs(r[s])) +
                   1e-13 * fmax(1, fabs(f0)) / h;
        if (!found || t < *tol)
            *deriv = r[s], *tol = t, found = 1;
        if (moved <= 1e-9 * fmax(1, fabs(r[s])))
            break;      /* converged: smaller steps only add rounding */
    }
    return found;
}

/* Judge one case whose driver ran. */
static inline void rm_judge(RmCase *c)
{
    RmSlot slot[RM_MAX_SLOTS_IO];
    double *store;
    int n = rm_slots(c, slot, RM_MAX_SLOTS_IO, &store);
    Evaluation *ev = eval_new(c->comp.ir);
    for (int s = 0; s < n; s++)
        memcpy(eval_slot(ev, slot[s].name), slot[s].vals,
               (size_t)slot[s].size * sizeof(double));
    long np = eval_param_count(ev);
    double *g = calloc((size_t)np + 1, sizeof *g);
    double v = eval_gradient(ev, g);
    if (c->c_count != np)
        rm_fail(c, "PARAM_COUNT is %ld, the model has %ld param entries",
                c->c_count, np);
    else if (!isfinite(c->c_value))
        rm_fail(c, "the value is not finite: %g", c->c_value);
    else {
        if (rm_err(c->c_value, v) > RM_TOL_SAME)
            rm_fail(c, "value: emitted C %.17g, IR evaluator %.17g",
                    c->c_value, v);
        if (rm_err(c->c_gvalue, c->c_value) > RM_TOL_SAME)
            rm_fail(c, "the gradient function returns %.17g, the value "
                    "function %.17g", c->c_gvalue, c->c_value);
        if (rm_err(c->c_tvalue, c->c_value) > RM_TOL_SAME)
            rm_fail(c, "the tangent function returns %.17g, the value "
                    "function %.17g", c->c_tvalue, c->c_value);
        /* the tangent is the gradient (checked below against complex
         * steps) times the direction; rounding is relative to the sum of
         * the products' magnitudes */
        double dot = 0, scale = 0;
        for (long k = 0; k < np; k++) {
            dot += c->c_grad[k] * RM_DIRECTION(k);
            scale += fabs(c->c_grad[k] * RM_DIRECTION(k));
        }
        if (fabs(c->c_dvalue - dot) > RM_TOL_SAME * scale)
            rm_fail(c, "tangent %.17g, the gradient times the direction "
                    "%.17g", c->c_dvalue, dot);
        rm_check_hessvec(c, ev, np);
        if (c->tree) {
            double mine = creal(rm_eval(c->tree, -1, 0));
            if (rm_err(c->c_value, mine) > RM_TOL_CS)
                rm_fail(c, "value: emitted C %.17g, generator's evaluator "
                        "%.17g", c->c_value, mine);
        }
        for (long k = 0; k < np; k++) {
            double got = c->c_grad[k], ref = 0, tol = RM_TOL_CS;
            if (rm_err(got, g[k]) > RM_TOL_SAME)
                rm_fail(c, "gradient entry %ld: emitted C %.17g, IR "
                        "evaluator %.17g", k, got, g[k]);
            EvalStep st = eval_complex_step(ev, k, RM_STEP);
            const char *how = "complex step";
            if (st.blocked < 0) {
                ref = st.slope;
                c->n_cs++;
                if (c->tree) {
                    double complex y = rm_eval(c->tree, k, I * RM_STEP);
                    double mine = cimag(y) / RM_STEP;
                    if (!c->tree->blocked && rm_err(mine, ref) > RM_TOL_CS)
                        rm_fail(c, "gradient entry %ld: complex step through "
                                "the IR %.17g, through the generator's "
                                "evaluator %.17g", k, ref, mine);
                }
            } else if (rm_differences(c, ev, k, &ref, &tol)) {
                how = "Richardson differences";
                tol /= fmax(1, fabs(ref));
                c->n_fd++;
            } else {
                c->n_skipped++;
                continue;
            }
            if (rm_err(got, ref) > tol)
                rm_fail(c, "gradient entry %ld: emitted C %.17g, %s %.17g",
                        k, got, how, ref);
        }
    }
    free(g);
    free(store);
    eval_free(ev);
}

/* Build, compile, run and judge cases[0..n) in the fresh directory dir.
 * Returns the number of cases that failed. */
static inline int rm_check_batch(RmCase *cs, int n, const char *dir,
                                 const char *build_options)
{
    char *list = tu_format(" ");
    for (int k = 0; k < n; k++) {
        char *path = tu_format("%s/m%d.dvs", dir, k);
        tu_write(path, cs[k].text);
        free(path);
        char *l = tu_format("%s %d", list, k);
        free(list);
        list = l;
    }
    rm_sh("cd '%s' && printf '%%s\\n' %s | xargs -P 2 -I@ sh -c "
          "\"'%s' build --emit value,gradient,tangent,hessvec %s --name m@ "
          "m@.dvs 2>m@.err; echo \\$? >m@.rc\"",
          dir, list, tu_abs_dervish(), build_options);
    free(list);
    for (int k = 0; k < n; k++) {
        RmCase *c = &cs[k];
        char *rcpath = tu_format("%s/m%d.rc", dir, k);
        char *errpath = tu_format("%s/m%d.err", dir, k);
        char *rc = tu_read(rcpath), *err = tu_read(errpath);
        if (!rc || atoi(rc) != 0)
            rm_fail(c, "dervish build failed (status %s):\n%s",
                    rc ? rc : "?", err ? err : "");
        else {
            DvOptions o;
            memset(&o, 0, sizeof o);    /* no name, no diagnostics */
            o.emit = DV_EMIT_DEFAULT | DV_EMIT_TANGENT | DV_EMIT_HESSVEC;
            c->have_comp = 1;
            if (dv_compile(&c->comp, c->label, c->text, strlen(c->text), &o))
                rm_fail(c, "the dervish library rejects what the binary built");
            else
                c->built = 1;
        }
        free(rc);
        free(err);
        free(rcpath);
        free(errpath);
    }
    /* compile; on trouble, compile each alone to find the culprits */
    if (rm_compile_all(cs, n, dir) != 0)
        for (int k = 0; k < n; k++) {
            if (!cs[k].built)
                continue;
            char *err = NULL;
            char *cmd = tu_format("cd '%s' && gcc " RM_CFLAGS " -c m%d.c", dir,
                                  k);
            int rc = tu_run(cmd, NULL, &err);
            if (rc != 0 || (err && *err))
                rm_fail(&cs[k], "gcc on the emitted C (status %d):\n%s", rc,
                        err ? err : "");
            else
                cs[k].compiled = 1;
            free(cmd);
            free(err);
        }
    else
        for (int k = 0; k < n; k++)
            cs[k].compiled = cs[k].built;
    rm_write_driver(cs, n, dir);
    char *objs = tu_format(" ");
    for (int k = 0; k < n; k++)
        if (cs[k].compiled) {
            char *o = tu_format("%s m%d.o", objs, k);
            free(objs);
            objs = o;
        }
    char *err = NULL, *out = NULL;
    char *cmd = tu_format("cd '%s' && gcc " RM_CFLAGS " -o driver driver.c%s "
                          "-lm", dir, objs);
    int rc = tu_run(cmd, NULL, &err);
    free(cmd);
    free(objs);
    if (rc != 0 || (err && *err)) {
        for (int k = 0; k < n; k++)
            if (cs[k].compiled)
                rm_fail(&cs[k], "the driver does not compile:\n%s", err);
        free(err);
        return n;
    }
    free(err);
    cmd = tu_format("cd '%s' && ./driver", dir);
    rc = tu_run(cmd, &out, NULL);
    free(cmd);
    rm_read_output(cs, n, out);
    free(out);
    if (rc != 0)    /* a crash: run each case alone to find it */
        for (int k = 0; k < n; k++) {
            if (!cs[k].compiled)
                continue;
            cmd = tu_format("cd '%s' && ./driver %d", dir, k);
            rc = tu_run(cmd, &out, NULL);
            if (rc != 0)
                rm_fail(&cs[k], "the driver exits with status %d", rc);
            else
                rm_read_output(cs, n, out);
            free(out);
            free(cmd);
        }
    int failed = 0;
    for (int k = 0; k < n; k++) {
        if (cs[k].compiled && cs[k].ran && !cs[k].failed)
            rm_judge(&cs[k]);
        else if (cs[k].compiled && !cs[k].failed)
            rm_fail(&cs[k], "the driver printed nothing for this model");
        failed += cs[k].failed > 0;
    }
    return failed;
}

/* A case for the generated model of SEED. */
static inline void rm_case_generated(RmCase *c, uint64_t seed)
{
    memset(c, 0, sizeof *c);
    c->seed = seed;
    c->tree = rm_generate(seed);
    c->text = tu_format("%s", c->tree->text);
    c->label = tu_format("seed%llu.dvs", (unsigned long long)seed);
}

/* A case for a model file; its point is drawn from [-2, 2] by SEED. */
static inline void rm_case_file(RmCase *c, const char *path, uint64_t seed)
{
    memset(c, 0, sizeof *c);
    c->seed = seed;
    c->text = tu_read(path);
    c->label = tu_format("%s", path);
    if (!c->text) {
        c->text = tu_format("");
        rm_fail(c, "cannot read %s", path);
    }
}

static inline void rm_case_free(RmCase *c)
{
    if (c->have_comp)
        dv_free(&c->comp);
    rm_free(c->tree);
    free(c->text);
    free(c->label);
    free(c->why);
    free(c->c_grad);
    free(c->c_hv);
}

/* Totals over many batches. */
typedef struct RmTally {
    long models, failed;
    long n_cs, n_fd, n_skipped;
} RmTally;

/* Check the generated models of seeds first .. first+count-1 in one batch,
 * add them to *t, and describe each failure on out: its seed (replay it
 * with `make soak SOAK_COUNT=1 SOAK_SEED=<seed>`), what went wrong, and
 * with show_text the model itself.  Returns the number that failed. */
static inline int rm_run_seeds(uint64_t first, int count, RmTally *t,
                               FILE *out, int show_text,
                               const char *build_options)
{
    RmCase *cs = calloc((size_t)count, sizeof *cs);
    for (int k = 0; k < count; k++)
        rm_case_generated(&cs[k], first + (uint64_t)k);
    char *dir = tu_tmpdir();
    int failed = rm_check_batch(cs, count, dir, build_options);
    tu_rmdir(dir);
    free(dir);
    for (int k = 0; k < count; k++) {
        RmCase *c = &cs[k];
        t->n_cs += c->n_cs;
        t->n_fd += c->n_fd;
        t->n_skipped += c->n_skipped;
        if (c->failed) {
            fprintf(out, "seed %llu failed: %s\n",
                    (unsigned long long)c->seed, c->why);
            if (show_text)
                fprintf(out, "%s", c->text);
        }
        rm_case_free(c);
    }
    free(cs);
    t->models += count;
    t->failed += failed;
    return failed;
}

#endif
