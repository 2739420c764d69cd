/* emit_c.c - writes the model's C source and header; see emit_c.h.  The
 * header and banner words are in emit_header.c, long functions written as
 * parts in emit_parts.c, what they share in emit_internal.h.
 *
 * Layout, for review: a banner saying what produced the file, the runtime
 * helpers the model uses, then <model>_value (the forward statements) and
 * <model>_gradient (the forward statements, then the reverse sweep).  Each
 * IR statement becomes one loop nest over its domain, with the model's index
 * names, under a comment quoting the model line it comes from.  Locals are
 * declared where first written. */
#include "emit_internal.h"
#include "names.h"

#include <ctype.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* Most statements joined into one loop nest. */
#define GROUP_MAX 16

/* The C name of an index var: the row counter for the row var. */
static const char *var_name(const Emitter *e, int32_t var)
{
    if (var == e->row_var && e->row_var >= 0)
        return e->row_name;
    return e->ir->vars.items[var].name;
}

/* ------------------------------------------------------------ helpers */

/* The real type of the emitted code, and the suffix of its literals. */
const char *emit_real_type(const EmitOptions *opt)
{
    return opt->real_float ? "float" : "double";
}

const char *emit_size_failure(const Ir *ir, const EmitOptions *opt)
{
    /* NAN is a float: the cast keeps -Wdouble-promotion quiet */
    return ir->struct_output ? " {\n        " DV_PREFIX "outputs_nan(" DV_PREFIX
                               "out);\n        return;\n    }"
           : opt->real_float ? "\n        return NAN;"
                             : "\n        return (double)NAN;";
}

const char *emit_real_suffix(const EmitOptions *opt)
{
    return opt->real_float ? "f" : "";
}

/* A constant as a C literal; as_float rounds it to float first and writes
 * a float literal, so no double arithmetic enters float code. */
static void format_number(char *s, size_t n, double v, int as_float)
{
    if (as_float)
        v = (float)v;
    if (isnan(v)) {     /* NAN is a float */
        snprintf(s, n, as_float ? "NAN" : "(double)NAN");
        return;
    }
    if (isinf(v)) {
        snprintf(s, n, "%sHUGE_VAL%s", v < 0 ? "-" : "", as_float ? "F" : "");
        return;
    }
    /* the shortest form that reads back as the same double (float), in
     * plain decimals for magnitudes from 1e-4 to 1e15 (90.0, not 9e+01) */
    int plain = fabs(v) >= 1e-4 && fabs(v) < 1e15;
    for (int digits = 1; digits <= 17; digits++) {
        snprintf(s, n, "%.*g", digits, v);
        int same = as_float ? strtof(s, NULL) == (float)v : strtod(s, NULL) == v;
        if (same && !(plain && strchr(s, 'e')))
            break;
    }
    if (!strpbrk(s, ".e"))
        strncat(s, ".0", n - strlen(s) - 1);
    if (as_float)
        strncat(s, "f", n - strlen(s) - 1);
}

/* The literal of constant v, from the emitter's slots when it was
 * written before. */
const char *emit_number(Emitter *e, double v)
{
    uint64_t bits;
    memcpy(&bits, &v, sizeof bits);
    /* the top bits of the product depend on every bit of the double */
    NumberText *slot = &e->numbers[(bits * 0x9e3779b97f4a7c15ULL) >>
                                   (64 - NUMBER_SLOT_BITS)];
    if (!slot->text[0] || slot->bits != bits) {
        slot->bits = bits;
        format_number(slot->text, sizeof slot->text, v, e->opt->real_float);
    }
    return slot->text;
}

/* Copy model text into a C comment: one line, whitespace folded, model
 * comments dropped, and nothing that could end the comment, open another
 * or form a trigraph. */
#define SHOWN_MAX 160    /* characters of model text shown */

static void put_model_text(Buf *b, const Source *src, Span span)
{
    const char *t = src->text + span.off;
    size_t n = span.len, shown = 0;
    char text[2 * SHOWN_MAX];  /* each shown character, a space before it */
    size_t len = 0;
    int space = 0;
    char last = ' ';
    for (size_t i = 0; i < n && shown < SHOWN_MAX; i++) {
        char c = t[i];
        /* most characters are printable and pair with nothing */
        if (!space && c > ' ' && c < 0x7f && c != '#' && c != '\\' &&
            c != '*' && c != '/' && c != '?') {
            text[len++] = c;
            last = c;
            shown++;
            continue;
        }
        if (c == '#') {
            while (i + 1 < n && t[i + 1] != '\n')
                i++;
            continue;
        }
        if (c == ' ' || (unsigned char)c < 0x20) {   /* spaces, controls */
            space = 1;
            continue;
        }
        if (c == '\\' || (unsigned char)c >= 0x7f)
            c = '?';
        /* decide on what is written, so no pair can form "*" "/", "/" "*"
         * or "??" (a trigraph start) */
        if ((space && shown) || (last == '*' && c == '/') ||
            (last == '/' && c == '*') || (last == '?' && c == '?'))
            text[len++] = ' ';
        space = 0;
        text[len++] = c;
        last = c;
        shown++;
    }
    buf_putn(b, text, len);
    if (shown >= SHOWN_MAX)
        buf_put(b, " ...");
}

static void indent(Emitter *e, int depth)
{
    for (int i = 0; i < depth; i++)
        buf_put(e->out, "    ");
}

char *emit_upper(const char *s)
{
    size_t n = strlen(s);
    char *u = malloc(n + 1);
    if (!u)
        exit(3);
    for (size_t i = 0; i <= n; i++)
        u[i] = (char)toupper((unsigned char)s[i]);
    return u;
}

/* ------------------------------------------------------- expressions */

enum { PREC_SELECT = 3, PREC_OR = 4, PREC_AND = 5, PREC_EQUALITY = 9,
       PREC_RELATION = 10, PREC_ADD = 12, PREC_MUL = 13, PREC_UNARY = 14,
       PREC_ATOM = 16 };

static int precedence(const Ir *ir, NodeId id)
{
    const IrNode *n = ir_at(ir, id);
    switch (n->op) {
    case IR_CONST: {
        double v = ir_const_num(n);
        return v < 0 || (v == 0 && signbit(v)) ? PREC_UNARY : PREC_ATOM;
    }
    case IR_NEG: case IR_NOT: return PREC_UNARY;
    case IR_MUL: case IR_DIV: return PREC_MUL;
    case IR_ADD: case IR_SUB: return PREC_ADD;
    case IR_LT: case IR_LE: case IR_GT: case IR_GE: return PREC_RELATION;
    case IR_EQ: case IR_NE: return PREC_EQUALITY;
    case IR_AND: return PREC_AND;
    case IR_OR: return PREC_OR;
    case IR_SELECT: return PREC_SELECT;
    default: return PREC_ATOM;
    }
}

