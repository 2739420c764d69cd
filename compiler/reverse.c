/* reverse.c - activity analysis and the adjoint sweep; see reverse.h.
 *
 * For a forward statement  y[I] (op)= e  over domain D and each active
 * read a[J] in e, the sweep appends
 *     adj_a[J] += adj_y[I] * w      over D
 * where w is de/da[J] from the rules, and for max and min only at the
 * winning point.  Statements are visited
 * in reverse order, so every adjoint is complete before it is read. */
#include "reverse.h"
#include "names.h"
#include "rules.h"

#include <string.h>

typedef struct Reverse {
    Ir *ir;
    int32_t row_var;    /* row by row: the row var of the statement being
                           reversed, or -1 */
    char *written;      /* adjoint array has received a contribution */
    NodeList reads;  /* scratch: distinct active reads of one expression */
    NodeList seen;   /* scratch: nodes rules_active_reads has visited */
    DeriveMemo memo;
} Reverse;

static int reads_varied(const Ir *ir, NodeId n)
{
    const IrNode *nd = ir_at(ir, n);
    if (nd->op == IR_READ)
        return ir->arrays.items[ir_read_array(nd)].varied;
    for (int i = 0; i < nd->nargs; i++)
        if (reads_varied(ir, nd->arg[i]))
            return 1;
    return 0;
}

static void mark_useful(Ir *ir, NodeId n)
{
    const IrNode *nd = ir_at(ir, n);
    if (nd->op == IR_READ)
        ir->arrays.items[ir_read_array(nd)].useful = 1;
    for (int i = 0; i < nd->nargs; i++)
        mark_useful(ir, nd->arg[i]);
}

/* varied: depends on a param; useful: the output depends on it. */
static void activity(Ir *ir)
{
    for (int i = 0; i < ir->arrays.len; i++) {
        IrArray *a = &ir->arrays.items[i];
        a->varied = a->role == ROLE_PARAM;
        a->useful = a->is_output;
    }
    for (int i = 0; i < ir->forward.len; i++) {
        const IrStmt *s = &ir->forward.items[i];
        IrArray *t = &ir->arrays.items[s->target];
        if (!t->no_adjoint && reads_varied(ir, s->expr))
            t->varied = 1;
    }
    for (int i = ir->forward.len - 1; i >= 0; i--) {
        const IrStmt *s = &ir->forward.items[i];
        if (ir->arrays.items[s->target].useful)
            mark_useful(ir, s->expr);
    }
}

static int32_t adjoint_of(Reverse *rv, int32_t array)
{
    Ir *ir = rv->ir;
    if (ir->arrays.items[array].adjoint < 0) {
        int32_t adj = ir_add_derived(ir, array, ROLE_ADJOINT, "adj");
        ir->arrays.items[array].adjoint = adj;
    }
    return ir->arrays.items[array].adjoint;
}

static void emit_stmt(Reverse *rv, IrStmtKind kind, int32_t target,
                      int32_t tuple, int32_t domain, NodeId e, Span origin)
{
    IrStmt s = ir_stmt(rv->ir, kind, target, tuple, domain, e, origin);
    /* a statement over the row belongs to the row's block */
    int n = ir_tuple_len(rv->ir, domain);
    for (int k = 0; k < n; k++)
        if (ir_tuple_vars(rv->ir, domain)[k] == rv->row_var)
            s.row_var = rv->row_var;
    ir_add_stmt(rv->ir, &rv->ir->reverse, s);
}

/* True when a statement over DOMAIN writing array[tuple] writes each
 * element exactly once: the tuple is the whole domain, without repeats. */
static int covers_once(const Ir *ir, int32_t tuple, int32_t domain)
{
    int n = ir_tuple_len(ir, tuple);
    if (n != ir_tuple_len(ir, domain))
        return 0;
    const int32_t *v = ir_tuple_vars(ir, tuple);
    for (int i = 0; i < n; i++)
        for (int k = 0; k < i; k++)
            if (v[i] == v[k])
                return 0;
    return 1;
}

/* Add contribution e to adj[tuple] over domain: the first write to an
 * adjoint sets it when it covers every element once, else zeroes it first.
 * Row by row, an adjoint that outlives the row (of a param, or of a value
 * computed before the rows) sums over all the rows, so it is zeroed before
 * them; one of a per-row value is zeroed for its own row. */
static void accumulate(Reverse *rv, int32_t adj, int32_t tuple,
                       int32_t domain, NodeId e, Span origin)
{
    Ir *ir = rv->ir;
    int in_rows = rv->row_var >= 0;
    int row_local = ir->arrays.items[adj].row_local;
    if (!rv->written[adj]) {
        rv->written[adj] = 1;
        if ((!in_rows || row_local) && covers_once(ir, tuple, domain)) {
            emit_stmt(rv, SK_SET, adj, tuple, domain, e, origin);
            return;
        }
        int32_t whole = ir_whole_tuple(ir, adj);
        if (in_rows && row_local) {
            /* only the current row: the row var in the first place */
            int n = ir_tuple_len(ir, whole);
            int32_t vars[IR_MAX_RANK];
            memcpy(vars, ir_tuple_vars(ir, whole), (size_t)n * sizeof *vars);
            vars[0] = rv->row_var;
            whole = ir_tuple(ir, vars, n);
        }
        emit_stmt(rv, SK_SET, adj, whole, whole, ir_const(ir, 0), origin);
    }
    emit_stmt(rv, SK_ADD, adj, tuple, domain, e, origin);
}

