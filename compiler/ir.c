/* ir.c - construction of IR nodes, tuples, arrays and statements, with
 * hash-consing, plus the IR's printer and verifier; see ir.h. */
#include "ir.h"
#include "names.h"

#include <limits.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

const IrOpInfo ir_ops[IR_OP_COUNT] = {
#define OP(id, name, arity, kind, c) {name, arity, kind, c},
#include "ops.def"
#undef OP
};

int ir_builtin(const char *name)
{
    for (int op = 0; op < IR_OP_COUNT; op++)
        if (ir_ops[op].model_name && ir_ops[op].model_name[0] == name[0] &&
            strcmp(ir_ops[op].model_name, name) == 0)
            return op;
    return -1;
}

Ir *ir_new(Arena *arena, const Source *src)
{
    Ir *ir = arena_alloc(arena, sizeof *ir);
    ir->arena = arena;
    ir->src = src;
    ir->output = -1;
    ir->row_size = -1;
    return ir;
}

/* ------------------------------------------------------------ hashing */

static uint64_t mix(uint64_t h, uint64_t v)
{
    h ^= v + 0x9e3779b97f4a7c15ULL + (h << 6) + (h >> 2);
    return h;
}

/* Spread every input bit over the low bits the tables index with (the
 * 64-bit finalizer of MurmurHash3), so linear probing sees few clusters
 * even in tables of millions of entries. */
static uint64_t finish(uint64_t h)
{
    h ^= h >> 33;
    h *= 0xff51afd7ed558ccdULL;
    h ^= h >> 33;
    h *= 0xc4ceb9fe1a85ec53ULL;
    return h ^ (h >> 33);
}

static uint64_t node_key(const IrNode *n)
{
    uint64_t h = mix(n->op, n->nargs);
    for (int i = 0; i < 3; i++)
        h = mix(h, (uint32_t)n->arg[i]);
    return finish(h);
}

static int node_equal(const IrNode *a, const IrNode *b)
{
    /* Constants compare by bit pattern, so -0.0 and 0.0 stay apart and a
     * NaN constant is equal to itself. */
    return a->op == b->op && a->nargs == b->nargs &&
           a->arg[0] == b->arg[0] && a->arg[1] == b->arg[1] &&
           a->arg[2] == b->arg[2];
}

/* A node table entry: id + 1 in the low half, the hash in the high half
 * (whose low bits also pick the first slot). */
static uint64_t node_entry(uint32_t hash, NodeId id)
{
    return (uint64_t)hash << 32 | (uint32_t)(id + 1);
}

static uint32_t node_tag(const IrNode *n)
{
    return (uint32_t)(node_key(n) >> 32);
}

static void put_entry(uint64_t *t, uint32_t mask, uint64_t entry)
{
    uint32_t slot = (uint32_t)(entry >> 32) & mask;
    while (t[slot])
        slot = (slot + 1) & mask;
    t[slot] = entry;
}

/* The table that holds n, or would: a node with arguments is kept by its
 * newest argument, a read by its array, in tables of IR_NODE_GROUP ids
 * each; other leaves share one table.  Nodes made together mostly have
 * recent arguments and so use the same few small tables, which stay in
 * cache, where one table of all nodes would cost a cache miss for nearly
 * every lookup once it is larger than the cache. */
static IrNodeTable *table_of(Ir *ir, const IrNode *n)
{
    IrNodeTables *group;
    int32_t at;
    if (n->nargs > 0) {
        group = &ir->by_arg;
        at = n->arg[0];
        for (int i = 1; i < n->nargs; i++)
            at = n->arg[i] > at ? n->arg[i] : at;
    } else if (n->op == IR_READ) {
        group = &ir->by_array;
        at = ir_read_array(n);
    } else {
        return &ir->leaves;
    }
    int k = at / IR_NODE_GROUP;
    while (group->len <= k) {
        IrNodeTable empty = {NULL, 0, 0};
        VEC_PUSH(ir->arena, *group, empty);
    }
    return &group->items[k];
}

