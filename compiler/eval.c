/* eval.c - the IR interpreter; see eval.h.
 *
 * Each statement runs once per point of its domain, the points in the
 * emitted loop order (outermost var first), so sums accumulate in the same
 * order as in the emitted C.  At a point, the nodes the statement reaches
 * are evaluated in ascending id order: operands always have smaller ids
 * than their users (ir_verify checks it), so each node is computed once
 * from values already in place.  Real operations go through apply_op, the
 * same code constant folding uses, so the results match the emitted C.
 * Runtime sizes are fixed when the evaluation is made: every extent is
 * resolved to a count then, and a domain with an extent of 0 has no
 * points, so its statement does nothing (an empty sum stays 0). */
#include "eval.h"
#include "apply.h"

#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

typedef double complex Cplx;

/* The nodes one statement evaluates at each point, operands first. */
typedef struct Plan {
    int32_t *nodes;
    int count;
} Plan;

struct Evaluation {
    const Ir *ir;
    long *sizes;        /* per runtime size: its value */
    long *count;        /* per array: its number of elements */
    long *dim;          /* per array: IR_MAX_RANK extents, resolved */
    long *extent;       /* per index var: its extent, resolved */
    double **data;      /* per array: its elements, row-major */
    Cplx **cdata;       /* per array: complex elements; forward arrays only,
                           allocated by the first complex step */
    double *val;        /* per node: its value at the current point */
    Cplx *cval;
    long *idx;          /* per index var: its value at the current point */
    Plan *fplan;        /* per forward statement */
    Plan *rplan;        /* per reverse statement */
    Plan *tplan;        /* per statement of the tangent list */
    Plan *hfplan, *hrplan;  /* per statement of the Hessian-vector lists */
    long nparams;
    int32_t *seed;      /* per output: its ROLE_SEED array, or -1 */
    double **param;     /* per flat param entry: where it is stored */
    int blocked;        /* complex step: first op without a complex form that
                           saw a perturbed operand, or -1 */
};

static void out_of_memory(void)
{
    fputs("dervish: out of memory\n", stderr);
    exit(3);
}

static void *xcalloc(size_t n, size_t size)
{
    void *p = calloc(n ? n : 1, size);
    if (!p)
        out_of_memory();
    return p;
}

static int cmp_node(const void *a, const void *b)
{
    int32_t x = *(const int32_t *)a, y = *(const int32_t *)b;
    return (x > y) - (x < y);
}

/* The nodes below root, sorted by id.  stamp marks nodes already taken in
 * this plan (stamp[n] == now); stack has room for every node. */
static Plan make_plan(const Ir *ir, NodeId root, int *stamp, int now,
                      int32_t *stack)
{
    Plan p;
    int top = 0;
    p.count = 0;
    p.nodes = NULL;
    stack[top++] = root;
    stamp[root] = now;
    while (top > 0) {
        NodeId n = stack[--top];
        /* nodes are collected on the stack's far end: no second buffer */
        p.count++;
        stack[ir->nodes.len - p.count] = n;
        const IrNode *nd = ir_at(ir, n);
        for (int i = 0; i < nd->nargs; i++)
            if (stamp[nd->arg[i]] != now) {
                stamp[nd->arg[i]] = now;
                stack[top++] = nd->arg[i];
            }
    }
    p.nodes = xcalloc((size_t)p.count, sizeof *p.nodes);
    memcpy(p.nodes, stack + ir->nodes.len - p.count,
           (size_t)p.count * sizeof *p.nodes);
    qsort(p.nodes, (size_t)p.count, sizeof *p.nodes, cmp_node);
    return p;
}

static Plan *make_plans(const Ir *ir, const IrStmtList *list, int *stamp,
                        int *now, int32_t *stack)
{
    Plan *plans = xcalloc((size_t)list->len, sizeof *plans);
    for (int i = 0; i < list->len; i++)
        plans[i] = make_plan(ir, list->items[i].expr, stamp, ++*now, stack);
    return plans;
}

