/* compile.c - the pipeline: parse, resolve, reverse; then emit on demand.
 * See dervish.h. */
#include "dervish.h"
#include "emit_c.h"
#include "emit_layout.h"
#include "resolve.h"
#include "reverse.h"
#include "stream.h"
#include "tangent.h"

#include <string.h>

#ifndef DERVISH_VERSION
#define DERVISH_VERSION "unknown"
#endif

const char *dv_basename(const char *path)
{
    const char *slash = strrchr(path, '/');
    return slash ? slash + 1 : path;
}

const char *dv_stem(Arena *a, const char *path)
{
    const char *base = dv_basename(path);
    const char *dot = strrchr(base, '.');
    size_t n = dot && dot != base ? (size_t)(dot - base) : strlen(base);
    return arena_strndup(a, base, n);
}

/* c->paths from the model and the files its uses read. */
static void list_paths(DvCompilation *c)
{
    int n = 1;
    for (const SourceFile *f = c->files.first; f; f = f->next)
        n++;
    c->paths = arena_alloc(&c->arena, (size_t)n * sizeof *c->paths);
    c->paths[c->npaths++] = c->src.path;
    for (const SourceFile *f = c->files.first; f; f = f->next)
        c->paths[c->npaths++] = f->src.path;
}

/* --emit against the model's outputs: one scalar output has a gradient
 * and its second derivatives, outputs in a struct an adjoint and a
 * Jacobian.  The dense Hessian brings the Hessian-vector product it
 * calls. */
static void choose_functions(DvCompilation *c, const Ir *ir, int asked)
{
    int scalar = !ir->struct_output;
    c->emit = asked ? asked : scalar ? DV_EMIT_DEFAULT : DV_EMIT_STRUCT_DEFAULT;
    int wrong = c->emit & (scalar ? DV_EMIT_STRUCT_ONLY : DV_EMIT_SCALAR_ONLY);
    if (wrong) {
        int k = 0;
        while (!(wrong & (1 << k)))
            k++;
        if (scalar)
            diag_error(&c->diag, ir->output_span,
                       "--emit %s is for models whose outputs are not one "
                       "scalar; '%s' is one: emit gradient (or tangent)",
                       emit_kind_name(k), ir->arrays.items[ir->output].name);
        else
            diag_error(&c->diag, ir->output_stmt,
                       "--emit %s needs one scalar output, and this model's "
                       "outputs fill a struct: emit adjoint (the gradient of "
                       "any weighting of the outputs) or jacobian",
                       emit_kind_name(k));
    }
    if (c->emit & DV_EMIT_HESSIAN)
        c->emit |= DV_EMIT_HESSVEC;
}

/* The Jacobian takes whichever is cheaper: one reverse sweep (forward
 * statements and adjoints) per output entry, or one tangent sweep per
 * param; the sweep it calls is emitted too. */
static void plan_jacobian(DvCompilation *c, const Ir *ir)
{
    long nout = ir_output_count(ir), nparam = ir_param_count(ir);
    c->work_adjoint = ir_work(ir, &ir->forward) + ir_work(ir, &ir->reverse);
    c->work_tangent = ir_work(ir, &ir->tangent);
    c->jacobian_by_tangent = (double)nparam * (double)c->work_tangent <
                             (double)nout * (double)c->work_adjoint;
    c->emit |= c->jacobian_by_tangent ? DV_EMIT_TANGENT : DV_EMIT_ADJOINT;
}

