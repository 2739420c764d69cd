/* emit_roll.c - repeat loops: in a long function, a run of statements
 * that repeats one form many times in a row is written as one loop over
 * the repeats.  What differs between the repeats (a constant, which param,
 * which earlier value) comes from a table or an array indexed by the loop
 * counter.  C compilers take time in proportion to the code they are
 * given, so a model of 10^5 statements that repeat a few forms compiles in
 * seconds where the statements written out take minutes.  The loop runs
 * the same statements, in the same order, on the same values, so the
 * results are bit for bit those of the statements written out.
 *
 * Planning walks the function's statements in the order they are
 * emitted.  Each scalar statement gets a shape: its kind and its
 * expression DAG with the leaves (constants and scalar reads) blanked, a
 * node seen before in the statement written as a back reference.  Where
 * the shapes repeat with some period P at least opt->loop_repeats times,
 * each leaf and each target of the P statements becomes a column, and
 * the run is cut at the first repeat where some column stops following
 * one of these rules:
 *   - as is: the same constant or array in every repeat;
 *   - table: a constant that differs (dvs_kL[dvs_r][c]);
 *   - flat: a member of a param-shaped struct (p, grad, dir, hv) that
 *     differs, found through a table of flat positions (dvs_xL[dvs_r][c]);
 *   - own: the target of a statement that first defines a value: the
 *     run's slot Q keeps it, as dvs_vL_Q[index] (an array) or dvs_vL_Q
 *     (a scalar carried from repeat to repeat, when nothing needs older
 *     repeats' values);
 *   - slot: a value a slot of this run defined d repeats back, or a slot
 *     of an earlier loop at an index that moves by one each repeat.  In
 *     the first d repeats a read d back reads values from before the
 *     loop, which are copied into the slot before it starts (the
 *     prologue). */
#include "emit_internal.h"
#include "names.h"

#include <stdlib.h>
#include <string.h>

#define ROLL_PERIOD_MAX 16  /* longest form (in statements) looked for */
#define ROLL_REPEATS_MAX 65536  /* repeats in one loop, which bounds the
                                   memory planning takes and a table's size */
#define ROLL_DEPTH_MAX 8    /* farthest back (in repeats) a loop reads */
#define ROLL_NODES_MAX 96   /* distinct nodes of one statement in a loop */
#define ROLL_TOKENS_MAX (5 * ROLL_NODES_MAX)
#define ROLL_MAP_SIZE 256   /* a power of two above 2 * ROLL_NODES_MAX */

/* ------------------------------------------------------------- shapes */

enum { TOK_BACK = 1 << 30, TOK_KIND = 1 << 29, TOK_SIZE = 1 << 28 };

typedef struct Shape {
    int32_t tok[ROLL_TOKENS_MAX];
    int ntok;
    int32_t leaf[ROLL_NODES_MAX];   /* constants and reads, first visits */
    int nleaf;
    /* per leaf: a constant inside a call of constants only, which C
     * compilers evaluate while compiling, correctly rounded, where the
     * library's function at run time may differ in the last bit: such a
     * constant must stay as it is */
    char frozen[ROLL_NODES_MAX];
} Shape;

/* A statement's nodes by number of first visit: a small open-addressing
 * map cleared by bumping its generation. */
typedef struct ShapeWalk {
    const Ir *ir;
    Shape *sh;
    int nodes;
    uint32_t gen;
    uint32_t map_gen[ROLL_MAP_SIZE];
    int32_t map_key[ROLL_MAP_SIZE];
    int32_t map_val[ROLL_MAP_SIZE];
    char map_consts[ROLL_MAP_SIZE]; /* the node's leaves are constants */
    char map_reads[ROLL_MAP_SIZE];  /* and some of them values */
    char *constant;     /* per array: its value is a constant (the compiler
                           may compute calls of it while compiling), as far
                           as the statements walked in order tell; NULL:
                           do not ask */
    NodeId frozen_root[ROLL_NODES_MAX];     /* calls of constants only */
    int nfrozen;
    int reads;          /* the subexpression walked reads a constant value */
    int all_constant;   /* the statement walked last computes a constant */
} ShapeWalk;

static int put_token(ShapeWalk *w, int32_t t)
{
    if (w->sh->ntok == ROLL_TOKENS_MAX)
        return 0;
    w->sh->tok[w->sh->ntok++] = t;
    return 1;
}

/* Tokens and leaves of the subexpression id; returns 0 when a loop
 * cannot hold it, else 1, or 2 when its leaves are all constants. */