void emit_access(Emitter *e, int32_t array, int32_t tuple)
{
    if (e->roll && roll_access(e, array))
        return;
    const IrArray *a = &e->ir->arrays.items[array];
    IrHome home = ir_home(e->ir, a);
    if (home != HOME_LOCAL) {
        buf_put(e->out, DV_PREFIX);
        buf_put(e->out, emit_home_name(home));
        buf_put(e->out, "->");
        EMIT_USE(e, home);
    } else if (e->parted && e->framed[array]) {
        buf_put(e->out, e->part ? DV_PREFIX "f->" : DV_PREFIX "frame.");
        e->uses_frame = 1;
    }
    buf_put(e->out, a->name);
    int n = ir_tuple_len(e->ir, tuple);
    const int32_t *v = ir_tuple_vars(e->ir, tuple);
    /* a row-local array has only the current row: its row subscript goes */
    int first = a->row_local;
    if (e->storage.slot[array] < 0 && (a->row_local || ir_array_fixed(a))) {
        for (int k = first; k < n; k++) {
            buf_put(e->out, "[");
            buf_put(e->out, var_name(e, v[k]));
            buf_put(e->out, "]");
        }
        return;
    }
    /* a flat array (sized input, or kept in work): row-major position in
     * Horner form, [(i * D1 + j) * D2 + k] */
    if (n == first)
        return;     /* cannot happen: a scalar row is never in work */
    buf_put(e->out, "[");
    for (int k = first + 2; k < n; k++)
        buf_put(e->out, "(");
    for (int k = first; k < n; k++) {
        if (k > first)
            buf_printf(e->out, "%s * %s + ", k > first + 1 ? ")" : "",
                       layout_extent(e->ir, a->dim[k]));
        buf_put(e->out, var_name(e, v[k]));
    }
    buf_put(e->out, "]");
}

static void emit_expr(Emitter *e, NodeId id, int min_prec, int parent_op)
{
    const Ir *ir = e->ir;
    const IrNode *n = ir_at(ir, id);
    if (e->node[id].seen == e->stamp && e->node[id].temp > 0) {
        buf_put(e->out, DV_PREFIX "t");
        buf_put_long(e->out, e->node[id].temp);
        return;
    }
    const IrOpInfo *info = &ir_ops[n->op];
    int p = precedence(ir, id);
    /* && inside || gets parentheses, as readers (and -Wparentheses) like */
    int paren = p < min_prec || (parent_op == IR_OR && n->op == IR_AND);
    if (paren)
        buf_put(e->out, "(");
    switch (info->kind) {
    case OPK_LEAF:
        if (n->op == IR_CONST) {
            if (!e->roll_run || !roll_const(e, id))
                buf_put(e->out, emit_number(e, ir_const_num(n)));
        } else if (n->op == IR_READ) {
            emit_access(e, ir_read_array(n), ir_read_tuple(n));
        } else if (n->op == IR_SIZE) {
            buf_printf(e->out, "(%s)" DV_PREFIX "in->%s",
                       emit_real_type(e->opt),
                       ir->sizes.items[ir_leaf_var(n)].name);
            EMIT_USE(e, HOME_IN);
        } else {
            buf_put(e->out, var_name(e, ir_leaf_var(n)));
        }
        break;
    case OPK_PREFIX:
    case OPK_LOGIC:
    case OPK_INFIX:
    case OPK_COMPARE:
        if (n->nargs == 1) {
            /* -(-x), never --x, which C reads as a decrement */
            const IrNode *a = ir_at(ir, n->arg[0]);
            int sign_first = a->op == IR_NEG ||
                             (a->op == IR_CONST && signbit(ir_const_num(a)));
            buf_put(e->out, info->c_spelling);
            emit_expr(e, n->arg[0], sign_first ? PREC_ATOM + 1 : PREC_UNARY,
                      n->op);
            break;
        }
        emit_expr(e, n->arg[0], p, n->op);
        buf_put(e->out, " ");
        buf_put(e->out, info->c_spelling);
        buf_put(e->out, " ");
        emit_expr(e, n->arg[1], p + 1, n->op);
        break;
    case OPK_SELECT:
        emit_expr(e, n->arg[0], PREC_OR, n->op);
        buf_put(e->out, " ? ");
        emit_expr(e, n->arg[1], 0, n->op);
        buf_put(e->out, " : ");
        emit_expr(e, n->arg[2], PREC_SELECT, n->op);
        break;
    case OPK_CALL:
    case OPK_HELPER:
        if (info->kind == OPK_HELPER)
            buf_put(e->out, DV_PREFIX);
        buf_put(e->out, info->c_spelling);
        if (info->kind == OPK_CALL)     /* <math.h>'s float form: expf */
            buf_put(e->out, emit_real_suffix(e->opt));
        buf_put(e->out, "(");
        for (int i = 0; i < n->nargs; i++) {
            if (i)
                buf_put(e->out, ", ");
            emit_expr(e, n->arg[i], 0, n->op);
        }
        buf_put(e->out, ")");
        break;
    }
    if (paren)
        buf_put(e->out, ")");
}

/* --------------------------------------------------------- statements */

/* Count, for the statement being emitted, how many parent edges reach
 * each node of its expression.  Returns whether this made some node a
 * shared subexpression worth a temporary (used twice, not a leaf, not a
 * condition). */
static int count_uses(Emitter *e, NodeId id)
{
    if (e->node[id].seen == e->stamp)
        return ++e->node[id].uses == 2 && ir_at(e->ir, id)->nargs > 0 &&
               !ir_is_condition(e->ir, id);
    e->node[id].seen = e->stamp;
    e->node[id].uses = 1;
    e->node[id].temp = 0;
    const IrNode *n = ir_at(e->ir, id);
    int shared = 0;
    for (int i = 0; i < n->nargs; i++)
        shared |= count_uses(e, n->arg[i]);
    return shared;
}

/* A subexpression used more than once in a statement is computed once,
 * into a temporary declared before the statement (operands first), so the
 * emitted text stays linear in the size of the expression DAG.  Returns
 * how many were written; visits are stamped in e->visit. */