int dv_compile(DvCompilation *c, const char *path, const char *text,
               size_t len, const DvOptions *opt)
{
    memset(c, 0, sizeof *c);
    arena_init(&c->arena);
    char *copy = arena_alloc(&c->arena, len + 1);
    memcpy(copy, text, len);
    copy[len] = '\0';
    c->src.path = arena_strndup(&c->arena, path, strlen(path));
    c->src.text = copy;
    c->src.len = len;
    source_index_lines(&c->src);
    diag_init(&c->diag, &c->src, opt->diag_out);
    source_set_init(&c->files, &c->src, opt->include_dirs, opt->ninclude);
    c->diag.files = &c->files;
    c->stack_limit = opt->stack_limit > 0 ? opt->stack_limit : DV_STACK_LIMIT;
    c->part_size = opt->part_size > 0 ? opt->part_size : DV_PART_SIZE;
    c->loop_repeats = opt->loop_repeats == 0 ? DV_LOOP_REPEATS
                      : opt->loop_repeats < 0 ? 0 : opt->loop_repeats;
    c->line_directives = opt->line_directives;
    c->real_float = opt->real_float;

    /* resolve parses the source itself, one statement's tree at a time */
    Ir *ir = resolve_model(&c->arena, &c->diag, &c->src, NULL, opt->name,
                           dv_stem(&c->arena, path));
    list_paths(c);
    if (!c->diag.errors)
        choose_functions(c, ir, opt->emit);
    if (c->diag.errors)
        return 1;
    ir_verify(ir);
    stream_plan(ir);
    reverse_pass(ir);
    /* the Jacobian's check compares its rows with tangent sweeps */
    if (c->emit & (DV_EMIT_TANGENT | DV_EMIT_HESSVEC | DV_EMIT_JACOBIAN))
        tangent_pass(ir, c->emit & (DV_EMIT_TANGENT | DV_EMIT_JACOBIAN),
                     c->emit & DV_EMIT_HESSVEC);
    if (c->emit & DV_EMIT_JACOBIAN)
        plan_jacobian(c, ir);
    /* the passes that make nodes are done: give the node tables back */
    ir_drop_node_tables(ir);
    ir_verify_derived(ir);
    c->ir = ir;
    return 0;
}

void dv_emit(const DvCompilation *c, const char *source_name,
             const char *header_name, Buf *c_out, Buf *h_out)
{
    EmitOptions o;
    o.model_file = dv_basename(c->src.path);
    o.header_name = header_name;
    o.source_name = source_name;
    o.version = DERVISH_VERSION;
    o.stack_limit = c->stack_limit;
    o.part_size = c->part_size;
    o.loop_repeats = c->loop_repeats;
    o.emit = c->emit;
    o.jacobian_by_tangent = c->jacobian_by_tangent;
    o.work_adjoint = c->work_adjoint;
    o.work_tangent = c->work_tangent;
    o.model_path = c->src.path;
    o.line_directives = c->line_directives;
    o.real_float = c->real_float;
    emit_c(c->ir, &o, c_out, h_out);
}

void dv_explain(const DvCompilation *c, FILE *out)
{
    const Ir *ir = c->ir;
    Storage st = layout_plan(ir, c->stack_limit);
    fprintf(out, "%s: %s.\n", ir->model,
            ir->row_plan ? ir->row_plan : "the model has no size");
    int any = 0;
    for (int i = 0; i < ir->arrays.len; i++) {
        const IrArray *a = &ir->arrays.items[i];
        if (st.slot[i] < 0)
            continue;
        /* a row-local array keeps one row: its first dimension is not
         * listed */
        fprintf(out, "%s%s[", any ? ", " : "  in work: ", a->name);
        for (int k = a->row_local; k < a->rank; k++) {
            const char *sep = k > a->row_local ? "," : "";
            if (IR_EXTENT_IS_SIZE(a->dim[k]))
                fprintf(out, "%s%s", sep,
                        ir->sizes.items[IR_EXTENT_SIZE(a->dim[k])].name);
            else
                fprintf(out, "%s%d", sep, a->dim[k]);
        }
        fputs("]", out);
        any = 1;
    }
    if (any)
        fputs("\n", out);
    else
        fprintf(out, "  no arrays in work%s.\n",
                st.uses_work ? " (the work argument may be NULL)" : "");
    layout_free(&st);
}

void dv_free(DvCompilation *c)
{
    source_set_free(&c->files);
    source_free_lines(&c->src);
    arena_free(&c->arena);
}