static int walk_node(ShapeWalk *w, NodeId id)
{
    uint32_t h = ((uint32_t)id * 2654435761u) & (ROLL_MAP_SIZE - 1);
    while (w->map_gen[h] == w->gen) {
        if (w->map_key[h] == id) {
            if (!put_token(w, TOK_BACK | w->map_val[h]))
                return 0;
            w->reads |= w->map_reads[h];
            return 1 + w->map_consts[h];
        }
        h = (h + 1) & (ROLL_MAP_SIZE - 1);
    }
    if (w->nodes == ROLL_NODES_MAX)
        return 0;
    uint32_t at = h;
    w->map_gen[h] = w->gen;
    w->map_key[h] = id;
    w->map_val[h] = w->nodes++;
    w->map_consts[h] = 0;
    w->map_reads[h] = 0;
    const IrNode *n = ir_at(w->ir, id);
    if (!put_token(w, n->op << 8 | n->nargs))
        return 0;
    switch (n->op) {
    case IR_CONST:
        w->sh->frozen[w->sh->nleaf] = 0;
        w->sh->leaf[w->sh->nleaf++] = id;
        w->map_consts[at] = 1;
        return 2;
    case IR_READ:
        if (ir_tuple_len(w->ir, ir_read_tuple(n)) != 0)
            return 0;   /* only scalars */
        w->sh->frozen[w->sh->nleaf] = 0;
        w->sh->leaf[w->sh->nleaf++] = id;
        if (w->constant && w->constant[ir_read_array(n)]) {
            w->map_consts[at] = w->map_reads[at] = 1;
            w->reads = 1;
            return 2;
        }
        return 1;
    case IR_SIZE:
        return put_token(w, TOK_SIZE | ir_leaf_var(n));
    case IR_INDEX:
        return 0;
    default:
        break;
    }
    int consts = 1, reads = w->reads;
    w->reads = 0;
    for (int i = 0; i < n->nargs; i++) {
        int got = walk_node(w, n->arg[i]);
        if (!got)
            return 0;
        consts &= got == 2;
    }
    w->map_consts[at] = (char)consts;
    w->map_reads[at] = (char)w->reads;
    IrOpKind kind = ir_ops[n->op].kind;
    if (consts && (kind == OPK_CALL || kind == OPK_HELPER)) {
        /* a call of constant values the compiler may compute too,
         * across statements: such statements stay written out */
        if (w->reads)
            return 0;
        w->frozen_root[w->nfrozen++] = id;
    }
    w->reads |= reads;
    return 1 + consts;
}

/* Mark the constants under node id as frozen; seen lists the nodes
 * visited (a statement has at most ROLL_NODES_MAX). */
static void freeze(Shape *sh, const Ir *ir, NodeId id, NodeId *seen,
                   int *nseen)
{
    for (int i = 0; i < *nseen; i++)
        if (seen[i] == id)
            return;
    seen[(*nseen)++] = id;
    const IrNode *n = ir_at(ir, id);
    if (n->op == IR_CONST)
        for (int k = 0; k < sh->nleaf; k++)
            sh->frozen[k] |= sh->leaf[k] == id;
    for (int i = 0; i < n->nargs; i++)
        freeze(sh, ir, n->arg[i], seen, nseen);
}

/* The shape of s, or 0 when s cannot be in a loop: a loop holds plain
 * assignments and additions to scalars, of expressions of scalars, but
 * not of constants only (a constant value stays where the compiler sees
 * it).  w->all_constant tells which. */
static int shape_of(ShapeWalk *w, const IrStmt *s, Shape *sh)
{
    const Ir *ir = w->ir;
    const IrArray *t = &ir->arrays.items[s->target];
    w->all_constant = 0;
    if ((s->kind != SK_SET && s->kind != SK_ADD) || s->argpos >= 0 ||
        s->row_var >= 0 || t->rank != 0 || t->role == ROLE_ARGPOS ||
        ir_tuple_len(ir, s->domain) != 0)
        return 0;
    w->sh = sh;
    w->nodes = 0;
    if (++w->gen == 0) {
        memset(w->map_gen, 0, sizeof w->map_gen);
        w->gen = 1;
    }
    sh->ntok = sh->nleaf = 0;
    w->nfrozen = 0;
    w->reads = 0;
    put_token(w, TOK_KIND | s->kind);
    int got = walk_node(w, s->expr);
    w->all_constant = got == 2;
    if (got != 1)
        return 0;
    NodeId seen[ROLL_NODES_MAX];
    int nseen = 0;
    for (int i = 0; i < w->nfrozen; i++)
        freeze(sh, ir, w->frozen_root[i], seen, &nseen);
    return 1;
}

static uint32_t shape_hash(const Shape *sh)
{
    uint64_t h = 0x9e3779b97f4a7c15ULL;
    for (int i = 0; i < sh->ntok; i++)
        h = (h ^ (uint32_t)sh->tok[i]) * 0x100000001b3ULL;
    return (uint32_t)(h >> 32) | 1;     /* 0 is "cannot be in a loop" */
}

static int same_shape(const Shape *a, const Shape *b)
{
    return a->ntok == b->ntok &&
           memcmp(a->tok, b->tok, (size_t)a->ntok * sizeof a->tok[0]) == 0;
}

/* ----------------------------------------------------------- planning */

/* A column while a candidate run is weighed. */
typedef struct ColWork {
    int is_const;       /* a constant leaf (else a read or the target) */
    int frozen;         /* a constant that must stay as it is */
    int is_target;
    int q;              /* its statement's position in the form */
    int kind;           /* RollColKind */
    int own_q, depth;   /* same-run slot: the position and repeats back */
    int slot, step;     /* earlier loop's slot */
    long off;
    int home;           /* flat */
} ColWork;

typedef struct Planner {
    const Ir *ir;
    const Emitter *e;
    RollPlan *plan;
    ShapeWalk walk;
    char *written;      /* per array: written by an earlier statement */
    char *may_own;      /* per array: a target a run may keep in a slot of
                           its own, if first written there: a scalar local
                           the function does not hand back */
    struct {
        int stamp;      /* an own target of the candidate stamped so */
        int pos;        /* at repeat * period + position */
    } *own;             /* per array */
    int stamp;
    /* the candidate */
    const IrStmtList *list;
    int from, period, ncols;
    Shape body[ROLL_PERIOD_MAX];
    int *col_at;        /* per position: its first column (the target) */
    ColWork *col;
    int32_t *x;         /* per repeat, per column: the array or node */
    int xcap;
    /* the list being planned: its statements' shape hashes (0: cannot be
     * in a loop), found in order as far as `hashed` (a statement is
     * walked once where it is hashed, as a run looks at it) */
    const IrStmtList *cur;
    uint32_t *hash;
    int hashed;
    long *param_at;     /* per param array, its flat position, or NULL */
} Planner;