static int hoist(Emitter *e, NodeId id, int depth)
{
    if (e->node[id].visit == e->visit_stamp)
        return 0;
    e->node[id].visit = e->visit_stamp;
    const IrNode *n = ir_at(e->ir, id);
    int written = 0;
    for (int i = 0; i < n->nargs; i++)
        written += hoist(e, n->arg[i], depth);
    if (e->node[id].uses < 2 || n->nargs == 0 || ir_is_condition(e->ir, id))
        return written;
    indent(e, depth);
    buf_put(e->out, emit_real_type(e->opt));
    buf_put(e->out, " " DV_PREFIX "t");
    buf_put_long(e->out, e->ntemps + 1);
    buf_put(e->out, " = ");
    emit_expr(e, id, 0, -1);
    buf_put(e->out, ";\n");
    e->node[id].temp = ++e->ntemps;
    return written + 1;
}

int emit_is_external(const IrArray *a, const Ir *ir)
{
    return ir_home(ir, a) != HOME_LOCAL;
}

const char *emit_c_type(const Emitter *e, const IrArray *a)
{
    return a->role == ROLE_ARGPOS ? "long" : emit_real_type(e->opt);
}

/* The assignment of one statement at the current point, at depth. */
static void emit_body(Emitter *e, const IrStmt *s, int depth, int scalar_init)
{
    const Ir *ir = e->ir;
    const IrArray *t = &ir->arrays.items[s->target];
    int needs_argpos = s->argpos >= 0 && e->argpos_read[e->fn][s->argpos];
    indent(e, depth);
    const IrNode *x = ir_at(ir, s->expr);
    switch (s->kind) {
    case SK_SET:
        if (scalar_init) {
            buf_put(e->out, emit_c_type(e, t));
            buf_put(e->out, " ");
        }
        emit_access(e, s->target, s->tuple);
        buf_put(e->out, " = ");
        if (t->role == ROLE_ARGPOS)
            buf_put(e->out, "0");     /* positions start at the first point */
        else
            emit_expr(e, s->expr, 0, -1);
        break;
    case SK_ADD:
        emit_access(e, s->target, s->tuple);
        if (x->op == IR_NEG) {
            buf_put(e->out, " -= ");
            emit_expr(e, x->arg[0], 0, -1);
        } else {
            buf_put(e->out, " += ");
            emit_expr(e, s->expr, 0, -1);
        }
        break;
    case SK_MAX:
    case SK_MIN: {
        buf_printf(e->out, "%s " DV_PREFIX "next = ", emit_real_type(e->opt));
        emit_expr(e, s->expr, 0, -1);
        buf_put(e->out, ";\n");
        indent(e, depth);
        buf_printf(e->out, "if (" DV_PREFIX "next %s ",
                   s->kind == SK_MAX ? ">" : "<");
        emit_access(e, s->target, s->tuple);
        buf_put(e->out, ") {\n");
        indent(e, depth + 1);
        emit_access(e, s->target, s->tuple);
        buf_put(e->out, " = " DV_PREFIX "next;\n");
        if (needs_argpos) {
            /* the flat position of the winning point */
            int nr = ir_tuple_len(ir, s->reduced);
            const int32_t *rv = ir_tuple_vars(ir, s->reduced);
            indent(e, depth + 1);
            emit_access(e, s->argpos, s->tuple);
            buf_put(e->out, " = ");
            /* row-major, in Horner form: ((long)a * B + b) * C + c; the
             * cast keeps large domains from overflowing int */
            for (int k = 2; k < nr; k++)
                buf_put(e->out, "(");
            if (nr > 1)
                buf_put(e->out, "(long)");
            for (int k = 0; k < nr; k++) {
                if (k)
                    buf_printf(e->out, "%s * %s + ", k > 1 ? ")" : "",
                               layout_extent(ir, ir->vars.items[rv[k]].extent));
                buf_put(e->out, var_name(e, rv[k]));
            }
            buf_put(e->out, ";\n");
        }
        indent(e, depth);
        buf_put(e->out, "}\n");
        return;
    }
    }
    buf_put(e->out, ";\n");
}

/* The expression a statement's text shows: an addition of a negation is
 * written "-= x", so x, not the negation, appears. */
static NodeId shown_expr(const Ir *ir, const IrStmt *s)
{
    const IrNode *x = ir_at(ir, s->expr);
    return s->kind == SK_ADD && x->op == IR_NEG ? x->arg[0] : s->expr;
}

/* Declare the target of s where it is first written; returns whether the
 * declaration is the assignment itself (a scalar's "double x = ..."). */
static int declare_target(Emitter *e, const IrStmt *s)
{
    const Ir *ir = e->ir;
    const IrArray *t = &ir->arrays.items[s->target];
    int first_dim = t->row_local;   /* a row-local array drops its row */
    if (emit_is_external(t, ir) || e->declared[s->target] ||
        (e->parted && e->framed[s->target]))
        return 0;
    e->declared[s->target] = 1;
    if (t->rank == first_dim && s->kind == SK_SET)
        return 1;
    indent(e, e->base);
    if (e->storage.slot[s->target] >= 0) {
        buf_printf(e->out, "%s *%s = " DV_PREFIX "work + " DV_PREFIX
                   "at[%d];\n", emit_real_type(e->opt), t->name,
                   e->storage.slot[s->target]);
    } else {
        buf_printf(e->out, "%s %s", emit_c_type(e, t), t->name);
        for (int k = first_dim; k < t->rank; k++)
            buf_printf(e->out, "[%d]", t->dim[k]);
        buf_put(e->out, ";\n");
    }
    return 0;
}

static int in_tuple(const Ir *ir, int32_t tuple, int32_t var)
{
    int n = ir_tuple_len(ir, tuple);
    const int32_t *v = ir_tuple_vars(ir, tuple);
    for (int k = 0; k < n; k++)
        if (v[k] == var)
            return 1;
    return 0;
}

/* The score of an access (subscripts tuple) with var as the innermost
 * loop: -STRIDED when var is a subscript but not the last (the access
 * jumps through memory), 1 when it is the last (unit stride), 0 when var
 * is not a subscript (the access does not move). */
#define STRIDED 1000
static int access_score(const Ir *ir, int32_t tuple, int32_t var)
{
    int n = ir_tuple_len(ir, tuple);
    const int32_t *v = ir_tuple_vars(ir, tuple);
    for (int k = 0; k < n; k++)
        if (v[k] == var)
            return k == n - 1 ? 1 : -STRIDED;
    return 0;
}

static int stride_score(const Ir *ir, NodeId id, int32_t var)
{
    const IrNode *x = ir_at(ir, id);
    int score = x->op == IR_READ ? access_score(ir, ir_read_tuple(x), var) : 0;
    for (int i = 0; i < x->nargs; i++)
        score += stride_score(ir, x->arg[i], var);
    return score;
}

static int reads_array(const Ir *ir, NodeId id, int32_t array);

