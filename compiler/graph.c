/* graph.c - Graphviz DOT for `dervish graph`; see graph.h.
 *
 * One node per value the emitted code keeps (param, input, defined value,
 * output) and one per operation of each forward statement, in a cluster per
 * model line.  Reduction accumulators are the compiler's, not the model's:
 * a reduction is drawn as one funnel-shaped operation, and later reads of
 * its accumulator start from that funnel. */
#include "graph.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

/* The look of each kind of node: roles differ in fill, border and corners,
 * so they stay apart when printed in grey, and the label names the role. */
#define STYLE_PARAM "shape=box, style=\"rounded,filled,bold\", " \
                    "fillcolor=\"#f4c95d\", color=\"#8a5a00\""
#define STYLE_INPUT "shape=box, style=\"rounded,dashed\", color=\"#4d4d4d\""
#define STYLE_VALUE "shape=box, style=\"rounded,filled\", " \
                    "fillcolor=\"#d6e6f5\", color=\"#4a6f96\""
#define STYLE_OUTPUT "shape=box, style=\"filled,bold\", peripheries=2, " \
                     "fillcolor=\"#9fd8a8\", color=\"#2f6b3a\""
#define STYLE_OP "shape=ellipse, fontname=\"Courier\", height=0.3, " \
                 "color=\"#7a7a7a\", ordering=in"
#define STYLE_REDUCE "shape=invtrapezium, style=filled, fillcolor=\"#ececec\", " \
                     "fontname=\"Courier\", color=\"#7a7a7a\", ordering=in"
#define STYLE_LEAF "shape=plaintext, fontcolor=\"#5a5a5a\", fontsize=10, " \
                   "height=0.2"
#define STYLE_RESULT "color=\"#4a6f96\", penwidth=1.6"

/* Longest model text shown in a cluster's label. */
#define LINE_TEXT_MAX 60

typedef struct Graph {
    const Ir *ir;
    Buf *out;           /* nodes, inside their clusters */
    Buf edges;          /* every edge, written after the nodes */
    int *producer;      /* per array: the DOT node with its current value */
    char *declared;     /* per array: its value node has been written */
    int *memo;          /* per IR node: its DOT node in statement stamp[] */
    int *stamp;
    int now;            /* the statement being drawn */
    int next_op;        /* operation and leaf nodes are o0, o1, ... */
    int *sweep;         /* per array: its place in the adjoint sweep, or 0 */
} Graph;

/* DOT node ids: value nodes v<array>, the others o<n>; one int encodes
 * both, values as negative numbers. */
static int value_id(int32_t array)
{
    return -array - 1;
}

static void put_id(Buf *b, int id)
{
    if (id < 0)
        buf_printf(b, "v%d", -id - 1);
    else
        buf_printf(b, "o%d", id);
}

/* Text inside a DOT quoted string: quotes and backslashes escaped, and
 * control and non-ASCII bytes (which need not be UTF-8) shown as '?'. */
static void put_escaped(Buf *b, const char *s, size_t n)
{
    for (size_t i = 0; i < n; i++) {
        unsigned char c = (unsigned char)s[i];
        if (c == '"' || c == '\\')
            buf_putn(b, "\\", 1);
        if (c < 0x20 || c >= 0x7f)
            c = '?';
        buf_putn(b, (const char *)&c, 1);
    }
}

static void put_escaped_str(Buf *b, const char *s)
{
    put_escaped(b, s, strlen(s));
}

/* A model statement as one line: comments dropped, whitespace folded,
 * cut at LINE_TEXT_MAX characters. */
