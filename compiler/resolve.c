/* resolve.c - names, constants, shapes, index ranges and lowering; the
 * calls of def functions are checked and measured in resolve_def.c, used
 * files found and read in uses.c.  See resolve.h; resolve_internal.h
 * holds what the three files share.
 *
 * Each definition is handled in two walks over its right side.  The first
 * (infer) checks every name and binds every index to a range, taken from
 * the array dimensions it subscripts; the second (lower) builds IR nodes,
 * turning each reduction into an accumulator array filled by statements
 * placed before the definition's own statement.
 *
 * The model is seen twice: a first pass (outline) notes every name it
 * defines and its model statements, a second resolves statement by
 * statement.  Given no tree, resolve_model parses the source once for each
 * pass and frees each statement's tree as soon as it is visited.  A used
 * file goes through the same two passes when its 'use' statement is
 * resolved, so its names take effect there, as if written in its place.
 *
 * A def's body is checked once, where the def is defined (names, calls,
 * conditions), and kept; a call lowers its arguments once and then the
 * body with the parameters standing for the arguments' nodes, so the
 * expansion is plain substitution before any derivative is taken. */
#include "resolve_internal.h"
#include "apply.h"
#include "names.h"
#include "parse_ahead.h"

#include <limits.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* Largest element count of one array; larger ones are model errors. */
#define MAX_ELEMENTS ((long)INT_MAX)

/* ------------------------------------------------------------ symbols */

/* A name's hash, and the slot its probes start from (before masking). */
typedef struct NameKey {
    uint32_t hash;
    uint32_t home;
} NameKey;

/* MurmurHash3's 32-bit finalizer. */
static uint32_t spread(uint32_t h)
{
    h ^= h >> 16;
    h *= 0x85ebca6bu;
    h ^= h >> 13;
    h *= 0xc2b2ae35u;
    return h ^ (h >> 16);
}

/* Names that differ only in a trailing number (s1, s2, ... as generated
 * models have them) get neighbouring home slots, 16 numbers to a block
 * placed by a hash of the rest, so consecutive definitions share a few
 * cache lines of the table instead of taking a random slot each.  Other
 * names start anywhere. */
static NameKey name_key(const char *s)
{
    uint32_t h = 2166136261u, stem = h, num = 0;
    int digits = 0;
    for (; *s; s++) {
        unsigned char c = (unsigned char)*s;
        h = (h ^ c) * 16777619u;
        digits = c >= '0' && c <= '9';
        if (digits) {
            num = num * 10 + (uint32_t)(c - '0');
        } else {
            stem = h;
            num = 0;
        }
    }
    NameKey k;
    k.hash = h;
    k.home = spread(h);
    if (digits)
        k.home = spread(stem ^ (num >> 4) * 0x9e3779b1u) << 4 | (num & 15);
    return k;
}

Symbol *rs_table_find(const SymTable *t, const char *name)
{
    if (!t->cap)
        return NULL;
    NameKey k = name_key(name);
    uint32_t i = k.home & (uint32_t)(t->cap - 1);
    while (t->items[i].name) {
        if (t->items[i].hash == k.hash && strcmp(t->items[i].name, name) == 0)
            return &t->items[i];
        i = (i + 1) & (uint32_t)(t->cap - 1);
    }
    return NULL;
}

/* Add a name that is not in the table yet; the table keeps the pointer. */
static Symbol *table_insert(Arena *arena, SymTable *t, const char *name,
                            Span span)
{
    if (2 * (t->len + 1) > t->cap) {
        SymTable old = *t;
        t->cap = old.cap ? 2 * old.cap : 256;
        size_t bytes = (size_t)t->cap * sizeof *t->items;
        t->items = arena_alloc(arena, bytes);
        /* written before it is probed: a page first read maps the zero
         * page and faults again, flushing every core's TLB, when written */
        memset(t->items, 0, bytes);
        t->len = 0;
        for (int i = 0; i < old.cap; i++)
            if (old.items[i].name)
                *table_insert(arena, t, old.items[i].name,
                              old.items[i].span) = old.items[i];
        arena_release(arena, old.items, (size_t)old.cap * sizeof *old.items);
    }
    NameKey k = name_key(name);
    uint32_t i = k.home & (uint32_t)(t->cap - 1);
    while (t->items[i].name)
        i = (i + 1) & (uint32_t)(t->cap - 1);
    t->items[i].name = name;
    t->items[i].hash = k.hash;
    t->items[i].span = span;
    t->len++;
    return &t->items[i];
}

/* A model of many lines defines about a name per line: the symbol table
 * starts at that size instead of growing (and rehashing) step by step. */
static void presize_symbols(Resolver *r, int nlines)
{
    SymTable *t = &r->symbols;
    int cap = 256;
    while (cap < 2 * nlines && cap < (1 << 26))
        cap *= 2;
    size_t bytes = (size_t)cap * sizeof *t->items;
    t->items = arena_alloc(r->arena, bytes);
    memset(t->items, 0, bytes);     /* see table_insert */
    t->cap = cap;
}

/* A copy of a name the resolver keeps: a statement's syntax tree may be
 * freed once it is resolved. */
const char *rs_copy_name(Resolver *r, const char *name)
{
    return arena_strndup(r->arena, name, strlen(name));
}

/* The symbol NAME refers to at this point of the model, or NULL. */
Symbol *rs_lookup(Resolver *r, const char *name)
{
    Symbol *s = rs_table_find(&r->symbols, name);
    return s && s->kind != SYM_LATER ? s : NULL;
}

/* A name some statement defines (first pass). */
static void note_name(Resolver *r, const char *name, Span span)
{
    if (!rs_table_find(&r->symbols, name))
        table_insert(r->arena, &r->symbols, rs_copy_name(r, name), span);
}

/* Define NAME here (it is not defined yet); the caller sets its kind. */
static Symbol *insert(Resolver *r, const char *name, Span span)
{
    Symbol *s = rs_table_find(&r->symbols, name);
    if (!s)
        s = table_insert(r->arena, &r->symbols, rs_copy_name(r, name), span);
    Symbol fresh;
    memset(&fresh, 0, sizeof fresh);
    fresh.name = s->name;
    fresh.hash = s->hash;
    fresh.span = span;
    *s = fresh;
    return s;
}

/* True when NAME is unknown because its statement failed to parse, or
 * may be defined in a file that could not be read: the error was reported
 * there, and this use is not reported again. */
int rs_failed_earlier(Resolver *r, const char *name)
{
    return r->lost_file || rs_table_find(&r->unparsed, name) != NULL;
}

/* Record a definition that was refused, so its uses stay quiet. */
void rs_insert_failed(Resolver *r, const char *name, Span span)
{
    if (rs_lookup(r, name))
        return;
    Symbol *sym = insert(r, name, span);
    sym->kind = SYM_ARRAY;
    sym->array = -1;
    sym->failed = 1;
}

/* Check that NAME may be defined here; report and return 0 if not. */
static int definable(Resolver *r, const char *name, Span span)
{
    const char *why = names_reserved(name, r->ir->model);
    if (why) {
        diag_error(r->diag, span, "'%s' %s; choose another name", name, why);
        return 0;
    }
    Symbol *old = rs_lookup(r, name);
    if (old) {
        diag_error(r->diag, span,
                   "'%s' is already defined; every name is defined once", name);
        diag_note(r->diag, old->span, "'%s' was defined here", name);
        return 0;
    }
    return 1;
}

void rs_fail(Resolver *r)
{
    r->failed = 1;
}

static const char *const reduction_names[] = {"sum", "max", "min",
                                              "logsumexp"};

int rs_reduction_kind(const char *name)
{
    for (int i = 0; i < 4; i++)
        if (strcmp(name, reduction_names[i]) == 0)
            return i;
    return -1;
}

/* ---------------------------------------------------------- constants */

static int const_eval(Resolver *r, const AstExpr *e, double *out);

/* A def called in a constant: its body evaluated with the arguments'
 * values.  Only a def without conditions gives a constant. */
static int const_call(Resolver *r, const AstExpr *e, double *out)
{
    const DefInfo *d = rs_def_called(r, e);
    if (!d || !rs_arity_matches(r, e, d))
        return 0;
    if (!d->constant) {
        diag_error(r->diag, e->span,
                   "'%s' cannot give a constant: its body uses a condition",
                   d->name);
        rs_note_def(r, d);
        return 0;
    }
    double *values = arena_alloc(r->arena,
                                 (size_t)d->nparams * sizeof *values);
    for (int i = 0; i < e->nargs; i++)
        if (!const_eval(r, e->args[i], &values[i]))
            return 0;
    Frame f = {d, NULL, values};
    const Frame *outer = r->frame;
    r->frame = &f;
    int ok = const_eval(r, d->body, out);
    r->frame = outer;
    return ok;
}