/* The loops of statements s[0..count) (one domain), outermost first: the
 * domain's order, but with the var innermost that makes the fewest
 * accesses jump through memory and, of those, the most read it with unit
 * stride, when that is fewer jumping accesses than the domain's
 * innermost var makes.  A var
 * some statement repeats a write over (a reduced one) moves only when it is
 * the last such var, so every element still accumulates its terms in the
 * model's order and the results are bit for bit those of the domain's
 * order. */
static void loop_order(const Emitter *e, const IrStmt *const *s, int count,
                       int32_t *order)
{
    const Ir *ir = e->ir;
    int n = ir_tuple_len(ir, s[0]->domain);
    memcpy(order, ir_tuple_vars(ir, s[0]->domain), (size_t)n * sizeof *order);
    int best = -1, best_score = 0, last_repeated = -1;
    char repeated[IR_MAX_RANK] = {0};
    for (int k = 0; k < n; k++) {
        for (int g = 0; g < count; g++)
            repeated[k] |= !in_tuple(ir, s[g]->tuple, order[k]);
        if (repeated[k])
            last_repeated = k;
    }
    for (int g = 0; g < count; g++)
        if (reads_array(ir, s[g]->expr, s[g]->target))
            return;
    int score[IR_MAX_RANK];
    for (int k = 0; k < n; k++) {
        score[k] = 0;
        for (int g = 0; g < count; g++)
            score[k] += stride_score(ir, s[g]->expr, order[k]) +
                        access_score(ir, s[g]->tuple, order[k]);
        if (order[k] == e->row_var || (repeated[k] && k != last_repeated))
            continue;
        if (best < 0 || score[k] > best_score) {
            best = k;
            best_score = score[k];
        }
    }
    /* only fewer strided accesses are worth a change */
    if (best < 0 || best_score - score[n - 1] < STRIDED / 2)
        return;
    int32_t moved = order[best];
    memmove(order + best, order + best + 1,
            (size_t)(n - 1 - best) * sizeof *order);
    order[n - 1] = moved;
}

/* s as a C string literal (for #line). */
static void put_string(Buf *b, const char *s)
{
    buf_put(b, "\"");
    for (; *s; s++) {
        if (*s == '"' || *s == '\\')
            buf_put(b, "\\");
        buf_putn(b, s, 1);
    }
    buf_put(b, "\"");
}

/* The marker that put_code turns into a #line directive back to the C
 * file, once the line it lands on is known. */
#define BACK_TO_C "\001\n"

/* CODE's lines to e->out, each after a #line directive naming the model
 * line at ORIGIN (so a compiler's messages and a debugger's steps in them
 * show the model), then the marker that returns to the C file. */
static void put_model_lines(Emitter *e, const Buf *code, Span origin)
{
    int line, col;
    source_line_col(e->ir->src, origin.off, &line, &col);
    if (e->back == e->out && e->back_at == e->out->len) {
        /* nothing since the last group's return to C: take it back */
        buf_unput(e->out, strlen(BACK_TO_C));
    }
    for (size_t at = 0; at < code->len;) {
        const char *nl = memchr(code->data + at, '\n', code->len - at);
        size_t end = nl ? (size_t)(nl - code->data) + 1 : code->len;
        buf_printf(e->out, "#line %d ", line);
        put_string(e->out, e->opt->model_path);
        buf_put(e->out, "\n");
        buf_putn(e->out, code->data + at, end - at);
        at = end;
    }
    buf_put(e->out, BACK_TO_C);
    e->back = e->out;
    e->back_at = e->out->len;
}

/* Text of a function to TO, the markers BACK_TO_C in it replaced by
 * #line directives naming the C file and the line they are on. */
void emit_put_code(const Emitter *e, Buf *to, const char *text, size_t len)
{
    const char *end = text + len;
    if (!e->opt->line_directives) {
        buf_putn(to, text, len);    /* no markers in it */
        return;
    }
    while (text < end) {
        const char *mark = memchr(text, '\001', (size_t)(end - text));
        if (!mark) {
            buf_putn(to, text, (size_t)(end - text));
            return;
        }
        buf_putn(to, text, (size_t)(mark - text));
        /* the directive names the number of the line after it */
        buf_printf(to, "#line %zu ", buf_lines(to) + 2);
        put_string(to, e->opt->source_name);
        buf_put(to, "\n");
        text = mark + strlen(BACK_TO_C);
    }
}

/* The dry run of a function in parts (emit_plan_frame) notes each local
 * array a part refers to; an array two parts refer to goes in the frame. */
void emit_note_storage(Emitter *e, int id)
{
    if (id < 0)
        return;
    if (e->ref_part[id] != e->part && e->ref_part[id] != 0)
        e->framed[id] = 1;
    e->ref_part[id] = e->part;
}

static void note_ref(Emitter *e, int32_t array)
{
    const IrArray *a = &e->ir->arrays.items[array];
    if (a->role == ROLE_INPUT || ir_home(e->ir, a) != HOME_LOCAL)
        return;
    emit_note_storage(e, e->roll ? roll_storage(e, array) : array);
}

void emit_each_read(Emitter *e, NodeId id,
                    void (*on_read)(Emitter *e, void *ctx, int32_t array),
                    void *ctx)
{
    if (e->node[id].visit == e->visit_stamp)
        return;
    e->node[id].visit = e->visit_stamp;
    const IrNode *n = ir_at(e->ir, id);
    if (n->op == IR_READ)
        on_read(e, ctx, ir_read_array(n));
    for (int i = 0; i < n->nargs; i++)
        emit_each_read(e, n->arg[i], on_read, ctx);
}

static void note_read(Emitter *e, void *ctx, int32_t array)
{
    (void)ctx;
    note_ref(e, array);
}

/* The arrays emit_body would write s with: its target, what its
 * expression reads (inline or in temporaries), and a winner's position. */
static void note_stmt_refs(Emitter *e, const IrStmt *s)
{
    note_ref(e, s->target);
    if (s->kind == SK_SET &&
        e->ir->arrays.items[s->target].role == ROLE_ARGPOS)
        return;     /* written as 0, reads nothing */
    e->visit_stamp++;
    emit_each_read(e, s->expr, note_read, NULL);
    if ((s->kind == SK_MAX || s->kind == SK_MIN) && s->argpos >= 0 &&
        e->argpos_read[e->fn][s->argpos])
        note_ref(e, s->argpos);
}

/* Emit statements s[0..n) of one model line and one domain in a single
 * loop nest: a subexpression shared by any of them is computed once per
 * point, into a temporary (the adjoints of one statement often share the
 * factors of its derivative). */
