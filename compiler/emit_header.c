/* emit_header.c - the emitted header (the param and input structs, the
 * prototypes and what each function does), the banner words shared with
 * the C source, and the runtime helpers copied into it. */
#include "emit_internal.h"
#include "names.h"
#include "runtime_text.h"

#include <stdlib.h>
#include <string.h>

/* One struct member: a fixed array, a pointer to a sized input (row-major,
 * the caller's), or a size. */
static void emit_member(Buf *h, const Ir *ir, const IrArray *a,
                        const char *real)
{
    if (!ir_array_fixed(a)) {
        buf_printf(h, "    const %s *%s;   /* [", real, a->name);
        for (int k = 0; k < a->rank; k++)
            buf_printf(h, "%s%s", k ? "][" : "",
                       IR_EXTENT_IS_SIZE(a->dim[k])
                           ? ir->sizes.items[IR_EXTENT_SIZE(a->dim[k])].name
                           : arena_printf(ir->arena, "%d", a->dim[k]));
        buf_put(h, "], row-major */\n");
        return;
    }
    buf_printf(h, "    %s %s", real, a->name);
    for (int k = 0; k < a->rank; k++)
        buf_printf(h, "[%d]", a->dim[k]);
    buf_put(h, ";\n");
}

/* The members of ROLE in declaration order; for inputs the sizes too, in
 * the order the model declares them among the inputs. */
static void emit_struct(Buf *h, const Ir *ir, IrRole role, const char *type,
                        const char *what, const char *real)
{
    buf_printf(h, "/* %s */\ntypedef struct %s {\n", what, type);
    int next_size = 0;
    for (int i = 0; i <= ir->arrays.len; i++) {
        const IrArray *a = i < ir->arrays.len ? &ir->arrays.items[i] : NULL;
        if (a && a->role != role)
            continue;
        while (role == ROLE_INPUT && next_size < ir->sizes.len &&
               (!a || ir->sizes.items[next_size].span.off < a->span.off))
            buf_printf(h, "    long %s;   /* a size */\n",
                       ir->sizes.items[next_size++].name);
        if (a)
            emit_member(h, ir, a, real);
    }
    buf_printf(h, "} %s;\n\n", type);
}

/* The outputs' struct, in 'output' order, and its flat view. */
static void emit_output_struct(Buf *h, const Ir *ir, const char *real)
{
    const char *m = ir->model;
    char *M = emit_upper(m);
    buf_printf(h, "#define %s_OUTPUT_COUNT %ld   /* %ss in %s_output */\n\n",
               M, ir_output_count(ir), real, m);
    buf_printf(h, "/* The outputs, in the model's 'output' order. */\n"
                  "typedef struct %s_output {\n", m);
    for (int i = 0; i < ir->outputs.len; i++)
        emit_member(h, ir, &ir->arrays.items[ir->outputs.items[i]], real);
    buf_printf(h, "} %s_output;\n\n", m);
    buf_printf(h,
               "/* A %s_output seen as a flat vector of %s_OUTPUT_COUNT "
               "%ss, in member\n * order (row-major within arrays): the "
               "rows of the Jacobian. */\n"
               "typedef union %s_output_flat {\n"
               "    %s_output o;\n"
               "    %s v[%s_OUTPUT_COUNT];\n"
               "} %s_output_flat;\n\n", m, M, real, m, m, real, M, m);
    free(M);
}

const char *emit_kind_name(int kind)
{
    static const char *const names[EMIT_KINDS] = {
        "value", "gradient", "tangent", "hessvec", "hessian", "adjoint",
        "jacobian"};
    return names[kind];
}

const char *emit_fn_name(Function fn)
{
    return emit_kind_name((int)fn);
}

/* The order the functions are declared and defined in. */
const Function emit_order[FN_COUNT] = {
    FN_VALUE, FN_GRADIENT, FN_ADJOINT, FN_TANGENT, FN_HESSVEC, FN_HESSIAN,
    FN_JACOBIAN};