/* Evaluate a constant expression: numbers, earlier consts, arithmetic,
 * builtins and defs of those.  Returns 0 (after reporting) when it is not
 * constant. */
static int const_eval(Resolver *r, const AstExpr *e, double *out)
{
    double v[3] = {0, 0, 0};
    switch (e->kind) {
    case AST_NUM:
        *out = e->num;
        return 1;
    case AST_NAME: {
        int p = r->frame ? rs_param_index(r->frame->def, e->name) : -1;
        if (p >= 0) {
            *out = r->frame->values[p];
            return 1;
        }
        Symbol *s = rs_lookup(r, e->name);
        if (!s) {
            if (!rs_failed_earlier(r, e->name))
                diag_error(r->diag, e->span,
                           "unknown name '%s': define it before this line",
                           e->name);
            return 0;
        }
        if (s->failed)
            return 0;
        if (s->kind == SYM_SIZE) {
            diag_error(r->diag, e->span,
                       "'%s' is a size, known only when the emitted code "
                       "runs: it cannot be used in a constant", e->name);
            return 0;
        }
        if (s->kind != SYM_CONST) {
            diag_error(r->diag, e->span,
                       "'%s' is not a constant: constants may use only "
                       "numbers and earlier constants", e->name);
            return 0;
        }
        *out = s->value;
        return 1;
    }
    case AST_UNARY:
        if (e->op != AOP_NEG)
            break;
        if (!const_eval(r, e->args[0], &v[0]))
            return 0;
        *out = -v[0];
        return 1;
    case AST_BINARY: {
        static const IrOp arith[] = {
            [AOP_ADD] = IR_ADD, [AOP_SUB] = IR_SUB, [AOP_MUL] = IR_MUL,
            [AOP_DIV] = IR_DIV, [AOP_POW] = IR_POW,
        };
        if (e->op > AOP_POW)
            break;
        if (!const_eval(r, e->args[0], &v[0]) ||
            !const_eval(r, e->args[1], &v[1]))
            return 0;
        *out = apply_op(arith[e->op], v);
        return 1;
    }
    case AST_CALL: {
        int op = ir_builtin(e->name);
        if (op < 0)
            return const_call(r, e, out);
        if (ir_ops[op].arity != e->nargs)
            break;
        for (int i = 0; i < e->nargs; i++)
            if (!const_eval(r, e->args[i], &v[i]))
                return 0;
        *out = apply_op((IrOp)op, v);
        return 1;
    }
    default:
        break;
    }
    diag_error(r->diag, e->span,
               "a constant's value must be a number, an earlier constant, "
               "arithmetic or a builtin function of those");
    return 0;
}

static void resolve_const(Resolver *r, const AstStmt *s)
{
    double value = 0;
    int ok = definable(r, s->name, s->name_span);
    int valued = rs_expansion_fits(r, s->expr) &&
                 const_eval(r, s->expr, &value);
    if (valued && !isfinite(value)) {
        diag_error(r->diag, s->expr->span,
                   "constant '%s' is not a finite number (its value is %s)",
                   s->name, isnan(value) ? "NaN" : value > 0 ? "+inf" : "-inf");
        valued = 0;
    }
    if (!ok) {
        rs_insert_failed(r, s->name, s->name_span);
        return;
    }
    Symbol *sym = insert(r, s->name, s->name_span);
    sym->kind = SYM_CONST;
    sym->value = value;
    sym->failed = !valued;
}

/* ------------------------------------------------------- declarations */

/* The extent a dimension expression gives, or -1 after reporting. */
/* The extent a dimension expression gives (a count, or a size encoded as
 * IR_EXTENT_OF_SIZE), or 0 after reporting. */
static int dimension(Resolver *r, const AstExpr *e, const char *array,
                     IrRole role)
{
    double v;
    if (e->kind != AST_NUM && e->kind != AST_NAME) {
        diag_error(r->diag, e->span,
                   "a dimension is a whole number or the name of a "
                   "constant or size, as in '%s[3]', '%s[N]' or '%s[n]'",
                   array, array, array);
        return 0;
    }
    Symbol *sym = e->kind == AST_NAME ? rs_lookup(r, e->name) : NULL;
    if (sym && sym->kind == SYM_SIZE) {
        if (role == ROLE_PARAM) {
            diag_error(r->diag, e->span,
                       "param '%s' cannot have the runtime size '%s': params "
                       "have fixed extents (a size may shape inputs and "
                       "values)", array, e->name);
            return 0;
        }
        return IR_EXTENT_OF_SIZE(sym->size);
    }
    if (!const_eval(r, e, &v))
        return 0;
    if (!(v >= 1 && v <= INT_MAX && v == floor(v))) {
        diag_error(r->diag, e->span,
                   "a dimension must be a whole number from 1 to %d, "
                   "not %.17g", INT_MAX, v);
        return 0;
    }
    return (int)v;
}

/* Whether an array of these dims is small enough to declare; reports the
 * error when it is not, for the array NAME (NULL: a reduction's result).
 * Runtime sizes are checked when the code runs. */
static int fits(Resolver *r, int rank, const int *dim, Span at,
                const char *name)
{
    long count = 1;
    for (int k = 0; k < rank; k++) {
        if (IR_EXTENT_IS_SIZE(dim[k]))
            continue;
        count *= dim[k];
        if (count > MAX_ELEMENTS) {
            const char *what = name ? arena_printf(r->arena, "'%s'", name)
                                    : "this reduction's result";
            diag_error(r->diag, at,
                       "%s would have more than %ld elements, too many "
                       "for one array", what, MAX_ELEMENTS);
            return 0;
        }
    }
    return 1;
}

static void resolve_decls(Resolver *r, const AstStmt *s)
{
    IrRole role = s->kind == STMT_PARAM ? ROLE_PARAM : ROLE_INPUT;
    for (int i = 0; i < s->ndecls; i++) {
        const AstDecl *d = &s->decls[i];
        int dim[IR_MAX_RANK];
        int ok = definable(r, d->name, d->span);
        if (d->ndims > LANG_MAX_RANK) {
            diag_error(r->diag, d->span,
                       "'%s' has %d dimensions; at most %d are allowed",
                       d->name, d->ndims, LANG_MAX_RANK);
            ok = 0;
        }
        for (int k = 0; k < d->ndims && k < LANG_MAX_RANK; k++) {
            dim[k] = dimension(r, d->dims[k], d->name, role);
            if (dim[k] == 0)
                ok = 0;
        }
        if (ok && !fits(r, d->ndims, dim, d->span, d->name))
            ok = 0;
        if (!rs_lookup(r, d->name)) {
            Symbol *sym = insert(r, d->name, d->span);
            sym->kind = SYM_ARRAY;
            sym->failed = !ok;
            sym->array = -1;
            if (ok) {
                sym->array = ir_add_array(r->ir, sym->name, role, d->ndims,
                                          dim, d->span);
                if (role == ROLE_PARAM)
                    r->nparams++;
            }
        }
    }
}

static void resolve_sizes(Resolver *r, const AstStmt *s)
{
    for (int i = 0; i < s->nnames; i++) {
        const AstExpr *n = s->names[i];
        if (!definable(r, n->name, n->span)) {
            rs_insert_failed(r, n->name, n->span);
            continue;
        }
        Symbol *sym = insert(r, n->name, n->span);
        sym->kind = SYM_SIZE;
        IrSize size = {sym->name, n->span};
        VEC_PUSH(r->arena, r->ir->sizes, size);
        sym->size = r->ir->sizes.len - 1;
    }
}

/* ------------------------------------------------------------- infer */

/* An extent as a message shows it: "3", or a size's name. */
static const char *extent_text(Resolver *r, int extent)
{
    if (IR_EXTENT_IS_SIZE(extent))
        return arena_printf(r->arena, "%s",
                            r->ir->sizes.items[IR_EXTENT_SIZE(extent)].name);
    return arena_printf(r->arena, "%d", extent);
}

static int find_binder(const Resolver *r, const char *name)
{
    for (int i = r->scope.len - 1; i >= 0; i--)
        if (strcmp(r->binders.items[r->scope.items[i]].name, name) == 0)
            return r->scope.items[i];
    return -1;
}

static int push_binder(Resolver *r, const char *name, Span span, int extent)
{
    Binder b;
    memset(&b, 0, sizeof b);
    b.name = name;
    b.span = span;
    b.extent = extent;
    b.var = -1;
    VEC_PUSH(r->arena, r->binders, b);
    return r->binders.len - 1;
}

/* A binder's extent before any subscript gave it one, and for an index
 * whose binding was refused (subscripts with it are then accepted quietly,
 * so the refusal is reported once).  Real extents are counts or sizes. */