static void emit_group(Emitter *e, const IrStmt *const *s, int count,
                       const char *origin_label)
{
    const Ir *ir = e->ir;
    const IrStmt *s0 = s[0];
    const IrArray *t0 = &ir->arrays.items[s0->target];
    if (t0->role == ROLE_ARGPOS && !e->argpos_read[e->fn][s0->target])
        return;     /* only derivatives read a winner's position */
    if (e->dry) {
        for (int g = 0; g < count; g++)
            note_stmt_refs(e, s[g]);
        return;
    }

    if (s0->origin.off != e->last_origin) {
        int line = source_line_near(ir->src, s0->origin.off, e->last_line);
        e->last_line = line;
        if (e->last_origin != UINT32_MAX)
            buf_put(e->out, "\n");
        e->last_origin = s0->origin.off;
        indent(e, e->base);
        if (s0->note) {
            buf_printf(e->out, "/* %s:%d: %s */\n", e->opt->model_file,
                       line, s0->note);
        } else {
            buf_put(e->out, "/* ");
            buf_put(e->out, origin_label);
            buf_put(e->out, e->opt->model_file);
            buf_put(e->out, ":");
            buf_put_long(e->out, line);
            buf_put(e->out, ": ");
            put_model_text(e->out, ir->src, s0->origin);
            buf_put(e->out, " */\n");
        }
    }
    /* with #line directives the group's code goes through a scratch
     * buffer, so that each of its lines can be pointed at the model */
    Buf *out = e->out, code = {0};
    if (e->opt->line_directives)
        e->out = &code;
    int scalar_init[GROUP_MAX];
    for (int g = 0; g < count; g++)
        scalar_init[g] = declare_target(e, s[g]);

    /* max and min need a block for the comparison, and shared
     * subexpressions one for their temporaries; the loops then get braces
     * so the block reads as the loop body */
    e->stamp++;
    int shared = 0;
    for (int g = 0; g < count; g++)
        shared |= count_uses(e, shown_expr(ir, s[g]));
    int n = ir_tuple_len(ir, s0->domain);
    /* outside loops the temporaries simply precede the statement (their
     * names are unique in the function) */
    int loops = n - (s0->row_var >= 0 && e->row_var >= 0);
    int block = s0->kind == SK_MAX || s0->kind == SK_MIN ||
                ((shared || count > 1) && loops > 0);
    int depth = e->base;
    if (block && loops == 0 && n > 0) {
        /* a max over the row alone: braces keep its dvs_next local */
        indent(e, depth++);
        buf_put(e->out, "{\n");
    }
    int32_t v[IR_MAX_RANK];
    loop_order(e, s, count, v);
    for (int k = 0; k < n; k++) {
        const IrIndexVar *iv = &ir->vars.items[v[k]];
        if (v[k] == e->row_var)
            continue;       /* the row block's loop */
        indent(e, depth++);
        int sized = IR_EXTENT_IS_SIZE(iv->extent);
        buf_printf(e->out, "for (%s %s = 0; %s < %s; %s++)%s\n",
                   sized ? "long" : "int", iv->name, iv->name,
                   layout_extent(ir, iv->extent), iv->name, block ? " {" : "");
        if (sized)
            EMIT_USE(e, HOME_IN);
    }
    if (shared) {
        e->visit_stamp++;
        for (int g = 0; g < count; g++)
            hoist(e, shown_expr(ir, s[g]), depth);
    }
    for (int g = 0; g < count; g++)
        emit_body(e, s[g], depth, scalar_init[g]);
    while (block && depth > e->base) {
        indent(e, --depth);
        buf_put(e->out, "}\n");
    }
    if (e->out == &code) {
        e->out = out;
        put_model_lines(e, &code, s0->origin);
        buf_free(&code);
    }
}

void emit_stmt(Emitter *e, const IrStmt *s, const char *origin_label)
{
    emit_group(e, &s, 1, origin_label);
}

static int reads_array(const Ir *ir, NodeId id, int32_t array)
{
    const IrNode *n = ir_at(ir, id);
    if (n->op == IR_READ && ir_read_array(n) == array)
        return 1;
    for (int i = 0; i < n->nargs; i++)
        if (reads_array(ir, n->arg[i], array))
            return 1;
    return 0;
}

/* Whether b can join a loop nest with the statements g[0..n): the same
 * line and domain, plain assignments, and no member reads what another
 * writes (so the order of points does not matter); two writes to one
 * array must both add. */
static int fusable(const Ir *ir, const IrStmt *const *g, int n,
                   const IrStmt *b)
{
    const IrStmt *a = g[0];
    if (n >= GROUP_MAX || b->domain != a->domain ||
        b->origin.off != a->origin.off || b->row_var != a->row_var ||
        (b->kind != SK_SET && b->kind != SK_ADD) ||
        ir->arrays.items[b->target].role == ROLE_ARGPOS ||
        ir_tuple_len(ir, b->domain) == 0)
        return 0;
    for (int i = 0; i < n; i++) {
        if (reads_array(ir, g[i]->expr, b->target) ||
            reads_array(ir, b->expr, g[i]->target))
            return 0;
        if (g[i]->target == b->target &&
            (g[i]->kind != SK_ADD || b->kind != SK_ADD))
            return 0;
    }
    return 1;
}

static int is_zeroing(const Ir *ir, const IrStmt *s);

/* Emit list[from..to) in order, joining neighbours that fusable() allows
 * into one loop nest; a zeroing statement between them goes first. */
static int skipped(const Emitter *e, const IrStmtList *list, int i)
{
    return e->skip && list == e->fwd && e->skip[i];
}

static void emit_seq(Emitter *e, const IrStmtList *list, int from, int to,
                     const char *label)
{
    const Ir *ir = e->ir;
    int l = list == e->fwd ? 0 : 1;
    for (int i = from; i < to;) {
        if (skipped(e, list, i)) {
            i++;
            continue;
        }
        int run = e->roll ? roll_run_at(e->roll, l, i) : -1;
        if (run >= 0) {
            roll_emit(e, run, label);
            i += e->roll->runs.items[run].repeats * e->roll->runs.items[run].period;
            continue;
        }
        const IrStmt *g[GROUP_MAX];
        const IrStmt *zero[GROUP_MAX];
        int n = 0, nz = 0, j = i + 1;
        g[n++] = &list->items[i];
        if ((g[0]->kind == SK_SET || g[0]->kind == SK_ADD) &&
            ir->arrays.items[g[0]->target].role != ROLE_ARGPOS &&
            ir_tuple_len(ir, g[0]->domain) > 0) {
            for (; j < to && !skipped(e, list, j); j++) {
                const IrStmt *b = &list->items[j];
                if (is_zeroing(ir, b) && b->origin.off == g[0]->origin.off &&
                    nz < GROUP_MAX && j + 1 < to) {
                    zero[nz++] = b;
                    continue;
                }
                if (!fusable(ir, g, n, b))
                    break;
                g[n++] = b;
            }
            /* zeroing statements after the last member stay where they are */
            while (nz > 0 && zero[nz - 1] > g[n - 1]) {
                nz--;
                j--;
            }
        }
        emit_part_break(e, n + nz);
        int in_rows = e->row_var >= 0;
        if (n == 1) {
            if (in_rows)
                e->row_var = g[0]->row_var;
            emit_stmt(e, g[0], label);
            i++;
            continue;
        }
        for (int z = 0; z < nz; z++) {
            if (in_rows)
                e->row_var = zero[z]->row_var;
            emit_stmt(e, zero[z], label);
        }
        if (in_rows)
            e->row_var = g[0]->row_var;
        emit_group(e, g, n, label);
        i = j;
    }
}

