/* rules.c - the table of local partial derivatives, one case per op, and
 * forward symbolic differentiation built on it; see rules.h. */
#include "rules.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static NodeId num(Ir *ir, double v)
{
    return ir_const(ir, v);
}

static int is_const(const Ir *ir, NodeId n, double v)
{
    return n != NO_NODE && ir_at(ir, n)->op == IR_CONST &&
           ir_const_num(ir_at(ir, n)) == v;
}

static NodeId op1(Ir *ir, IrOp op, NodeId a)
{
    return ir_node(ir, op, a, NO_NODE, NO_NODE);
}

static NodeId op2(Ir *ir, IrOp op, NodeId a, NodeId b)
{
    return ir_node(ir, op, a, b, NO_NODE);
}

/* cond ? a : b, where a or b may be a structural zero. */
static NodeId select(Ir *ir, NodeId cond, NodeId a, NodeId b)
{
    if (a == NO_NODE && b == NO_NODE)
        return NO_NODE;
    return ir_node(ir, IR_SELECT, cond, a == NO_NODE ? num(ir, 0) : a,
                   b == NO_NODE ? num(ir, 0) : b);
}

/* A small DAG walk with a seen list. */
static void active_reads(Ir *ir, NodeId n, NodeList *seen, NodeList *reads)
{
    for (int i = 0; i < seen->len; i++)
        if (seen->items[i] == n)
            return;
    VEC_PUSH(ir->arena, *seen, n);
    const IrNode *nd = ir_at(ir, n);
    if (nd->op == IR_READ) {
        const IrArray *a = &ir->arrays.items[ir_read_array(nd)];
        if (a->varied && a->useful)
            VEC_PUSH(ir->arena, *reads, n);
        return;
    }
    for (int i = 0; i < nd->nargs; i++)
        active_reads(ir, nd->arg[i], seen, reads);
}

void rules_active_reads(Ir *ir, NodeId root, NodeList *seen, NodeList *reads)
{
    seen->len = 0;
    reads->len = 0;
    active_reads(ir, root, seen, reads);
}

/* cond ? d : 0 or cond ? 0 : d */
static int is_selector(const Ir *ir, NodeId n)
{
    const IrNode *x = ir_at(ir, n);
    return x->op == IR_SELECT &&
           (is_const(ir, x->arg[1], 0) || is_const(ir, x->arg[2], 0));
}

NodeId rules_add(Ir *ir, NodeId a, NodeId b)
{
    if (a == NO_NODE)
        return b;
    if (b == NO_NODE)
        return a;
    const IrNode *x = ir_at(ir, a), *y = ir_at(ir, b);
    if (x->op == IR_CONST && y->op == IR_CONST)
        return num(ir, ir_const_num(x) + ir_const_num(y));
    if (y->op == IR_NEG)
        return op2(ir, IR_SUB, a, y->arg[0]);
    return op2(ir, IR_ADD, a, b);
}

NodeId rules_mul(Ir *ir, NodeId a, NodeId b)
{
    if (a == NO_NODE || b == NO_NODE)
        return NO_NODE;
    const IrNode *ca = ir_at(ir, a), *cb = ir_at(ir, b);
    if (ca->op == IR_CONST && cb->op == IR_CONST)
        return num(ir, ir_const_num(ca) * ir_const_num(cb));
    if (is_const(ir, a, 1))
        return b;
    if (is_const(ir, b, 1))
        return a;
    if (is_const(ir, a, -1))
        return ir_at(ir, b)->op == IR_NEG ? ir_at(ir, b)->arg[0]
                                          : op1(ir, IR_NEG, b);
    if (is_const(ir, b, -1))
        return ir_at(ir, a)->op == IR_NEG ? ir_at(ir, a)->arg[0]
                                          : op1(ir, IR_NEG, a);
    /* a copy: the recursion below adds nodes, which may move the array */
    IrNode y = *ir_at(ir, b);
    /* A selector rule (derivative 0 on one branch) keeps its zero out of
     * the product, so the derivative flows only into the branch taken.
     * Each step removes one selector, so this ends. */
    if (is_selector(ir, b)) {
        NodeId t = is_const(ir, y.arg[1], 0) ? NO_NODE
                                             : rules_mul(ir, a, y.arg[1]);
        NodeId f = is_const(ir, y.arg[2], 0) ? NO_NODE
                                             : rules_mul(ir, a, y.arg[2]);
        return select(ir, y.arg[0], t, f);
    }
    if (is_selector(ir, a))
        return rules_mul(ir, b, a);
    /* Constants first reads naturally: 2 * x, not x * 2. */
    if (y.op == IR_CONST)
        return op2(ir, IR_MUL, b, a);
    return op2(ir, IR_MUL, a, b);
}