const char *emit_home_name(IrHome home)
{
    static const char *const names[HOME_COUNT] = {
        "", "p", "in", "grad", "dir", "hv", "out", "seed", "dout"};
    return names[home];
}

int emit_args(const Ir *ir, const Storage *st, Function fn,
              IrHome homes[EMIT_MAX_ARGS])
{
    int n = 0;
    homes[n++] = HOME_P;
    if (st->has_input)
        homes[n++] = HOME_IN;
    switch (fn) {
    case FN_VALUE:
    case FN_JACOBIAN:
        if (ir->struct_output)
            homes[n++] = HOME_OUT;
        break;
    case FN_GRADIENT:
    case FN_HESSIAN:
        homes[n++] = HOME_GRAD;
        break;
    case FN_ADJOINT:
        homes[n++] = HOME_SEED;
        homes[n++] = HOME_OUT;
        homes[n++] = HOME_GRAD;
        break;
    case FN_TANGENT:
        homes[n++] = HOME_DIR;
        if (ir->struct_output) {
            homes[n++] = HOME_OUT;
            homes[n++] = HOME_DOUT;
        }
        break;
    case FN_HESSVEC:
        homes[n++] = HOME_DIR;
        homes[n++] = HOME_GRAD;
        homes[n++] = HOME_HV;
        break;
    case FN_COUNT:
        break;
    }
    return n;
}

/* "const kiln_param *" and the like: what an argument points to.  The
 * function reads p, in, dir and seed, and writes the others. */
void emit_arg_type(Buf *b, const Ir *ir, IrHome home)
{
    static const char *const structs[HOME_COUNT] = {
        "", "param", "input", "param", "param", "param", "output", "output",
        "output"};
    int read = home == HOME_P || home == HOME_IN || home == HOME_DIR ||
               home == HOME_SEED;
    buf_printf(b, "%s%s_%s *", read ? "const " : "", ir->model,
               structs[home]);
}

void emit_unused_args(Buf *b, const Emitter *e, Function fn)
{
    IrHome homes[EMIT_MAX_ARGS];
    int n = emit_args(e->ir, &e->storage, fn, homes);
    for (int i = 0; i < n; i++)
        if (!(e->used_homes & (1u << homes[i])))
            buf_printf(b, "    (void)" DV_PREFIX "%s;\n",
                       emit_home_name(homes[i]));
}

/* Prototypes, shared by the header and the definitions.  The header names
 * the arguments plainly; definitions use the reserved prefix so that model
 * names such as p or in cannot collide with them. */
void emit_signature(Buf *b, const Ir *ir, const Storage *st, Function fn,
                      const char *prefix, const char *real)
{
    const char *m = ir->model;
    char *M = emit_upper(m);
    buf_printf(b, "%s %s_%s(", ir->struct_output ? "void" : real, m,
               emit_fn_name(fn));
    IrHome homes[EMIT_MAX_ARGS];
    int n = emit_args(ir, st, fn, homes);
    for (int i = 0; i < n; i++) {
        buf_put(b, i ? ", " : "");
        emit_arg_type(b, ir, homes[i]);
        buf_printf(b, "%s%s", prefix, emit_home_name(homes[i]));
    }
    if (fn == FN_TANGENT && !ir->struct_output)
        buf_printf(b, ", %s *%sdvalue", real, prefix);
    if (fn == FN_HESSIAN)
        buf_printf(b, ", %s %shess[%s_PARAM_COUNT][%s_PARAM_COUNT]", real,
                   prefix, M, M);
    if (fn == FN_JACOBIAN)
        buf_printf(b, ", %s %sjac[%s_OUTPUT_COUNT][%s_PARAM_COUNT]", real,
                   prefix, M, M);
    if (st->uses_work)
        buf_printf(b, ", %s *%swork", real, prefix);
    buf_put(b, ")");
    free(M);
}

/* "value and gradient", "value, gradient and tangent", ...: the banner's
 * words for what is emitted. */