static void put_model_line(Buf *b, const Source *src, Span span)
{
    Buf line = {0};
    int space = 0;
    for (uint32_t i = 0; i < span.len && line.len < LINE_TEXT_MAX; i++) {
        char c = src->text[span.off + i];
        if (c == '#') {
            while (i + 1 < span.len && src->text[span.off + i + 1] != '\n')
                i++;
        } else if (c == ' ' || c == '\t' || c == '\n' || c == '\r') {
            space = 1;
        } else {
            if (space && line.len)
                buf_putn(&line, " ", 1);
            space = 0;
            buf_putn(&line, &c, 1);
        }
    }
    if (line.len) {
        put_escaped(b, line.data, line.len);
        if (line.len >= LINE_TEXT_MAX)
            buf_put(b, " ...");
    }
    buf_free(&line);
}

/* A number as short as it reads back exactly. */
static void put_number(Buf *b, double x)
{
    if (isinf(x)) {
        buf_put(b, x < 0 ? "-inf" : "inf");
        return;
    }
    char text[32];
    snprintf(text, sizeof text, "%.15g", x);
    if (strtod(text, NULL) != x)
        snprintf(text, sizeof text, "%.17g", x);
    buf_put(b, text);
}

/* ------------------------------------------------------------ value nodes */

static void put_value_label(const Graph *g, Buf *b, int32_t array)
{
    const Ir *ir = g->ir;
    const IrArray *a = &ir->arrays.items[array];
    put_escaped_str(b, a->name);
    for (int k = 0; k < a->rank; k++) {
        buf_put(b, k ? "," : "[");
        if (IR_EXTENT_IS_SIZE(a->dim[k]))
            put_escaped_str(b, ir->sizes.items[IR_EXTENT_SIZE(a->dim[k])].name);
        else
            buf_printf(b, "%d", a->dim[k]);
    }
    if (a->rank)
        buf_put(b, "]");
    int output = a->is_output;
    if (a->role == ROLE_PARAM)
        buf_put(b, output ? "\\nparam, output" : "\\nparam");
    else if (a->role == ROLE_INPUT)
        buf_put(b, output ? "\\ninput, output" : "\\ninput");
    else if (output)
        buf_put(b, "\\noutput");
    if (g->sweep[array])
        buf_printf(b, "\\nsweep #%d", g->sweep[array]);
}

static const char *value_style(const Ir *ir, int32_t array)
{
    const IrArray *a = &ir->arrays.items[array];
    int output = a->is_output;
    switch (a->role) {
    case ROLE_PARAM:
        return output ? STYLE_PARAM ", peripheries=2" : STYLE_PARAM;
    case ROLE_INPUT:
        return output ? STYLE_INPUT ", peripheries=2" : STYLE_INPUT;
    default:
        return output ? STYLE_OUTPUT : STYLE_VALUE;
    }
}

static void declare_value(Graph *g, int32_t array, const char *indent)
{
    if (g->declared[array])
        return;
    g->declared[array] = 1;
    buf_put(g->out, indent);
    put_id(g->out, value_id(array));
    buf_put(g->out, " [label=\"");
    put_value_label(g, g->out, array);
    buf_printf(g->out, "\", %s];\n", value_style(g->ir, array));
}

/* ------------------------------------------------------- operation nodes */

static void add_edge(Graph *g, int from, int to, const char *label,
                     const char *style)
{
    buf_put(&g->edges, "  ");
    put_id(&g->edges, from);
    buf_put(&g->edges, " -> ");
    put_id(&g->edges, to);
    if (label)
        buf_printf(&g->edges, " [label=\"%s\"]", label);
    else if (style)
        buf_printf(&g->edges, " [%s]", style);
    buf_put(&g->edges, ";\n");
}

/* The label of operand i's edge, for operations whose operands do not
 * commute; NULL when their order does not matter. */
static const char *operand_label(int op, int nargs, int i)
{
    static const char *const branch[] = {"if", "then", "else"};
    static const char *const place[] = {"1st", "2nd", "3rd"};
    switch (op) {
    case IR_SELECT:
        return branch[i];
    case IR_ADD:
    case IR_MUL:
    case IR_EQ:
    case IR_NE:
    case IR_AND:
    case IR_OR:
    case IR_HYPOT:
        return NULL;
    default:
        return nargs > 1 ? place[i] : NULL;
    }
}