#define EXTENT_UNKNOWN INT_MIN
#define EXTENT_FAILED (INT_MIN + 1)

/* Bind a new index called NAME at SPAN; returns its id.  When the name is
 * refused the error is reported and the binder is marked failed. */
static int bind(Resolver *r, const char *name, Span span)
{
    const char *why = names_reserved(name, r->ir->model);
    Symbol *sym = rs_lookup(r, name);
    int outer = find_binder(r, name);
    Symbol *value = rs_table_find(&r->symbols, name);
    if (why) {
        diag_error(r->diag, span, "index '%s' %s; choose another name",
                   name, why);
    } else if (sym || value) {
        diag_error(r->diag, span,
                   "index '%s' has the name of a value; index names must "
                   "differ from every name the model defines", name);
        if (value)
            diag_note(r->diag, value->span, "'%s' is defined here", name);
    } else if (outer >= 0) {
        diag_error(r->diag, span,
                   "index '%s' is bound twice: it is already bound by the "
                   "left side or an enclosing reduction", name);
        diag_note(r->diag, r->binders.items[outer].span,
                  "'%s' is first bound here", name);
    } else {
        return push_binder(r, name, span, EXTENT_UNKNOWN);
    }
    rs_fail(r);
    return push_binder(r, name, span, EXTENT_FAILED);
}

static void infer(Resolver *r, const AstExpr *e);

/* The symbol a name in an expression refers to, or NULL after reporting
 * why there is none (or quietly, when its definition already failed). */
static Symbol *resolve_use(Resolver *r, const char *name, Span at)
{
    Symbol *s = rs_lookup(r, name);
    if (s && !s->failed && s->kind != SYM_DEF)
        return s;
    if ((!s && !rs_failed_earlier(r, name)) || (s && !s->failed)) {
        if (strcmp(name, r->target_name) == 0)
            diag_error(r->diag, at, "'%s' is used in its own definition",
                       name);
        else if (ir_builtin(name) >= 0 || s)
            diag_error(r->diag, at, "'%s' is a function: call it, as in %s(x)",
                       name, name);
        else
            diag_error(r->diag, at,
                       "unknown name '%s': define it before this line", name);
    }
    rs_fail(r);
    return NULL;
}

/* In a def's body: refuse a value of the model (S, called NAME at AT),
 * which the def cannot see; returns 1 after reporting. */
static int refused_in_body(Resolver *r, const Symbol *s, const char *name,
                           Span at)
{
    if (!r->def || (s->kind != SYM_ARRAY && s->kind != SYM_SIZE))
        return 0;
    IrRole role = s->kind == SYM_SIZE ? ROLE_INPUT
                                      : r->ir->arrays.items[s->array].role;
    const char *what = s->kind == SYM_SIZE ? "a size"
                       : role == ROLE_PARAM ? "a param"
                       : role == ROLE_INPUT ? "an input" : "a value";
    diag_error(r->diag, at,
               "'%s' is %s of the model; a def's body may use only its "
               "parameters, constants and functions: pass '%s' as an "
               "argument", name, what, name);
    diag_note(r->diag, s->span, "'%s' is defined here", name);
    rs_fail(r);
    return 1;
}

static void infer_name(Resolver *r, const AstExpr *e)
{
    if (rs_param_index(r->def, e->name) >= 0)
        return;
    if (find_binder(r, e->name) >= 0) {
        diag_error(r->diag, e->span,
                   "index '%s' used as a value: indices may only subscript "
                   "arrays", e->name);
        rs_fail(r);
        return;
    }
    Symbol *s = resolve_use(r, e->name, e->span);
    if (!s || refused_in_body(r, s, e->name, e->span) || s->kind != SYM_ARRAY)
        return;     /* constants and sizes are numbers */
    const IrArray *a = &r->ir->arrays.items[s->array];
    if (a->rank == 0)
        return;
    if (r->index_form) {
        diag_error(r->diag, e->span,
                   "'%s' is an array: in index notation subscript it, as in "
                   "%s[i]", e->name, e->name);
        rs_fail(r);
        return;
    }
    if (r->elem_rank < 0) {
        r->elem_rank = a->rank;
        memcpy(r->elem_dim, a->dim, (size_t)a->rank * sizeof *a->dim);
        r->elem_from = e->span;
        return;
    }
    if (r->elem_rank != a->rank ||
        memcmp(r->elem_dim, a->dim, (size_t)a->rank * sizeof(int)) != 0) {
        diag_error(r->diag, e->span,
                   "'%s' does not have the shape of the other arrays in this "
                   "elementwise definition: use index notation, as in "
                   "y[i] = ...", e->name);
        diag_note(r->diag, r->elem_from, "the shape was set here");
        rs_fail(r);
    }
}

static void infer_subscript(Resolver *r, const AstExpr *e)
{
    /* a def's parameters are numbers */
    int param = rs_param_index(r->def, e->name) >= 0;
    Symbol *s = param ? NULL : resolve_use(r, e->name, e->name_span);
    if (!param && (!s || refused_in_body(r, s, e->name, e->name_span)))
        return;
    if (s && s->kind != SYM_ARRAY) {
        diag_error(r->diag, e->span, "'%s' is a %s and cannot be subscripted",
                   e->name, s->kind == SYM_SIZE ? "size" : "constant");
        rs_fail(r);
        return;
    }
    const IrArray *a = s ? &r->ir->arrays.items[s->array] : NULL;
    if (!a || a->rank == 0) {
        diag_error(r->diag, e->span,
                   "'%s' is a scalar and takes no subscripts", e->name);
        rs_fail(r);
        return;
    }
    if (a->rank != e->nargs) {
        diag_error(r->diag, e->span,
                   "'%s' has %d dimension%s but %d subscript%s here", e->name,
                   a->rank, a->rank == 1 ? "" : "s", e->nargs,
                   e->nargs == 1 ? " is given" : "s are given");
        rs_fail(r);
        return;
    }
    for (int k = 0; k < e->nargs; k++) {
        const AstExpr *ix = e->args[k];
        if (ix->kind != AST_NAME) {
            diag_error(r->diag, ix->span,
                       "a subscript must be an index name; constant "
                       "subscripts and offsets such as i+1 are not "
                       "supported by this version");
            rs_fail(r);
            continue;
        }
        int b = find_binder(r, ix->name);
        if (b < 0) {
            if (rs_lookup(r, ix->name))
                diag_error(r->diag, ix->span,
                           "'%s' is a value, not an index: subscripts are "
                           "indices bound on the left side or by a reduction",
                           ix->name);
            else
                diag_error(r->diag, ix->span,
                           "index '%s' is not bound: add it to the left side "
                           "or reduce over it", ix->name);
            rs_fail(r);
            continue;
        }
        Binder *bd = &r->binders.items[b];
        if (bd->extent == EXTENT_FAILED)
            continue;
        if (bd->extent == EXTENT_UNKNOWN) {
            bd->extent = a->dim[k];
            bd->range_from = ix->span;
        } else if (bd->extent != a->dim[k]) {
            diag_error(r->diag, ix->span,
                       "index '%s' ranges over %s here (dimension %d of "
                       "'%s') but over %s where it was first used",
                       ix->name, extent_text(r, a->dim[k]), k + 1, e->name,
                       extent_text(r, bd->extent));
            diag_note(r->diag, bd->range_from, "'%s' got the range %s here",
                      ix->name, extent_text(r, bd->extent));
            rs_fail(r);
        }
    }
}

static void infer_call(Resolver *r, const AstExpr *e)
{
    int op = ir_builtin(e->name);
    if (op < 0) {
        const DefInfo *d = rs_def_called(r, e);
        if (d)
            rs_arity_matches(r, e, d);
    } else if (ir_ops[op].arity != e->nargs) {
        if (op == IR_MAX || op == IR_MIN)
            diag_error(r->diag, e->span,
                       "'%s' takes two values, as in %s(a, b), or reduces "
                       "over an index, as in %s(i: x[i])",
                       e->name, e->name, e->name);
        else
            rs_arity_error(r, e, ir_ops[op].arity);
        rs_fail(r);
    }
    for (int i = 0; i < e->nargs; i++)
        infer(r, e->args[i]);
}

