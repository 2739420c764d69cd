/* emit_c.h - the C emitter: IR after the reverse pass in, the model's C
 * source and header out (LANGUAGE.md section 6). */
#ifndef DERVISH_EMIT_C_H
#define DERVISH_EMIT_C_H

#include "buf.h"
#include "ir.h"

typedef struct EmitOptions {
    const char *model_file;     /* shown in comments (a base name) */
    const char *header_name;    /* what the source #includes */
    const char *source_name;    /* the C file's own name, for its banner */
    const char *version;        /* dervish's version, for the banner */
    long stack_limit;           /* most doubles in one local array; larger
                                   arrays go to the caller's work buffer */
    long part_size;             /* statements in a part of a long function */
    long loop_repeats;          /* in a long function, a run of at least
                                   this many repeats of one form of
                                   statements is written as a loop; 0:
                                   never */
    const char *model_path;     /* the model as dervish read it (#line) */
    int line_directives;        /* point each statement's code at the model
                                   with #line */
    int emit;                   /* the functions emitted (DV_EMIT_* bits in
                                   dervish.h) */
    int jacobian_by_tangent;    /* the Jacobian takes one tangent sweep
                                   per param, not one reverse sweep per
                                   output entry */
    long work_adjoint;          /* the estimated work of one reverse sweep */
    long work_tangent;          /* and of one tangent sweep (ir_work) */
    int real_float;             /* float throughout instead of double:
                                   types, literals, math functions and the
                                   runtime helpers' float forms */
} EmitOptions;

/* The functions the emitter can write, as --emit names them: kind k has
 * the DV_EMIT_* bit 1 << k (dervish.h). */
#define EMIT_KINDS 7
const char *emit_kind_name(int kind);

/* Append the source to c and the header to h. */
void emit_c(const Ir *ir, const EmitOptions *opt, Buf *c, Buf *h);

#endif