long eval_extent(int extent, const long *sizes)
{
    return IR_EXTENT_IS_SIZE(extent) ? sizes[IR_EXTENT_SIZE(extent)] : extent;
}

long eval_elements(const IrArray *a, const long *sizes)
{
    long n = 1;
    int over = 0;       /* past the limit, unless a later extent is 0 */
    for (int k = 0; k < a->rank; k++) {
        long d = eval_extent(a->dim[k], sizes);
        if (d == 0)
            return 0;
        if (over || n > EVAL_MAX_ELEMENTS / d)
            over = 1;
        else
            n *= d;
    }
    return over ? -1 : n;
}

Evaluation *eval_new(const Ir *ir)
{
    if (ir->sizes.len > 0)
        DV_UNREACHABLE();   /* a model with sizes needs their values */
    return eval_new_sized(ir, NULL);
}

Evaluation *eval_new_sized(const Ir *ir, const long *sizes)
{
    Evaluation *ev = xcalloc(1, sizeof *ev);
    ev->ir = ir;
    int narrays = ir->arrays.len, nnodes = ir->nodes.len;
    ev->sizes = xcalloc((size_t)ir->sizes.len, sizeof *ev->sizes);
    if (ir->sizes.len > 0)
        memcpy(ev->sizes, sizes, (size_t)ir->sizes.len * sizeof *sizes);
    ev->count = xcalloc((size_t)narrays, sizeof *ev->count);
    ev->dim = xcalloc((size_t)narrays * IR_MAX_RANK, sizeof *ev->dim);
    ev->extent = xcalloc((size_t)ir->vars.len, sizeof *ev->extent);
    for (int v = 0; v < ir->vars.len; v++)
        ev->extent[v] = eval_extent(ir->vars.items[v].extent, ev->sizes);
    ev->data = xcalloc((size_t)narrays, sizeof *ev->data);
    ev->cdata = xcalloc((size_t)narrays, sizeof *ev->cdata);
    for (int i = 0; i < narrays; i++) {
        const IrArray *a = &ir->arrays.items[i];
        long *dim = &ev->dim[i * IR_MAX_RANK];
        for (int k = 0; k < a->rank; k++)
            dim[k] = eval_extent(a->dim[k], ev->sizes);
        ev->count[i] = eval_elements(a, ev->sizes);
        if (ev->count[i] < 0)
            out_of_memory();
        ev->data[i] = xcalloc((size_t)ev->count[i], sizeof(double));
        if (a->role == ROLE_PARAM)
            ev->nparams += ev->count[i];
    }
    ev->param = xcalloc((size_t)ev->nparams, sizeof *ev->param);
    ev->seed = xcalloc((size_t)ir->outputs.len, sizeof *ev->seed);
    for (int o = 0; o < ir->outputs.len; o++) {
        ev->seed[o] = -1;
        for (int i = 0; i < narrays; i++)
            if (ir->arrays.items[i].role == ROLE_SEED &&
                ir->arrays.items[i].primal == ir->outputs.items[o])
                ev->seed[o] = i;
    }
    long k = 0;
    for (int i = 0; i < narrays; i++)
        if (ir->arrays.items[i].role == ROLE_PARAM)
            for (long e = 0; e < ev->count[i]; e++)
                ev->param[k++] = &ev->data[i][e];
    ev->val = xcalloc((size_t)nnodes, sizeof *ev->val);
    ev->cval = xcalloc((size_t)nnodes, sizeof *ev->cval);
    ev->idx = xcalloc((size_t)ir->vars.len, sizeof *ev->idx);

    int *stamp = xcalloc((size_t)nnodes, sizeof *stamp);
    int32_t *stack = xcalloc((size_t)nnodes, sizeof *stack);
    int now = 0;
    ev->fplan = make_plans(ir, &ir->forward, stamp, &now, stack);
    ev->rplan = make_plans(ir, &ir->reverse, stamp, &now, stack);
    ev->tplan = make_plans(ir, &ir->tangent, stamp, &now, stack);
    ev->hfplan = make_plans(ir, &ir->hv_forward, stamp, &now, stack);
    ev->hrplan = make_plans(ir, &ir->hv_reverse, stamp, &now, stack);
    free(stamp);
    free(stack);
    return ev;
}

