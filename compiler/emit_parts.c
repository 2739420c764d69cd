/* emit_parts.c - a long emitted function written as parts: the frame
 * struct the parts share, each part as a static function, and the table
 * that calls them in turn. */
#include "emit_internal.h"
#include "names.h"

#include <string.h>

/* A function of more than 4 part sizes (in statements) is written as
 * parts of about one part size each, called in turn: C compilers spend
 * time superlinear in the length of one function (register allocation
 * over thousands of values live at once), linear over many short ones.
 * The values one part computes and another reads live in a frame struct
 * the parts share. */

/* The parameter list a part takes: the function's own arguments, but
 * work (whose arrays the frame points into), and the frame. */
static void part_params(Buf *b, const Emitter *e, Function fn, int named)
{
    IrHome homes[EMIT_MAX_ARGS];
    int n = emit_args(e->ir, &e->storage, fn, homes);
    buf_put(b, "(");
    for (int i = 0; i < n; i++) {
        buf_put(b, i ? ", " : "");
        emit_arg_type(b, e->ir, homes[i]);
        if (named)
            buf_printf(b, DV_PREFIX "%s", emit_home_name(homes[i]));
    }
    buf_printf(b, ", struct " DV_PREFIX "%s_frame *%s)", emit_fn_name(fn),
               named ? DV_PREFIX "f" : "");
}

/* End the current part: write it out as a function (the dry run only
 * counts it). */
void emit_close_part(Emitter *e)
{
    Buf *body = &e->part_body;
    if (!e->dry) {
        Buf *t = e->text;
        buf_printf(t, "\n/* %s_%s, part %d. */\n"
                      "static void " DV_PREFIX "%s_part%d",
                   e->ir->model, emit_fn_name(e->fn), e->part, emit_fn_name(e->fn),
                   e->part);
        part_params(t, e, e->fn, 1);
        buf_put(t, "\n{\n");
        emit_unused_args(t, e, e->fn);
        if (!e->uses_frame)
            buf_put(t, "    (void)" DV_PREFIX "f;\n");
        emit_put_code(e, t, body->data, body->len);
        buf_put(t, "}\n");
    }
    body->len = 0;
    e->used_homes = 0;
    e->uses_frame = 0;
}

static void new_part(Emitter *e)
{
    emit_close_part(e);
    e->part++;
    e->part_stmts = 0;
    e->last_origin = UINT32_MAX;
}

/* In a function written in parts, start a new part before a unit of n
 * statements (at the top level) when the current part is full. */
void emit_part_break(Emitter *e, int n)
{
    if (!e->parted || e->base != 1)
        return;
    if (e->part_stmts > 0 && e->part_stmts + n > e->opt->part_size)
        new_part(e);
    e->part_stmts += n;
}

/* The comment that opens the reverse sweep, which also opens a part. */
void emit_sweep_heading(Emitter *e, const char *text)
{
    if (e->parted && e->part_stmts > 0)
        new_part(e);
    else if (!e->parted && e->fwd->len > 0)
        buf_put(e->out, "\n");
    buf_put(e->out, text);
    e->last_origin = UINT32_MAX;
}

/* A dry run of a function written in parts marks in e->framed the arrays
 * the frame must hold: those referred to in two parts, the output and
 * its tangent (the function returns them), and those in work (the function points to them
 * once).  A row's own arrays are the row block's locals. */
void emit_plan_frame(Emitter *e, Function fn)
{
    const Ir *ir = e->ir;
    int storage = roll_storage_count(e);
    memset(e->framed, 0, (size_t)storage);
    for (int i = 0; i < storage; i++)
        e->ref_part[i] = 0;
    e->dry = 1;
    e->out = &e->part_body;
    emit_sweeps(e);
    emit_close_part(e);
    e->dry = 0;
    if (!ir->struct_output) {
        e->framed[ir->output] = 1;
        if (fn == FN_TANGENT && ir->arrays.items[ir->output].varied)
            e->framed[ir->arrays.items[ir->output].tangent] = 1;
    }
    for (int i = 0; i < ir->arrays.len; i++) {
        const IrArray *a = &ir->arrays.items[i];
        if (e->storage.slot[i] >= 0)
            e->framed[i] = 1;
        else if (a->row_local || emit_is_external(a, ir))
            e->framed[i] = 0;
    }
}