/* Whether one more entry would fill the table over three quarters. */
static int table_full(const IrNodeTable *t)
{
    return 4 * (size_t)(t->len + 1) > 3 * (size_t)t->cap;
}

/* Double a table (tables start at a size the arena gives its own heap
 * chunk, so a replaced one is freed at once). */
static void grow_table(Ir *ir, IrNodeTable *t)
{
    int cap = t->cap ? 2 * t->cap : (int)(ARENA_LARGE / sizeof *t->slot);
    uint64_t *slot = arena_alloc(ir->arena, (size_t)cap * sizeof *slot);
    for (int i = 0; i < t->cap; i++)
        if (t->slot[i])
            put_entry(slot, (uint32_t)cap - 1, t->slot[i]);
    arena_release(ir->arena, t->slot, (size_t)t->cap * sizeof *slot);
    t->slot = slot;
    t->cap = cap;
}

static void free_tables(Ir *ir, IrNodeTables *group)
{
    for (int i = 0; i < group->len; i++)
        arena_release(ir->arena, group->items[i].slot,
                      (size_t)group->items[i].cap * sizeof(uint64_t));
    arena_release(ir->arena, group->items,
                  (size_t)group->cap * sizeof *group->items);
    group->items = NULL;
    group->len = group->cap = 0;
}

void ir_drop_node_tables(Ir *ir)
{
    free_tables(ir, &ir->by_arg);
    free_tables(ir, &ir->by_array);
    arena_release(ir->arena, ir->leaves.slot,
                  (size_t)ir->leaves.cap * sizeof *ir->leaves.slot);
    ir->leaves.slot = NULL;
    ir->leaves.len = ir->leaves.cap = 0;
    ir->nodes_tabled = 0;
}

/* Enter node id, known to be in no table yet, in its table. */
static void table_put(Ir *ir, NodeId id)
{
    const IrNode *n = &ir->nodes.items[id];
    IrNodeTable *t = table_of(ir, n);
    if (table_full(t))
        grow_table(ir, t);
    put_entry(t->slot, (uint32_t)t->cap - 1, node_entry(node_tag(n), id));
    t->len++;
}

/* The node array is read through pointers while nodes are added (a rule
 * may hold one node while it builds others), so it must not move under
 * them.  It grows in place at statement boundaries (ir_add_stmt), where
 * no such pointer is held, keeping a quarter of it free; only a statement
 * that fills that quarter makes it move mid-way, and then the old copy
 * stays readable until the next statement is added. */
static void grow_nodes(Ir *ir, int in_place)
{
    size_t old_size = (size_t)ir->nodes.cap * sizeof *ir->nodes.items;
    int cap = ir->nodes.cap ? 2 * ir->nodes.cap : 1024;
    size_t size = (size_t)cap * sizeof *ir->nodes.items;
    if (in_place) {
        ir->nodes.items = arena_grow(ir->arena, ir->nodes.items, old_size,
                                     size);
    } else {
        IrNode *items = arena_alloc(ir->arena, size);
        if (ir->nodes.len)
            memcpy(items, ir->nodes.items,
                   (size_t)ir->nodes.len * sizeof *items);
        arena_retire(ir->arena, ir->nodes.items, old_size);
        ir->nodes.items = items;
    }
    ir->nodes.cap = cap;
}

