/* stream.c - choosing row-by-row evaluation; see stream.h. */
#include "stream.h"

#include <stdlib.h>
#include <string.h>

typedef struct Plan {
    Ir *ir;
    int32_t size;
    int extent;         /* IR_EXTENT_OF_SIZE(size) */
    int32_t *row_var;   /* per forward statement: its row var, or -1 */
    char *per_row;      /* per array: computed row by row (row-local) */
    char *reduced;      /* per array: a reduction over the rows */
    char *after;        /* per array: computed after the rows */
    const char *why;    /* the first reason it cannot be done */
} Plan;

static int refuse(Plan *p, const char *why)
{
    if (!p->why)
        p->why = why;
    return 0;
}

/* The var of the domain that ranges over the size, -1 when none; -2 when
 * several do (pairs of rows). */
static int32_t find_row_var(const Plan *p, const IrStmt *s)
{
    int32_t found = -1;
    int n = ir_tuple_len(p->ir, s->domain);
    const int32_t *v = ir_tuple_vars(p->ir, s->domain);
    for (int k = 0; k < n; k++)
        if (p->ir->vars.items[v[k]].extent == p->extent)
            found = found == -1 ? v[k] : -2;
    return found;
}

/* Dimensions of an array that are the size, and whether only the first. */
static int size_dims(const Plan *p, const IrArray *a, int *first_only)
{
    int count = 0;
    *first_only = 1;
    for (int k = 0; k < a->rank; k++)
        if (a->dim[k] == p->extent) {
            count++;
            if (k > 0)
                *first_only = 0;
        }
    return count;
}

/* Check every read of a row statement: rows are read only at the row
 * being computed, and nothing computed from all the rows is read. */
static int check_reads(Plan *p, NodeId id, int32_t row, char *seen)
{
    if (seen[id])
        return 1;
    seen[id] = 1;
    const IrNode *n = ir_at(p->ir, id);
    if (n->op == IR_READ) {
        const IrArray *a = &p->ir->arrays.items[ir_read_array(n)];
        int first_only;
        int dims = size_dims(p, a, &first_only);
        if (p->reduced[ir_read_array(n)] || p->after[ir_read_array(n)])
            return refuse(p, "a row needs a value computed from all the "
                             "rows");
        if (dims > 1 || (dims == 1 && !first_only))
            return refuse(p, "an array has the size in a dimension other "
                             "than its first");
        if (dims == 1 && ir_tuple_vars(p->ir, ir_read_tuple(n))[0] != row)
            return refuse(p, "a row reads another row");
        if (dims == 1 && a->role != ROLE_INPUT && !p->per_row[ir_read_array(n)])
            return refuse(p, "a row reads an array not computed row by row");
    }
    for (int i = 0; i < n->nargs; i++)
        if (!check_reads(p, n->arg[i], row, seen))
            return 0;
    return 1;
}

/* Does the (non-row) expression read something computed from the rows? */
static int reads_after(const Plan *p, NodeId id)
{
    const IrNode *n = ir_at(p->ir, id);
    if (n->op == IR_READ)
        return p->reduced[ir_read_array(n)] || p->after[ir_read_array(n)];
    for (int i = 0; i < n->nargs; i++)
        if (reads_after(p, n->arg[i]))
            return 1;
    return 0;
}

/* Classify every statement for size p->size; 0 (with p->why) if the model
 * cannot be evaluated row by row over it. */