/* The row block's loop counter: the name of the first row statement's row
 * var, unless another var of a row statement has that name. */
static const char *row_counter(const Ir *ir)
{
    const char *name = NULL;
    for (int i = 0; i < ir->forward.len && !name; i++)
        if (ir->forward.items[i].row_var >= 0)
            name = ir->vars.items[ir->forward.items[i].row_var].name;
    const IrStmtList *lists[2] = {&ir->forward, &ir->reverse};
    for (int l = 0; l < 2; l++)
        for (int i = 0; i < lists[l]->len; i++) {
            const IrStmt *s = &lists[l]->items[i];
            int n = ir_tuple_len(ir, s->domain);
            const int32_t *v = ir_tuple_vars(ir, s->domain);
            for (int k = 0; k < n; k++)
                if (v[k] != s->row_var &&
                    strcmp(ir->vars.items[v[k]].name, name) == 0)
                    return DV_PREFIX "row";
        }
    return name;
}

static void mark_reads(const Ir *ir, NodeId id, char *read)
{
    const IrNode *n = ir_at(ir, id);
    if (n->op == IR_READ)
        read[ir_read_array(n)] = 1;
    for (int i = 0; i < n->nargs; i++)
        mark_reads(ir, n->arg[i], read);
}

/* The loop over the rows: list[from..to) (its zeroing statements go
 * before the loop); forward[fwd_from..fwd_to) first when the forward and
 * reverse rows share one pass; with recompute, the per-row values the
 * reverse statements read are computed again first (only one row of them
 * exists at a time). */
static void emit_rows(Emitter *e, const IrStmtList *list, int from, int to,
                      int recompute, int fwd_from, int fwd_to,
                      const char *label)
{
    const Ir *ir = e->ir;
    emit_part_break(e, to - from + (fwd_to > fwd_from ? fwd_to - fwd_from : 0));
    for (int i = from; i < to; i++)
        if (list->items[i].row_var < 0)
            emit_stmt(e, &list->items[i], label);
    for (int i = 0; i < ir->arrays.len; i++)
        if (ir->arrays.items[i].row_local)
            e->declared[i] = 0;     /* a new scope */
    buf_printf(e->out, "\n    for (long %s = 0; %s < %s; %s++) {\n",
               e->row_name, e->row_name,
               layout_extent(ir, IR_EXTENT_OF_SIZE(ir->row_size)), e->row_name);
    EMIT_USE(e, HOME_IN);
    e->base = 2;
    e->last_origin = UINT32_MAX;
    for (int i = fwd_from; i >= 0 && i < fwd_to; i++) {
        e->row_var = e->fwd->items[i].row_var;
        emit_stmt(e, &e->fwd->items[i], "");
    }
    if (fwd_from >= 0 && fwd_from < fwd_to) {
        /* the row's adjoints start a new paragraph with their own labels */
        buf_put(e->out, "\n");
        e->last_origin = UINT32_MAX;
    }
    if (recompute) {
        char *need = calloc((size_t)ir->arrays.len + 1, 1);
        char *redo = calloc((size_t)e->fwd->len + 1, 1);
        if (!need || !redo)
            exit(3);
        for (int i = from; i < to; i++)
            if (list->items[i].row_var >= 0)
                mark_reads(ir, list->items[i].expr, need);
        for (int i = e->fwd->len - 1; i >= 0; i--) {
            const IrStmt *s = &e->fwd->items[i];
            if (s->row_var >= 0 && ir->arrays.items[s->target].row_local &&
                need[s->target]) {
                redo[i] = 1;
                mark_reads(ir, s->expr, need);
            }
        }
        int any = 0;
        for (int i = 0; i < e->fwd->len; i++)
            if (redo[i]) {
                e->row_var = e->fwd->items[i].row_var;
                emit_stmt(e, &e->fwd->items[i], "");
                any = 1;
            }
        free(need);
        free(redo);
        if (any)
            buf_put(e->out, "\n");
        e->last_origin = UINT32_MAX;
    }
    for (int i = from; i < to;) {
        if (list->items[i].row_var < 0) {
            i++;
            continue;
        }
        int k = i;
        while (k < to && list->items[k].row_var >= 0)
            k++;
        e->row_var = list->items[i].row_var;
        emit_seq(e, list, i, k, label);
        i = k;
    }
    e->row_var = -1;
    e->base = 1;
    buf_put(e->out, "    }\n");
    e->last_origin = UINT32_MAX;
}

/* A statement that only zeroes an array outside the rows. */
static int is_zeroing(const Ir *ir, const IrStmt *s)
{
    return s->row_var < 0 && s->kind == SK_SET &&
           ir_at(ir, s->expr)->op == IR_CONST;
}

/* The end of the run of row statements starting at i, with the zeroing
 * statements among them (which move before the block). */
static int row_run_end(const Ir *ir, const IrStmtList *list, int i)
{
    int j = i;
    for (;;) {
        while (j < list->len && list->items[j].row_var >= 0)
            j++;
        int k = j;
        while (k < list->len && is_zeroing(ir, &list->items[k]))
            k++;
        if (k == j || k == list->len || list->items[k].row_var < 0)
            return j;
        j = k;
    }
}

/* Emit list[from..to); row statements go into row blocks. */
static void emit_list(Emitter *e, const IrStmtList *list, int from, int to,
                      int recompute, const char *label)
{
    for (int i = from; i < to;) {
        if (list->items[i].row_var < 0 || e->ir->row_size < 0) {
            int k = i;
            while (k < to && (list->items[k].row_var < 0 ||
                              e->ir->row_size < 0))
                k++;
            emit_seq(e, list, i, k, label);
            i = k;
            continue;
        }
        int j = row_run_end(e->ir, list, i);
        emit_rows(e, list, i, j, recompute, -1, -1, label);
        i = j;
    }
}

/* Where the gradient can do the rows in one pass: forward[fwd_from..fwd_to)
 * are the row statements, reverse[rev_from..rev_to) the reverse ones. */