const char *emit_what_is_emitted(const Ir *ir, int emit)
{
    const char *words = "";
    int n = 0, total = 0;
    for (int fn = 0; fn < FN_COUNT; fn++)
        total += (emit >> fn) & 1;
    for (int i = 0; i < FN_COUNT; i++)
        if (emit & (1 << emit_order[i])) {
            n++;
            words = arena_printf(ir->arena, "%s%s%s", words,
                                 n == 1 ? "" : n == total ? " and " : ", ",
                                 emit_fn_name(emit_order[i]));
        }
    return words;
}

/* What a function of a model whose outputs fill a struct does. */
static void struct_function_comment(Buf *h, const Ir *ir, Function fn,
                                    const EmitOptions *opt, int sized)
{
    const char *m = ir->model;
    const char *nan = sized ? "\n * (every output NaN, and nothing else "
                              "written, when a size is negative\n * or too "
                              "large)" : "";
    switch (fn) {
    case FN_VALUE:
        buf_printf(h, "/* Writes the outputs into *out%s. */\n", nan);
        break;
    case FN_ADJOINT:
        buf_printf(h,
                   "/* Writes the outputs into *out as %s_value does and "
                   "overwrites every\n * member of *grad with the derivative "
                   "of the sum over all outputs of\n * the output times its "
                   "member of *seed: the seed times the Jacobian.\n * One "
                   "reverse sweep%s. */\n", m, nan);
        break;
    case FN_TANGENT:
        buf_printf(h,
                   "/* Writes the outputs into *out as %s_value does and "
                   "overwrites every\n * member of *dout with that output's "
                   "derivative along dir: the\n * Jacobian times dir. One "
                   "tangent sweep%s. */\n", m, nan);
        break;
    case FN_JACOBIAN:
        buf_printf(h,
                   "/* Writes the outputs into *out as %s_value does and "
                   "fills jac with the\n * Jacobian: jac[i][k] is the "
                   "derivative of output entry i with respect\n * to param "
                   "entry k, both in flat order.  %s%s. */\n", m,
                   opt->jacobian_by_tangent
                       ? arena_printf(ir->arena, "One %s_tangent per param",
                                      m)
                       : arena_printf(ir->arena, "One %s_adjoint per output "
                                      "entry", m),
                   nan);
        break;
    default:
        break;
    }
}

/* What a function does, for the header. */
static void function_comment(Buf *h, const Ir *ir, Function fn, int sized)
{
    const char *m = ir->model, *out = ir->arrays.items[ir->output].name;
    switch (fn) {
    case FN_VALUE:
        buf_printf(h, "/* Returns the model's output, %s%s. */\n", out,
                   sized ? " (NaN when a size is negative or too large)" : "");
        break;
    case FN_GRADIENT:
        buf_printf(h,
                   "/* Returns %s as %s_value does and overwrites every member "
                   "of\n * *grad with the derivative of %s with respect to that "
                   "param%s. */\n", out, m, out,
                   sized ? "\n * (leaving *grad unchanged when it returns NaN "
                           "for invalid sizes)" : "");
        break;
    case FN_TANGENT:
        buf_printf(h,
                   "/* Returns %s as %s_value does and sets *dvalue to its "
                   "derivative along\n * dir: the gradient times dir, the "
                   "sum over all params of the\n * derivative with respect "
                   "to it times its member of *dir%s. */\n", out, m,
                   sized ? "\n * (leaving *dvalue unchanged when it returns "
                           "NaN for invalid sizes)" : "");
        break;
    case FN_HESSVEC:
        buf_printf(h,
                   "/* Returns %s as %s_value does, writes its gradient into "
                   "*grad, and\n * overwrites every member of *hv with the "
                   "Hessian of %s times dir:\n * the derivative of that "
                   "member of the gradient along dir%s. */\n", out, m, out,
                   sized ? "\n * (leaving *grad and *hv unchanged when it "
                           "returns NaN for invalid sizes)" : "");
        break;
    case FN_HESSIAN:
        buf_printf(h,
                   "/* Returns %s as %s_value does, writes its gradient into "
                   "*grad, and\n * fills hess with its Hessian, hess[j][k] "
                   "the second derivative with\n * respect to params j and k "
                   "in flat order, exactly symmetric: one\n * %s_hessvec "
                   "per param%s. */\n", out, m, m,
                   sized ? "\n * (leaving *grad and hess unchanged when it "
                           "returns NaN for invalid sizes)" : "");
        break;
    default:
        break;
    }
}

