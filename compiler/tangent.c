/* tangent.c - the tangent pass; see tangent.h.
 *
 * After each statement  y[I] (op)= e  over domain D whose target depends
 * on a param (a forward statement, or one of the reverse sweep, whose
 * adjoints depend on the params too), the pass appends
 *     tan_y[I] (op)= sum over active reads a[J] of de/da[J] * tan_a[J]
 * over D, where the tangent of a param is the direction.  A max or min
 * takes the tangent of its winning point: after each point of the
 * reduction, tan_y[I] = (point is the winner so far ? the sum : tan_y[I]),
 * which also holds row by row, where the winner so far changes as the
 * rows go by.  Each tangent follows its statement, so a row's values are
 * at hand when its tangent is computed.  Tangents nothing asked for reads
 * are dropped, separately for each product. */
#include "tangent.h"
#include "rules.h"

#include <string.h>

typedef struct Tangent {
    Ir *ir;
    NodeList reads;     /* scratch: active reads of one expression */
    NodeList seen;      /* scratch for rules_active_reads */
    DeriveMemo memo;
} Tangent;

static int32_t tangent_of(Ir *ir, int32_t array)
{
    if (ir->arrays.items[array].tangent < 0) {
        int32_t tan = ir_add_derived(ir, array, ROLE_TANGENT, "tan");
        ir->arrays.items[array].tangent = tan;
    }
    return ir->arrays.items[array].tangent;
}

/* The sum of de/da * tan_a over the active reads a of s's expression;
 * NO_NODE when it is zero by construction. */
static NodeId directional(Tangent *tg, const IrStmt *s)
{
    Ir *ir = tg->ir;
    NodeId self = s->kind == SK_SET ? ir_read(ir, s->target, s->tuple)
                                    : s->expr;
    NodeId sum = NO_NODE;
    rules_active_reads(ir, s->expr, &tg->seen, &tg->reads);
    for (int i = 0; i < tg->reads.len; i++) {
        NodeId leaf = tg->reads.items[i];
        NodeId d = rules_derivative(ir, &tg->memo, s->expr, leaf, self);
        const IrNode *rd = ir_at(ir, leaf);
        NodeId tan = ir_read(ir, tangent_of(ir, ir_read_array(rd)),
                             ir_read_tuple(rd));
        sum = rules_add(ir, sum, rules_mul(ir, d, tan));
    }
    return sum;
}

/* Append s and then its tangent statement, if any, to OUT. */
static void tangent_stmt(Tangent *tg, const IrStmt *s, IrStmtList *out)
{
    Ir *ir = tg->ir;
    ir_add_stmt(ir, out, *s);
    const IrArray *t = &ir->arrays.items[s->target];
    if (!t->varied || !t->useful)
        return;
    int32_t tan_y = tangent_of(ir, s->target);
    NodeId d = directional(tg, s);
    IrStmt ts = *s;
    ts.target = tan_y;
    ts.reduced = -1;
    ts.argpos = -1;
    ts.note = NULL;
    switch (s->kind) {
    case SK_SET:
        ts.expr = d == NO_NODE ? ir_const(ir, 0) : d;
        break;
    case SK_ADD:
        if (d == NO_NODE)
            return;
        ts.expr = d;
        break;
    case SK_MAX:
    case SK_MIN: {
        /* its statement set tan_y to 0 first (the tangent of the start
         * value); the winner's tangent replaces it */
        if (d == NO_NODE)
            return;
        NodeId won = ir_node(ir, IR_EQ, ir_flat_point(ir, s->reduced),
                             ir_read(ir, s->argpos, s->tuple), NO_NODE);
        ts.kind = SK_SET;
        ts.expr = ir_node(ir, IR_SELECT, won, d, ir_read(ir, tan_y, s->tuple));
        break;
    }
    }
    ir_add_stmt(ir, out, ts);
}

/* Mark in need[] the arrays node id reads (each node once per stamp). */
static void mark_needed(const Ir *ir, NodeId id, char *need, int *stamp,
                        int now)
{
    if (stamp[id] == now)
        return;
    stamp[id] = now;
    const IrNode *n = ir_at(ir, id);
    if (n->op == IR_READ)
        need[ir_read_array(n)] = 1;
    for (int i = 0; i < n->nargs; i++)
        mark_needed(ir, n->arg[i], need, stamp, now);
}

/* Keep, of the tangent statements in lists[0..n), only those whose target
 * is needed: marked in need[] from the start, or read by a tangent kept
 * later.  One backward walk suffices, as every read refers to an earlier
 * statement (of the same list, or of an earlier one).  The others are
 * dropped (a value read only through a condition, whose derivative is
 * zero), so no local is set but never used. */
static void keep_needed(Ir *ir, IrStmtList *const *lists, int n, char *need)
{
    int *stamp = arena_alloc(ir->arena,
                             ((size_t)ir->nodes.len + 1) * sizeof *stamp);
    int now = 0;
    for (int l = n - 1; l >= 0; l--) {
        IrStmtList *list = lists[l];
        int keep = list->len;
        for (int i = list->len - 1; i >= 0; i--) {
            const IrStmt *s = &list->items[i];
            if (ir->arrays.items[s->target].role == ROLE_TANGENT) {
                if (!need[s->target])
                    continue;
                mark_needed(ir, s->expr, need, stamp, ++now);
            }
            list->items[--keep] = *s;
        }
        if (keep > 0)
            memmove(list->items, list->items + keep,
                    (size_t)(list->len - keep) * sizeof *list->items);
        list->len -= keep;
    }
    arena_release(ir->arena, stamp,
                  ((size_t)ir->nodes.len + 1) * sizeof *stamp);
}

