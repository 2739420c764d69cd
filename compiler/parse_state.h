/* parse_state.h - what the grammar actions in grammar/parser.y share with
 * parse.c: the parser's state and the node builders its actions call. */
#ifndef DERVISH_PARSE_STATE_H
#define DERVISH_PARSE_STATE_H

#include "parse.h"

typedef struct ParseState {
    Arena *arena;       /* the syntax trees */
    Arena *keep;        /* what outlives a statement: failed names, lists */
    Diag *diag;
    Lexer lexer;
    uint32_t base;      /* span offset of the source's first byte */
    VEC(AstStmt *) stmts;
    Token prev;         /* the token before the one being parsed */
    Token prev2;        /* and the one before that */
    Token first;        /* the first token of the current statement */
    VEC(Span) stmt_names;       /* names seen in the current statement */
    VEC(const char *) failed;   /* names a failed statement may define */
    int stmt_failed;    /* the current statement had a syntax error */
    int open_selects;   /* '?' minus ':' seen in the current statement */
    int assigned;       /* the current statement has passed its '=' */
    int too_deep;       /* nesting limit hit: parsing stops */
} ParseState;

typedef struct ExprList {
    AstExpr **items;
    int len, cap;
    Span last;          /* span of the last item */
} ExprList;

typedef struct DeclList {
    AstDecl *items;
    int len, cap;
    Span last;
} DeclList;

/* Who takes the statements from parse_each, one at a time. */
typedef struct ParseVisitor {
    void (*visit)(void *ctx, const AstStmt *s);
    void *ctx;
    const char **failed;    /* out: what parse_model's failed_names holds */
    int nfailed;
    /* visit reads no more of a definition 'NAME = EXPR' than its kind,
     * name and spans: a plain one is checked by a quick scan of its tokens
     * and handed over without a tree */
    int names_only;
    /* NULL: each statement's tree is freed once visited.  Else called
     * after the statements ending at each boundary are visited: the trees
     * so far are the visitor's, and the next ones are built in the arena
     * it returns (given ctx) */
    Arena *(*trees)(void *ctx);
} ParseVisitor;

/* Parse the whole source like parse_model, but hand each statement to
 * v->visit as soon as it is complete and free its tree right after (or
 * leave it to v->trees), so the memory used does not grow with the model.  Syntax errors are
 * counted (and reported) in diag; the failed names go to v, in arena. */
void parse_each(Arena *arena, Diag *diag, const Source *src, ParseVisitor *v);

void parse_syntax_error(ParseState *ps, int code, Token tok);
void parse_too_deep(ParseState *ps);
void parse_add_stmt(ParseState *ps, AstStmt *s);

const char *parse_name(ParseState *ps, Token name);
AstStmt *parse_stmt(ParseState *ps, AstStmtKind kind, Span first, Span last);
/* output NAME, ... and size NAME, ...: every item must be a name. */
AstStmt *parse_names(ParseState *ps, AstStmtKind kind, Token keyword,
                     ExprList names);
AstStmt *parse_define_indexed(ParseState *ps, Token name, ExprList index,
                              AstExpr *e);
/* def NAME(params) = body: every parameter must be a name. */
AstStmt *parse_def(ParseState *ps, Token keyword, Token name,
                   ExprList params, AstExpr *body);
AstStmt *parse_use(ParseState *ps, Token keyword, Token path);
DeclList parse_decls(ParseState *ps, DeclList *list, AstDecl d);
AstDecl parse_decl(ParseState *ps, Token name, ExprList *dims, Span last);
ExprList parse_exprs(ParseState *ps, ExprList *list, AstExpr *e);

AstExpr *parse_number(ParseState *ps, Token t);
AstExpr *parse_named(ParseState *ps, AstExprKind kind, Token name,
                     ExprList *args, Span last);
AstExpr *parse_reduce(ParseState *ps, Token name, ExprList bound,
                      AstExpr *body, Span last);
AstExpr *parse_unary(ParseState *ps, AstOp op, Token t, AstExpr *a);
AstExpr *parse_binary(ParseState *ps, AstOp op, AstExpr *a, AstExpr *b);
AstExpr *parse_select(ParseState *ps, AstExpr *c, AstExpr *a, AstExpr *b);

/* lemon's entry points (build/parser.c) */
void *DvParserAlloc(void *(*malloc_fn)(size_t));
void DvParser(void *parser, int code, Token tok, ParseState *ps);
void DvParserFree(void *parser, void (*free_fn)(void *));
void DvParserInit(void *parser);
void DvParserFinalize(void *parser);
int DvParserFallback(int token);
#ifndef NDEBUG
void DvParserTrace(FILE *trace, char *prompt);
#endif

#endif
