/* resolve_internal.h - what resolve.c, resolve_def.c and uses.c share:
 * the resolver's state and the functions one of them calls in another.
 * Not an interface of the library: resolve.h is. */
#ifndef DERVISH_RESOLVE_INTERNAL_H
#define DERVISH_RESOLVE_INTERNAL_H

#include "resolve.h"

#include <sys/stat.h>

typedef enum SymKind {
    SYM_LATER,          /* defined by a later statement: not visible yet */
    SYM_CONST,
    SYM_ARRAY,
    SYM_SIZE,
    SYM_DEF
} SymKind;

typedef struct DefInfo DefInfo;

typedef struct Symbol {
    const char *name;   /* a copy in the arena (the IR's arrays share it) */
    double value;       /* SYM_CONST */
    Span span;          /* where it was defined */
    int32_t array;      /* SYM_ARRAY */
    int32_t size;       /* SYM_SIZE: its id in ir->sizes */
    DefInfo *def;       /* SYM_DEF, and SYM_LATER for a def not reached */
    uint32_t hash;      /* of name: most probes need not read the name */
    uint8_t kind;       /* SymKind */
    uint8_t failed;     /* its definition had errors: uses stay quiet */
} Symbol;

/* A def function: what the first pass saw of it, then, once its statement
 * is resolved, its checked body and the size of its expansion. */
struct DefInfo {
    const char *name;
    Span name_span;
    const char **params;    /* the parameter names */
    int nparams;
    const AstExpr *body;    /* a copy kept in the arena */
    int is_cond;            /* the body is a condition */
    int constant;           /* no condition anywhere in its expansion, so
                               a const may call it */
    /* The expansion as a tree, the parameters left out: its depth and
     * node count; for each parameter the depth of its deepest use below
     * the root and the number of its uses. */
    double depth, size;
    double *param_depth, *param_uses;
    /* first pass: the functions the body calls, to find recursion */
    const char **calls;
    Span *call_spans;
    int ncalls;
    int stamp;              /* visited by the current recursion search */
    int cyclic;             /* on a cycle of calls already reported */
};

/* The arguments of the def being expanded: its parameters stand for
 * these nodes (lowering) or numbers (constants). */
typedef struct Frame {
    const DefInfo *def;
    const NodeId *nodes;
    const double *values;
} Frame;

/* A file being read or read already, known by its device and inode. */
typedef struct FileId {
    dev_t dev;
    ino_t ino;
    int known;          /* stat succeeded (a model given as text may not
                           exist as a file) */
    const char *path;   /* as messages show it */
    Span used_at;       /* the 'use' that read it (none for the model) */
} FileId;

/* A bound index: a free index of the left side, an implicit index of a
 * whole-array definition, or an index bound by a reduction. */
typedef struct Binder {
    const char *name;
    Span span;          /* where it was bound */
    int extent;         /* EXTENT_UNKNOWN until a subscript gives it one */
    Span range_from;    /* the subscript that gave the range */
    int32_t var;        /* its IR index var, made once the range is known */
} Binder;

typedef struct DefinedValue {
    int32_t array;
    Span name_span;     /* the name in its definition */
} DefinedValue;

/* A model statement, as the first pass saw it. */
typedef struct ModelStmt {
    int index;          /* its place among the statements */
    Span span, name_span;
    const char *name;
} ModelStmt;

typedef struct SymTable {
    Symbol *items;      /* open addressing on name */
    int cap, len;
} SymTable;

typedef struct Resolver {
    Arena *arena;
    Diag *diag;
    const Source *src;
    Ir *ir;
    SymTable symbols;   /* every name the model defines: SYM_LATER until
                           its definition is reached */
    SymTable unparsed;  /* names of statements that failed to parse */
    VEC(DefinedValue) defined;
    int nparams;
    int noutputs;
    VEC(Span) output_spans; /* of each of ir->outputs, in the statement */

    /* what the first pass (outline) saw of the whole model */
    VEC(ModelStmt) models;  /* the model statements */
    int nstmts;
    Span last_span;     /* the last statement */
    int has_output;     /* an output statement was resolved */
    Span last_output;   /* the last one */

    /* the definition being resolved */
    const AstStmt *stmt;
    const char *target_name;
    VEC(Binder) binders;
    VEC(int) scope;         /* binder ids in scope, outermost first */
    int index_form;         /* the left side has indices */
    int elem_rank;          /* whole-array form: rank of the bare arrays, -1 */
    int elem_dim[IR_MAX_RANK];
    Span elem_from;
    int failed;
    int ntemps;

    /* def functions */
    DefInfo *def;           /* the def whose body is being checked */
    const Frame *frame;     /* the innermost def being expanded */
    int stamp;              /* of the last recursion search */
    int saw_cond;           /* a condition was seen in the body checked */
    double expanded;        /* nodes of the expansions in this statement */
    int call_depth;         /* measuring: def calls around this point */
    int too_big;            /* an expansion limit was reported */

    /* used files */
    VEC(FileId) reading;    /* the files being read, the model first */
    VEC(FileId) read;       /* every file read, each once */
    int lost_file;          /* a used file could not be read */
} Resolver;

/* The tree an expression lowers to, with its def calls expanded: its
 * depth and its number of nodes (or, from param_uses, the depth of a
 * parameter's deepest use and the number of its uses).  Inside a def's
 * body its parameters count as nothing; each call then adds what its
 * arguments bring, through the parameters that use them. */
typedef struct Measure {
    double depth, size;
} Measure;

/* resolve.c: the symbol table and the passes over a source */
Symbol *rs_table_find(const SymTable *t, const char *name);
const char *rs_copy_name(Resolver *r, const char *name);
Symbol *rs_lookup(Resolver *r, const char *name);
int rs_failed_earlier(Resolver *r, const char *name);
void rs_insert_failed(Resolver *r, const char *name, Span span);
void rs_fail(Resolver *r);
int rs_reduction_kind(const char *name);
void rs_read_twice(Resolver *r, const Source *src,
                   void (*visit)(void *, const AstStmt *),
                   const char *name, const char *stem);
void rs_visit_names(void *r, const AstStmt *s);

/* resolve_def.c: def calls and the size of their expansion */
DefInfo *rs_new_def(Resolver *r, const char *name, Span name_span);
int rs_param_index(const DefInfo *d, const char *name);
void rs_note_def(Resolver *r, const DefInfo *d);
void rs_arity_error(Resolver *r, const AstExpr *e, int want);
int rs_arity_matches(Resolver *r, const AstExpr *e, const DefInfo *d);
const DefInfo *rs_def_called(Resolver *r, const AstExpr *e);
const DefInfo *rs_expandable(Resolver *r, const AstExpr *e);
Measure rs_measure(Resolver *r, const AstExpr *e, int level);
Measure rs_param_uses(Resolver *r, const AstExpr *e, int p);
int rs_expansion_fits(Resolver *r, const AstExpr *e);

/* uses.c: used files */
FileId rs_file_id(const char *path, Span used_at);
void resolve_use_stmt(Resolver *r, const AstStmt *s);
void rs_refuse_in_used(Resolver *r, const AstStmt *s);

#endif