static void infer_reduce(Resolver *r, AstExpr *e)
{
    if (r->def) {
        diag_error(r->diag, e->span,
                   "a def's body cannot contain a reduction: reduce where "
                   "the def is called and pass the result as an argument");
        rs_fail(r);
        return;
    }
    if (rs_reduction_kind(e->name) < 0) {
        diag_error(r->diag, e->name_span,
                   "'%s' is not a reduction; the reductions are sum, max, "
                   "min and logsumexp", e->name);
        rs_fail(r);
    }
    int pushed = 0, first = r->binders.len;
    if (e->nbound > LANG_MAX_RANK) {
        diag_error(r->diag, e->span,
                   "a reduction binds at most %d indices", LANG_MAX_RANK);
        rs_fail(r);
        return;
    }
    for (int i = 0; i < e->nbound; i++) {
        if (e->bound[i]->kind != AST_NAME) {
            rs_fail(r);
            continue;
        }
        int b = bind(r, e->bound[i]->name, e->bound[i]->span);
        VEC_PUSH(r->arena, r->scope, b);
        pushed++;
    }
    e->binder = first;
    infer(r, e->body);
    for (int b = first; b < r->binders.len && b < first + pushed; b++)
        if (r->binders.items[b].extent == EXTENT_UNKNOWN && !r->failed) {
            diag_error(r->diag, r->binders.items[b].span,
                       "cannot tell the range of index '%s': use it as a "
                       "subscript of an array inside the reduction",
                       r->binders.items[b].name);
            rs_fail(r);
        }
    r->scope.len -= pushed;
    if (pushed != e->nbound)
        rs_fail(r);
}

static void infer(Resolver *r, const AstExpr *e)
{
    switch (e->kind) {
    case AST_NUM:
        return;
    case AST_NAME:
        infer_name(r, e);
        return;
    case AST_SUBSCRIPT:
        infer_subscript(r, e);
        return;
    case AST_CALL:
        infer_call(r, e);
        return;
    case AST_REDUCE:
        infer_reduce(r, (AstExpr *)e);
        return;
    case AST_UNARY:
    case AST_BINARY:
    case AST_SELECT:
        for (int i = 0; i < e->nargs; i++)
            infer(r, e->args[i]);
        return;
    }
}

/* ------------------------------------------------------------- kinds */

/* The IR op of a binary operator. */
static IrOp binary_op(AstOp op)
{
    switch (op) {
    case AOP_ADD: return IR_ADD;
    case AOP_SUB: return IR_SUB;
    case AOP_MUL: return IR_MUL;
    case AOP_DIV: return IR_DIV;
    case AOP_POW: return IR_POW;
    case AOP_LT: return IR_LT;
    case AOP_LE: return IR_LE;
    case AOP_GT: return IR_GT;
    case AOP_GE: return IR_GE;
    case AOP_EQ: return IR_EQ;
    case AOP_NE: return IR_NE;
    case AOP_AND: return IR_AND;
    case AOP_OR: return IR_OR;
    default: DV_UNREACHABLE();
    }
    return IR_ADD;
}

/* E is a condition (FOUND_COND) where a number belongs, or a number where
 * a condition belongs.  A def call gets a note at its def. */
static void kind_error(Resolver *r, const AstExpr *e, int found_cond)
{
    if (found_cond)
        diag_error(r->diag, e->span,
                   "a comparison is a condition, not a number: use it as "
                   "the first operand of '?:', as in (x > 0 ? x : 0)");
    else
        diag_error(r->diag, e->span,
                   "expected a condition such as 'x > 0' here, found a "
                   "number");
    const DefInfo *d = rs_expandable(r, e);
    if (d)
        rs_note_def(r, d);
    rs_fail(r);
}

static int body_kind(Resolver *r, const AstExpr *e);

/* Check that E is a condition (WANT_COND) or a number, unless checking
 * its operands already reported an error. */
static void want_kind(Resolver *r, const AstExpr *e, int want_cond)
{
    int errors = r->diag->errors;
    int cond = body_kind(r, e);
    if (cond != want_cond && r->diag->errors == errors)
        kind_error(r, e, cond);
}

/* Whether the body of a def (its names checked) is a condition, checking
 * that conditions and numbers are where they belong throughout, as
 * lowering does in a definition; r->saw_cond is set when it holds a
 * condition anywhere, which keeps the def out of constants. */
static int body_kind(Resolver *r, const AstExpr *e)
{
    switch (e->kind) {
    case AST_UNARY:
        want_kind(r, e->args[0], e->op == AOP_NOT);
        r->saw_cond |= e->op == AOP_NOT;
        return e->op == AOP_NOT;
    case AST_BINARY: {
        IrOp op = binary_op(e->op);
        int logic = op == IR_AND || op == IR_OR;
        want_kind(r, e->args[0], logic);
        want_kind(r, e->args[1], logic);
        int cond = logic || ir_ops[op].kind == OPK_COMPARE;
        r->saw_cond |= cond;
        return cond;
    }
    case AST_SELECT:
        want_kind(r, e->args[0], 1);
        want_kind(r, e->args[1], 0);
        want_kind(r, e->args[2], 0);
        return 0;
    case AST_CALL: {
        const DefInfo *d = rs_expandable(r, e);
        for (int i = 0; i < e->nargs; i++)
            want_kind(r, e->args[i], 0);
        r->saw_cond |= d && !d->constant;
        return d && d->is_cond;
    }
    default:
        return 0;
    }
}

/* -------------------------------------------------------------- lower */

static int32_t binder_var(Resolver *r, int b)
{
    Binder *bd = &r->binders.items[b];
    if (bd->var < 0)
        bd->var = ir_add_var(r->ir, rs_copy_name(r, bd->name), bd->extent);
    return bd->var;
}

/* The tuple of the vars of the binders in scope (the elementwise ones
 * first in a whole-array definition). */
static int32_t scope_tuple(Resolver *r)
{
    int32_t vars[64];
    int n = 0;
    for (int i = 0; i < r->scope.len && n < 64; i++)
        vars[n++] = binder_var(r, r->scope.items[i]);
    return ir_tuple(r->ir, vars, n);
}

static NodeId lower(Resolver *r, const AstExpr *e, int *is_cond);

/* Both report a value where a condition belongs or the other way round,
 * unless lowering the operand already reported an error (a cascade). */
static NodeId lower_value(Resolver *r, const AstExpr *e)
{
    int cond = 0, errors = r->diag->errors;
    NodeId n = lower(r, e, &cond);
    if (cond && r->diag->errors == errors)
        kind_error(r, e, cond);
    return cond ? ir_const(r->ir, 0) : n;
}

static NodeId lower_cond(Resolver *r, const AstExpr *e)
{
    int cond = 0, errors = r->diag->errors;
    NodeId n = lower(r, e, &cond);
    if (!cond && r->diag->errors == errors)
        kind_error(r, e, cond);
    return cond ? n : ir_node(r->ir, IR_NE, n, ir_const(r->ir, 0), NO_NODE);
}

/* Fold arithmetic on constants, which C would compute identically at run
 * time; builtins are left to the C library the emitted code links. */
static NodeId arith(Resolver *r, IrOp op, NodeId a, NodeId b)
{
    const IrNode *x = ir_at(r->ir, a);
    const IrNode *y = b == NO_NODE ? NULL : ir_at(r->ir, b);
    if (x->op == IR_CONST && (!y || y->op == IR_CONST) && op != IR_POW) {
        double v[3] = {ir_const_num(x), y ? ir_const_num(y) : 0, 0};
        return ir_const(r->ir, apply_op(op, v));
    }
    return ir_node(r->ir, op, a, b, NO_NODE);
}

/* Collect into VARS (a set of size *n) the index vars that node ID reads. */
static void node_vars(const Ir *ir, NodeId id, int32_t *vars, int *n,
                      int max)
{
    const IrNode *nd = ir_at(ir, id);
    int32_t found[IR_MAX_RANK + 1];
    int nf = 0;
    if (nd->op == IR_READ) {
        int len = ir_tuple_len(ir, ir_read_tuple(nd));
        for (int k = 0; k < len; k++)
            found[nf++] = ir_tuple_vars(ir, ir_read_tuple(nd))[k];
    } else if (nd->op == IR_INDEX) {
        found[nf++] = ir_leaf_var(nd);
    }
    for (int i = 0; i < nf; i++) {
        int seen = 0;
        for (int k = 0; k < *n; k++)
            seen |= vars[k] == found[i];
        if (!seen && *n < max)
            vars[(*n)++] = found[i];
    }
    for (int i = 0; i < nd->nargs; i++)
        node_vars(ir, nd->arg[i], vars, n, max);
}

static IrStmt make_stmt(Resolver *r, IrStmtKind kind, int32_t target,
                        int32_t tuple, int32_t domain, NodeId expr)
{
    return ir_stmt(r->ir, kind, target, tuple, domain, expr, r->stmt->span);
}

/* The name of a temporary of reduction number n in this definition:
 * dvs_y_sum for the first, dvs_y_sum2 for the second, ... */
static const char *temp_name_n(Resolver *r, const char *what, int n)
{
    if (n == 1)
        return arena_printf(r->arena, DV_PREFIX "%s_%s", r->target_name, what);
    return arena_printf(r->arena, DV_PREFIX "%s_%s%d", r->target_name, what,
                        n);
}