static NodeId intern(Ir *ir, const IrNode *n)
{
    /* nodes made while the tables were dropped are entered first */
    while (ir->nodes_tabled < ir->nodes.len)
        table_put(ir, ir->nodes_tabled++);
    IrNodeTable *t = table_of(ir, n);
    if (table_full(t))
        grow_table(ir, t);
    uint32_t mask = (uint32_t)t->cap - 1;
    uint32_t h = node_tag(n), slot = h & mask;
    for (uint64_t entry; (entry = t->slot[slot]) != 0;
         slot = (slot + 1) & mask) {
        NodeId id = (NodeId)(uint32_t)entry - 1;
        if ((uint32_t)(entry >> 32) == h &&
            node_equal(&ir->nodes.items[id], n))
            return id;
    }
    NodeId id = ir->nodes.len;
    if (ir->nodes.len == ir->nodes.cap)
        grow_nodes(ir, 0);
    ir->nodes.items[ir->nodes.len++] = *n;
    t->slot[slot] = node_entry(h, id);
    t->len++;
    ir->nodes_tabled++;
    return id;
}

static IrNode blank(IrOp op)
{
    IrNode n;
    memset(&n, 0, sizeof n);
    n.op = (uint8_t)op;
    n.arg[0] = n.arg[1] = n.arg[2] = NO_NODE;
    return n;
}

NodeId ir_const(Ir *ir, double num)
{
    IrNode n = blank(IR_CONST);
    memcpy(n.arg, &num, sizeof num);
    return intern(ir, &n);
}

NodeId ir_read(Ir *ir, int32_t array, int32_t tuple)
{
    IrNode n = blank(IR_READ);
    n.arg[0] = array;
    n.arg[1] = tuple;
    return intern(ir, &n);
}

NodeId ir_index(Ir *ir, int32_t var)
{
    IrNode n = blank(IR_INDEX);
    n.arg[0] = var;
    return intern(ir, &n);
}

NodeId ir_size(Ir *ir, int32_t size)
{
    IrNode n = blank(IR_SIZE);
    n.arg[0] = size;
    return intern(ir, &n);
}

NodeId ir_node(Ir *ir, IrOp op, NodeId a, NodeId b, NodeId c)
{
    IrNode n = blank(op);
    n.arg[0] = a;
    n.arg[1] = b;
    n.arg[2] = c;
    n.nargs = (uint8_t)ir_ops[op].arity;
    for (int i = 0; i < 3; i++)
        if ((i < n.nargs) != (n.arg[i] != NO_NODE))
            DV_UNREACHABLE();
    return intern(ir, &n);
}

NodeId ir_flat_point(Ir *ir, int32_t reduced)
{
    int n = ir_tuple_len(ir, reduced);
    const int32_t *v = ir_tuple_vars(ir, reduced);
    NodeId pos = ir_index(ir, v[0]);
    for (int k = 1; k < n; k++) {
        int extent = ir->vars.items[v[k]].extent;
        NodeId e = IR_EXTENT_IS_SIZE(extent)
                       ? ir_size(ir, IR_EXTENT_SIZE(extent))
                       : ir_const(ir, extent);
        pos = ir_node(ir, IR_ADD, ir_node(ir, IR_MUL, pos, e, NO_NODE),
                      ir_index(ir, v[k]), NO_NODE);
    }
    return pos;
}

/* ------------------------------------------------------------- tuples */

static uint64_t tuple_key(int n, const int32_t *vars)
{
    uint64_t h = mix(7, (uint32_t)n);
    for (int k = 0; k < n; k++)
        h = mix(h, (uint32_t)vars[k]);
    return finish(h);
}