#define X(p, r, c) ((p)->x[(long)(r) * (p)->ncols + (c)])

static int flat_home(IrHome h)
{
    return h == HOME_P || h == HOME_GRAD || h == HOME_DIR || h == HOME_HV;
}

/* Per array, the position of a param in the flat view of the param
 * struct (malloc'd; other arrays' entries are not set). */
static long *param_positions(const Ir *ir)
{
    long *at = malloc(((size_t)ir->arrays.len + 1) * sizeof *at);
    if (!at)
        exit(3);
    long next = 0;
    for (int i = 0; i < ir->arrays.len; i++)
        if (ir->arrays.items[i].role == ROLE_PARAM) {
            at[i] = next;
            next += ir_array_size(&ir->arrays.items[i]);
        }
    return at;
}

/* Walk the next statement not yet hashed into sh: its shape's hash, and
 * whether its target now holds a constant. */
static uint32_t hash_next(Planner *pl, Shape *sh)
{
    int j = pl->hashed++;
    const IrStmt *s = &pl->cur->items[j];
    uint32_t h = shape_of(&pl->walk, s, sh) ? shape_hash(sh) : 0;
    /* a value written twice is constant only if both are */
    char *constant = pl->walk.constant;
    constant[s->target] = (char)(pl->walk.all_constant &&
                                 (s->kind == SK_SET || constant[s->target]));
    pl->hash[j] = h;
    return h;
}

static uint32_t hash_at(Planner *pl, int j)
{
    Shape sh;
    while (pl->hashed <= j)
        hash_next(pl, &sh);
    return pl->hash[j];
}

/* Per array, whether a run may keep it in a slot of its own (found once,
 * in array order, rather than in the order runs meet them). */
static char *may_own_arrays(const Ir *ir)
{
    char *may = malloc((size_t)ir->arrays.len + 1);
    if (!may)
        exit(3);
    int32_t out_tangent = ir->struct_output ? -1
                          : ir->arrays.items[ir->output].tangent;
    for (int32_t a = 0; a < ir->arrays.len; a++) {
        const IrArray *t = &ir->arrays.items[a];
        may[a] = (char)(t->rank == 0 && !t->is_output && a != ir->output &&
                        a != out_tangent && ir_home(ir, t) == HOME_LOCAL &&
                        (t->role == ROLE_VALUE || t->role == ROLE_ADJOINT ||
                         t->role == ROLE_TANGENT || t->role == ROLE_TEMP));
    }
    return may;
}

/* A target that a run may keep in a slot of its own: one that may be,
 * first defined here. */
static int fresh_target(const Planner *pl, int32_t a, int kind)
{
    return kind == SK_SET && pl->may_own[a] && !pl->written[a];
}

/* How many repeats from the first the outside column c follows one rule
 * (as is, flat or an earlier loop's slot), choosing the rule that reaches
 * farthest; sets its kind. */
static int outside_reach(Planner *pl, ColWork *cw, int c, int R)
{
    const Ir *ir = pl->ir;
    const RollHome *home = pl->plan->home;
    if (R == 0)
        return 0;
    int32_t a0 = X(pl, 0, c);
    int as_is = 1;
    while (as_is < R && X(pl, as_is, c) == a0)
        as_is++;
    if (cw->is_const) {
        cw->kind = as_is == R ? COL_AS_IS : COL_TABLE;
        return cw->frozen ? as_is : R;
    }
    int flat = 0;
    IrHome h0 = ir_home(ir, &ir->arrays.items[a0]);
    if (flat_home(h0))
        for (flat = 1; flat < R; flat++)
            if (ir_home(ir, &ir->arrays.items[X(pl, flat, c)]) != h0)
                break;
    int early = 0, step = 0;
    if (home[a0].slot >= 0 && R > 1) {
        int32_t a1 = X(pl, 1, c);
        long d = home[a1].index - home[a0].index;
        if (home[a1].slot == home[a0].slot && (d == 1 || d == -1)) {
            step = (int)d;
            for (early = 2; early < R; early++) {
                int32_t a = X(pl, early, c);
                if (home[a].slot != home[a0].slot ||
                    home[a].index != home[a0].index + step * (long)early)
                    break;
            }
        }
    }
    if (as_is >= flat && as_is >= early) {
        cw->kind = COL_AS_IS;
        /* a target written as is must exist before the loop */
        if (cw->is_target && ir_home(ir, &ir->arrays.items[a0]) == HOME_LOCAL &&
            !pl->written[a0])
            return 0;
        return as_is;
    }
    if (early >= flat) {
        cw->kind = COL_SLOT;
        cw->slot = home[a0].slot;
        cw->step = step;
        cw->off = home[a0].index;
        return early;
    }
    cw->kind = COL_FLAT;
    cw->home = h0;
    return flat;
}