static int classify(Plan *p)
{
    Ir *ir = p->ir;
    int rows = 0;
    char *seen = calloc((size_t)ir->nodes.len + 1, 1);
    if (!seen)
        exit(3);
    for (int i = 0; i < ir->forward.len && !p->why; i++) {
        const IrStmt *s = &ir->forward.items[i];
        const IrArray *t = &ir->arrays.items[s->target];
        int32_t row = find_row_var(p, s);
        p->row_var[i] = row;
        if (row == -2) {
            refuse(p, "a statement pairs rows with rows");
            break;
        }
        int first_only;
        int tdims = size_dims(p, t, &first_only);
        if (row < 0) {
            if (tdims > 0) {
                refuse(p, "an array of rows is filled all at once");
                break;
            }
            if (reads_after(p, s->expr))
                p->after[s->target] = 1;
            continue;
        }
        rows++;
        memset(seen, 0, (size_t)ir->nodes.len + 1);
        if (!check_reads(p, s->expr, row, seen))
            break;
        if (tdims == 0) {
            p->reduced[s->target] = 1;      /* a reduction over the rows */
            if (s->argpos >= 0)
                p->reduced[s->argpos] = 1;
        } else if (tdims == 1 && first_only &&
                   ir_tuple_vars(ir, s->tuple)[0] == row) {
            p->per_row[s->target] = 1;
        } else {
            refuse(p, "a row writes an array in a dimension other than "
                      "its first");
        }
    }
    free(seen);
    if (!p->why && rows == 0)
        refuse(p, "no statement runs over the rows");
    return p->why == NULL;
}

/* Reorder forward statements: before the rows, the rows, after them. */
static void reorder(Plan *p)
{
    Ir *ir = p->ir;
    int n = ir->forward.len;
    IrStmt *old = malloc(((size_t)n + 1) * sizeof *old);
    int32_t *rowv = malloc(((size_t)n + 1) * sizeof *rowv);
    if (!old || !rowv)
        exit(3);
    memcpy(old, ir->forward.items, (size_t)n * sizeof *old);
    memcpy(rowv, p->row_var, (size_t)n * sizeof *rowv);
    int out = 0;
    for (int pass = 0; pass < 3; pass++)
        for (int i = 0; i < n; i++) {
            int is_row = rowv[i] >= 0;
            int is_after = !is_row && p->after[old[i].target];
            int group = is_row ? 1 : is_after ? 2 : 0;
            if (group != pass)
                continue;
            old[i].row_var = rowv[i];
            ir->forward.items[out++] = old[i];
        }
    free(old);
    free(rowv);
}

void stream_plan(Ir *ir)
{
    ir->row_size = -1;
    ir->row_plan = ir->sizes.len == 0 ? "the model has no size" : NULL;
    for (int32_t sz = 0; sz < ir->sizes.len; sz++) {
        Plan p;
        memset(&p, 0, sizeof p);
        p.ir = ir;
        p.size = sz;
        p.extent = IR_EXTENT_OF_SIZE(sz);
        size_t na = (size_t)ir->arrays.len + 1;
        p.row_var = malloc(((size_t)ir->forward.len + 1) * sizeof *p.row_var);
        p.per_row = calloc(na, 1);
        p.reduced = calloc(na, 1);
        p.after = calloc(na, 1);
        if (!p.row_var || !p.per_row || !p.reduced || !p.after)
            exit(3);
        int ok = classify(&p);
        /* other sizes may shape inputs only: anything computed with them
         * would still need scratch that grows */
        for (int i = 0; ok && i < ir->arrays.len; i++) {
            const IrArray *a = &ir->arrays.items[i];
            if (a->role != ROLE_INPUT && !p.per_row[i] && !ir_array_fixed(a))
                ok = refuse(&p, "an array has another size");
        }
        if (ok) {
            for (int i = 0; i < ir->arrays.len; i++)
                ir->arrays.items[i].row_local = (uint8_t)p.per_row[i];
            reorder(&p);
            ir->row_size = sz;
            ir->row_plan = arena_printf(
                ir->arena, "row by row over %s: each row is computed, used "
                "and dropped, so scratch does not grow with %s",
                ir->sizes.items[sz].name, ir->sizes.items[sz].name);
        } else if (!ir->row_plan) {
            int rows_kept = 0;
            for (int i = 0; i < ir->arrays.len; i++)
                rows_kept |= ir->arrays.items[i].role != ROLE_INPUT &&
                             !ir_array_fixed(&ir->arrays.items[i]);
            ir->row_plan = arena_printf(
                ir->arena, "not row by row over %s: %s%s",
                ir->sizes.items[sz].name, p.why,
                rows_kept ? "; the arrays of rows are kept in work" : "");
        }
        free(p.row_var);
        free(p.per_row);
        free(p.reduced);
        free(p.after);
        if (ok)
            break;
    }
}