typedef struct OnePass {
    int fwd_from, fwd_to, rev_from, rev_to;
} OnePass;

/* One pass suffices when no adjoint computed before or inside the rows
 * reads anything that needs all the rows (a sum over them, or a value
 * computed after them): then each row's adjoints are known while the row
 * is at hand, and the rows are not read twice. */
static int one_pass(const Emitter *e, OnePass *op)
{
    const Ir *ir = e->ir;
    const IrStmtList *fwd = e->fwd, *rev = e->rev;
    if (ir->row_size < 0 || !rev)
        return 0;
    int f = 0;
    while (f < fwd->len && fwd->items[f].row_var < 0)
        f++;
    int fend = f;
    while (fend < fwd->len && fwd->items[fend].row_var >= 0)
        fend++;
    int r = 0;
    while (r < rev->len && rev->items[r].row_var < 0)
        r++;
    if (f == fwd->len || r == rev->len)
        return 0;
    /* the zeroing statements just before the run belong to it */
    while (r > 0 && is_zeroing(ir, &rev->items[r - 1]))
        r--;
    int rend = row_run_end(ir, rev, r);
    for (int i = rend; i < rev->len; i++)
        if (rev->items[i].row_var >= 0)
            return 0;       /* a second run */
    char *late = calloc((size_t)ir->arrays.len + 1, 1);
    if (!late)
        exit(3);
    for (int i = f; i < fwd->len; i++) {
        const IrStmt *s = &fwd->items[i];
        if (i >= fend || !ir->arrays.items[s->target].row_local)
            late[s->target] = 1;
        if (s->argpos >= 0)
            late[s->argpos] = 1;
    }
    int ok = 1;
    for (int i = 0; i < rend && ok; i++)
        ok = !ir_reads_marked(ir, rev->items[i].expr, late);
    free(late);
    op->fwd_from = f;
    op->fwd_to = fend;
    op->rev_from = r;
    op->rev_to = rend;
    return ok;
}

/* ---------------------------------------------------------- functions */

/* When the rows take two passes, the reverse pass computes each row's
 * values again; a row's tangent that no later forward statement reads is
 * then left out of the first pass (e->skip), where it would be set but
 * never used. */
static void skip_unread_tangents(Emitter *e)
{
    const Ir *ir = e->ir;
    const IrStmtList *fwd = e->fwd;
    char *need = calloc((size_t)ir->arrays.len + 1, 1);
    e->skip = calloc((size_t)fwd->len + 1, 1);
    if (!need || !e->skip)
        exit(3);
    for (int i = fwd->len - 1; i >= 0; i--) {
        const IrStmt *s = &fwd->items[i];
        const IrArray *t = &ir->arrays.items[s->target];
        e->skip[i] = s->row_var >= 0 && t->row_local &&
                     t->role == ROLE_TANGENT && !need[s->target];
        if (!e->skip[i])
            mark_reads(ir, s->expr, need);
    }
    free(need);
}

/* The statements of a function, in order, to e->out (or its parts). */
void emit_sweeps(Emitter *e)
{
    const Ir *ir = e->ir;
    e->used_homes = 0;
    e->uses_frame = 0;
    e->ntemps = 0;
    e->base = 1;
    e->row_var = -1;
    e->last_origin = UINT32_MAX;
    e->part = 1;
    e->part_stmts = 0;
    memset(e->declared, 0, (size_t)roll_storage_count(e));
    if (e->roll)    /* values kept in loops' slots are never declared */
        for (int i = 0; i < ir->arrays.len; i++)
            e->declared[i] |= e->roll->home[i].slot >= 0;
    const IrStmtList *fwd = e->fwd, *rev = e->rev;
    OnePass op;
    if (one_pass(e, &op)) {
        /* forward before the rows; the adjoints that need nothing from
         * the rows; one loop doing each row's value and adjoints; the
         * forward after the rows; the rest of the reverse sweep */
        emit_list(e, fwd, 0, op.fwd_from, 0, "");
        emit_sweep_heading(e, "    /* The reverse sweep, last statement first; the "
                         "rows' values and\n     * adjoints share one pass. */\n");
        emit_list(e, rev, 0, op.rev_from, 0, "adjoint of: ");
        emit_rows(e, rev, op.rev_from, op.rev_to, 0, op.fwd_from, op.fwd_to,
                  "adjoint of: ");
        emit_list(e, fwd, op.fwd_to, fwd->len, 0, "");
        e->last_origin = UINT32_MAX;
        emit_list(e, rev, op.rev_to, rev->len, 0, "adjoint of: ");
    } else {
        if (rev && ir->row_size >= 0)
            skip_unread_tangents(e);
        emit_list(e, fwd, 0, fwd->len, 0, "");
        free(e->skip);
        e->skip = NULL;
        if (rev) {
            emit_sweep_heading(e, "    /* The reverse sweep: adjoints, last "
                             "statement first. */\n");
            emit_list(e, rev, 0, rev->len, 1, "adjoint of: ");
        }
    }
}

static void emit_function(Emitter *e, Function fn, Buf *c)
{
    const Ir *ir = e->ir;
    Buf body = {0};
    e->fn = fn;
    e->text = c;
    e->row_name = ir->row_size >= 0 ? row_counter(ir) : NULL;
    e->fwd = e->lists[fn][0];
    e->rev = e->lists[fn][1];
    long nstmts = e->fwd->len + (e->rev ? e->rev->len : 0);
    e->parted = nstmts > 4 * e->opt->part_size;
    if (e->parted && (e->roll = roll_plan(e)) != NULL) {
        /* the loops' slots are storage past the arrays */
        size_t n = (size_t)roll_storage_count(e) + 1;
        e->declared = realloc(e->declared, n);
        e->framed = realloc(e->framed, n);
        e->ref_part = realloc(e->ref_part, n * sizeof *e->ref_part);
        if (!e->declared || !e->framed || !e->ref_part)
            exit(3);
        e->parted = nstmts - e->roll->saved > 4 * e->opt->part_size;
    }
    if (e->parted) {
        emit_plan_frame(e, fn);
        emit_frame(e, fn);
        e->out = &e->part_body;
        emit_sweeps(e);
        emit_close_part(e);
        emit_part_calls(e, fn, &body);
        e->out = &body;
    } else {
        e->out = &body;
        emit_sweeps(e);
    }
    if (ir->struct_output) {
        buf_put(&body, "}\n");     /* the statements filled *out */
    } else {
        int32_t none = ir_tuple((Ir *)ir, NULL, 0);
        if (fn == FN_TANGENT) {
            buf_put(&body, "\n    *" DV_PREFIX "dvalue = ");
            if (ir->arrays.items[ir->output].varied)
                emit_access(e, ir->arrays.items[ir->output].tangent, none);
            else
                buf_printf(&body, "0.0%s",  /* the output does not depend on p */
                           emit_real_suffix(e->opt));
            buf_put(&body, ";");
        }
        buf_put(&body, "\n    return ");
        emit_access(e, ir->output, none);
        buf_put(&body, ";\n}\n");
    }

    buf_put(c, "\n");
    emit_signature(c, ir, &e->storage, fn, DV_PREFIX, emit_real_type(e->opt));
    buf_put(c, "\n{\n");
    if (e->storage.uses_work && e->storage.has_input)
        EMIT_USE(e, HOME_IN);   /* the size check reads it */
    emit_unused_args(c, e, fn);
    if (e->storage.uses_work) {
        /* sizes are checked before anything is computed or written */
        int work_read = 0;
        for (int i = 0; i < ir->arrays.len; i++)
            work_read |= e->declared[i] && e->storage.slot[i] >= 0;
        if (!work_read)
            buf_put(c, "    (void)" DV_PREFIX "work;\n");
        layout_emit_pointers(c, &e->storage, emit_size_failure(ir, e->opt));
    }
    emit_put_code(e, c, body.data, body.len);
    buf_free(&body);
    roll_free(e->roll);
    e->roll = NULL;
}

