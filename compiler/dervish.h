/* dervish.h - the compiler as a library: one call takes model text through
 * every phase; main.c and the tests are its users.  Each compilation owns
 * an arena, so several can run one after another in one process. */
#ifndef DERVISH_H
#define DERVISH_H

#include "ast.h"
#include "buf.h"
#include "diag.h"
#include "ir.h"

/* Default of DvOptions.stack_limit: local arrays of the emitted code hold
 * at most this many doubles (32 KiB); larger ones live in work. */
#define DV_STACK_LIMIT 4096

/* Default of DvOptions.part_size: a function of more than four times this
 * many statements is written as parts of about this many. */
#define DV_PART_SIZE 100

/* Default of DvOptions.loop_repeats: in a function that long, a run of at
 * least this many repeats of one form of statements is written as a
 * loop. */
#define DV_LOOP_REPEATS 8

/* The functions dervish build emits (DvOptions.emit, --emit), as bits. */
enum { DV_EMIT_VALUE = 1, DV_EMIT_GRADIENT = 2, DV_EMIT_TANGENT = 4,
       DV_EMIT_HESSVEC = 8, DV_EMIT_HESSIAN = 16, DV_EMIT_ADJOINT = 32,
       DV_EMIT_JACOBIAN = 64 };
/* The defaults: for one scalar output, and for outputs in a struct. */
#define DV_EMIT_DEFAULT (DV_EMIT_VALUE | DV_EMIT_GRADIENT)
#define DV_EMIT_STRUCT_DEFAULT \
    (DV_EMIT_VALUE | DV_EMIT_ADJOINT | DV_EMIT_JACOBIAN)
/* What only one scalar output has, and what only outputs in a struct
 * have. */
#define DV_EMIT_SCALAR_ONLY \
    (DV_EMIT_GRADIENT | DV_EMIT_HESSVEC | DV_EMIT_HESSIAN)
#define DV_EMIT_STRUCT_ONLY (DV_EMIT_ADJOINT | DV_EMIT_JACOBIAN)

typedef struct DvOptions {
    const char *name;       /* --name: symbol prefix, or NULL */
    FILE *diag_out;         /* where diagnostics go; NULL: nowhere */
    long stack_limit;       /* --stack-limit; 0 means DV_STACK_LIMIT */
    long part_size;         /* --part-size; 0 means DV_PART_SIZE */
    long loop_repeats;      /* --loop-repeats; 0 means DV_LOOP_REPEATS,
                               -1 no loops */
    int emit;               /* --emit: DV_EMIT_* bits; 0 means the default */
    int line_directives;    /* --line-directives */
    int real_float;         /* --real float: emit single precision */
    /* -I: where 'use' looks for a file after the directory of the file
     * that uses it, in this order (the strings must outlive the
     * compilation) */
    const char *const *include_dirs;
    int ninclude;
} DvOptions;

typedef struct DvCompilation {
    Arena arena;
    Source src;
    Diag diag;
    Ir *ir;                 /* after the reverse pass; NULL on errors */
    long stack_limit;       /* for the emitter */
    long part_size;         /* for the emitter */
    long loop_repeats;      /* for the emitter; 0: no loops */
    int emit;               /* DV_EMIT_* bits: what is emitted and checked */
    int jacobian_by_tangent;    /* see EmitOptions */
    long work_adjoint, work_tangent;
    int line_directives;    /* #line directives in the emitted C */
    int real_float;         /* emit float, not double */
    SourceSet files;        /* the files 'use' statements read */
    /* Every file the compilation read, for the dependencies of its
     * outputs: the model's path as given, then each used file's as found
     * (relative to the current directory unless absolute), in the order
     * first read, each once.  Set whether or not the model has errors. */
    const char **paths;
    int npaths;
} DvCompilation;

/* Compile model text (len bytes; a copy is taken) read from PATH.
 * Returns 0 when the model has no errors. */
int dv_compile(DvCompilation *c, const char *path, const char *text,
               size_t len, const DvOptions *opt);

/* Emit C for a compiled model: source into *c_out, header into *h_out
 * (both appended to).  source_name and header_name are the files' names
 * as the banners show them; the source #includes header_name. */
void dv_emit(const DvCompilation *c, const char *source_name,
             const char *header_name, Buf *c_out, Buf *h_out);

/* Print how the emitted gradient uses memory (row by row or not, and
 * which arrays live in the work buffer), and why. */
void dv_explain(const DvCompilation *c, FILE *out);

void dv_free(DvCompilation *c);

/* The file name without directory and extension ("a/b/kiln.dvs" -> "kiln"),
 * in the compilation's arena. */
const char *dv_stem(Arena *a, const char *path);
const char *dv_basename(const char *path);

#endif