int32_t ir_tuple(Ir *ir, const int32_t *vars, int n)
{
    if (ir->tuple_hash_cap < 2 * (ir->tuple_data.len + n + 1)) {
        int cap = ir->tuple_hash_cap ? 2 * ir->tuple_hash_cap : 256;
        while (cap < 4 * (ir->tuple_data.len + n + 1))
            cap *= 2;
        int32_t *t = arena_alloc(ir->arena, (size_t)cap * sizeof *t);
        for (int i = 0; i < cap; i++)
            t[i] = -1;
        for (int id = 0; id < ir->tuple_data.len;
             id += ir->tuple_data.items[id] + 1) {
            uint64_t h = tuple_key(ir->tuple_data.items[id],
                                   &ir->tuple_data.items[id + 1]);
            int slot = (int)(h & (uint64_t)(cap - 1));
            while (t[slot] >= 0)
                slot = (slot + 1) & (cap - 1);
            t[slot] = id;
        }
        arena_release(ir->arena, ir->tuple_hash,
                      (size_t)ir->tuple_hash_cap * sizeof *t);
        ir->tuple_hash = t;
        ir->tuple_hash_cap = cap;
    }
    uint64_t h = tuple_key(n, vars);
    int cap = ir->tuple_hash_cap;
    int slot = (int)(h & (uint64_t)(cap - 1));
    while (ir->tuple_hash[slot] >= 0) {
        int32_t id = ir->tuple_hash[slot];
        if (ir->tuple_data.items[id] == n &&
            (n == 0 || memcmp(&ir->tuple_data.items[id + 1], vars,
                              (size_t)n * sizeof *vars) == 0))
            return id;
        slot = (slot + 1) & (cap - 1);
    }
    int32_t id = ir->tuple_data.len;
    VEC_PUSH(ir->arena, ir->tuple_data, n);
    for (int k = 0; k < n; k++)
        VEC_PUSH(ir->arena, ir->tuple_data, vars[k]);
    ir->tuple_hash[slot] = id;
    return id;
}

int ir_tuple_len(const Ir *ir, int32_t tuple)
{
    return ir->tuple_data.items[tuple];
}

const int32_t *ir_tuple_vars(const Ir *ir, int32_t tuple)
{
    return &ir->tuple_data.items[tuple + 1];
}

/* ---------------------------------------------- arrays and statements */

int32_t ir_add_array(Ir *ir, const char *name, IrRole role, int rank,
                     const int *dim, Span span)
{
    IrArray a;
    memset(&a, 0, sizeof a);
    a.name = name;
    a.role = role;
    a.rank = rank;
    if (rank > 0) {
        int *copy = arena_alloc(ir->arena, (size_t)rank * sizeof *copy);
        memcpy(copy, dim, (size_t)rank * sizeof *copy);
        a.dim = copy;
    }
    a.span = span;
    a.adjoint = -1;
    a.tangent = -1;
    a.primal = -1;
    VEC_PUSH(ir->arena, ir->arrays, a);
    return ir->arrays.len - 1;
}

int32_t ir_whole_tuple(Ir *ir, int32_t array)
{
    static const char *const names[] = {DV_PREFIX "i0", DV_PREFIX "i1",
                                        DV_PREFIX "i2", DV_PREFIX "i3",
                                        DV_PREFIX "i4", DV_PREFIX "i5",
                                        DV_PREFIX "i6", DV_PREFIX "i7"};
    int32_t vars[IR_MAX_RANK];
    int rank = ir->arrays.items[array].rank;
    for (int k = 0; k < rank; k++)
        vars[k] = ir_add_var(ir, names[k], ir->arrays.items[array].dim[k]);
    return ir_tuple(ir, vars, rank);
}

IrHome ir_home(const Ir *ir, const IrArray *a)
{
    switch (a->role) {
    case ROLE_PARAM:
        return HOME_P;
    case ROLE_INPUT:
        return HOME_IN;
    case ROLE_SEED:
        return HOME_SEED;
    case ROLE_ADJOINT:
    case ROLE_TANGENT:
        break;
    default:
        return a->is_output && ir->struct_output ? HOME_OUT : HOME_LOCAL;
    }
    IrHome of = ir_home(ir, &ir->arrays.items[a->primal]);
    if (of == HOME_P)
        return a->role == ROLE_ADJOINT ? HOME_GRAD : HOME_DIR;
    if (of == HOME_OUT && a->role == ROLE_TANGENT)
        return HOME_DOUT;
    return of == HOME_GRAD && a->role == ROLE_TANGENT ? HOME_HV : HOME_LOCAL;
}