static const char *op_text(int op)
{
    if (ir_ops[op].model_name)
        return ir_ops[op].model_name;
    if (op == IR_NEG)
        return "negate";
    if (op == IR_SELECT)
        return "?:";
    return ir_ops[op].c_spelling;
}

static int new_node(Graph *g)
{
    buf_put(g->out, "    ");
    put_id(g->out, g->next_op);
    buf_put(g->out, " [label=\"");
    return g->next_op++;
}

/* The DOT node that holds the value of IR node id in the statement being
 * drawn, writing the nodes and edges of its operations first.  Operations
 * are shared within a statement as the IR shares them (hash-consing);
 * leaves are drawn once per use, as they read better beside their user. */
static int expr_node(Graph *g, NodeId id)
{
    const Ir *ir = g->ir;
    const IrNode *n = ir_at(ir, id);
    if (n->nargs > 0 && g->stamp[id] == g->now)
        return g->memo[id];
    int dot;
    if (n->op == IR_READ) {
        dot = g->producer[ir_read_array(n)];
    } else if (n->nargs == 0) {
        dot = new_node(g);
        if (n->op == IR_CONST)
            put_number(g->out, ir_const_num(n));
        else if (n->op == IR_INDEX)
            buf_printf(g->out, "index %s", ir->vars.items[ir_leaf_var(n)].name);
        else
            buf_printf(g->out, "size %s", ir->sizes.items[ir_leaf_var(n)].name);
        buf_put(g->out, "\", " STYLE_LEAF "];\n");
    } else {
        int arg[3];
        for (int i = 0; i < n->nargs; i++)
            arg[i] = expr_node(g, n->arg[i]);
        dot = new_node(g);
        put_escaped_str(g->out, op_text(n->op));
        buf_put(g->out, "\", " STYLE_OP "];\n");
        for (int i = 0; i < n->nargs; i++)
            add_edge(g, arg[i], dot, operand_label(n->op, n->nargs, i), NULL);
    }
    g->stamp[id] = g->now;
    g->memo[id] = dot;
    return dot;
}

/* A reduction statement's funnel: "sum over i", "max over c, f". */
static int reduce_node(Graph *g, const IrStmt *s)
{
    static const char *const what[] = {"set", "sum", "max", "min"};
    const Ir *ir = g->ir;
    int dot = new_node(g);
    buf_put(g->out, what[s->kind]);
    int n = ir_tuple_len(ir, s->domain), kept = ir_tuple_len(ir, s->tuple);
    const int32_t *dom = ir_tuple_vars(ir, s->domain);
    const int32_t *keep = ir_tuple_vars(ir, s->tuple);
    int shown = 0;
    for (int k = 0; k < n; k++) {
        int free_var = 0;
        for (int m = 0; m < kept; m++)
            free_var |= keep[m] == dom[k];
        if (free_var)
            continue;
        buf_put(g->out, shown++ ? ", " : " over ");
        put_escaped_str(g->out, ir->vars.items[dom[k]].name);
    }
    buf_put(g->out, "\", " STYLE_REDUCE "];\n");
    return dot;
}

/* ------------------------------------------------------------ statements */

/* Mark the statements that only give a reduction its starting value
 * (0 for a sum, -inf for a max): the funnel stands for them. */
static char *find_start_values(const Graph *g)
{
    const Ir *ir = g->ir;
    const IrStmtList *fw = &ir->forward;
    char *start = arena_alloc(ir->arena, (size_t)fw->len + 1);
    int *next_kind = arena_alloc(ir->arena,
                                 (size_t)ir->arrays.len * sizeof *next_kind);
    for (int i = 0; i < ir->arrays.len; i++)
        next_kind[i] = -1;
    for (int i = fw->len - 1; i >= 0; i--) {
        const IrStmt *s = &fw->items[i];
        start[i] = s->kind == SK_SET && ir_at(ir, s->expr)->op == IR_CONST &&
                   next_kind[s->target] > SK_SET;
        next_kind[s->target] = (int)s->kind;
    }
    arena_release(ir->arena, next_kind,
                  (size_t)ir->arrays.len * sizeof *next_kind);
    return start;
}