static void reverse_stmt(Reverse *rv, const IrStmt *s)
{
    Ir *ir = rv->ir;
    rv->row_var = s->row_var;
    IrArray *t = &ir->arrays.items[s->target];
    if (!t->varied || !t->useful)
        return;
    int32_t adj_y = adjoint_of(rv, s->target);
    if (!rv->written[adj_y])
        return;     /* its adjoint is zero: nothing to propagate */
    NodeId seed = ir_read(ir, adj_y, s->tuple);
    NodeId y = ir_read(ir, s->target, s->tuple);
    NodeId winner = NO_NODE;
    if (s->kind == SK_MAX || s->kind == SK_MIN)
        winner = ir_node(ir, IR_EQ, ir_flat_point(ir, s->reduced),
                         ir_read(ir, s->argpos, s->tuple), NO_NODE);
    NodeId self = s->kind == SK_SET ? y : s->expr;

    rules_active_reads(ir, s->expr, &rv->seen, &rv->reads);
    for (int i = 0; i < rv->reads.len; i++) {
        NodeId leaf = rv->reads.items[i];
        NodeId d = rules_derivative(ir, &rv->memo, s->expr, leaf, self);
        if (d == NO_NODE)
            continue;
        NodeId w = rules_mul(ir, seed, d);
        if (w == NO_NODE)
            continue;   /* e.g. a - a under a selector: zero on every branch */
        if (winner != NO_NODE)
            w = ir_node(ir, IR_SELECT, winner, w, ir_const(ir, 0));
        const IrNode *rd = ir_at(ir, leaf);
        int32_t adj_a = adjoint_of(rv, ir_read_array(rd));
        accumulate(rv, adj_a, ir_read_tuple(rd), s->domain, w, s->origin);
    }
}

/* Drop writes to adjoints nothing reads (a value whose every partial is
 * zero, e.g. under floor), repeating until none is left, so no local is
 * set but never used. */
static void drop_unread(Ir *ir)
{
    char *read = arena_alloc(ir->arena, (size_t)ir->arrays.len);
    char *reached = arena_alloc(ir->arena, (size_t)ir->nodes.len + 1);
    for (int changed = 1; changed;) {
        changed = 0;
        memset(read, 0, (size_t)ir->arrays.len);
        memset(reached, 0, (size_t)ir->nodes.len + 1);
        ir_mark_reached(ir, &ir->reverse, reached);
        for (int i = 0; i < ir->nodes.len; i++)
            if (reached[i] && ir->nodes.items[i].op == IR_READ)
                read[ir_read_array(&ir->nodes.items[i])] = 1;
        int out = 0;
        for (int i = 0; i < ir->reverse.len; i++) {
            const IrStmt *s = &ir->reverse.items[i];
            const IrArray *t = &ir->arrays.items[s->target];
            int param_grad = ir->arrays.items[t->primal].role == ROLE_PARAM;
            if (!param_grad && !read[s->target]) {
                changed = 1;
                continue;
            }
            ir->reverse.items[out++] = *s;
        }
        ir->reverse.len = out;
    }
}

/* The sweep starts from the outputs' adjoints: 1 for one scalar output,
 * else the caller's seed, one for each output element. */
static void seed_outputs(Reverse *rv)
{
    Ir *ir = rv->ir;
    Span at = ir->output_stmt;
    if (!ir->struct_output) {
        int32_t adj_out = adjoint_of(rv, ir->output);
        int32_t none = ir_tuple(ir, NULL, 0);
        if (ir->arrays.items[ir->output].varied) {
            emit_stmt(rv, SK_SET, adj_out, none, none, ir_const(ir, 1), at);
            rv->written[adj_out] = 1;
        }
        return;
    }
    for (int i = 0; i < ir->outputs.len; i++) {
        int32_t out = ir->outputs.items[i];
        int32_t seed = ir_add_derived(ir, out, ROLE_SEED, "seed");
        if (!ir->arrays.items[out].varied)
            continue;
        int32_t adj = adjoint_of(rv, out);
        int32_t whole = ir_whole_tuple(ir, adj);
        emit_stmt(rv, SK_SET, adj, whole, whole, ir_read(ir, seed, whole), at);
        rv->written[adj] = 1;
    }
}

void reverse_pass(Ir *ir)
{
    Reverse rv;
    memset(&rv, 0, sizeof rv);
    rv.ir = ir;
    rv.row_var = -1;
    activity(ir);
    /* adjoints and seeds are created on demand; size the flags for the
     * worst case */
    rv.written = arena_alloc(ir->arena, (size_t)(3 * ir->arrays.len + 1));
    seed_outputs(&rv);
    for (int i = ir->forward.len - 1; i >= 0; i--)
        reverse_stmt(&rv, &ir->forward.items[i]);
    rv.row_var = -1;
    /* every gradient member is overwritten, also where it is zero */
    int narrays = ir->arrays.len;
    for (int i = 0; i < narrays; i++) {
        if (ir->arrays.items[i].role != ROLE_PARAM)
            continue;
        int32_t adj = adjoint_of(&rv, i);
        if (!rv.written[adj]) {
            int32_t whole = ir_whole_tuple(ir, adj);
            emit_stmt(&rv, SK_SET, adj, whole, whole, ir_const(ir, 0),
                      ir->arrays.items[i].span);
            ir->reverse.items[ir->reverse.len - 1].note = arena_printf(
                ir->arena, ir->arrays.items[i].useful
                                ? "the derivative with respect to %s is zero "
                                  "everywhere"
                                : ir->struct_output
                                ? "%s affects no output"
                                : "%s does not affect the output",
                ir->arrays.items[i].name);
            rv.written[adj] = 1;
        }
    }
    rules_memo_free(&rv.memo);
    arena_release(ir->arena, rv.seen.items,
                  (size_t)rv.seen.cap * sizeof *rv.seen.items);
    arena_release(ir->arena, rv.reads.items,
                  (size_t)rv.reads.cap * sizeof *rv.reads.items);
    drop_unread(ir);
}
