/* emit_layout.c - storage of arrays in emitted code; see emit_layout.h. */
#include "emit_layout.h"
#include "names.h"

#include <stdlib.h>
#include <string.h>

/* Arrays the emitted functions declare themselves (not params, inputs or
 * the gradient, which the caller owns). */
static int is_local(const Ir *ir, const IrArray *a)
{
    return ir_home(ir, a) == HOME_LOCAL;
}

static void mark_targets(const IrStmtList *list, char *written)
{
    for (int i = 0; i < list->len; i++)
        written[list->items[i].target] = 1;
}

Storage layout_plan(const Ir *ir, long stack_limit)
{
    Storage st;
    memset(&st, 0, sizeof st);
    st.slot = malloc(((size_t)ir->arrays.len + 1) * sizeof *st.slot);
    char *written = calloc((size_t)ir->arrays.len + 1, 1);
    if (!st.slot || !written)
        exit(3);
    mark_targets(&ir->forward, written);
    mark_targets(&ir->reverse, written);
    mark_targets(&ir->tangent, written);
    mark_targets(&ir->hv_forward, written);
    mark_targets(&ir->hv_reverse, written);
    for (int i = 0; i < ir->arrays.len; i++) {
        const IrArray *a = &ir->arrays.items[i];
        st.slot[i] = -1;
        if (a->role == ROLE_INPUT)
            st.has_input = 1;
        if (a->role == ROLE_INPUT && !ir_array_fixed(a) && a->rank > 1)
            st.uses_product = 1;    /* its count is checked */
        if (!written[i] || !is_local(ir, a) || a->rank == 0)
            continue;
        if (a->row_local) {
            /* one row at a time: a local array, unless the row's own
             * length is a size or too long for the stack (then one row of
             * it lives in work) */
            long row = 1;
            int sized = 0;
            for (int k = 1; k < a->rank; k++) {
                sized |= IR_EXTENT_IS_SIZE(a->dim[k]);
                row *= sized ? 1 : a->dim[k];
            }
            if (!sized && row <= stack_limit)
                continue;
        }
        if (a->row_local || !ir_array_fixed(a) ||
            ir_array_size(a) > stack_limit) {
            st.slot[i] = st.nslots++;
            st.uses_product |= a->rank > 1 + a->row_local;
        }
    }
    st.has_input |= ir->sizes.len > 0;
    st.uses_work = st.nslots > 0 || ir->sizes.len > 0;
    free(written);
    return st;
}

void layout_free(Storage *st)
{
    free(st->slot);
    st->slot = NULL;
}

const char *layout_extent(const Ir *ir, int extent)
{
    if (IR_EXTENT_IS_SIZE(extent))
        return arena_printf(ir->arena, DV_PREFIX "in->%s",
                            ir->sizes.items[IR_EXTENT_SIZE(extent)].name);
    return arena_printf(ir->arena, "%d", extent);
}

/* "dvs_count_product(...(size_t)d0, d1)...)": the element count of an
 * array (of one row of a row-local one), saturating on overflow. */
static void put_count(Buf *c, const Ir *ir, const IrArray *a)
{
    int first = a->row_local;
    for (int k = first + 1; k < a->rank; k++)
        buf_put(c, DV_PREFIX "count_product(");
    buf_printf(c, "(size_t)%s", layout_extent(ir, a->dim[first]));
    for (int k = first + 1; k < a->rank; k++)
        buf_printf(c, ", (size_t)%s)", layout_extent(ir, a->dim[k]));
}

void layout_prototype(Buf *h, const Ir *ir, const Storage *st,
                      const char *prefix)
{
    if (st->has_input)
        buf_printf(h, "size_t %s_work_count(const %s_input *%sin)", ir->model,
                   ir->model, prefix);
    else
        buf_printf(h, "size_t %s_work_count(void)", ir->model);
}

void layout_emit(Buf *c, const Ir *ir, const Storage *st, const char *real)
{
    const char *m = ir->model;
    buf_printf(c,
               "\n/* Checks the sizes and places the arrays kept in work:\n"
               " * array i starts at work + " DV_PREFIX "at[i].  Returns the "
               "%ss needed,\n * or (size_t)-1 when a size is negative or "
               "a count overflows. */\n"
               "static size_t " DV_PREFIX "layout(%s" DV_PREFIX "at)\n{\n",
               real, st->has_input
                   ? arena_printf(ir->arena, "const %s_input *" DV_PREFIX
                                  "in, size_t *", m)
                   : "size_t *");
    buf_put(c, "    size_t " DV_PREFIX "end = 0;\n    (void)" DV_PREFIX "at;\n");
    if (st->has_input)
        buf_put(c, "    (void)" DV_PREFIX "in;\n");
    for (int i = 0; i < ir->sizes.len; i++)
        buf_printf(c, "    if (" DV_PREFIX "in->%s < 0)\n"
                      "        return (size_t)-1;\n", ir->sizes.items[i].name);
    /* inputs with a size: their element counts must fit too */
    for (int i = 0; i < ir->arrays.len; i++) {
        const IrArray *a = &ir->arrays.items[i];
        if (a->role != ROLE_INPUT || ir_array_fixed(a) || a->rank < 2)
            continue;
        buf_put(c, "    if (");
        put_count(c, ir, a);
        buf_printf(c, " == (size_t)-1)   /* %s */\n"
                      "        return (size_t)-1;\n", a->name);
    }
    for (int i = 0; i < ir->arrays.len; i++) {
        const IrArray *a = &ir->arrays.items[i];
        if (st->slot[i] < 0)
            continue;
        buf_printf(c, "    " DV_PREFIX "at[%d] = " DV_PREFIX "end;   /* %s */\n"
                      "    " DV_PREFIX "end = " DV_PREFIX "count_sum("
                      DV_PREFIX "end, ", st->slot[i], a->name);
        put_count(c, ir, a);
        buf_put(c, ");\n");
    }
    /* the caller allocates bytes: their count must fit too */
    buf_printf(c, "    if (" DV_PREFIX "end > (size_t)-1 / sizeof(%s))\n"
                  "        return (size_t)-1;\n", real);
    buf_put(c, "    return " DV_PREFIX "end;\n}\n\n");
    buf_printf(c, "/* The %ss of work the functions of %s need; 0 when a "
                  "size is\n * negative or the count overflows (then they "
                  "fail with NaN). */\n", real, m);
    layout_prototype(c, ir, st, DV_PREFIX);
    buf_printf(c, "\n{\n    size_t " DV_PREFIX "at[%d];\n"
                  "    size_t " DV_PREFIX "need = " DV_PREFIX "layout(%s"
                  DV_PREFIX "at);\n"
                  "    return " DV_PREFIX "need == (size_t)-1 ? 0 : "
                  DV_PREFIX "need;\n}\n",
               st->nslots > 0 ? st->nslots : 1,
               st->has_input ? DV_PREFIX "in, " : "");
}

void layout_emit_pointers(Buf *c, const Storage *st, const char *fail)
{
    buf_printf(c, "    size_t " DV_PREFIX "at[%d];\n"
                  "    if (" DV_PREFIX "layout(%s" DV_PREFIX "at) == "
                  "(size_t)-1)%s\n",
               st->nslots > 0 ? st->nslots : 1,
               st->has_input ? DV_PREFIX "in, " : "", fail);
}