static const char *temp_name(Resolver *r, const char *what)
{
    return temp_name_n(r, what, ++r->ntemps);
}

/* logsumexp(e) = m + log(sum(exp(e - m))) with m the largest e (0 when
 * that is infinite, so all -inf gives -inf and +inf gives +inf).  The shift
 * m gets no adjoint: the result does not depend on it, and without it the
 * reverse sweep yields the softmax weight exp(e - m) / sum directly, to
 * full relative accuracy whatever the size of the result. */
static NodeId lower_logsumexp(Resolver *r, const AstExpr *e, NodeId body,
                              int32_t tuple, int32_t domain, int rank,
                              const int *dim)
{
    Ir *ir = r->ir;
    int n = ++r->ntemps;
    int32_t shift = ir_add_array(ir, temp_name_n(r, "shift", n), ROLE_TEMP,
                                 rank, dim, e->span);
    ir->arrays.items[shift].no_adjoint = 1;
    NodeId m = ir_read(ir, shift, tuple);
    ir_add_stmt(ir, &ir->forward, make_stmt(r, SK_SET, shift, tuple, tuple,
                                            ir_const(ir, -HUGE_VAL)));
    ir_add_stmt(ir, &ir->forward,
                make_stmt(r, SK_MAX, shift, tuple, domain, body));
    NodeId finite = ir_node(ir, IR_LT, ir_node(ir, IR_ABS, m, NO_NODE, NO_NODE),
                            ir_const(ir, HUGE_VAL), NO_NODE);
    ir_add_stmt(ir, &ir->forward,
                make_stmt(r, SK_SET, shift, tuple, tuple,
                          ir_node(ir, IR_SELECT, finite, m, ir_const(ir, 0))));
    int32_t sum = ir_add_array(ir, temp_name_n(r, "expsum", n), ROLE_TEMP,
                               rank, dim, e->span);
    ir_add_stmt(ir, &ir->forward,
                make_stmt(r, SK_SET, sum, tuple, tuple, ir_const(ir, 0)));
    NodeId term = ir_node(ir, IR_EXP, ir_node(ir, IR_SUB, body, m, NO_NODE),
                          NO_NODE, NO_NODE);
    ir_add_stmt(ir, &ir->forward,
                make_stmt(r, SK_ADD, sum, tuple, domain, term));
    NodeId log_sum = ir_node(ir, IR_LOG, ir_read(ir, sum, tuple), NO_NODE,
                             NO_NODE);
    return ir_node(ir, IR_ADD, m, log_sum, NO_NODE);
}

/* Lower a reduction.  Its accumulator is indexed by the enclosing indices
 * its body uses (so a reduction that does not depend on j is computed once,
 * not once per j).  When DIRECT is the definition's own array and the
 * accumulator would have exactly its subscripts, the reduction accumulates
 * into it and *direct_used is set. */
static NodeId lower_reduce(Resolver *r, const AstExpr *e, int32_t direct,
                           int32_t direct_tuple, int *direct_used)
{
    static const double init[] = {0, -HUGE_VAL, HUGE_VAL};
    static const IrStmtKind kinds[] = {SK_ADD, SK_MAX, SK_MIN};
    static const char *const what[] = {"sum", "max", "min"};
    int kind = rs_reduction_kind(e->name);
    for (int i = 0; i < e->nbound; i++)
        VEC_PUSH(r->arena, r->scope, e->binder + i);
    NodeId body = lower_value(r, e->body);
    r->scope.len -= e->nbound;

    int32_t own[LANG_MAX_RANK], nown = 0;
    for (int i = 0; i < e->nbound; i++)
        own[nown++] = binder_var(r, e->binder + i);
    /* free vars of the body, in scope order */
    int32_t used[64], nused = 0, outer[64], nouter = 0;
    node_vars(r->ir, body, used, &nused, 64);
    for (int i = 0; i < r->scope.len; i++) {
        int32_t v = binder_var(r, r->scope.items[i]);
        for (int k = 0; k < nused; k++)
            if (used[k] == v)
                outer[nouter++] = v;
    }
    if (nouter > IR_MAX_RANK) {
        diag_error(r->diag, e->span,
                   "this reduction depends on %d enclosing indices; at most "
                   "%d are supported: compute it in a definition of its own",
                   nouter, IR_MAX_RANK);
        rs_fail(r);
        nouter = IR_MAX_RANK;
    }
    int32_t dom[64];
    memcpy(dom, outer, (size_t)nouter * sizeof *dom);
    memcpy(dom + nouter, own, (size_t)nown * sizeof *dom);
    int32_t tuple = ir_tuple(r->ir, outer, nouter);
    int32_t domain = ir_tuple(r->ir, dom, nouter + nown);
    int dim[IR_MAX_RANK];
    for (int k = 0; k < nouter; k++)
        dim[k] = r->ir->vars.items[outer[k]].extent;
    if (!fits(r, nouter, dim, e->span, NULL))
        rs_fail(r);
    if (kind == 3)
        return lower_logsumexp(r, e, body, tuple, domain, nouter, dim);
    int32_t acc;
    if (direct >= 0 && tuple == direct_tuple) {
        acc = direct;
        *direct_used = 1;
    } else {
        acc = ir_add_array(r->ir, temp_name(r, what[kind]), ROLE_TEMP,
                           nouter, dim, e->span);
    }
    IrStmt s = make_stmt(r, SK_SET, acc, tuple, tuple,
                         ir_const(r->ir, init[kind]));
    ir_add_stmt(r->ir, &r->ir->forward, s);
    IrStmt red = make_stmt(r, kinds[kind], acc, tuple, domain, body);
    if (kind == 1 || kind == 2) {
        IrArray *a = &r->ir->arrays.items[acc];
        int32_t pos = ir_add_array(
            r->ir, arena_printf(r->arena, DV_PREFIX "%s_at", a->name + (
                strncmp(a->name, DV_PREFIX, strlen(DV_PREFIX)) == 0
                    ? strlen(DV_PREFIX) : 0)),
            ROLE_ARGPOS, a->rank, a->dim, e->span);
        IrStmt at = make_stmt(r, SK_SET, pos, tuple, tuple, ir_const(r->ir, 0));
        ir_add_stmt(r->ir, &r->ir->forward, at);
        red.argpos = pos;
        red.reduced = ir_tuple(r->ir, own, nown);
    }
    ir_add_stmt(r->ir, &r->ir->forward, red);
    return ir_read(r->ir, acc, tuple);
}

/* A builtin, or a def expanded: its arguments lowered once, in the
 * caller's scope, then its body with the parameters standing for them. */
static NodeId lower_call(Resolver *r, const AstExpr *e, int *is_cond)
{
    int op = ir_builtin(e->name);
    if (op >= 0) {
        NodeId a[3] = {NO_NODE, NO_NODE, NO_NODE};
        for (int i = 0; i < e->nargs; i++)
            a[i] = lower_value(r, e->args[i]);
        return ir_node(r->ir, (IrOp)op, a[0], a[1], a[2]);
    }
    const DefInfo *d = rs_expandable(r, e);
    NodeId *args = arena_alloc(r->arena, (size_t)e->nargs * sizeof *args);
    for (int i = 0; i < e->nargs; i++)
        args[i] = lower_value(r, e->args[i]);
    Frame f = {d, args, NULL};
    const Frame *outer = r->frame;
    r->frame = &f;
    NodeId n = lower(r, d->body, is_cond);
    r->frame = outer;
    arena_release(r->arena, args, (size_t)e->nargs * sizeof *args);
    return n;
}

static NodeId lower_binary(Resolver *r, const AstExpr *e, int *is_cond)
{
    IrOp op = binary_op(e->op);
    if (op == IR_AND || op == IR_OR) {
        *is_cond = 1;
        NodeId a = lower_cond(r, e->args[0]);
        NodeId b = lower_cond(r, e->args[1]);
        return ir_node(r->ir, op, a, b, NO_NODE);
    }
    NodeId a = lower_value(r, e->args[0]);
    NodeId b = lower_value(r, e->args[1]);
    if (ir_ops[op].kind == OPK_COMPARE) {
        *is_cond = 1;
        return ir_node(r->ir, op, a, b, NO_NODE);
    }
    return arith(r, op, a, b);
}