int32_t ir_add_derived(Ir *ir, int32_t array, IrRole role, const char *kind)
{
    const IrArray *a = &ir->arrays.items[array];
    int32_t d = ir_add_array(ir, a->name, role, a->rank, a->dim, a->span);
    a = &ir->arrays.items[array];
    IrArray *da = &ir->arrays.items[d];
    da->primal = array;
    da->row_local = a->row_local;
    /* a member of a caller's struct keeps the model's name */
    if (ir_home(ir, da) == HOME_LOCAL) {
        size_t skip = a->role == ROLE_TEMP ? strlen(DV_PREFIX) : 0;
        da->name = arena_printf(ir->arena, DV_PREFIX "%s_%s", kind,
                                a->name + skip);
    }
    return d;
}

int32_t ir_add_var(Ir *ir, const char *name, int extent)
{
    IrIndexVar v = {name, extent};
    VEC_PUSH(ir->arena, ir->vars, v);
    return ir->vars.len - 1;
}

void ir_add_stmt(Ir *ir, IrStmtList *list, IrStmt s)
{
    VEC_PUSH(ir->arena, *list, s);
    /* a statement boundary: see grow_nodes */
    arena_release_retired(ir->arena);
    if (4 * ir->nodes.len >= 3 * ir->nodes.cap)
        grow_nodes(ir, 1);
}

IrStmt ir_stmt(Ir *ir, IrStmtKind kind, int32_t target, int32_t tuple,
               int32_t domain, NodeId expr, Span origin)
{
    IrStmt s;
    memset(&s, 0, sizeof s);
    s.kind = kind;
    s.target = target;
    s.tuple = tuple;
    s.domain = domain;
    s.reduced = ir_tuple(ir, NULL, 0);
    s.argpos = -1;
    s.expr = expr;
    s.origin = origin;
    s.row_var = -1;
    return s;
}

int ir_array_fixed(const IrArray *a)
{
    for (int k = 0; k < a->rank; k++)
        if (IR_EXTENT_IS_SIZE(a->dim[k]))
            return 0;
    return 1;
}

long ir_array_size(const IrArray *a)
{
    long n = 1;
    for (int k = 0; k < a->rank; k++)
        n *= a->dim[k];
    return n;
}

int ir_is_condition(const Ir *ir, NodeId id)
{
    IrOpKind k = ir_ops[ir_at(ir, id)->op].kind;
    return k == OPK_COMPARE || k == OPK_LOGIC;
}

static void reach(const Ir *ir, NodeId id, char *used)
{
    if (used[id])
        return;
    used[id] = 1;
    const IrNode *n = ir_at(ir, id);
    for (int i = 0; i < n->nargs; i++)
        reach(ir, n->arg[i], used);
}

long ir_param_count(const Ir *ir)
{
    long n = 0;
    for (int i = 0; i < ir->arrays.len; i++)
        if (ir->arrays.items[i].role == ROLE_PARAM)
            n += ir_array_size(&ir->arrays.items[i]);
    return n;
}

long ir_output_count(const Ir *ir)
{
    long n = 0;
    for (int i = 0; i < ir->outputs.len; i++)
        n += ir_array_size(&ir->arrays.items[ir->outputs.items[i]]);
    return n;
}

int ir_reads_marked(const Ir *ir, NodeId id, const char *marked)
{
    const IrNode *n = ir_at(ir, id);
    if (n->op == IR_READ)
        return marked[ir_read_array(n)];
    for (int i = 0; i < n->nargs; i++)
        if (ir_reads_marked(ir, n->arg[i], marked))
            return 1;
    return 0;
}

void ir_mark_reached(const Ir *ir, const IrStmtList *list, char *used)
{
    for (int i = 0; i < list->len; i++)
        reach(ir, list->items[i].expr, used);
}