/* The frame struct of a function written in parts. */
void emit_frame(Emitter *e, Function fn)
{
    const Ir *ir = e->ir;
    buf_printf(e->text, "\n/* What the parts of %s_%s share: values one part "
                        "computes and\n * another reads. */\n"
                        "struct " DV_PREFIX "%s_frame {\n",
               ir->model, emit_fn_name(fn), emit_fn_name(fn));
    int members = 0;
    for (int i = 0; i < ir->arrays.len; i++) {
        const IrArray *a = &ir->arrays.items[i];
        if (!e->framed[i])
            continue;
        members++;
        if (e->storage.slot[i] >= 0) {
            buf_printf(e->text, "    %s *%s;   /* in work */\n",
                       emit_real_type(e->opt), a->name);
            continue;
        }
        buf_printf(e->text, "    %s %s", emit_c_type(e, a), a->name);
        for (int k = 0; k < a->rank; k++)
            buf_printf(e->text, "[%d]", a->dim[k]);
        buf_put(e->text, ";\n");
    }
    for (int i = 0; e->roll && i < e->roll->slots.len; i++)
        if (e->framed[ir->arrays.len + i]) {
            members++;
            roll_declare_slot(e, e->text, i);
        }
    if (!members)   /* the outputs live in *out; C has no empty structs */
        buf_put(e->text, "    char " DV_PREFIX "nothing;   /* the parts share "
                         "no values */\n");
    buf_put(e->text, "};\n");
}

/* The body of a function written in parts: the frame, its work
 * pointers, and the parts called in order from a table. */
void emit_part_calls(Emitter *e, Function fn, Buf *body)
{
    const Ir *ir = e->ir;
    const char *f = emit_fn_name(fn);
    buf_printf(e->text, "\nstatic void (*const " DV_PREFIX "%s_parts[%d])",
               f, e->part);
    part_params(e->text, e, fn, 0);
    buf_put(e->text, " = {");
    for (int k = 1; k <= e->part; k++)
        buf_printf(e->text, "%s" DV_PREFIX "%s_part%d%s",
                   k % 4 == 1 ? "\n    " : " ", f, k, k < e->part ? "," : "");
    buf_put(e->text, "\n};\n");
    buf_printf(body, "    struct " DV_PREFIX "%s_frame " DV_PREFIX "frame;\n",
               f);
    for (int i = 0; i < ir->arrays.len; i++)
        if (e->framed[i] && e->storage.slot[i] >= 0) {
            buf_printf(body, "    " DV_PREFIX "frame.%s = " DV_PREFIX "work + "
                             DV_PREFIX "at[%d];\n",
                       ir->arrays.items[i].name, e->storage.slot[i]);
            e->declared[i] = 1;     /* work is read */
        }
    buf_printf(body, "    for (int " DV_PREFIX "k = 0; " DV_PREFIX "k < %d; "
                     DV_PREFIX "k++)\n        " DV_PREFIX "%s_parts[" DV_PREFIX
                     "k](", e->part, f);
    IrHome homes[EMIT_MAX_ARGS];
    int n = emit_args(ir, &e->storage, fn, homes);
    for (int i = 0; i < n; i++) {
        buf_printf(body, DV_PREFIX "%s, ", emit_home_name(homes[i]));
        EMIT_USE(e, homes[i]);
    }
    buf_put(body, "&" DV_PREFIX "frame);\n");
    e->part = 0;        /* the return reads the frame itself */
}