static NodeId lower(Resolver *r, const AstExpr *e, int *is_cond)
{
    *is_cond = 0;
    switch (e->kind) {
    case AST_NUM:
        return ir_const(r->ir, e->num);
    case AST_NAME: {
        int p = r->frame ? rs_param_index(r->frame->def, e->name) : -1;
        if (p >= 0)
            return r->frame->nodes[p];
        Symbol *s = rs_lookup(r, e->name);
        if (s->kind == SYM_CONST)
            return ir_const(r->ir, s->value);
        if (s->kind == SYM_SIZE)
            return ir_size(r->ir, s->size);
        const IrArray *a = &r->ir->arrays.items[s->array];
        if (a->rank == 0)
            return ir_read(r->ir, s->array, ir_tuple(r->ir, NULL, 0));
        /* whole-array form: the implicit indices are the outermost scope */
        int32_t vars[IR_MAX_RANK];
        for (int k = 0; k < a->rank; k++)
            vars[k] = binder_var(r, r->scope.items[k]);
        return ir_read(r->ir, s->array, ir_tuple(r->ir, vars, a->rank));
    }
    case AST_SUBSCRIPT: {
        Symbol *s = rs_lookup(r, e->name);
        int32_t vars[IR_MAX_RANK];
        for (int k = 0; k < e->nargs; k++)
            vars[k] = binder_var(r, find_binder(r, e->args[k]->name));
        return ir_read(r->ir, s->array, ir_tuple(r->ir, vars, e->nargs));
    }
    case AST_CALL:
        return lower_call(r, e, is_cond);
    case AST_REDUCE: {
        int unused = 0;
        return lower_reduce(r, e, -1, -1, &unused);
    }
    case AST_UNARY:
        if (e->op == AOP_NOT) {
            *is_cond = 1;
            return ir_node(r->ir, IR_NOT, lower_cond(r, e->args[0]),
                           NO_NODE, NO_NODE);
        }
        return arith(r, IR_NEG, lower_value(r, e->args[0]), NO_NODE);
    case AST_BINARY:
        return lower_binary(r, e, is_cond);
    case AST_SELECT: {
        NodeId c = lower_cond(r, e->args[0]);
        NodeId a = lower_value(r, e->args[1]);
        NodeId b = lower_value(r, e->args[2]);
        return ir_node(r->ir, IR_SELECT, c, a, b);
    }
    }
    DV_UNREACHABLE();
    return NO_NODE;
}

/* -------------------------------------------------------- definitions */

/* Start resolving the definition S (of a value or a def). */
static void begin_definition(Resolver *r, const AstStmt *s)
{
    r->stmt = s;
    r->target_name = s->name;
    r->binders.len = 0;
    r->scope.len = 0;
    r->index_form = s->nindex > 0;
    r->elem_rank = -1;
    r->failed = 0;
    r->ntemps = 0;
}

static void resolve_define(Resolver *r, const AstStmt *s)
{
    begin_definition(r, s);
    int ok = definable(r, s->name, s->name_span);
    for (int i = 0; i < s->nindex; i++) {
        int b = bind(r, s->index[i]->name, s->index[i]->span);
        VEC_PUSH(r->arena, r->scope, b);
    }
    if (s->nindex > LANG_MAX_RANK) {
        diag_error(r->diag, s->name_span,
                   "'%s' has %d indices; at most %d are allowed", s->name,
                   s->nindex, LANG_MAX_RANK);
        rs_fail(r);
    }
    infer(r, s->expr);
    if (!r->failed && !rs_expansion_fits(r, s->expr))
        rs_fail(r);
    for (int i = 0; i < r->scope.len; i++) {
        Binder *b = &r->binders.items[r->scope.items[i]];
        if (b->extent == EXTENT_UNKNOWN && !r->failed) {
            diag_error(r->diag, b->span,
                       "cannot tell the range of index '%s': use it as a "
                       "subscript of an array on the right side", b->name);
            rs_fail(r);
        }
    }
    if (!ok) {
        rs_insert_failed(r, s->name, s->name_span);
        return;
    }
    Symbol *sym = insert(r, s->name, s->name_span);
    sym->kind = SYM_ARRAY;
    sym->array = -1;
    if (r->failed || s->nindex > LANG_MAX_RANK) {
        sym->failed = 1;
        return;
    }

    /* Shape and subscripts of the value defined. */
    int rank = 0, dim[IR_MAX_RANK];
    if (r->index_form) {
        rank = s->nindex;
        for (int k = 0; k < rank; k++)
            dim[k] = r->binders.items[r->scope.items[k]].extent;
    } else if (r->elem_rank > 0) {
        rank = r->elem_rank;
        for (int k = 0; k < rank; k++) {
            dim[k] = r->elem_dim[k];
            Binder b;
            memset(&b, 0, sizeof b);
            b.name = arena_printf(r->arena, DV_PREFIX "i%d", k);
            b.span = s->name_span;
            b.extent = dim[k];
            b.var = -1;
            VEC_PUSH(r->arena, r->binders, b);
            VEC_PUSH(r->arena, r->scope, r->binders.len - 1);
        }
    }
    if (!fits(r, rank, dim, s->name_span, s->name)) {
        sym->failed = 1;
        return;
    }
    int32_t target = ir_add_array(r->ir, sym->name, ROLE_VALUE, rank, dim,
                                  s->name_span);
    sym->array = target;
    int32_t tuple = scope_tuple(r);
    DefinedValue dv = {target, s->name_span};
    VEC_PUSH(r->arena, r->defined, dv);

    int direct = 0;
    NodeId e;
    if (s->expr->kind == AST_REDUCE)
        e = lower_reduce(r, s->expr, target, tuple, &direct);
    else
        e = lower_value(r, s->expr);
    if (r->failed) {
        sym->failed = 1;
        return;
    }
    if (!direct)
        ir_add_stmt(r->ir, &r->ir->forward,
                    make_stmt(r, SK_SET, target, tuple, tuple, e));
}

/* A copy of a def's body that outlives its statement's tree. */
static AstExpr *copy_expr(Resolver *r, const AstExpr *e)
{
    AstExpr *c = arena_alloc(r->arena, sizeof *c);
    *c = *e;
    if (e->name)
        c->name = rs_copy_name(r, e->name);
    c->args = arena_alloc(r->arena, (size_t)e->nargs * sizeof *c->args);
    for (int i = 0; i < e->nargs; i++)
        c->args[i] = copy_expr(r, e->args[i]);
    /* a body holds no reduction, so bound and body stay empty */
    c->bound = NULL;
    c->nbound = 0;
    c->body = NULL;
    return c;
}

/* def NAME(params) = body: the body is checked here, once, as if each
 * parameter were a number; a def that passes keeps a copy of it and the
 * measures of its expansion. */
static void resolve_def(Resolver *r, const AstStmt *s)
{
    Symbol *sym = rs_table_find(&r->symbols, s->name);
    DefInfo *d = sym && sym->kind == SYM_LATER && sym->def &&
                         sym->def->name_span.off == s->name_span.off
                     ? sym->def
                     : rs_new_def(r, s->name, s->name_span);
    begin_definition(r, s);
    int ok = definable(r, s->name, s->name_span);
    d->nparams = 0;
    d->params = arena_alloc(r->arena, (size_t)s->nnames * sizeof *d->params);
    for (int i = 0; i < s->nnames; i++) {
        const AstExpr *p = s->names[i];
        const char *why = names_reserved(p->name, r->ir->model);
        if (why) {
            diag_error(r->diag, p->span, "'%s' %s; choose another name",
                       p->name, why);
            rs_fail(r);
        }
        int k = rs_param_index(d, p->name);
        if (k >= 0) {
            diag_error(r->diag, p->span,
                       "parameter '%s' is listed twice in '%s'", p->name,
                       s->name);
            diag_note(r->diag, s->names[k]->span, "'%s' is first bound here",
                      p->name);
            rs_fail(r);
        }
        d->params[d->nparams++] = rs_copy_name(r, p->name);
    }
    r->def = d;
    infer(r, s->expr);
    r->saw_cond = 0;
    if (!r->failed)
        d->is_cond = body_kind(r, s->expr);
    d->constant = !r->saw_cond;
    if (!r->failed) {
        d->body = copy_expr(r, s->expr);
        Measure m = rs_measure(r, d->body, 1);
        d->depth = m.depth;
        d->size = m.size;
        d->param_depth = arena_alloc(r->arena, (size_t)d->nparams *
                                                   sizeof *d->param_depth);
        d->param_uses = arena_alloc(r->arena, (size_t)d->nparams *
                                                  sizeof *d->param_uses);
        for (int i = 0; i < d->nparams; i++) {
            Measure u = rs_param_uses(r, d->body, i);
            d->param_depth[i] = u.depth;
            d->param_uses[i] = u.size;
        }
    }
    r->def = NULL;
    if (!ok) {
        rs_insert_failed(r, s->name, s->name_span);
        return;
    }
    sym = insert(r, s->name, s->name_span);
    sym->kind = SYM_DEF;
    sym->def = d;
    sym->failed = r->failed;
}