/* Operations below id not yet counted in this statement (stamp). */
static long count_ops(const Ir *ir, NodeId id, int *seen, int stamp)
{
    if (seen[id] == stamp)
        return 0;
    seen[id] = stamp;
    const IrNode *n = ir_at(ir, id);
    long ops = n->nargs > 0;
    for (int i = 0; i < n->nargs; i++)
        ops += count_ops(ir, n->arg[i], seen, stamp);
    return ops;
}

long ir_work(const Ir *ir, const IrStmtList *list)
{
    int *seen = calloc((size_t)ir->nodes.len + 1, sizeof *seen);
    if (!seen)
        exit(3);
    double work = 0;
    for (int i = 0; i < list->len; i++) {
        const IrStmt *s = &list->items[i];
        double points = 1;
        int n = ir_tuple_len(ir, s->domain);
        for (int k = 0; k < n; k++) {
            int extent = ir->vars.items[ir_tuple_vars(ir, s->domain)[k]].extent;
            points *= IR_EXTENT_IS_SIZE(extent) ? 100 : extent;
        }
        work += points * (double)(1 + count_ops(ir, s->expr, seen, i + 1));
    }
    free(seen);
    return work < (double)LONG_MAX ? (long)work : LONG_MAX;
}

/* ----------------------------------------------------- verify, print */

static void verify_tuple_in(const Ir *ir, int32_t tuple, int32_t domain)
{
    int n = ir_tuple_len(ir, tuple), nd = ir_tuple_len(ir, domain);
    const int32_t *v = ir_tuple_vars(ir, tuple), *d = ir_tuple_vars(ir, domain);
    for (int i = 0; i < n; i++) {
        int found = 0;
        for (int k = 0; k < nd; k++)
            found |= v[i] == d[k];
        if (!found)
            DV_UNREACHABLE();
    }
}

/* Checks a statement's expression; seen[] holds the statement's number
 * for nodes already checked, so shared subexpressions are visited once. */
static void verify_expr(const Ir *ir, NodeId id, int32_t domain, int *seen,
                        int stamp)
{
    if (id < 0 || id >= ir->nodes.len)
        DV_UNREACHABLE();
    if (seen[id] == stamp)
        return;
    seen[id] = stamp;
    const IrNode *n = ir_at(ir, id);
    if (n->op == IR_READ) {
        const IrArray *a = &ir->arrays.items[ir_read_array(n)];
        if (ir_tuple_len(ir, ir_read_tuple(n)) != a->rank)
            DV_UNREACHABLE();
        verify_tuple_in(ir, ir_read_tuple(n), domain);
    }
    for (int i = 0; i < n->nargs; i++) {
        if (n->arg[i] >= id)    /* operands are built before their users */
            DV_UNREACHABLE();
        verify_expr(ir, n->arg[i], domain, seen, stamp);
    }
}

static void verify_list(const Ir *ir, const IrStmtList *list, int *seen,
                        int *stamp)
{
    for (int i = 0; i < list->len; i++) {
        const IrStmt *s = &list->items[i];
        const IrArray *t = &ir->arrays.items[s->target];
        if (ir_tuple_len(ir, s->tuple) != t->rank)
            DV_UNREACHABLE();
        verify_tuple_in(ir, s->tuple, s->domain);
        verify_expr(ir, s->expr, s->domain, seen, ++*stamp);
        if (ir_is_condition(ir, s->expr))
            DV_UNREACHABLE();
    }
}

static void verify_lists(const Ir *ir, const IrStmtList *const *lists,
                         int n)
{
    int *seen = calloc((size_t)ir->nodes.len + 1, sizeof *seen);
    int stamp = 0;
    if (!seen)
        DV_UNREACHABLE();
    for (int i = 0; i < n; i++)
        verify_list(ir, lists[i], seen, &stamp);
    free(seen);
}