void emit_header(const Ir *ir, const EmitOptions *opt,
                        const Storage *st, Buf *h)
{
    const char *m = ir->model, *real = emit_real_type(opt);
    char *M = emit_upper(m);
    buf_printf(h,
               "/* %s - %s of the model %s (%s).\n"
               " * Generated by dervish %s; edit the model, not this file. */\n"
               "#ifndef DVS_%s_H\n#define DVS_%s_H\n\n%s"
               "#ifdef __cplusplus\nextern \"C\" {\n#endif\n\n",
               opt->header_name, emit_what_is_emitted(ir, opt->emit), m,
               opt->model_file, opt->version, M, M,
               st->uses_work ? "#include <stddef.h>\n\n" : "");
    buf_printf(h, "#define %s_PARAM_COUNT %ld   /* %ss in %s_param */\n\n",
               M, ir_param_count(ir), real, m);
    emit_struct(h, ir, ROLE_PARAM, arena_printf(ir->arena, "%s_param", m),
                "The params: what the gradient is taken with respect to.",
                real);
    buf_printf(h,
               "/* A %s_param seen as a flat vector of %s_PARAM_COUNT %ss,\n"
               " * in member order (row-major within arrays), for optimisers. */\n"
               "typedef union %s_param_flat {\n"
               "    %s_param p;\n"
               "    %s v[%s_PARAM_COUNT];\n"
               "} %s_param_flat;\n\n", m, M, real, m, m, real, M, m);
    if (st->has_input)
        emit_struct(h, ir, ROLE_INPUT, arena_printf(ir->arena, "%s_input", m),
                    "The inputs: data, not differentiated.", real);
    if (ir->struct_output)
        emit_output_struct(h, ir, real);
    if (st->uses_work) {
        buf_printf(h, "/* The %ss the work argument of the functions below "
                      "must hold\n * (0 allowed: then work may be NULL); 0 also "
                      "when a size is\n * negative or the count overflows. */\n",
                   real);
        layout_prototype(h, ir, st, "");
        buf_put(h, ";\n\n");
    }
    for (int i = 0; i < FN_COUNT; i++) {
        Function fn = emit_order[i];
        if (!(opt->emit & (1 << fn)))
            continue;
        if (ir->struct_output)
            struct_function_comment(h, ir, fn, opt, st->uses_work);
        else
            function_comment(h, ir, fn, st->uses_work);
        emit_signature(h, ir, st, fn, "", real);
        buf_put(h, ";\n\n");
    }
    buf_put(h, "#ifdef __cplusplus\n}\n#endif\n\n#endif\n");
    free(M);
}

/* The runtime helpers the statements call, in the runtime table's order:
 * for float code the float forms ("float/NAME") of those taking reals. */
void emit_helpers(const Ir *ir, const char *reached,
                         const Storage *st, int real_float, Buf *c)
{
    char used[IR_OP_COUNT] = {0};
    for (int i = 0; i < ir->nodes.len; i++)
        if (reached[i])
            used[ir->nodes.items[i].op] = 1;
    for (int t = 0; t < runtime_text_count; t++) {
        const char *name = runtime_texts[t].name;
        int wanted = (st->nslots > 0 && strcmp(name, "count_sum") == 0) ||
                     (st->uses_product && strcmp(name, "count_product") == 0);
        int float_form = strncmp(name, "float/", 6) == 0;
        for (int op = 0; op < IR_OP_COUNT && !wanted &&
                         float_form == real_float; op++)
            wanted = used[op] && ir_ops[op].kind == OPK_HELPER &&
                     strcmp(ir_ops[op].c_spelling, name + 6 * float_form) == 0;
        if (wanted) {
            buf_put(c, "\n");
            buf_put(c, runtime_texts[t].text);
        }
    }
}
