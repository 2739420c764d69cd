/* resolve_def.c - def functions as the resolver meets their calls:
 * which def a call names (with recursion and arity errors), and how large
 * its expansion grows, kept within the parser's depth and MAX_EXPANDED. */
#include "resolve_internal.h"
#include "parse_state.h"

#include <string.h>

/* Most operations the def calls of one definition may expand to: later
 * passes walk each statement's expression as a tree, and nested calls can
 * make that tree exponentially larger than the text. */
#define MAX_EXPANDED 100000

DefInfo *rs_new_def(Resolver *r, const char *name, Span name_span)
{
    DefInfo *d = arena_alloc(r->arena, sizeof *d);
    d->name = rs_copy_name(r, name);
    d->name_span = name_span;
    return d;
}

/* The parameter of D that NAME names, or -1 (also when D is NULL). */
int rs_param_index(const DefInfo *d, const char *name)
{
    for (int i = 0; d && i < d->nparams; i++)
        if (strcmp(d->params[i], name) == 0)
            return i;
    return -1;
}

void rs_note_def(Resolver *r, const DefInfo *d)
{
    diag_note(r->diag, d->name_span, "'%s' is defined here", d->name);
}

void rs_arity_error(Resolver *r, const AstExpr *e, int want)
{
    diag_error(r->diag, e->span, "'%s' takes %d argument%s but %d %s given",
               e->name, want, want == 1 ? "" : "s", e->nargs,
               e->nargs == 1 ? "is" : "are");
}

/* Whether a call passes D as many arguments as it has parameters;
 * reports (at the call, with a note at the def) when it does not. */
int rs_arity_matches(Resolver *r, const AstExpr *e, const DefInfo *d)
{
    if (e->nargs == d->nparams)
        return 1;
    rs_arity_error(r, e, d->nparams);
    rs_note_def(r, d);
    rs_fail(r);
    return 0;
}

typedef VEC(DefInfo *) DefPath;

/* Whether FROM, a def not reached yet, calls TARGET, directly or through
 * other defs not reached yet, as the first pass saw their bodies.  If so,
 * PATH holds the defs from FROM on and *at the call that reaches TARGET. */
static int calls_back(Resolver *r, DefInfo *from, const DefInfo *target,
                      DefPath *path, Span *at)
{
    from->stamp = r->stamp;
    VEC_PUSH(r->arena, *path, from);
    for (int i = 0; i < from->ncalls; i++) {
        Symbol *s = rs_table_find(&r->symbols, from->calls[i]);
        if (!s || s->kind != SYM_LATER || !s->def)
            continue;
        if (s->def == target) {
            *at = from->call_spans[i];
            return 1;
        }
        if (s->def->stamp != r->stamp &&
            calls_back(r, s->def, target, path, at))
            return 1;
    }
    path->len--;
    return 0;
}

/* A call that would make the def being checked recursive: reported with
 * the cycle, e.g. "f -> g -> f", and the call in the last def that
 * closes it. */
static void recursion_error(Resolver *r, const AstExpr *e,
                            const DefPath *path, Span at)
{
    const DefInfo *d = r->def;
    char *chain = arena_printf(r->arena, "%s", d->name);
    for (int i = 0; i < path->len; i++) {
        chain = arena_printf(r->arena, "%s -> %s", chain,
                             path->items[i]->name);
        path->items[i]->cyclic = 1;     /* its calls on the cycle stay quiet */
    }
    chain = arena_printf(r->arena, "%s -> %s", chain, d->name);
    diag_error(r->diag, e->name_span,
               "'%s' calls itself (%s): a def is expanded where it is "
               "called, so it cannot be recursive", d->name, chain);
    if (path->len > 0)
        diag_note(r->diag, at, "'%s' calls '%s' here",
                  path->items[path->len - 1]->name, d->name);
}

/* The def a call of a name that is not a builtin expands, or NULL after
 * reporting why there is none (quietly when its definition failed). */
const DefInfo *rs_def_called(Resolver *r, const AstExpr *e)
{
    Symbol *s = rs_lookup(r, e->name);
    Symbol *later = rs_table_find(&r->symbols, e->name);
    if (s && s->kind == SYM_DEF && !s->failed)
        return s->def;
    if (s && s->kind == SYM_DEF) {
        /* its definition was reported */
    } else if (s) {
        diag_error(r->diag, e->name_span,
                   "'%s' is a value, not a function; use [ ] to "
                   "subscript an array", e->name);
    } else if (r->def && strcmp(e->name, r->def->name) == 0) {
        DefPath none = {0};
        recursion_error(r, e, &none, e->name_span);
    } else if (later && later->def && later->def->cyclic) {
        /* part of a cycle reported already */
    } else if (later && later->def) {
        DefPath path = {0};
        Span at = {0, 0};
        r->stamp++;
        if (r->def && calls_back(r, later->def, r->def, &path, &at)) {
            recursion_error(r, e, &path, at);
        } else {
            diag_error(r->diag, e->name_span,
                       "'%s' is defined on a later line: define it before "
                       "this line", e->name);
            rs_note_def(r, later->def);
        }
        arena_release(r->arena, path.items,
                      (size_t)path.cap * sizeof *path.items);
    } else if (rs_reduction_kind(e->name) >= 0) {
        diag_error(r->diag, e->span,
                   "'%s' reduces over an index: write %s(i: ...)", e->name,
                   e->name);
    } else if (!rs_failed_earlier(r, e->name)) {
        diag_error(r->diag, e->name_span, "unknown function '%s'", e->name);
    }
    rs_fail(r);
    return NULL;
}