/* How many repeats the columns follow their rules, on the first R. */
static int columns_reach(Planner *pl, int R)
{
    const IrStmtList *list = pl->list;
    int P = pl->period;
    int reach = R;
    /* own targets first: a read can refer to them */
    pl->stamp++;
    for (int q = 0; q < P; q++) {
        int c = pl->col_at[q];
        int kind = list->items[pl->from + q].kind;
        pl->col[c].kind = fresh_target(pl, X(pl, 0, c), kind) ? COL_OWN : -1;
    }
    for (int r = 0; r < reach; r++)
        for (int q = 0; q < P; q++) {
            int c = pl->col_at[q];
            if (pl->col[c].kind != COL_OWN)
                continue;
            int32_t a = X(pl, r, c);
            int kind = list->items[pl->from + r * P + q].kind;
            if (!fresh_target(pl, a, kind) || pl->own[a].stamp == pl->stamp) {
                reach = r;
                break;
            }
            pl->own[a].stamp = pl->stamp;
            pl->own[a].pos = r * P + q;
        }
    for (int c = 0; c < pl->ncols; c++) {
        ColWork *cw = &pl->col[c];
        if (cw->kind == COL_OWN)
            continue;
        int r = cw->is_const ? reach : 0, est = 0;
        if (!cw->is_const)
            for (; r < reach; r++) {
                int32_t a = X(pl, r, c);
                if (pl->own[a].stamp != pl->stamp) {
                    if (est)
                        break;
                    continue;
                }
                int rr = pl->own[a].pos / P, qq = pl->own[a].pos % P;
                int d = r - rr;
                if (!est) {
                    /* a read d back starts in the d-th repeat; targets
                     * are never written through a prologue copy */
                    if (rr != 0 || d > ROLL_DEPTH_MAX ||
                        (cw->is_target && d != 0))
                        break;
                    est = 1;
                    cw->kind = COL_SLOT;
                    cw->own_q = qq;
                    cw->depth = d;
                    cw->slot = -1;
                    cw->step = 1;
                } else if (qq != cw->own_q || d != cw->depth) {
                    break;
                }
            }
        if (!est)
            r = outside_reach(pl, cw, c, r);
        /* a read of the statement's own target follows it */
        int t = pl->col_at[cw->q];
        if (!cw->is_const && c != t && X(pl, 0, c) == X(pl, 0, t))
            for (int k = 1; k < r; k++)
                if (X(pl, k, c) != X(pl, k, t)) {
                    r = k;
                    break;
                }
        if (r < reach)
            reach = r;
    }
    return reach;
}

/* The values before the loop that the prologue copies: checks that two
 * columns agree on each, and that the run writes none of them.  The
 * entries go to the plan. */
static int plan_prologue(Planner *pl, RollRun *run, int R)
{
    RollPlan *plan = pl->plan;
    int start = plan->prologue.len;
    run->prologue_from = run->prologue_to = start;
    for (int c = 0; c < pl->ncols; c++) {
        const ColWork *cw = &pl->col[c];
        if (cw->kind != COL_SLOT || cw->slot >= 0)
            continue;
        for (int r = 0; r < cw->depth; r++) {
            int32_t a = X(pl, r, c);
            const IrArray *arr = &pl->ir->arrays.items[a];
            if (arr->rank != 0 || ir_home(pl->ir, arr) != HOME_LOCAL)
                return 0;
            for (int k = 0; k < pl->ncols; k++)
                if (pl->col[k].is_target && pl->col[k].kind != COL_OWN)
                    for (int rr = 0; rr < R; rr++)
                        if (X(pl, rr, k) == a)
                            return 0;
            RollCopy copy = {cw->own_q, r - cw->depth, a};
            int known = 0;
            for (int i = start; i < plan->prologue.len; i++) {
                const RollCopy *o = &plan->prologue.items[i];
                if (o->q == copy.q && o->repeat == copy.repeat) {
                    if (o->array != a)
                        return 0;
                    known = 1;
                }
            }
            if (!known)
                ROLL_PUSH(plan->prologue, copy);
        }
    }
    run->prologue_to = plan->prologue.len;
    return 1;
}

static void grow_x(Planner *pl, long need)
{
    if (need <= pl->xcap)
        return;
    long cap = pl->xcap ? pl->xcap : 1024;
    while (cap < need)
        cap *= 2;
    pl->x = realloc(pl->x, (size_t)cap * sizeof *pl->x);
    if (!pl->x)
        exit(3);
    pl->xcap = (int)cap;
}

/* Read the repeats of the candidate's form from repeat R on, up to max
 * repeats, into pl->x; returns how many repeats (from the first) have
 * the form's shapes. */
static int scan_shapes(Planner *pl, int R, int max)
{
    const IrStmtList *list = pl->cur;
    const Ir *ir = pl->ir;
    int from = pl->from, P = pl->period;
    Shape sh;
    for (; R < max; R++) {
        int at = from + R * P;
        if (at + P > list->len)
            break;
        grow_x(pl, (long)(R + 1) * pl->ncols);
        int ok = 1;
        for (int q = 0; q < P && ok; q++) {
            const IrStmt *s = &list->items[at + q];
            const Shape *b = &pl->body[q];
            if (R > 0 && at + q < pl->hashed)
                ok = pl->hash[at + q] == pl->hash[from + q] &&
                     shape_of(&pl->walk, s, &sh) && same_shape(&sh, b);
            else if (R > 0)
                ok = hash_next(pl, &sh) == pl->hash[from + q] &&
                     same_shape(&sh, b);
            const Shape *use = R > 0 ? &sh : b;
            int c = pl->col_at[q];
            X(pl, R, c) = s->target;
            for (int k = 0; ok && k < use->nleaf; k++) {
                const IrNode *n = ir_at(ir, use->leaf[k]);
                X(pl, R, c + 1 + k) = n->op == IR_READ ? ir_read_array(n)
                                                        : use->leaf[k];
            }
        }
        if (!ok)
            break;
    }
    return R;
}