static void open_cluster(Graph *g, Span origin)
{
    int line, col;
    source_line_col(g->ir->src, origin.off, &line, &col);
    buf_printf(g->out, "  subgraph cluster_line%u {\n    label=\"line %d: ",
               (unsigned)origin.off, line);
    put_model_line(g->out, g->ir->src, origin);
    buf_put(g->out, "\"; labeljust=l; style=\"rounded,dashed\"; "
                    "color=\"#b0b0b0\"; fontsize=10;\n");
}

static void draw_forward(Graph *g)
{
    const Ir *ir = g->ir;
    char *start = find_start_values(g);
    uint32_t open = UINT32_MAX;
    for (int i = 0; i < ir->forward.len; i++) {
        const IrStmt *s = &ir->forward.items[i];
        const IrArray *t = &ir->arrays.items[s->target];
        if (t->role == ROLE_ARGPOS || start[i])
            continue;
        if (s->origin.off != open) {
            if (open != UINT32_MAX)
                buf_put(g->out, "  }\n");
            open_cluster(g, s->origin);
            open = s->origin.off;
        }
        g->now = i + 1;
        int result = expr_node(g, s->expr);
        if (s->kind != SK_SET) {
            int funnel = reduce_node(g, s);
            add_edge(g, result, funnel, NULL, NULL);
            result = funnel;
        }
        if (t->role == ROLE_TEMP) {
            g->producer[s->target] = result;
        } else {
            declare_value(g, s->target, "    ");
            add_edge(g, result, value_id(s->target), NULL, STYLE_RESULT);
            g->producer[s->target] = value_id(s->target);
        }
    }
    if (open != UINT32_MAX)
        buf_put(g->out, "  }\n");
    arena_release(ir->arena, start, (size_t)ir->forward.len + 1);
}

/* sweep[a] = n when a's adjoint is the n-th to be complete, that is, when
 * the last reverse statement adding to it comes n-th among such last
 * statements.  Accumulators are left out, as they are not drawn. */
static void number_sweep(Graph *g)
{
    const Ir *ir = g->ir;
    int nrev = ir->reverse.len;
    int32_t *done_by = arena_alloc(ir->arena, (size_t)(nrev + 1) *
                                                  sizeof *done_by);
    int *last = arena_alloc(ir->arena, (size_t)ir->arrays.len * sizeof *last);
    for (int i = 0; i < ir->arrays.len; i++)
        last[i] = -1;
    for (int r = 0; r < nrev; r++) {
        const IrArray *adj = &ir->arrays.items[ir->reverse.items[r].target];
        if (adj->role == ROLE_ADJOINT)
            last[adj->primal] = r;
    }
    for (int r = 0; r < nrev; r++)
        done_by[r] = -1;
    for (int i = 0; i < ir->arrays.len; i++)
        if (last[i] >= 0 && ir->arrays.items[i].role != ROLE_TEMP)
            done_by[last[i]] = i;
    int n = 0;
    for (int r = 0; r < nrev; r++)
        if (done_by[r] >= 0)
            g->sweep[done_by[r]] = ++n;
    arena_release(ir->arena, last, (size_t)ir->arrays.len * sizeof *last);
    arena_release(ir->arena, done_by, (size_t)(nrev + 1) * sizeof *done_by);
}

/* ---------------------------------------------------------------- legend */