static NodeId sub(Ir *ir, NodeId a, NodeId b)
{
    return op2(ir, IR_SUB, a, b);
}

static NodeId divide(Ir *ir, NodeId a, NodeId b)
{
    return op2(ir, IR_DIV, a, b);
}

static NodeId square(Ir *ir, NodeId a)
{
    return op2(ir, IR_MUL, a, a);
}

NodeId rules_partial(Ir *ir, NodeId n, int arg, NodeId value)
{
    const IrNode nd = *ir_at(ir, n);
    NodeId x = nd.arg[0], y = nd.arg[1], z = nd.arg[2];
    NodeId one = num(ir, 1);
    switch ((IrOp)nd.op) {
    case IR_NEG:
        return num(ir, -1);
    case IR_ADD:
        return one;
    case IR_SUB:
        return arg == 0 ? one : num(ir, -1);
    case IR_MUL:
        return arg == 0 ? y : x;
    case IR_DIV:            /* a/b: 1/b and -(a/b)/b */
        return arg == 0 ? divide(ir, one, y)
                        : op1(ir, IR_NEG, divide(ir, value, y));
    case IR_POW: {
        const IrNode *e = ir_at(ir, y);
        if (arg == 1)       /* d/db a^b = a^b log a */
            return rules_mul(ir, value, op1(ir, IR_LOG, x));
        if (e->op == IR_CONST) {
            /* the power rule; for integer exponents no log(a) appears, so
             * negative a works */
            if (ir_const_num(e) == 0)
                return NO_NODE;
            if (ir_const_num(e) == 1)
                return one;
            if (ir_const_num(e) == 2)
                return rules_mul(ir, num(ir, 2), x);
            return rules_mul(ir, y, op2(ir, IR_POW, x,
                                        num(ir, ir_const_num(e) - 1)));
        }
        return rules_mul(ir, y, op2(ir, IR_POW, x, sub(ir, y, one)));
    }
    case IR_ABS:
        return op1(ir, IR_SIGN, x);
    case IR_SQRT:
        return divide(ir, num(ir, 0.5), value);
    case IR_CBRT:
        return divide(ir, one, rules_mul(ir, num(ir, 3), square(ir, value)));
    case IR_EXP:
        return value;
    case IR_EXPM1:          /* exp(x), not value + 1: that cancels for x << 0 */
        return op1(ir, IR_EXP, x);
    case IR_LOG:
        return divide(ir, one, x);
    case IR_LOG1P:
        return divide(ir, one, rules_add(ir, one, x));
    case IR_LOG2:           /* (1/ln 2)/x: x * ln 2 would overflow */
        return divide(ir, num(ir, 1 / log(2.0)), x);
    case IR_LOG10:
        return divide(ir, num(ir, 1 / log(10.0)), x);
    case IR_SIN:
        return op1(ir, IR_COS, x);
    case IR_COS:
        return op1(ir, IR_NEG, op1(ir, IR_SIN, x));
    case IR_TAN:
        return rules_add(ir, one, square(ir, value));
    case IR_ASIN:           /* (1-x)(1+x) keeps precision near |x| = 1 */
        return divide(ir, one, op1(ir, IR_SQRT, rules_mul(ir, sub(ir, one, x),
                                                          rules_add(ir, one, x))));
    case IR_ACOS:
        return op1(ir, IR_NEG,
                   divide(ir, one, op1(ir, IR_SQRT,
                                       rules_mul(ir, sub(ir, one, x),
                                                 rules_add(ir, one, x)))));
    case IR_ATAN:
        return divide(ir, one, rules_add(ir, one, square(ir, x)));
    case IR_SINH:
        return op1(ir, IR_COSH, x);
    case IR_COSH:
        return op1(ir, IR_SINH, x);
    case IR_TANH:
        return sub(ir, one, square(ir, value));
    case IR_ASINH:          /* hypot avoids overflow of x*x for huge x */
        return divide(ir, one, op2(ir, IR_HYPOT, x, one));
    case IR_ACOSH:
        return divide(ir, one, rules_mul(ir, op1(ir, IR_SQRT, sub(ir, x, one)),
                                         op1(ir, IR_SQRT, rules_add(ir, x, one))));
    case IR_ATANH:
        return divide(ir, one, rules_mul(ir, sub(ir, one, x),
                                         rules_add(ir, one, x)));
    case IR_ATAN2: {        /* atan2(a, b): b/h^2 and -a/h^2, h = hypot */
        NodeId h = op2(ir, IR_HYPOT, x, y);
        return arg == 0 ? divide(ir, divide(ir, y, h), h)
                        : op1(ir, IR_NEG, divide(ir, divide(ir, x, h), h));
    }
    case IR_HYPOT:          /* a/h and b/h, exact also for tiny a and b */
        return arg == 0 ? op2(ir, IR_HYPOTSLOPE, x, y)
                        : op2(ir, IR_HYPOTSLOPE, y, x);
    case IR_ERF:            /* 2/sqrt(pi) exp(-x^2) */
        return rules_mul(ir, num(ir, 1.1283791670955126),
                         op1(ir, IR_EXP, op1(ir, IR_NEG, square(ir, x))));
    case IR_ERFC:
        return rules_mul(ir, num(ir, -1.1283791670955126),
                         op1(ir, IR_EXP, op1(ir, IR_NEG, square(ir, x))));
    case IR_LGAMMA:
        return op1(ir, IR_DIGAMMA, x);
    case IR_MIN: {          /* ties go to the first argument */
        NodeId first = op2(ir, IR_LE, x, y);
        return arg == 0 ? select(ir, first, one, NO_NODE)
                        : select(ir, first, NO_NODE, one);
    }
    case IR_MAX: {
        NodeId first = op2(ir, IR_GE, x, y);
        return arg == 0 ? select(ir, first, one, NO_NODE)
                        : select(ir, first, NO_NODE, one);
    }
    case IR_CLAMP: {        /* the helper's own tests, so NaN bounds agree */
        NodeId below = op2(ir, IR_LT, x, y), above = op2(ir, IR_GT, x, z);
        NodeId not_below = op1(ir, IR_NOT, below);
        if (arg == 0)       /* x inside [lo, hi] (ends included) */
            return select(ir, op2(ir, IR_AND, not_below,
                                  op1(ir, IR_NOT, above)), one, NO_NODE);
        if (arg == 1)
            return select(ir, below, one, NO_NODE);
        /* hi is the value only when x is not below lo: clamp tests lo
         * first, which matters when lo > hi */
        return select(ir, op2(ir, IR_AND, not_below, above), one, NO_NODE);
    }
    case IR_SIGMOID:
        return rules_mul(ir, value, sub(ir, one, value));
    case IR_SOFTPLUS:
        return op1(ir, IR_SIGMOID, x);
    case IR_RELU:
        return select(ir, op2(ir, IR_GT, x, num(ir, 0)), one, NO_NODE);
    case IR_FLOOR:
    case IR_CEIL:
    case IR_ROUND:
    case IR_TRUNC:
    case IR_SIGN:
        return NO_NODE;
    case IR_HYPOTSLOPE: {
        /* s = x / h, t = y / h with h = hypot(x, y): ds/dx = t^2 / h,
         * ds/dy = -s t / h (second derivatives of hypot) */
        NodeId h = op2(ir, IR_HYPOT, x, y);
        NodeId t = op2(ir, IR_HYPOTSLOPE, y, x);
        return arg == 0 ? divide(ir, rules_mul(ir, t, t), h)
                        : op1(ir, IR_NEG, divide(ir, rules_mul(ir, value, t),
                                                 h));
    }
    case IR_DIGAMMA:        /* psi' = trigamma: Hessians through lgamma */
        return op1(ir, IR_TRIGAMMA, x);
    case IR_SELECT:         /* handled by rules_derivative */
    case IR_TRIGAMMA:       /* psi'' would be a third derivative of lgamma:
                               trigamma only appears in tangents of the
                               reverse sweep, and nothing differentiates
                               those again */
    case IR_LT: case IR_LE: case IR_GT: case IR_GE: case IR_EQ: case IR_NE:
    case IR_AND: case IR_OR: case IR_NOT:
    case IR_CONST: case IR_READ: case IR_INDEX: case IR_SIZE:
    case IR_OP_COUNT:
        break;
    }
    DV_UNREACHABLE();
    return NO_NODE;
}

