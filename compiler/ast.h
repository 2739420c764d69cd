/* ast.h - the syntax tree the parser builds, one node per source construct.
 *
 * Nodes live in the compilation's arena.  Names are NUL-terminated copies;
 * every node keeps the span of source it came from for diagnostics. */
#ifndef DERVISH_AST_H
#define DERVISH_AST_H

#include "arena.h"
#include "diag.h"

typedef enum AstExprKind {
    AST_NUM,        /* number literal */
    AST_NAME,       /* bare name: a value, a const or (as subscript) an index */
    AST_SUBSCRIPT,  /* name[args] */
    AST_CALL,       /* name(args): a builtin or a def */
    AST_REDUCE,     /* name(i, j: body): sum, max, min, logsumexp */
    AST_UNARY,      /* op args[0] */
    AST_BINARY,     /* args[0] op args[1] */
    AST_SELECT      /* args[0] ? args[1] : args[2] */
} AstExprKind;

/* Operators as the parser sees them (the token that spelled them). */
typedef enum AstOp {
    AOP_NONE,
    AOP_ADD, AOP_SUB, AOP_MUL, AOP_DIV, AOP_POW,
    AOP_NEG, AOP_NOT,
    AOP_LT, AOP_LE, AOP_GT, AOP_GE, AOP_EQ, AOP_NE,
    AOP_AND, AOP_OR
} AstOp;

typedef struct AstExpr AstExpr;
struct AstExpr {
    AstExprKind kind;
    AstOp op;           /* AST_UNARY, AST_BINARY */
    Span span;          /* the whole expression */
    Span name_span;     /* the name, for SUBSCRIPT, CALL, REDUCE, NAME */
    const char *name;   /* NAME, SUBSCRIPT, CALL, REDUCE */
    double num;         /* NUM */
    AstExpr **args;     /* operands, subscripts, call arguments */
    int nargs;
    AstExpr **bound;    /* REDUCE: the bound index names (AST_NAME nodes) */
    int nbound;
    AstExpr *body;      /* REDUCE */
    int depth;          /* height of this tree, 1 for a leaf */
    int binder;         /* REDUCE: resolve's id of its first bound index */
};

typedef enum AstStmtKind {
    STMT_MODEL,     /* model NAME */
    STMT_CONST,     /* const NAME = EXPR */
    STMT_INPUT,     /* input decls */
    STMT_PARAM,     /* param decls */
    STMT_SIZE,      /* size NAME, ... */
    STMT_DEFINE,    /* NAME = EXPR or NAME[i, ...] = EXPR */
    STMT_OUTPUT,    /* output NAME, ... */
    STMT_DEF,       /* def NAME(a, ...) = EXPR */
    STMT_USE        /* use "FILE" */
} AstStmtKind;

/* One declared name with its dimensions (input and param). */
typedef struct AstDecl {
    const char *name;
    Span span;
    AstExpr **dims;     /* each a NUM or a NAME of a const */
    int ndims;
} AstDecl;

typedef struct AstStmt {
    AstStmtKind kind;
    Span span;          /* the whole statement */
    const char *name;   /* MODEL, CONST, DEFINE, DEF: the name defined */
    Span name_span;
    AstExpr *expr;      /* CONST, DEFINE: the right side; DEF: the body */
    AstExpr **index;    /* DEFINE in index form: the free indices (NAMEs) */
    int nindex;         /* 0 for the scalar and whole-array forms */
    AstDecl *decls;     /* INPUT, PARAM */
    int ndecls;
    AstExpr **names;    /* OUTPUT, SIZE: the names listed; DEF: the
                           parameters (all NAMEs) */
    int nnames;
    const char *path;   /* USE: the file named, without the quotes */
    Span path_span;     /* USE: the string, quotes included */
} AstStmt;

typedef struct AstModel {
    AstStmt **stmts;
    int nstmts;
    /* Names that statements with syntax errors were probably defining;
     * uses of them are not reported again as unknown. */
    const char **failed_names;
    int nfailed;
} AstModel;

#endif