/* The def a call expands, when it names one it can expand; quiet. */
const DefInfo *rs_expandable(Resolver *r, const AstExpr *e)
{
    if (e->kind != AST_CALL || ir_builtin(e->name) >= 0)
        return NULL;
    Symbol *s = rs_lookup(r, e->name);
    return s && s->kind == SYM_DEF && !s->failed &&
                   s->def->nparams == e->nargs ? s->def : NULL;
}

/* A call of D at depth LEVEL of its statement.  Outside a def's body the
 * expansion must stay within the limits the parser sets for written
 * expressions (later passes recurse on it) and MAX_EXPANDED nodes in all;
 * the first call past a limit is reported, with a note at its def. */
static Measure measure_call(Resolver *r, const AstExpr *e, const DefInfo *d,
                            int level)
{
    Measure m = {d->depth, d->size};
    r->call_depth++;
    for (int i = 0; i < e->nargs; i++) {
        Measure a = rs_measure(r, e->args[i], level + 1);
        if (d->param_uses[i] > 0) {
            if (d->param_depth[i] + a.depth > m.depth)
                m.depth = d->param_depth[i] + a.depth;
            m.size += d->param_uses[i] * a.size;
        }
    }
    r->call_depth--;
    if (r->def || r->too_big)
        return m;
    if (level - 1 + m.depth > PARSE_MAX_DEPTH) {
        diag_error(r->diag, e->span,
                   "expanding '%s' here nests the expression more than %d "
                   "levels deep: split it into named steps", d->name,
                   PARSE_MAX_DEPTH);
        r->too_big = 1;
    } else if (r->call_depth == 0 &&
               (r->expanded += m.size) > MAX_EXPANDED) {
        diag_error(r->diag, e->span,
                   "with '%s' expanded here, this statement has more than "
                   "%d operations: split it into named steps", d->name,
                   MAX_EXPANDED);
        r->too_big = 1;
    }
    if (r->too_big)
        rs_note_def(r, d);
    return m;
}

Measure rs_measure(Resolver *r, const AstExpr *e, int level)
{
    Measure m = {1, 1};
    const DefInfo *d = rs_expandable(r, e);
    if (d)
        return measure_call(r, e, d, level);
    if (e->kind == AST_NAME && rs_param_index(r->def, e->name) >= 0) {
        m.depth = m.size = 0;
        return m;
    }
    if (e->kind == AST_REDUCE) {
        /* the body becomes statements of its own */
        m.size += rs_measure(r, e->body, 1).size;
        return m;
    }
    for (int i = 0; i < e->nargs && e->kind != AST_SUBSCRIPT; i++) {
        Measure c = rs_measure(r, e->args[i], level + 1);
        if (1 + c.depth > m.depth)
            m.depth = 1 + c.depth;
        m.size += c.size;
    }
    return m;
}

/* In the body of the def being checked: the depth of the deepest use of
 * parameter P below the root, and (as size) the number of its uses. */
Measure rs_param_uses(Resolver *r, const AstExpr *e, int p)
{
    Measure u = {0, 0};
    if (e->kind == AST_NAME) {
        u.size = rs_param_index(r->def, e->name) == p;
        return u;
    }
    const DefInfo *d = rs_expandable(r, e);
    for (int i = 0; i < e->nargs; i++) {
        Measure a = rs_param_uses(r, e->args[i], p);
        double below = d ? d->param_depth[i] : 1;
        double times = d ? d->param_uses[i] : 1;
        if (a.size > 0 && times > 0) {
            if (below + a.depth > u.depth)
                u.depth = below + a.depth;
            u.size += times * a.size;
        }
    }
    return u;
}

/* Whether the def calls of a statement's expression expand within the
 * limits; reports the first call past one. */
int rs_expansion_fits(Resolver *r, const AstExpr *e)
{
    r->expanded = 0;
    r->too_big = 0;
    r->call_depth = 0;
    rs_measure(r, e, 1);
    return !r->too_big;
}