static void free_plans(Plan *plans, int n)
{
    for (int i = 0; i < n; i++)
        free(plans[i].nodes);
    free(plans);
}

void eval_free(Evaluation *ev)
{
    if (!ev)
        return;
    for (int i = 0; i < ev->ir->arrays.len; i++) {
        free(ev->data[i]);
        free(ev->cdata[i]);
    }
    free(ev->data);
    free(ev->cdata);
    free(ev->sizes);
    free(ev->count);
    free(ev->dim);
    free(ev->extent);
    free(ev->val);
    free(ev->cval);
    free(ev->idx);
    free(ev->param);
    free(ev->seed);
    free_plans(ev->fplan, ev->ir->forward.len);
    free_plans(ev->rplan, ev->ir->reverse.len);
    free_plans(ev->tplan, ev->ir->tangent.len);
    free_plans(ev->hfplan, ev->ir->hv_forward.len);
    free_plans(ev->hrplan, ev->ir->hv_reverse.len);
    free(ev);
}

double *eval_slot(Evaluation *ev, const char *name)
{
    for (int i = 0; i < ev->ir->arrays.len; i++) {
        const IrArray *a = &ev->ir->arrays.items[i];
        if ((a->role == ROLE_PARAM || a->role == ROLE_INPUT) &&
            strcmp(a->name, name) == 0)
            return ev->data[i];
    }
    return NULL;
}

long eval_param_count(const Evaluation *ev)
{
    return ev->nparams;
}

double *eval_param(Evaluation *ev, long k)
{
    return ev->param[k];
}

/* ------------------------------------------------------ walking points */

/* Row-major offset of array[tuple] at the current point. */
static long offset(const Evaluation *ev, int32_t array, int32_t tuple)
{
    const long *dim = &ev->dim[array * IR_MAX_RANK];
    const int32_t *v = ir_tuple_vars(ev->ir, tuple);
    long off = 0;
    for (int k = 0; k < ev->ir->arrays.items[array].rank; k++)
        off = off * dim[k] + ev->idx[v[k]];
    return off;
}

/* The flat position of the current point over the reduced vars, as the
 * emitted max/min loops store it: ((r0 * ext1 + r1) * ext2 + r2) ... */
static double flat_point(const Evaluation *ev, int32_t reduced)
{
    const int32_t *v = ir_tuple_vars(ev->ir, reduced);
    long pos = 0;
    for (int k = 0; k < ir_tuple_len(ev->ir, reduced); k++)
        pos = pos * ev->extent[v[k]] + ev->idx[v[k]];
    return (double)pos;
}

/* Start at the domain's first point; 0 when it has none (an extent 0). */
static int first_point(Evaluation *ev, int32_t domain)
{
    const int32_t *v = ir_tuple_vars(ev->ir, domain);
    int any = 1;
    for (int k = 0; k < ir_tuple_len(ev->ir, domain); k++) {
        ev->idx[v[k]] = 0;
        any &= ev->extent[v[k]] > 0;
    }
    return any;
}

/* Step to the next point, innermost var fastest; 0 after the last. */
static int next_point(Evaluation *ev, int32_t domain)
{
    const int32_t *v = ir_tuple_vars(ev->ir, domain);
    for (int k = ir_tuple_len(ev->ir, domain) - 1; k >= 0; k--) {
        if (++ev->idx[v[k]] < ev->extent[v[k]])
            return 1;
        ev->idx[v[k]] = 0;
    }
    return 0;
}

/* ---------------------------------------------------------- real runs */