static void write_legend(Buf *b, int sweep)
{
    buf_put(b,
        "  subgraph cluster_legend {\n"
        "    label=\"legend\"; style=rounded; color=\"#808080\"; "
        "fontsize=10;\n"
        "    legend_param [label=\"name\\nparam\", " STYLE_PARAM "];\n"
        "    legend_input [label=\"name\\ninput\", " STYLE_INPUT "];\n"
        "    legend_value [label=\"intermediate\", " STYLE_VALUE "];\n"
        "    legend_output [label=\"name\\noutput\", " STYLE_OUTPUT "];\n"
        "    legend_op [label=\"operation\", " STYLE_OP "];\n"
        "    legend_reduce [label=\"reduction\\nsum over i\", " STYLE_REDUCE "];\n"
        "    legend_leaf [label=\"constant\", " STYLE_LEAF "];\n"
        "    legend_param -> legend_input -> legend_value -> legend_output "
        "-> legend_op -> legend_reduce -> legend_leaf [style=invis];\n");
    if (sweep)
        buf_put(b,
            "    legend_sweep [label=\"sweep #N: the reverse sweep\\n"
            "completes this adjoint N-th\\n(a param's gradient is final "
            "then)\", shape=plaintext, fontsize=10];\n"
            "    legend_leaf -> legend_sweep [style=invis];\n");
    buf_put(b, "  }\n");
}

void graph_write(const Ir *ir, const GraphOptions *opt, Buf *out)
{
    Graph g;
    memset(&g, 0, sizeof g);
    g.ir = ir;
    g.out = out;
    size_t na = (size_t)ir->arrays.len, nn = (size_t)ir->nodes.len;
    g.producer = arena_alloc(ir->arena, na * sizeof *g.producer);
    g.declared = arena_alloc(ir->arena, na);
    g.sweep = arena_alloc(ir->arena, na * sizeof *g.sweep);
    g.memo = arena_alloc(ir->arena, nn * sizeof *g.memo);
    g.stamp = arena_alloc(ir->arena, nn * sizeof *g.stamp);
    for (size_t i = 0; i < na; i++)
        g.producer[i] = value_id((int32_t)i);
    if (opt->sweep)
        number_sweep(&g);

    buf_put(out, "// computation graph of model ");
    buf_put(out, ir->model);
    buf_put(out, ", written by dervish graph; draw it with dot -Tsvg\n"
                 "digraph \"");
    put_escaped_str(out, ir->model);
    buf_put(out, "\" {\n  graph [label=\"model ");
    put_escaped_str(out, ir->model);
    buf_put(out, " (");
    put_escaped_str(out, opt->model_file);
    buf_put(out, opt->sweep ? "), numbered in adjoint sweep order\", "
                            : ")\", ");
    buf_put(out, "labelloc=t, fontname=\"Helvetica\", fontsize=14, "
                 "nodesep=0.3, ranksep=0.35];\n"
                 "  node [fontname=\"Helvetica\", fontsize=11];\n"
                 "  edge [color=\"#606060\", arrowsize=0.7, "
                 "fontname=\"Helvetica\", fontsize=9, fontcolor=\"#606060\"];\n");
    /* params and inputs along the top, where the data flow starts */
    buf_put(out, "  {rank=source;");
    for (int i = 0; i < ir->arrays.len; i++) {
        IrRole role = ir->arrays.items[i].role;
        if (role == ROLE_PARAM || role == ROLE_INPUT)
            buf_printf(out, " v%d;", i);
    }
    buf_put(out, "}\n");
    for (int i = 0; i < ir->arrays.len; i++) {
        IrRole role = ir->arrays.items[i].role;
        if (role == ROLE_PARAM || role == ROLE_INPUT)
            declare_value(&g, i, "  ");
    }
    draw_forward(&g);
    write_legend(out, opt->sweep);
    buf_put(out, g.edges.data ? g.edges.data : "");
    buf_put(out, "}\n");
    buf_free(&g.edges);
    arena_release(ir->arena, g.producer, na * sizeof *g.producer);
    arena_release(ir->arena, g.declared, na);
    arena_release(ir->arena, g.sweep, na * sizeof *g.sweep);
    arena_release(ir->arena, g.memo, nn * sizeof *g.memo);
    arena_release(ir->arena, g.stamp, nn * sizeof *g.stamp);
}