static void copy_list(Ir *ir, const IrStmtList *from, IrStmtList *to)
{
    to->len = 0;
    for (int i = 0; i < from->len; i++)
        ir_add_stmt(ir, to, from->items[i]);
}

/* The reverse sweep's activity: an adjoint depends on the params when its
 * statements read something that does (its forward values or another
 * adjoint), and every adjoint the sweep writes matters to the gradient. */
static void adjoint_activity(Tangent *tg)
{
    Ir *ir = tg->ir;
    for (int i = 0; i < ir->reverse.len; i++) {
        const IrStmt *s = &ir->reverse.items[i];
        IrArray *t = &ir->arrays.items[s->target];
        t->useful = 1;
        rules_active_reads(ir, s->expr, &tg->seen, &tg->reads);
        if (tg->reads.len > 0)
            ir->arrays.items[s->target].varied = 1;
    }
}

/* The reverse statements with their tangents, into ir->hv_reverse, and a
 * zero for each member of *hv no statement writes (all are overwritten,
 * as *grad's are). */
static void reverse_tangents(Tangent *tg)
{
    Ir *ir = tg->ir;
    adjoint_activity(tg);
    ir->hv_reverse.len = 0;
    for (int i = 0; i < ir->reverse.len; i++)
        tangent_stmt(tg, &ir->reverse.items[i], &ir->hv_reverse);
    int narrays = ir->arrays.len;
    for (int i = 0; i < narrays; i++) {
        const IrArray *p = &ir->arrays.items[i];
        if (p->role != ROLE_PARAM || p->adjoint < 0)
            continue;
        int32_t adj = p->adjoint;
        if (ir->arrays.items[adj].varied)
            continue;
        int32_t hv = tangent_of(ir, adj);
        int32_t whole = ir_whole_tuple(ir, hv);
        IrStmt z = ir_stmt(ir, SK_SET, hv, whole, whole, ir_const(ir, 0),
                           ir->arrays.items[i].span);
        z.note = arena_printf(ir->arena, "the second derivatives of %s are "
                              "zero", ir->arrays.items[i].name);
        ir_add_stmt(ir, &ir->hv_reverse, z);
    }
}

/* Every member of the caller's *dout is overwritten: with zero for an
 * output that does not depend on the params. */
static void zero_output_tangents(Ir *ir)
{
    if (!ir->struct_output)
        return;
    for (int i = 0; i < ir->outputs.len; i++) {
        const IrArray *out = &ir->arrays.items[ir->outputs.items[i]];
        if (out->varied)
            continue;
        int32_t tan = out->tangent;
        int32_t whole = ir_whole_tuple(ir, tan);
        IrStmt z = ir_stmt(ir, SK_SET, tan, whole, whole, ir_const(ir, 0),
                           ir->arrays.items[tan].span);
        z.note = arena_printf(ir->arena, "%s does not depend on the params",
                              ir->arrays.items[tan].name);
        ir_add_stmt(ir, &ir->tangent, z);
    }
}

void tangent_pass(Ir *ir, int tangent, int hessvec)
{
    Tangent tg;
    memset(&tg, 0, sizeof tg);
    tg.ir = ir;
    IrStmtList all = {0};
    for (int i = 0; i < ir->forward.len; i++)
        tangent_stmt(&tg, &ir->forward.items[i], &all);
    /* the outputs' tangents exist even when zero by construction */
    for (int i = 0; i < ir->outputs.len; i++)
        tangent_of(ir, ir->outputs.items[i]);
    if (tangent) {
        copy_list(ir, &all, &ir->tangent);
        char *need = arena_alloc(ir->arena, (size_t)ir->arrays.len);
        for (int i = 0; i < ir->outputs.len; i++)
            need[ir->arrays.items[ir->outputs.items[i]].tangent] = 1;
        IrStmtList *lists[1] = {&ir->tangent};
        keep_needed(ir, lists, 1, need);
        zero_output_tangents(ir);
    }
    if (hessvec) {
        reverse_tangents(&tg);
        copy_list(ir, &all, &ir->hv_forward);
        char *need = arena_alloc(ir->arena, (size_t)ir->arrays.len);
        for (int i = 0; i < ir->arrays.len; i++)
            if (ir_home(ir, &ir->arrays.items[i]) == HOME_HV)
                need[i] = 1;
        IrStmtList *lists[2] = {&ir->hv_forward, &ir->hv_reverse};
        keep_needed(ir, lists, 2, need);
    }
    arena_release(ir->arena, all.items, (size_t)all.cap * sizeof *all.items);
    rules_memo_free(&tg.memo);
    arena_release(ir->arena, tg.seen.items,
                  (size_t)tg.seen.cap * sizeof *tg.seen.items);
    arena_release(ir->arena, tg.reads.items,
                  (size_t)tg.reads.cap * sizeof *tg.reads.items);
}