static void eval_nodes(Evaluation *ev, const Plan *p)
{
    for (int i = 0; i < p->count; i++) {
        NodeId id = p->nodes[i];
        const IrNode *n = ir_at(ev->ir, id);
        double v[3] = {0, 0, 0};
        switch (n->op) {
        case IR_CONST:
            ev->val[id] = ir_const_num(n);
            break;
        case IR_READ:
            ev->val[id] = ev->data[ir_read_array(n)][offset(
                ev, ir_read_array(n), ir_read_tuple(n))];
            break;
        case IR_INDEX:
            ev->val[id] = (double)ev->idx[ir_leaf_var(n)];
            break;
        case IR_SIZE:
            ev->val[id] = (double)ev->sizes[ir_leaf_var(n)];
            break;
        default:
            for (int k = 0; k < n->nargs; k++)
                v[k] = ev->val[n->arg[k]];
            ev->val[id] = apply_op((IrOp)n->op, v);
            break;
        }
    }
}

static void run_stmt(Evaluation *ev, const IrStmt *s, const Plan *p)
{
    if (!first_point(ev, s->domain))
        return;
    do {
        eval_nodes(ev, p);
        double e = ev->val[s->expr];
        double *t = &ev->data[s->target][offset(ev, s->target, s->tuple)];
        switch (s->kind) {
        case SK_SET:
            *t = e;
            break;
        case SK_ADD:
            *t += e;
            break;
        case SK_MAX:
        case SK_MIN:
            if (s->kind == SK_MAX ? e > *t : e < *t) {
                *t = e;
                if (s->argpos >= 0)
                    ev->data[s->argpos][offset(ev, s->argpos, s->tuple)] =
                        flat_point(ev, s->reduced);
            }
            break;
        }
    } while (next_point(ev, s->domain));
}

static void run_list(Evaluation *ev, const IrStmtList *list, const Plan *plans)
{
    for (int i = 0; i < list->len; i++)
        run_stmt(ev, &list->items[i], &plans[i]);
}

/* For outputs in a struct, the sum of each element of OF(output array)
 * times its seed; else the one output's element.  OF gives the output
 * array itself, or its tangent. */
static double seeded(const Evaluation *ev, int tangents)
{
    const Ir *ir = ev->ir;
    double sum = 0;
    for (int i = 0; i < ir->outputs.len; i++) {
        int32_t out = ir->outputs.items[i];
        int32_t of = tangents ? ir->arrays.items[out].tangent : out;
        if (!ir->struct_output)
            return of >= 0 ? ev->data[of][0] : 0.0;
        int32_t seed = ev->seed[i];
        if (of < 0 || seed < 0)
            continue;
        for (long e = 0; e < ev->count[out]; e++)
            sum += ev->data[seed][e] * ev->data[of][e];
    }
    return sum;
}

long eval_output_count(const Evaluation *ev)
{
    long n = 0;
    for (int i = 0; i < ev->ir->outputs.len; i++)
        n += ev->count[ev->ir->outputs.items[i]];
    return n;
}

/* Copy the output arrays' elements (tangents: their tangents') into to,
 * flat; an output without a tangent has derivative 0. */
static void copy_outputs(const Evaluation *ev, int tangents, double *to)
{
    const Ir *ir = ev->ir;
    long k = 0;
    for (int i = 0; i < ir->outputs.len; i++) {
        int32_t out = ir->outputs.items[i];
        int32_t of = tangents ? ir->arrays.items[out].tangent : out;
        int varied = !tangents || ir->arrays.items[out].varied;
        for (long e = 0; e < ev->count[out]; e++)
            to[k++] = of >= 0 && varied ? ev->data[of][e] : 0.0;
    }
}

void eval_outputs(const Evaluation *ev, double *out)
{
    copy_outputs(ev, 0, out);
}

void eval_output_tangents(const Evaluation *ev, double *dout)
{
    copy_outputs(ev, 1, dout);
}

void eval_set_seed(Evaluation *ev, const double *seed)
{
    const Ir *ir = ev->ir;
    long k = 0;
    for (int i = 0; i < ir->outputs.len; i++) {
        int32_t out = ir->outputs.items[i];
        int32_t s = ev->seed[i];
        for (long e = 0; e < ev->count[out]; e++, k++)
            if (s >= 0)
                ev->data[s][e] = seed[k];
    }
}