static void resolve_output(Resolver *r, const AstStmt *s)
{
    for (int i = 0; i < s->nnames; i++) {
        const AstExpr *n = s->names[i];
        Symbol *sym = rs_lookup(r, n->name);
        r->noutputs++;
        if (!sym && rs_failed_earlier(r, n->name))
            continue;
        if (!sym) {
            diag_error(r->diag, n->span,
                       "unknown name '%s': define it before 'output'",
                       n->name);
            continue;
        }
        if (sym->failed)
            continue;
        if (sym->kind != SYM_ARRAY) {
            diag_error(r->diag, n->span,
                       "'%s' is a %s; an output must depend on the params",
                       n->name, sym->kind == SYM_SIZE  ? "size"
                                : sym->kind == SYM_DEF ? "function"
                                                       : "constant");
            continue;
        }
        const IrArray *a = &r->ir->arrays.items[sym->array];
        if (!ir_array_fixed(a)) {
            diag_error(r->diag, n->span,
                       "'%s' has a runtime size: outputs must have fixed "
                       "extents", n->name);
            continue;
        }
        if (a->is_output) {
            diag_error(r->diag, n->span, "'%s' is already an output",
                       n->name);
            continue;
        }
        r->ir->arrays.items[sym->array].is_output = 1;
        VEC_PUSH(r->arena, r->ir->outputs, sym->array);
        VEC_PUSH(r->arena, r->output_spans, n->span);
        if (r->ir->outputs.len > 1)
            continue;
        r->ir->output = sym->array;
        r->ir->output_span = n->span;
        r->ir->output_stmt = s->span;
    }
}

/* -------------------------------------------------------- model name */

/* The symbol prefix: --name, else the model statement, else the stem. */
static const char *model_name(Resolver *r, const char *name, const char *stem)
{
    const ModelStmt *decl = NULL;
    for (int i = 0; i < r->models.len; i++) {
        const ModelStmt *s = &r->models.items[i];
        if (decl) {
            diag_error(r->diag, s->span, "a second 'model' statement");
            diag_note(r->diag, decl->span, "the model was named here");
        } else if (s->index > 0) {
            diag_error(r->diag, s->span,
                       "'model' must be the first statement of the file");
        }
        if (!decl)
            decl = s;
    }
    if (name)
        return name;
    if (decl)
        return decl->name;
    /* The stem made into a C name: '-', '.' and spaces become '_'. */
    char *c = arena_strndup(r->arena, stem, strlen(stem));
    for (char *p = c; *p; p++)
        if (*p == '-' || *p == '.' || *p == ' ')
            *p = '_';
    if (!names_is_identifier(c)) {
        Span none = {0, 0};
        diag_error(r->diag, none,
                   "cannot make a C name from the file name '%s': add a "
                   "'model NAME' statement or use --name", stem);
        return "model";
    }
    return c;
}

static void check_model_name(Resolver *r)
{
    const char *name = r->ir->model;
    Span at = {0, 0};
    int stated = r->models.len > 0;
    if (stated)
        at = r->models.items[r->models.len - 1].name_span;
    const char *why = !names_is_identifier(name)
                          ? "is not a C identifier"
                          : names_reserved(name, NULL);
    if (why && stated)
        diag_error(r->diag, at, "model name '%s' %s; choose another name",
                   name, why);
    else if (why)
        diag_error(r->diag, at,
                   "the model is named '%s' after its file, and that name "
                   "%s: add a 'model NAME' statement or use --name",
                   name, why);
}

/* ------------------------------------------------------------ outputs */

/* One scalar output is returned; otherwise the outputs fill a struct, and
 * the emitted code writes them there, so a param or input named as an
 * output is copied into a value of its name that lives in the struct. */
static void settle_outputs(Ir *ir)
{
    const IrArray *first = &ir->arrays.items[ir->output];
    ir->struct_output = ir->outputs.len > 1 || first->rank > 0;
    if (!ir->struct_output)
        return;
    for (int i = 0; i < ir->outputs.len; i++) {
        int32_t from = ir->outputs.items[i];
        IrArray a = ir->arrays.items[from];
        if (a.role != ROLE_PARAM && a.role != ROLE_INPUT)
            continue;
        ir->arrays.items[from].is_output = 0;
        int32_t copy = ir_add_array(ir, a.name, ROLE_VALUE, a.rank, a.dim,
                                    a.span);
        ir->arrays.items[copy].is_output = 1;
        ir->outputs.items[i] = copy;
        if (i == 0)
            ir->output = copy;
        int32_t whole = ir_whole_tuple(ir, copy);
        IrStmt s = ir_stmt(ir, SK_SET, copy, whole, whole,
                           ir_read(ir, from, whole), a.span);
        s.note = arena_printf(ir->arena, "the output %s is the %s %s",
                              a.name, a.role == ROLE_PARAM ? "param" : "input",
                              a.name);
        ir_add_stmt(ir, &ir->forward, s);
    }
}

/* ------------------------------------------------------- dead values */

/* Among outputs in a struct, warn of each one no param reaches: its row
 * of the Jacobian is zero, which is likely a slip in the model. */
static void warn_constant_outputs(Resolver *r)
{
    Ir *ir = r->ir;
    char *varied = arena_alloc(r->arena, (size_t)ir->arrays.len);
    for (int i = 0; i < ir->arrays.len; i++)
        varied[i] = ir->arrays.items[i].role == ROLE_PARAM;
    for (int i = 0; i < ir->forward.len; i++) {
        const IrStmt *s = &ir->forward.items[i];
        if (!varied[s->target] && ir_reads_marked(ir, s->expr, varied))
            varied[s->target] = 1;
    }
    for (int i = 0; i < ir->outputs.len; i++)
        if (!varied[ir->outputs.items[i]])
            diag_warning(r->diag, r->output_spans.items[i], "output '%s' does "
                         "not depend on any param; its rows of the Jacobian "
                         "are zero",
                         ir->arrays.items[ir->outputs.items[i]].name);
    arena_release(r->arena, varied, (size_t)ir->arrays.len);
}

/* Keep the statements some output depends on; warn about the rest. */
static void prune(Resolver *r)
{
    Ir *ir = r->ir;
    for (int i = 0; i < ir->arrays.len; i++)
        ir->arrays.items[i].used = ir->arrays.items[i].is_output;
    int kept = ir->forward.len;
    char *keep = arena_alloc(r->arena, (size_t)(kept ? kept : 1));
    VEC(NodeId) stack = {0};
    for (int i = ir->forward.len - 1; i >= 0; i--) {
        IrStmt *s = &ir->forward.items[i];
        if (!ir->arrays.items[s->target].used)
            continue;
        keep[i] = 1;
        if (s->argpos >= 0)
            ir->arrays.items[s->argpos].used = 1;
        /* mark every array the expression reads */
        stack.len = 0;
        VEC_PUSH(r->arena, stack, s->expr);
        while (stack.len > 0) {
            const IrNode *n = ir_at(ir, stack.items[--stack.len]);
            if (n->op == IR_READ)
                ir->arrays.items[ir_read_array(n)].used = 1;
            for (int k = 0; k < n->nargs; k++)
                VEC_PUSH(r->arena, stack, n->arg[k]);
        }
    }
    int out = 0;
    for (int i = 0; i < ir->forward.len; i++)
        if (keep[i])
            ir->forward.items[out++] = ir->forward.items[i];
    ir->forward.len = out;
    arena_release(r->arena, keep, (size_t)(kept ? kept : 1));
    arena_release(r->arena, stack.items,
                  (size_t)stack.cap * sizeof *stack.items);

    for (int i = 0; i < r->defined.len; i++) {
        const DefinedValue *d = &r->defined.items[i];
        if (!ir->arrays.items[d->array].used)
            diag_warning(r->diag, d->name_span,
                         "'%s' is defined but no output depends on it; it "
                         "is left out of the emitted code",
                         ir->arrays.items[d->array].name);
    }
    int any_param = 0;
    for (int i = 0; i < ir->arrays.len; i++) {
        const IrArray *a = &ir->arrays.items[i];
        if (a->role != ROLE_PARAM)
            continue;
        if (a->used)
            any_param = 1;
        else if (ir->struct_output)
            diag_warning(r->diag, a->span,
                         "param '%s' affects no output; its column of the "
                         "Jacobian is always zero", a->name);
        else
            diag_warning(r->diag, a->span,
                         "param '%s' does not affect the output; its "
                         "gradient is always zero", a->name);
    }
    if (!any_param && ir->struct_output)
        diag_warning(r->diag, ir->output_span,
                     "no output depends on any param; the Jacobian is zero");
    else if (ir->struct_output)
        warn_constant_outputs(r);
    else if (!any_param)
        diag_warning(r->diag, ir->output_span,
                     "output '%s' does not depend on any param; its "
                     "gradient is zero", ir->arrays.items[ir->output].name);
}