/* Weigh the run of period P starting at list[from]; on success it is
 * added to the plan and its length in statements returned, else 0. */
static int try_run(Planner *pl, int from, int P)
{
    const IrStmtList *list = pl->cur;
    RollPlan *plan = pl->plan;
    const Ir *ir = pl->ir;
    long min = pl->e->opt->loop_repeats;
    for (int q = 0; q < P; q++)
        if (!shape_of(&pl->walk, &list->items[from + q], &pl->body[q]))
            return 0;
    pl->list = list;
    pl->from = from;
    pl->period = P;
    pl->ncols = 0;
    for (int q = 0; q < P; q++) {
        pl->col_at[q] = pl->ncols;
        pl->ncols += 1 + pl->body[q].nleaf;
    }
    pl->col_at[P] = pl->ncols;
    pl->col = realloc(pl->col, (size_t)pl->ncols * sizeof *pl->col);
    if (!pl->col)
        exit(3);
    for (int q = 0; q < P; q++) {
        int c = pl->col_at[q];
        for (int k = c; k < pl->col_at[q + 1]; k++) {
            ColWork *cw = &pl->col[k];
            memset(cw, 0, sizeof *cw);
            cw->q = q;
            cw->is_target = k == c;
            cw->is_const = k > c &&
                           ir_at(ir, pl->body[q].leaf[k - c - 1])->op == IR_CONST;
            cw->frozen = k > c && pl->body[q].frozen[k - c - 1];
        }
    }
    /* the repeats whose statements have the form's shapes: first a few,
     * for the columns to be checked on before a long run is read (a run
     * whose shapes repeat but whose leaves do not would otherwise be read
     * whole at each start tried) */
    int probe = (int)min + ROLL_DEPTH_MAX + 2;
    int R = scan_shapes(pl, 0, probe);
    if (R < min || (R == probe && columns_reach(pl, R) < min))
        return 0;
    R = scan_shapes(pl, R, ROLL_REPEATS_MAX);
    /* cut the run until every column follows its rule to its end */
    while (R >= min) {
        int reach = columns_reach(pl, R);
        if (reach == R)
            break;
        R = reach;
    }
    if (R < min || R < 2)
        return 0;

    RollRun run;
    memset(&run, 0, sizeof run);
    run.list = list;
    run.from = from;
    run.period = P;
    run.repeats = R;
    if (!plan_prologue(pl, &run, R)) {
        plan->prologue.len = run.prologue_from;
        return 0;
    }
    /* the run's own slots, deep enough for the reads that go back */
    run.slot_from = plan->slots.len;
    for (int q = 0; q < P; q++) {
        RollSlot slot = {plan->runs.len, q, 0, 0,
                         pl->col[pl->col_at[q]].kind == COL_OWN};
        ROLL_PUSH(plan->slots, slot);
    }
    RollSlot *own = &plan->slots.items[run.slot_from];
    for (int c = 0; c < pl->ncols; c++) {
        const ColWork *cw = &pl->col[c];
        if (cw->kind != COL_SLOT || cw->slot >= 0)
            continue;
        if (cw->depth > own[cw->own_q].base)
            own[cw->own_q].base = cw->depth;
        /* a scalar holds the current repeat's value until its statement
         * runs again: older ones, or reads after it of the one before,
         * need an array */
        if (cw->depth > 1 || (cw->depth == 1 && cw->q > cw->own_q))
            own[cw->own_q].carried = 0;
    }
    for (int q = 0; q < P; q++)
        own[q].len = own[q].base + R;
    /* the columns, numbered into the tables */
    run.col_from = plan->cols.len;
    run.col_at = malloc((size_t)(P + 1) * sizeof *run.col_at);
    if (!run.col_at)
        exit(3);
    for (int q = 0; q <= P; q++)
        run.col_at[q] = pl->col_at[q];
    for (int c = 0; c < pl->ncols; c++) {
        const ColWork *cw = &pl->col[c];
        RollCol col;
        memset(&col, 0, sizeof col);
        col.kind = cw->kind;
        col.key = cw->is_const ? pl->body[cw->q].leaf[c - pl->col_at[cw->q] - 1]
                               : X(pl, 0, c);
        col.is_const = cw->is_const;
        col.is_target = cw->is_target;
        switch (cw->kind) {
        case COL_TABLE:
            col.column = run.nconst++;
            break;
        case COL_FLAT:
            col.column = run.nflat++;
            col.home = cw->home;
            break;
        case COL_OWN:
            col.slot = run.slot_from + cw->q;
            col.step = 1;
            col.off = own[cw->q].base;
            break;
        case COL_SLOT:
            if (cw->slot < 0) {
                col.slot = run.slot_from + cw->own_q;
                col.step = 1;
                col.off = own[cw->own_q].base - cw->depth;
            } else {
                col.slot = cw->slot;
                col.step = cw->step;
                col.off = cw->off;
                plan->slots.items[cw->slot].carried = 0;
            }
            break;
        default:
            break;
        }
        ROLL_PUSH(plan->cols, col);
    }
    /* what the tables hold, per repeat: the constants, and the flat
     * positions of the params (grad, dir and hv members sit where their
     * param does) */
    run.consts = malloc(((size_t)R * run.nconst + 1) * sizeof *run.consts);
    run.positions = malloc(((size_t)R * run.nflat + 1) * sizeof *run.positions);
    if (!run.consts || !run.positions)
        exit(3);
    if (run.nflat && !pl->param_at)
        pl->param_at = param_positions(ir);
    for (int r = 0; r < R; r++) {
        double *kc = run.consts + (long)r * run.nconst;
        int32_t *kf = run.positions + (long)r * run.nflat;
        for (int c = 0; c < pl->ncols; c++) {
            const RollCol *col = &plan->cols.items[run.col_from + c];
            int32_t key = X(pl, r, c);
            if (col->kind == COL_TABLE) {
                *kc++ = ir_const_num(ir_at(ir, key));
            } else if (col->kind == COL_FLAT) {
                while (ir->arrays.items[key].role != ROLE_PARAM)
                    key = ir->arrays.items[key].primal;
                *kf++ = (int32_t)pl->param_at[key];
            }
        }
    }
    /* where each value the run defines lives */
    for (int r = 0; r < R; r++)
        for (int q = 0; q < P; q++) {
            int c = pl->col_at[q];
            int32_t a = X(pl, r, c);
            if (pl->col[c].kind == COL_OWN) {
                plan->home[a].slot = run.slot_from + q;
                plan->home[a].index = (int32_t)(own[q].base + r);
            }
            pl->written[a] = 1;
        }
    ROLL_PUSH(plan->runs, run);
    return R * P;
}