double eval_value(Evaluation *ev)
{
    run_list(ev, &ev->ir->forward, ev->fplan);
    return seeded(ev, 0);
}

double eval_gradient(Evaluation *ev, double *grad)
{
    const Ir *ir = ev->ir;
    double y = eval_value(ev);
    run_list(ev, &ir->reverse, ev->rplan);
    long k = 0;
    for (int i = 0; i < ir->arrays.len; i++) {
        const IrArray *a = &ir->arrays.items[i];
        if (a->role != ROLE_PARAM)
            continue;
        for (long e = 0; e < ev->count[i]; e++)
            grad[k++] = a->adjoint >= 0 ? ev->data[a->adjoint][e] : 0.0;
    }
    return y;
}

/* The direction into the params' tangents (flat param order). */
static void set_direction(Evaluation *ev, const double *dir)
{
    const Ir *ir = ev->ir;
    long k = 0;
    for (int i = 0; i < ir->arrays.len; i++) {
        const IrArray *a = &ir->arrays.items[i];
        if (a->role != ROLE_PARAM)
            continue;
        for (long e = 0; e < ev->count[i]; e++, k++)
            if (a->tangent >= 0)
                ev->data[a->tangent][e] = dir[k];
    }
}

double eval_hessvec(Evaluation *ev, const double *dir, double *grad,
                    double *hv)
{
    const Ir *ir = ev->ir;
    set_direction(ev, dir);
    run_list(ev, &ir->hv_forward, ev->hfplan);
    run_list(ev, &ir->hv_reverse, ev->hrplan);
    long k = 0;
    for (int i = 0; i < ir->arrays.len; i++) {
        const IrArray *a = &ir->arrays.items[i];
        if (a->role != ROLE_PARAM)
            continue;
        const IrArray *adj = &ir->arrays.items[a->adjoint];
        for (long e = 0; e < ev->count[i]; e++, k++) {
            grad[k] = ev->data[a->adjoint][e];
            hv[k] = ev->data[adj->tangent][e];
        }
    }
    return ev->data[ir->output][0];
}

double eval_tangent(Evaluation *ev, const double *dir, double *dvalue)
{
    const Ir *ir = ev->ir;
    set_direction(ev, dir);
    run_list(ev, &ir->tangent, ev->tplan);
    const IrArray *out = &ir->arrays.items[ir->output];
    *dvalue = ir->struct_output || out->varied ? seeded(ev, 1) : 0.0;
    return seeded(ev, 0);
}

/* ------------------------------------------------------- complex step */

/* re + i im, without the NaN that re + I * im gives for infinite im. */
static Cplx cmake(double re, double im)
{
    double parts[2] = {re, im};
    Cplx z;
    memcpy(&z, parts, sizeof z);   /* C99 6.2.5: same layout as double[2] */
    return z;
}

/* log(1 + z) without the cancellation of forming 1 + z for small z:
 * |1 + z|^2 = 1 + x(2 + x) + y^2. */
static Cplx clog1p_(Cplx z)
{
    double x = creal(z), y = cimag(z);
    if (fabs(x) >= 0.5)
        return clog(1.0 + z);
    return cmake(0.5 * log1p(x * (2.0 + x) + y * y), atan2(y, 1.0 + x));
}

/* e^z - 1 = (e^x - 1) cos y - 2 sin^2(y/2) + i e^x sin y. */
static Cplx cexpm1_(Cplx z)
{
    double x = creal(z), y = cimag(z), s = sin(0.5 * y);
    return cmake(expm1(x) * cos(y) - 2.0 * s * s, exp(x) * sin(y));
}

/* z^w.  Integer real exponents multiply (z^2 at z < 0 must not go through
 * clog, whose imaginary part pi would drown the step); others use
 * exp(w log z). */