/* -------------------------------------------------------------- model */

typedef VEC(const char *) NameList;
typedef VEC(Span) SpanList;

/* Collect the functions an expression calls, and where (first pass). */
static void collect_calls(Resolver *r, const AstExpr *e, NameList *names,
                          SpanList *at)
{
    if (e->kind == AST_CALL && ir_builtin(e->name) < 0) {
        VEC_PUSH(r->arena, *names, rs_copy_name(r, e->name));
        VEC_PUSH(r->arena, *at, e->name_span);
    }
    for (int i = 0; i < e->nargs; i++)
        collect_calls(r, e->args[i], names, at);
}

/* First pass over a def: note it and the functions its body calls. */
static void outline_def(Resolver *r, const AstStmt *s)
{
    if (rs_table_find(&r->symbols, s->name))
        return;     /* defined twice: reported when resolved */
    DefInfo *d = rs_new_def(r, s->name, s->name_span);
    NameList calls = {0};
    SpanList spans = {0};
    collect_calls(r, s->expr, &calls, &spans);
    d->calls = calls.items;
    d->call_spans = spans.items;
    d->ncalls = calls.len;
    table_insert(r->arena, &r->symbols, d->name, s->name_span)->def = d;
}

/* First pass: note the names a statement defines (an index may not take
 * a name the model defines anywhere). */
static void outline_names(Resolver *r, const AstStmt *s)
{
    if (s->kind == STMT_CONST || s->kind == STMT_DEFINE)
        note_name(r, s->name, s->name_span);
    if (s->kind == STMT_DEF)
        outline_def(r, s);
    for (int k = 0; k < s->ndecls; k++)
        note_name(r, s->decls[k].name, s->decls[k].span);
    for (int k = 0; s->kind == STMT_SIZE && k < s->nnames; k++)
        note_name(r, s->names[k]->name, s->names[k]->span);
}

/* First pass over the model's own statements: their names, and where the
 * model statements are. */
static void outline(Resolver *r, const AstStmt *s)
{
    if (s->kind == STMT_MODEL) {
        ModelStmt ms = {r->nstmts, s->span, s->name_span,
                        rs_copy_name(r, s->name)};
        VEC_PUSH(r->arena, r->models, ms);
    }
    outline_names(r, s);
    r->last_span = s->span;
    r->nstmts++;
}

/* Names that statements which failed to parse were defining: their uses
 * stay quiet.  (The list may be the reading thread's: names are copied.) */
static void note_unparsed(Resolver *r, const char *const *failed, int n)
{
    for (int i = 0; i < n; i++)
        if (!rs_table_find(&r->unparsed, failed[i])) {
            Span none = {0, 0};
            table_insert(r->arena, &r->unparsed, rs_copy_name(r, failed[i]),
                         none);
        }
}

/* Between the passes: the model's name, and the names of statements that
 * failed to parse. */
static void start(Resolver *r, const char *const *failed, int nfailed,
                  const char *name, const char *stem)
{
    r->ir->model = model_name(r, name, stem);
    check_model_name(r);
    note_unparsed(r, failed, nfailed);
}

static void resolve_stmt(Resolver *r, const AstStmt *s);

void rs_visit_names(void *r, const AstStmt *s)
{
    outline_names(r, s);
}

static void visit_stmt(void *r, const AstStmt *s)
{
    resolve_stmt(r, s);
}

/* Both passes over SRC: the first with VISIT, reporting syntax errors;
 * the second, silent about the syntax, resolving each statement.  The
 * model's own file is read the second time by a thread of its own, from
 * the start, so its trees are ready when the first pass is done (a used
 * file is not: its reading would share the list of files, which grows as
 * files are used). */
void rs_read_twice(Resolver *r, const Source *src,
                   void (*visit)(void *, const AstStmt *),
                   const char *name, const char *stem)
{
    ParseAhead *ahead = src == r->diag->src ? parse_ahead_start(r->diag, src)
                                            : NULL;
    ParseVisitor first = {visit, r, NULL, 0, 1, NULL};
    if (ahead)
        parse_ahead_first(ahead, visit, r, &first.failed, &first.nfailed);
    else
        parse_each(r->arena, r->diag, src, &first);
    if (visit == rs_visit_names)
        note_unparsed(r, first.failed, first.nfailed);
    else
        start(r, first.failed, first.nfailed, name, stem);
    if (ahead) {
        parse_ahead_finish(ahead, visit_stmt, r);
        return;
    }
    Diag quiet;
    diag_init(&quiet, r->diag->src, NULL);
    quiet.files = r->diag->files;
    quiet.max_errors = r->diag->max_errors;
    ParseVisitor second = {visit_stmt, r, NULL, 0, 0, NULL};
    parse_each(r->arena, &quiet, src, &second);
}

/* ---------------------------------------------------------- statements */

/* Second pass: resolve a statement. */
static void resolve_stmt(Resolver *r, const AstStmt *s)
{
    if (r->diag->errors > r->diag->max_errors)
        return;
    if (r->reading.len > 1 && s->kind != STMT_CONST && s->kind != STMT_DEF &&
        s->kind != STMT_USE) {
        rs_refuse_in_used(r, s);
        return;
    }
    switch (s->kind) {
    case STMT_MODEL:
        break;
    case STMT_CONST:
        resolve_const(r, s);
        break;
    case STMT_INPUT:
    case STMT_PARAM:
        resolve_decls(r, s);
        break;
    case STMT_SIZE:
        resolve_sizes(r, s);
        break;
    case STMT_DEFINE:
        resolve_define(r, s);
        break;
    case STMT_OUTPUT:
        resolve_output(r, s);
        r->has_output = 1;
        r->last_output = s->span;
        break;
    case STMT_DEF:
        resolve_def(r, s);
        break;
    case STMT_USE:
        resolve_use_stmt(r, s);
        break;
    }
}

/* Give back the resolver's own tables: only the IR outlives it. */
static void release_resolver(Resolver *r)
{
    SymTable *tables[] = {&r->symbols, &r->unparsed};
    for (int i = 0; i < 2; i++)
        arena_release(r->arena, tables[i]->items,
                      (size_t)tables[i]->cap * sizeof *tables[i]->items);
    arena_release(r->arena, r->defined.items,
                  (size_t)r->defined.cap * sizeof *r->defined.items);
    arena_release(r->arena, r->binders.items,
                  (size_t)r->binders.cap * sizeof *r->binders.items);
    arena_release(r->arena, r->scope.items,
                  (size_t)r->scope.cap * sizeof *r->scope.items);
    arena_release(r->arena, r->reading.items,
                  (size_t)r->reading.cap * sizeof *r->reading.items);
    arena_release(r->arena, r->read.items,
                  (size_t)r->read.cap * sizeof *r->read.items);
}

/* After the last statement: what the whole model lacks, then pruning. */
static Ir *finish(Resolver *r)
{
    Diag *diag = r->diag;
    Span start_at = {0, 0};
    if (diag->errors == 0 && r->nstmts == 0)
        diag_error(diag, start_at,
                   "the model is empty: declare params, define values and "
                   "name the output");
    if (diag->errors == 0 && r->nparams == 0)
        diag_error(diag, r->has_output ? r->last_output : start_at,
                   "nothing to differentiate: the model declares no "
                   "'param'");
    if (r->nstmts > 0)
        start_at = r->last_span;
    if (diag->errors == 0 && r->noutputs == 0)
        diag_error(diag, start_at,
                   "the model has no output: add 'output NAME' naming the "
                   "value to differentiate");
    if (diag->errors == 0 && r->ir->output >= 0) {
        settle_outputs(r->ir);
        prune(r);
    }
    release_resolver(r);
    return r->ir;
}

static void visit_outline(void *r, const AstStmt *s)
{
    outline(r, s);
}

Ir *resolve_model(Arena *arena, Diag *diag, const Source *src,
                  const AstModel *m, const char *name, const char *stem)
{
    Resolver r;
    memset(&r, 0, sizeof r);
    r.arena = arena;
    r.diag = diag;
    r.src = src;
    r.ir = ir_new(arena, src);
    Span none = {0, 0};
    VEC_PUSH(arena, r.reading, rs_file_id(src->path, none));
    presize_symbols(&r, src->nlines);
    if (m) {
        for (int i = 0; i < m->nstmts; i++)
            outline(&r, m->stmts[i]);
        start(&r, m->failed_names, m->nfailed, name, stem);
        for (int i = 0; i < m->nstmts; i++)
            resolve_stmt(&r, m->stmts[i]);
        return finish(&r);
    }
    /* No tree given: parse src twice, each statement's tree freed once it
     * is visited, so a model of any length is never held as a tree. */
    rs_read_twice(&r, src, visit_outline, name, stem);
    return finish(&r);
}
