/* emit_wrappers.c - the emitted functions built on other emitted ones: the
 * dense Hessian (one Hessian-vector product per param) and the Jacobian
 * (one reverse sweep per output entry, or one tangent sweep per param,
 * whichever is estimated cheaper). */
#include "emit_internal.h"
#include "names.h"

#include <stdlib.h>

/* Invalid sizes: the function fails as the ones it calls would, before
 * anything is written. */
static void check_sizes(Buf *c, const Emitter *e)
{
    layout_emit_pointers(c, &e->storage, emit_size_failure(e->ir, e->opt));
    buf_put(c, "    (void)" DV_PREFIX "at;\n");
}

/* The dense Hessian: a Hessian-vector product with each unit vector gives
 * a column; the mean of the two computed halves makes it exactly
 * symmetric (they differ by rounding). */
void emit_hessian(Emitter *e, Function fn, Buf *c)
{
    const Ir *ir = e->ir;
    const char *m = ir->model, *real = emit_real_type(e->opt);
    const char *sfx = emit_real_suffix(e->opt);
    char *M = emit_upper(m);
    int in = e->storage.has_input, work = e->storage.uses_work;
    buf_put(c, "\n");
    emit_signature(c, ir, &e->storage, fn, DV_PREFIX, emit_real_type(e->opt));
    buf_put(c, "\n{\n");
    if (work)
        check_sizes(c, e);
    buf_printf(c,
               "    %s_param_flat " DV_PREFIX "dir, " DV_PREFIX "col;\n"
               "    %s " DV_PREFIX "y = 0.0%s;\n"
               "    for (int " DV_PREFIX "j = 0; " DV_PREFIX "j < %s_PARAM_COUNT; "
               DV_PREFIX "j++)\n"
               "        " DV_PREFIX "dir.v[" DV_PREFIX "j] = 0.0%s;\n"
               "    for (int " DV_PREFIX "k = 0; " DV_PREFIX "k < %s_PARAM_COUNT; "
               DV_PREFIX "k++) {\n"
               "        " DV_PREFIX "dir.v[" DV_PREFIX "k] = 1.0%s;\n"
               "        " DV_PREFIX "y = %s_hessvec(" DV_PREFIX "p, %s&" DV_PREFIX
               "dir.p, " DV_PREFIX "grad, &" DV_PREFIX "col.p%s);\n"
               "        " DV_PREFIX "dir.v[" DV_PREFIX "k] = 0.0%s;\n"
               "        for (int " DV_PREFIX "j = 0; " DV_PREFIX "j < %s_PARAM_COUNT; "
               DV_PREFIX "j++)\n"
               "            " DV_PREFIX "hess[" DV_PREFIX "j][" DV_PREFIX "k] = "
               DV_PREFIX "col.v[" DV_PREFIX "j];\n"
               "    }\n"
               "    for (int " DV_PREFIX "j = 0; " DV_PREFIX "j < %s_PARAM_COUNT; "
               DV_PREFIX "j++)\n"
               "        for (int " DV_PREFIX "k = " DV_PREFIX "j + 1; " DV_PREFIX
               "k < %s_PARAM_COUNT; " DV_PREFIX "k++) {\n"
               "            %s " DV_PREFIX "mean = 0.5%s * (" DV_PREFIX "hess["
               DV_PREFIX "j][" DV_PREFIX "k] + " DV_PREFIX "hess[" DV_PREFIX "k]["
               DV_PREFIX "j]);\n"
               "            " DV_PREFIX "hess[" DV_PREFIX "j][" DV_PREFIX "k] = "
               DV_PREFIX "mean;\n"
               "            " DV_PREFIX "hess[" DV_PREFIX "k][" DV_PREFIX "j] = "
               DV_PREFIX "mean;\n"
               "        }\n"
               "    return " DV_PREFIX "y;\n}\n",
               m, real, sfx, M, sfx, M, sfx, m, in ? DV_PREFIX "in, " : "",
               work ? ", " DV_PREFIX "work" : "", sfx, M, M, M, real, sfx);
    free(M);
}