static Cplx cpow_(Cplx z, Cplx w)
{
    double n = creal(w);
    if (cimag(w) == 0 && n == trunc(n) && fabs(n) <= 1e9) {
        unsigned long m = (unsigned long)fabs(n);
        Cplx r = 1.0, b = z;
        while (m) {
            if (m & 1)
                r *= b;
            m >>= 1;
            if (m)
                b *= b;
        }
        return n < 0 ? 1.0 / r : r;
    }
    return cexp(w * clog(z));
}

static Cplx ccbrt_(Cplx z)
{
    if (creal(z) > 0)
        return cexp(clog(z) / 3.0);
    if (creal(z) < 0)
        return -cexp(clog(-z) / 3.0);
    return cmake(cbrt(creal(z)), 0);
}

/* Overflow-safe as runtime/sigmoid.c: exp only sees Re <= 0. */
static Cplx csigmoid_(Cplx z)
{
    if (creal(z) >= 0)
        return 1.0 / (1.0 + cexp(-z));
    Cplx e = cexp(z);
    return e / (1.0 + e);
}

static Cplx csoftplus_(Cplx z)
{
    if (creal(z) > 0)
        return z + clog1p_(cexp(-z));
    return clog1p_(cexp(z));
}

/* An op applied to real parts.  For the smooth ops with no complex form
 * here, a perturbed operand blocks the step. */
static Cplx real_part_op(Evaluation *ev, IrOp op, const Cplx *z, int smooth)
{
    double v[3] = {0, 0, 0};
    for (int k = 0; k < ir_ops[op].arity; k++) {
        v[k] = creal(z[k]);
        if (smooth && cimag(z[k]) != 0 && ev->blocked < 0)
            ev->blocked = op;
    }
    return cmake(apply_op(op, v), 0);
}

static Cplx capply(Evaluation *ev, IrOp op, const Cplx *z)
{
    Cplx a = z[0], b = z[1], c = z[2];
    double x = creal(a);
    switch (op) {
    case IR_NEG: return -a;
    case IR_ADD: return a + b;
    case IR_SUB: return a - b;
    case IR_MUL: return a * b;
    case IR_DIV: return a / b;
    case IR_POW: return cpow_(a, b);
    /* conditions and piecewise ops decide on real parts and pass the
     * chosen operand through, as the real code does */
    case IR_SELECT: return x != 0 ? b : c;
    case IR_ABS: return x > 0 ? a : x < 0 ? -a : cmake(fabs(x), 0);
    case IR_MIN: return x <= creal(b) ? a : b;
    case IR_MAX: return x >= creal(b) ? a : b;
    case IR_CLAMP: return x < creal(b) ? b : x > creal(c) ? c : a;
    case IR_RELU: return x > 0 ? a : cmake(0, 0);
    case IR_SQRT: return csqrt(a);
    case IR_CBRT: return ccbrt_(a);
    case IR_EXP: return cexp(a);
    case IR_EXPM1: return cexpm1_(a);
    case IR_LOG: return clog(a);
    case IR_LOG1P: return clog1p_(a);
    case IR_LOG2: return clog(a) / log(2.0);
    case IR_LOG10: return clog(a) / log(10.0);
    case IR_SIN: return csin(a);
    case IR_COS: return ccos(a);
    case IR_TAN: return ctan(a);
    case IR_ASIN: return casin(a);
    case IR_ACOS: return cacos(a);
    case IR_ATAN: return catan(a);
    case IR_SINH: return csinh(a);
    case IR_COSH: return ccosh(a);
    case IR_TANH: return ctanh(a);
    case IR_ASINH: return casinh(a);
    case IR_ACOSH: return cacosh(a);
    case IR_ATANH: return catanh(a);
    case IR_HYPOT: return csqrt(a * a + b * b);
    case IR_HYPOTSLOPE: return a / csqrt(a * a + b * b);
    case IR_SIGMOID: return csigmoid_(a);
    case IR_SOFTPLUS: return csoftplus_(a);
    case IR_LT: case IR_LE: case IR_GT: case IR_GE: case IR_EQ: case IR_NE:
    case IR_AND: case IR_OR: case IR_NOT:
    case IR_FLOOR: case IR_CEIL: case IR_ROUND: case IR_TRUNC: case IR_SIGN:
        return real_part_op(ev, op, z, 0);
    case IR_ATAN2: case IR_ERF: case IR_ERFC: case IR_LGAMMA: case IR_DIGAMMA:
    case IR_TRIGAMMA:
        return real_part_op(ev, op, z, 1);
    case IR_CONST: case IR_READ: case IR_INDEX: case IR_SIZE:
    case IR_OP_COUNT:
        break;
    }
    DV_UNREACHABLE();
    return 0;
}