/* A read or write of array a outside a loop's body (or through a column
 * written as is) keeps a carried slot only when it is of the last repeat. */
static void note_outside(RollPlan *plan, int32_t a)
{
    const RollHome *h = &plan->home[a];
    if (h->slot < 0)
        return;
    RollSlot *s = &plan->slots.items[h->slot];
    if (h->index != s->len - 1)
        s->carried = 0;
}

static void note_outside_read(Emitter *e, void *plan, int32_t array)
{
    (void)e;
    note_outside(plan, array);
}

void roll_free(RollPlan *plan)
{
    if (!plan)
        return;
    for (int i = 0; i < plan->runs.len; i++) {
        free(plan->runs.items[i].col_at);
        free(plan->runs.items[i].consts);
        free(plan->runs.items[i].positions);
    }
    free(plan->runs.items);
    free(plan->slots.items);
    free(plan->cols.items);
    free(plan->prologue.items);
    free(plan->home);
    free(plan);
}

/* The statements outside the loops, the prologues and the columns
 * written as is decide which slots can be carried scalars: a slot read
 * there anywhere but at its last repeat needs an array. */
static void decide_carried(Emitter *e, RollPlan *plan,
                           const IrStmtList *const lists[2])
{
    for (int l = 0; l < 2 && lists[l]; l++)
        for (int i = 0; i < lists[l]->len;) {
            int k = roll_run_at(plan, l, i);
            if (k >= 0) {
                const RollRun *run = &plan->runs.items[k];
                for (int c = run->col_from;
                     c < run->col_from + run->col_at[run->period]; c++)
                    if (plan->cols.items[c].kind == COL_AS_IS &&
                        !plan->cols.items[c].is_const)
                        note_outside(plan, plan->cols.items[c].key);
                for (int p = run->prologue_from; p < run->prologue_to; p++)
                    note_outside(plan, plan->prologue.items[p].array);
                i += run->repeats * run->period;
                continue;
            }
            const IrStmt *s = &lists[l]->items[i++];
            note_outside(plan, s->target);
            e->visit_stamp++;
            emit_each_read(e, s->expr, note_outside_read, plan);
        }
}

RollPlan *roll_plan(Emitter *e)
{
    const Ir *ir = e->ir;
    const IrStmtList *lists[2] = {e->fwd, e->rev};
    if (e->opt->loop_repeats <= 0 || ir->row_size >= 0)
        return NULL;

    RollPlan *plan = calloc(1, sizeof *plan);
    Planner *pl = calloc(1, sizeof *pl);
    size_t na = (size_t)ir->arrays.len + 1;
    if (!plan || !pl)
        exit(3);
    plan->home = malloc(na * sizeof *plan->home);
    pl->written = calloc(na, 1);
    pl->own = calloc(na, sizeof *pl->own);
    pl->col_at = malloc((ROLL_PERIOD_MAX + 1) * sizeof *pl->col_at);
    if (!plan->home || !pl->written || !pl->own || !pl->col_at)
        exit(3);
    pl->may_own = may_own_arrays(ir);
    for (size_t i = 0; i < na; i++)
        plan->home[i].slot = -1;
    pl->ir = ir;
    pl->e = e;
    pl->plan = plan;
    pl->walk.ir = ir;
    char *constant = calloc(na, 1);
    if (!constant)
        exit(3);
    pl->walk.constant = constant;
    for (int l = 0; l < 2 && lists[l]; l++) {
        const IrStmtList *list = lists[l];
        pl->hash = malloc(((size_t)list->len + 1) * sizeof *pl->hash);
        if (!pl->hash)
            exit(3);
        pl->cur = list;
        pl->hashed = 0;
        for (int i = 0; i < list->len;) {
            int took = 0;
            for (int P = 1; P <= ROLL_PERIOD_MAX && !took; P++) {
                if (i + 2 * P > list->len)
                    break;
                int same = 1;
                for (int q = 0; q < P && same; q++)
                    same = hash_at(pl, i + q) &&
                           hash_at(pl, i + q) == hash_at(pl, i + P + q);
                if (same)
                    took = try_run(pl, i, P);
            }
            if (took) {
                i += took;
                continue;
            }
            const IrStmt *s = &list->items[i++];
            pl->written[s->target] = 1;
            if (s->argpos >= 0)
                pl->written[s->argpos] = 1;
        }
        if (list->len > 0)
            hash_at(pl, list->len - 1);     /* the constants the rest read */
        free(pl->hash);
        plan->list_runs[l + 1] = plan->runs.len;
    }
    if (!lists[1])
        plan->list_runs[2] = plan->runs.len;
    free(constant);
    free(pl->written);
    free(pl->own);
    free(pl->may_own);
    free(pl->col_at);
    free(pl->col);
    free(pl->x);
    free(pl->param_at);
    free(pl);
    if (plan->runs.len == 0) {
        roll_free(plan);
        return NULL;
    }
    decide_carried(e, plan, lists);
    for (int i = 0; i < plan->runs.len; i++) {
        const RollRun *run = &plan->runs.items[i];
        plan->saved += (run->repeats - 1) * run->period;
    }
    return plan;
}