/* The Jacobian of a model whose outputs fill a struct: each reverse sweep
 * (the adjoint with a unit seed) gives a row, each tangent sweep (along a
 * unit direction) a column.  The choice and its estimate are stated in a
 * comment, for review. */
void emit_jacobian(Emitter *e, Function fn, Buf *c)
{
    const Ir *ir = e->ir;
    const EmitOptions *opt = e->opt;
    const char *m = ir->model, *sfx = emit_real_suffix(opt);
    char *M = emit_upper(m);
    long nout = ir_output_count(ir), nparam = ir_param_count(ir);
    const char *in = e->storage.has_input ? DV_PREFIX "in, " : "";
    const char *work = e->storage.uses_work ? ", " DV_PREFIX "work" : "";
    buf_put(c, "\n");
    emit_signature(c, ir, &e->storage, fn, DV_PREFIX, emit_real_type(opt));
    buf_put(c, "\n{\n");
    if (opt->jacobian_by_tangent)
        buf_printf(c, "    /* One tangent sweep per param, each giving a column: "
                      "%ld sweep%s of about\n     * %ld operations, against "
                      "%ld reverse sweep%s (one per output entry) of\n     * "
                      "about %ld. */\n", nparam, nparam == 1 ? "" : "s",
                   opt->work_tangent, nout, nout == 1 ? "" : "s",
                   opt->work_adjoint);
    else
        buf_printf(c, "    /* One reverse sweep per output entry, each giving a "
                      "row: %ld sweep%s of\n     * about %ld operations, against "
                      "%ld tangent sweep%s (one per param) of\n     * about "
                      "%ld. */\n", nout, nout == 1 ? "" : "s", opt->work_adjoint,
                   nparam, nparam == 1 ? "" : "s", opt->work_tangent);
    if (e->storage.uses_work)
        check_sizes(c, e);
    /* the unit vectors run along one flat struct; the other gives the
     * row or column */
    const char *unit = opt->jacobian_by_tangent ? "param" : "output";
    const char *got = opt->jacobian_by_tangent ? "output" : "param";
    const char *UNIT = opt->jacobian_by_tangent ? "PARAM" : "OUTPUT";
    const char *GOT = opt->jacobian_by_tangent ? "OUTPUT" : "PARAM";
    buf_printf(c,
               "    %s_%s_flat " DV_PREFIX "unit;\n"
               "    %s_%s_flat " DV_PREFIX "got;\n"
               "    for (int " DV_PREFIX "j = 0; " DV_PREFIX "j < %s_%s_COUNT; "
               DV_PREFIX "j++)\n"
               "        " DV_PREFIX "unit.v[" DV_PREFIX "j] = 0.0%s;\n"
               "    for (int " DV_PREFIX "j = 0; " DV_PREFIX "j < %s_%s_COUNT; "
               DV_PREFIX "j++) {\n"
               "        " DV_PREFIX "unit.v[" DV_PREFIX "j] = 1.0%s;\n",
               m, unit, m, got, M, UNIT, sfx, M, UNIT, sfx);
    if (opt->jacobian_by_tangent)
        buf_printf(c, "        %s_tangent(" DV_PREFIX "p, %s&" DV_PREFIX "unit.p, "
                      DV_PREFIX "out, &" DV_PREFIX "got.o%s);\n", m, in, work);
    else
        buf_printf(c, "        %s_adjoint(" DV_PREFIX "p, %s&" DV_PREFIX "unit.o, "
                      DV_PREFIX "out, &" DV_PREFIX "got.p%s);\n", m, in, work);
    buf_printf(c,
               "        " DV_PREFIX "unit.v[" DV_PREFIX "j] = 0.0%s;\n"
               "        for (int " DV_PREFIX "k = 0; " DV_PREFIX "k < %s_%s_COUNT; "
               DV_PREFIX "k++)\n"
               "            " DV_PREFIX "jac[%s][%s] = " DV_PREFIX "got.v["
               DV_PREFIX "k];\n"
               "    }\n}\n",
               sfx, M, GOT,
               opt->jacobian_by_tangent ? DV_PREFIX "k" : DV_PREFIX "j",
               opt->jacobian_by_tangent ? DV_PREFIX "j" : DV_PREFIX "k");
    free(M);
}