static void ceval_nodes(Evaluation *ev, const Plan *p)
{
    for (int i = 0; i < p->count; i++) {
        NodeId id = p->nodes[i];
        const IrNode *n = ir_at(ev->ir, id);
        Cplx z[3] = {0, 0, 0};
        switch (n->op) {
        case IR_CONST:
            ev->cval[id] = cmake(ir_const_num(n), 0);
            break;
        case IR_READ:
            ev->cval[id] = ev->cdata[ir_read_array(n)][offset(
                ev, ir_read_array(n), ir_read_tuple(n))];
            break;
        case IR_INDEX:
            ev->cval[id] = cmake((double)ev->idx[ir_leaf_var(n)], 0);
            break;
        case IR_SIZE:
            ev->cval[id] = cmake((double)ev->sizes[ir_leaf_var(n)], 0);
            break;
        default:
            for (int k = 0; k < n->nargs; k++)
                z[k] = ev->cval[n->arg[k]];
            ev->cval[id] = capply(ev, (IrOp)n->op, z);
            break;
        }
    }
}

static void crun_stmt(Evaluation *ev, const IrStmt *s, const Plan *p)
{
    if (!first_point(ev, s->domain))
        return;
    do {
        ceval_nodes(ev, p);
        Cplx e = ev->cval[s->expr];
        Cplx *t = &ev->cdata[s->target][offset(ev, s->target, s->tuple)];
        switch (s->kind) {
        case SK_SET:
            *t = e;
            break;
        case SK_ADD:
            *t += e;
            break;
        case SK_MAX:
        case SK_MIN:
            if (s->kind == SK_MAX ? creal(e) > creal(*t)
                                  : creal(e) < creal(*t)) {
                *t = e;
                if (s->argpos >= 0)
                    ev->cdata[s->argpos][offset(ev, s->argpos, s->tuple)] =
                        flat_point(ev, s->reduced);
            }
            break;
        }
    } while (next_point(ev, s->domain));
}

EvalStep eval_complex_step(Evaluation *ev, long k, double h)
{
    const Ir *ir = ev->ir;
    for (int i = 0; i < ir->arrays.len; i++) {
        const IrArray *a = &ir->arrays.items[i];
        long n = ev->count[i];
        if (a->role == ROLE_ADJOINT || a->role == ROLE_TANGENT)
            continue;
        if (!ev->cdata[i])
            ev->cdata[i] = xcalloc((size_t)n, sizeof(Cplx));
        if (a->role == ROLE_PARAM || a->role == ROLE_INPUT)
            for (long e = 0; e < n; e++)
                ev->cdata[i][e] = cmake(ev->data[i][e],
                                        &ev->data[i][e] == ev->param[k] ? h
                                                                        : 0);
    }
    ev->blocked = -1;
    for (int i = 0; i < ir->forward.len; i++)
        crun_stmt(ev, &ir->forward.items[i], &ev->fplan[i]);
    Cplx y = 0;
    for (int i = 0; i < ir->outputs.len; i++) {
        int32_t out = ir->outputs.items[i], seed = ev->seed[i];
        for (long e = 0; e < ev->count[out]; e++)
            y += ir->struct_output
                     ? (seed >= 0 ? ev->data[seed][e] : 0) * ev->cdata[out][e]
                     : ev->cdata[out][e];
    }
    EvalStep step = {creal(y), cimag(y) / h, ev->blocked};
    return step;
}