/* What the functions of a sized model with an output struct do when the
 * sizes are invalid. */
static void emit_outputs_nan(Buf *c, const Ir *ir, const char *real)
{
    const char *m = ir->model;
    char *M = emit_upper(m);
    buf_printf(c, "\n/* Invalid sizes: every output is NaN. */\n"
                  "static void " DV_PREFIX "outputs_nan(%s_output *" DV_PREFIX
                  "out)\n{\n"
                  "    %s_output_flat " DV_PREFIX "nan;\n"
                  "    for (int " DV_PREFIX "i = 0; " DV_PREFIX "i < "
                  "%s_OUTPUT_COUNT; " DV_PREFIX "i++)\n"
                  "        " DV_PREFIX "nan.v[" DV_PREFIX "i] = (%s)NAN;\n"
                  "    *" DV_PREFIX "out = " DV_PREFIX "nan.o;\n}\n",
               m, m, M, real);   /* NAN is a float */
    free(M);
}

void emit_c(const Ir *ir, const EmitOptions *opt, Buf *c, Buf *h)
{
    const char *m = ir->model;
    char *M = emit_upper(m);
    Emitter e;
    memset(&e, 0, sizeof e);
    e.ir = ir;
    e.opt = opt;
    e.storage = layout_plan(ir, opt->stack_limit);
    emit_header(ir, opt, &e.storage, h);

    e.declared = calloc((size_t)ir->arrays.len + 1, 1);
    char *reached = calloc((size_t)ir->nodes.len + 1, 1);
    e.node = calloc((size_t)ir->nodes.len + 1, sizeof *e.node);
    e.ref_part = calloc((size_t)ir->arrays.len + 1, sizeof *e.ref_part);
    e.framed = calloc((size_t)ir->arrays.len + 1, 1);
    if (!e.declared || !reached || !e.node || !e.ref_part || !e.framed)
        exit(3);
    /* what each function reads: the runtime helpers of the emitted ones
     * are copied, and winners found where they are read */
    const IrStmtList *const lists[FN_COUNT][2] = {
        {&ir->forward, NULL}, {&ir->forward, &ir->reverse},
        {&ir->tangent, NULL}, {&ir->hv_forward, &ir->hv_reverse},
        {NULL, NULL}, {&ir->forward, &ir->reverse}, {NULL, NULL}};
    memcpy(e.lists, lists, sizeof lists);
    for (int fn = 0; fn < FN_COUNT; fn++) {
        e.argpos_read[fn] = calloc((size_t)ir->arrays.len + 1, 1);
        if (!e.argpos_read[fn])
            exit(3);
        if (!(opt->emit & (1 << fn)))
            continue;   /* only a function being written reads its flags */
        char *mine = calloc((size_t)ir->nodes.len + 1, 1);
        if (!mine)
            exit(3);
        for (int l = 0; l < 2 && lists[fn][l]; l++)
            ir_mark_reached(ir, lists[fn][l], mine);
        for (int i = 0; i < ir->nodes.len; i++) {
            const IrNode *n = &ir->nodes.items[i];
            if (mine[i] && n->op == IR_READ &&
                ir->arrays.items[ir_read_array(n)].role == ROLE_ARGPOS)
                e.argpos_read[fn][ir_read_array(n)] = 1;
            reached[i] |= mine[i];
        }
        free(mine);
    }

    buf_printf(c,
               "/* %s - %s of the model %s (%s).\n"
               " * Generated by dervish %s; edit the model, not this file.\n"
               " * Needs only <math.h> (link with -lm); no globals, no heap. */\n"
               "#include \"%s\"\n\n#include <math.h>\n\n"
               "/* %s_param is used as a flat vector: it must hold exactly\n"
               " * %s_PARAM_COUNT %ss, with no padding. */\n"
               "typedef char " DV_PREFIX "param_is_flat[sizeof(%s_param) == "
               "%s_PARAM_COUNT * sizeof(%s) ? 1 : -1];\n",
               opt->source_name, emit_what_is_emitted(ir, opt->emit), m,
               opt->model_file, opt->version, opt->header_name, m, M,
               emit_real_type(opt), m, M, emit_real_type(opt));
    if (ir->struct_output)
        buf_printf(c, "typedef char " DV_PREFIX "output_is_flat[sizeof(%s_output) "
                      "== %s_OUTPUT_COUNT * sizeof(%s) ? 1 : -1];\n",
                   m, M, emit_real_type(opt));
    emit_helpers(ir, reached, &e.storage, opt->real_float, c);
    if (e.storage.uses_work) {
        layout_emit(c, ir, &e.storage, emit_real_type(opt));
        if (ir->struct_output)
            emit_outputs_nan(c, ir, emit_real_type(opt));
    }
    for (int i = 0; i < FN_COUNT; i++) {
        Function fn = emit_order[i];
        if (opt->emit & (1 << fn))
            (fn == FN_HESSIAN    ? emit_hessian
             : fn == FN_JACOBIAN ? emit_jacobian
                                 : emit_function)(&e, fn, c);
    }
    for (int fn = 0; fn < FN_COUNT; fn++)
        free(e.argpos_read[fn]);
    free(e.declared);
    free(reached);
    free(e.node);
    free(e.ref_part);
    free(e.framed);
    buf_free(&e.part_body);
    layout_free(&e.storage);
    free(M);
}