int roll_run_at(const RollPlan *plan, int l, int i)
{
    int lo = plan->list_runs[l], hi = plan->list_runs[l + 1];
    while (lo < hi) {
        int mid = lo + (hi - lo) / 2;
        if (plan->runs.items[mid].from < i)
            lo = mid + 1;
        else
            hi = mid;
    }
    return lo < plan->list_runs[l + 1] && plan->runs.items[lo].from == i ? lo
                                                                         : -1;
}

/* ------------------------------------------------------------ writing */

/* The column of the body statement being written for an array (a read
 * or the target), or for a constant node; NULL when there is none. */
static const RollCol *body_col(const Emitter *e, int32_t key, int is_const)
{
    const RollRun *run = e->roll_run;
    if (!run)
        return NULL;
    for (int c = run->col_at[e->roll_q]; c < run->col_at[e->roll_q + 1]; c++) {
        const RollCol *col = &e->roll->cols.items[run->col_from + c];
        if (col->key == key && col->is_const == is_const)
            return col;
    }
    return NULL;
}

int roll_storage(const Emitter *e, int32_t array)
{
    const RollCol *col = body_col(e, array, 0);
    if (col && col->kind == COL_FLAT)
        return -1;
    if (col && (col->kind == COL_OWN || col->kind == COL_SLOT))
        return e->ir->arrays.len + col->slot;
    if (e->roll && e->roll->home[array].slot >= 0)
        return e->ir->arrays.len + e->roll->home[array].slot;
    return array;
}

int roll_storage_count(const Emitter *e)
{
    return e->ir->arrays.len + (e->roll ? e->roll->slots.len : 0);
}

static void put_slot_name(const Emitter *e, Buf *b, int slot)
{
    const RollSlot *s = &e->roll->slots.items[slot];
    buf_printf(b, DV_PREFIX "v%d_%d", s->run + 1, s->q);
}

void roll_declare_slot(const Emitter *e, Buf *b, int slot)
{
    const RollSlot *s = &e->roll->slots.items[slot];
    buf_printf(b, "    %s ", emit_real_type(e->opt));
    put_slot_name(e, b, slot);
    if (!s->carried)
        buf_printf(b, "[%ld]", s->len);
    buf_put(b, ";\n");
}

/* A slot's storage, with the frame's prefix when it lives there. */
static void put_slot(Emitter *e, int slot)
{
    if (e->parted && e->framed[e->ir->arrays.len + slot]) {
        buf_put(e->out, e->part ? DV_PREFIX "f->" : DV_PREFIX "frame.");
        e->uses_frame = 1;
    }
    put_slot_name(e, e->out, slot);
}

static void put_index(Buf *b, int step, long off)
{
    if (step < 0)
        buf_printf(b, "[%ld - " DV_PREFIX "r]", off);
    else if (off == 0)
        buf_put(b, "[" DV_PREFIX "r]");
    else
        buf_printf(b, "[" DV_PREFIX "r %s %ld]", off < 0 ? "-" : "+",
                   off < 0 ? -off : off);
}

int roll_access(Emitter *e, int32_t array)
{
    const RollCol *col = body_col(e, array, 0);
    if (col && col->kind == COL_FLAT) {
        buf_printf(e->out, DV_PREFIX "%s_flat[" DV_PREFIX "x%d[" DV_PREFIX
                           "r][%d]]", emit_home_name(col->home),
                   (int)(e->roll_run - e->roll->runs.items) + 1, col->column);
        EMIT_USE(e, col->home);
        return 1;
    }
    if (col && (col->kind == COL_OWN || col->kind == COL_SLOT)) {
        put_slot(e, col->slot);
        if (!e->roll->slots.items[col->slot].carried)
            put_index(e->out, col->step, col->off);
        return 1;
    }
    const RollHome *h = &e->roll->home[array];
    if (h->slot < 0)
        return 0;
    put_slot(e, h->slot);
    if (!e->roll->slots.items[h->slot].carried)
        buf_printf(e->out, "[%ld]", (long)h->index);
    return 1;
}

int roll_const(Emitter *e, NodeId id)
{
    const RollCol *col = body_col(e, id, 1);
    if (!col || col->kind != COL_TABLE)
        return 0;
    buf_printf(e->out, DV_PREFIX "k%d[" DV_PREFIX "r][%d]",
               (int)(e->roll_run - e->roll->runs.items) + 1, col->column);
    return 1;
}