void ir_verify(const Ir *ir)
{
    const IrStmtList *lists[] = {&ir->forward, &ir->reverse, &ir->tangent,
                                 &ir->hv_forward, &ir->hv_reverse};
    verify_lists(ir, lists, 5);
}

void ir_verify_derived(const Ir *ir)
{
    const IrStmtList *lists[] = {&ir->reverse, &ir->tangent,
                                 &ir->hv_forward, &ir->hv_reverse};
    verify_lists(ir, lists, 4);
}

static void print_tuple(const Ir *ir, int32_t tuple, FILE *out)
{
    int n = ir_tuple_len(ir, tuple);
    if (n == 0)
        return;
    fputc('[', out);
    for (int k = 0; k < n; k++)
        fprintf(out, "%s%s", k ? "," : "",
                ir->vars.items[ir_tuple_vars(ir, tuple)[k]].name);
    fputc(']', out);
}

static void print_expr(const Ir *ir, NodeId id, FILE *out)
{
    const IrNode *n = ir_at(ir, id);
    switch (n->op) {
    case IR_CONST:
        fprintf(out, "%.17g", ir_const_num(n));
        return;
    case IR_READ:
        fputs(ir->arrays.items[ir_read_array(n)].name, out);
        print_tuple(ir, ir_read_tuple(n), out);
        return;
    case IR_INDEX:
        fprintf(out, "#%s", ir->vars.items[ir_leaf_var(n)].name);
        return;
    case IR_SIZE:
        fprintf(out, "%s", ir->sizes.items[ir_leaf_var(n)].name);
        return;
    default:
        break;
    }
    const IrOpInfo *info = &ir_ops[n->op];
    switch (info->kind) {
    case OPK_PREFIX:
        fprintf(out, "(%s", info->c_spelling);
        print_expr(ir, n->arg[0], out);
        fputc(')', out);
        return;
    case OPK_INFIX:
    case OPK_COMPARE:
    case OPK_LOGIC:
        fputc('(', out);
        if (n->nargs == 1) {
            fputs(info->c_spelling, out);
            print_expr(ir, n->arg[0], out);
        } else {
            print_expr(ir, n->arg[0], out);
            fprintf(out, " %s ", info->c_spelling);
            print_expr(ir, n->arg[1], out);
        }
        fputc(')', out);
        return;
    case OPK_SELECT:
        fputc('(', out);
        print_expr(ir, n->arg[0], out);
        fputs(" ? ", out);
        print_expr(ir, n->arg[1], out);
        fputs(" : ", out);
        print_expr(ir, n->arg[2], out);
        fputc(')', out);
        return;
    default:
        fprintf(out, "%s(", info->c_spelling);
        for (int i = 0; i < n->nargs; i++) {
            if (i)
                fputs(", ", out);
            print_expr(ir, n->arg[i], out);
        }
        fputc(')', out);
        return;
    }
}

static void print_list(const Ir *ir, const IrStmtList *list, FILE *out)
{
    static const char *kind_text[] = {"=", "+=", "max=", "min="};
    for (int i = 0; i < list->len; i++) {
        const IrStmt *s = &list->items[i];
        fputs("  ", out);
        fputs(ir->arrays.items[s->target].name, out);
        print_tuple(ir, s->tuple, out);
        fprintf(out, " %s ", kind_text[s->kind]);
        print_expr(ir, s->expr, out);
        if (ir_tuple_len(ir, s->domain) > ir_tuple_len(ir, s->tuple)) {
            fputs("  over ", out);
            print_tuple(ir, s->domain, out);
        }
        fputc('\n', out);
    }
}

void ir_print(const Ir *ir, FILE *out)
{
    fputs("forward:\n", out);
    print_list(ir, &ir->forward, out);
    if (ir->reverse.len) {
        fputs("reverse:\n", out);
        print_list(ir, &ir->reverse, out);
    }
    if (ir->tangent.len) {
        fputs("tangent:\n", out);
        print_list(ir, &ir->tangent, out);
    }
}