static NodeId derive(Ir *ir, DeriveMemo *m, NodeId n, NodeId leaf, NodeId root,
                     NodeId root_value)
{
    if (n == leaf)
        return num(ir, 1);
    if (n < m->cap && m->stamp[n] == m->now)
        return m->result[n];
    const IrNode nd = *ir_at(ir, n);
    NodeId d = NO_NODE;
    if (nd.op == IR_SELECT) {
        NodeId a = derive(ir, m, nd.arg[1], leaf, root, root_value);
        NodeId b = derive(ir, m, nd.arg[2], leaf, root, root_value);
        d = select(ir, nd.arg[0], a, b);
    } else if (nd.nargs > 0 && !ir_is_condition(ir, n)) {
        NodeId value = n == root ? root_value : n;
        for (int i = 0; i < nd.nargs; i++) {
            NodeId da = derive(ir, m, nd.arg[i], leaf, root, root_value);
            if (da == NO_NODE)
                continue;
            NodeId p = rules_partial(ir, n, i, value);
            d = rules_add(ir, d, rules_mul(ir, p, da));
        }
    }
    if (n < m->cap) {
        m->stamp[n] = m->now;
        m->result[n] = d;
    }
    return d;
}

NodeId rules_derivative(Ir *ir, DeriveMemo *m, NodeId root, NodeId leaf,
                        NodeId root_value)
{
    /* Nodes made while differentiating are newer than root and are never
     * looked up, so the memo needs to cover ids up to root only. */
    if (root >= m->cap) {
        int cap = m->cap ? m->cap : 1024;
        while (cap <= root)
            cap *= 2;
        NodeId *result = realloc(m->result, (size_t)cap * sizeof *result);
        int *stamp = realloc(m->stamp, (size_t)cap * sizeof *stamp);
        if (!result || !stamp) {
            fputs("dervish: out of memory\n", stderr);
            exit(3);
        }
        memset(stamp + m->cap, 0, (size_t)(cap - m->cap) * sizeof *stamp);
        m->result = result;
        m->stamp = stamp;
        m->cap = cap;
    }
    m->now++;
    return derive(ir, m, root, leaf, root, root_value);
}

void rules_memo_free(DeriveMemo *m)
{
    free(m->result);
    free(m->stamp);
    m->result = NULL;
    m->stamp = NULL;
    m->cap = 0;
}