/* The run's tables: each repeat's constants, and flat positions. */
static void put_tables(Emitter *e, const RollRun *run)
{
    int L = (int)(run - e->roll->runs.items) + 1;
    for (int table = 0; table < 2; table++) {
        int n = table == 0 ? run->nconst : run->nflat;
        if (n == 0)
            continue;
        if (table == 0)
            buf_printf(e->out, "        static const %s " DV_PREFIX
                               "k%d[%d][%d] = {",
                       emit_real_type(e->opt), L, run->repeats, n);
        else
            buf_printf(e->out, "        static const int " DV_PREFIX
                               "x%d[%d][%d] = {", L, run->repeats, n);
        int per_line = n > 6 ? 1 : 6 / n;
        for (int r = 0; r < run->repeats; r++) {
            buf_put(e->out, r == 0 ? "\n" : r % per_line == 0 ? ",\n" : ", ");
            if (r % per_line == 0)
                buf_put(e->out, "            ");
            buf_put(e->out, "{");
            for (int k = 0; k < n; k++) {
                if (k)
                    buf_put(e->out, ", ");
                if (table == 0)
                    buf_put(e->out, emit_number(e, run->consts[(long)r * n + k]));
                else
                    buf_put_long(e->out, run->positions[(long)r * n + k]);
            }
            buf_put(e->out, "}");
        }
        buf_put(e->out, "\n        };\n");
    }
}

/* Point the flat views the body uses at the caller's structs. */
static void put_flat_views(Emitter *e, const RollRun *run, const char *pad)
{
    unsigned seen = 0;
    for (int c = 0; c < run->col_at[run->period]; c++) {
        const RollCol *col = &e->roll->cols.items[run->col_from + c];
        if (col->kind != COL_FLAT || (seen & (1u << col->home)))
            continue;
        seen |= 1u << col->home;
        int in = col->home == HOME_P || col->home == HOME_DIR;
        const char *h = emit_home_name(col->home);
        buf_printf(e->out, "%s%s%s *" DV_PREFIX "%s_flat = ((%s%s_param_flat *)"
                           DV_PREFIX "%s)->v;\n",
                   pad, in ? "const " : "", emit_real_type(e->opt), h,
                   in ? "const " : "", e->ir->model, h);
        EMIT_USE(e, col->home);
    }
}

void roll_emit(Emitter *e, int run_index, const char *label)
{
    const Ir *ir = e->ir;
    RollPlan *plan = e->roll;
    const RollRun *run = &plan->runs.items[run_index];
    int P = run->period;
    int32_t none = ir_tuple((Ir *)ir, NULL, 0);
    emit_part_break(e, P + 1);
    if (!e->dry) {
        const IrStmt *first = &run->list->items[run->from];
        const IrStmt *last = &run->list->items[run->from + run->repeats * P - 1];
        int l0 = source_line_near(ir->src, first->origin.off, e->last_line);
        int l1 = source_line_near(ir->src, last->origin.off, l0);
        e->last_line = l1;
        if (e->last_origin != UINT32_MAX)
            buf_put(e->out, "\n");
        buf_printf(e->out, "    /* %s%s:%d to line %d,\n"
                           "     * %d repeats of one form of %d statement%s, "
                           "as one loop.  What differs\n"
                           "     * between the repeats is in the tables; the "
                           "statements show the\n"
                           "     * first repeat. */\n",
                   label[0] ? "adjoints of " : "", e->opt->model_file, l0, l1,
                   run->repeats, P, P > 1 ? "s" : "");
    }
    /* the run's own slots, then the values the prologue copies */
    for (int q = 0; q < P; q++) {
        int slot = run->slot_from + q;
        int id = ir->arrays.len + slot;
        if (plan->cols.items[run->col_from + run->col_at[q]].kind != COL_OWN)
            continue;
        if (e->dry) {
            emit_note_storage(e, id);
            continue;
        }
        if (e->parted && e->framed[id])
            continue;
        roll_declare_slot(e, e->out, slot);
    }
    for (int p = run->prologue_from; p < run->prologue_to; p++) {
        const RollCopy *copy = &plan->prologue.items[p];
        int slot = run->slot_from + copy->q;
        if (e->dry) {
            emit_note_storage(e, ir->arrays.len + slot);
            emit_note_storage(e, roll_storage(e, copy->array));
            continue;
        }
        buf_put(e->out, "    ");
        put_slot(e, slot);
        if (!plan->slots.items[slot].carried)
            buf_printf(e->out, "[%ld]",
                       plan->slots.items[slot].base + copy->repeat);
        buf_put(e->out, " = ");
        emit_access(e, copy->array, none);
        buf_put(e->out, ";\n");
    }
    if (!e->dry) {
        buf_put(e->out, "    {\n");
        put_tables(e, run);
        put_flat_views(e, run, "        ");
        buf_printf(e->out, "        for (int " DV_PREFIX "r = 0; " DV_PREFIX
                           "r < %d; " DV_PREFIX "r++) {\n", run->repeats);
    }
    int base = e->base;
    e->base = base + 2;
    e->roll_run = run;
    e->last_origin = UINT32_MAX;
    for (int q = 0; q < P; q++) {
        e->roll_q = q;
        emit_stmt(e, &run->list->items[run->from + q], label);
    }
    e->roll_run = NULL;
    e->base = base;
    e->last_origin = UINT32_MAX - 1;    /* a blank line before what follows */
    if (!e->dry)
        buf_put(e->out, "        }\n    }\n");
}
