/* parse.h - from source text to syntax tree: the lexer (grammar/lexer.re)
 * pushes tokens into the lemon parser (grammar/parser.y). */
#ifndef DERVISH_PARSE_H
#define DERVISH_PARSE_H

#include "ast.h"

/* Deepest expression tree the parser accepts (operators and brackets both
 * count); deeper input is a model error, so later phases may recurse. */
#define PARSE_MAX_DEPTH 10000

typedef struct Token {
    int code;           /* lemon's TOK_ code, 0 at end of input */
    Span span;
    double num;         /* TOK_NUMBER */
} Token;

typedef struct Lexer {
    const Source *src;
    Diag *diag;
    Arena *arena;
    const unsigned char *cur;   /* next byte to scan */
    const unsigned char *end;   /* the terminating NUL */
    int last;                   /* code of the last token returned */
    Span last_span;             /* and its span */
    VEC(Span) open;             /* unclosed ( and [ */
    int failed_at_end;          /* an unclosed bracket was reported */
    int error_in_stmt;          /* a lexical error in the current statement */
    int too_deep;               /* the bracket limit was reported */
    Span joined;                /* operator whose line break was joined */
    int has_joined;             /* joined is set (reset per statement) */
} Lexer;

void lex_init(Lexer *lx, const Source *src, Diag *diag, Arena *arena);
Token lex_next(Lexer *lx);

/* Parse the whole source.  Always returns a model (possibly partial);
 * syntax errors are counted in diag. */
AstModel *parse_model(Arena *arena, Diag *diag, const Source *src);

/* A printable description of a token code, e.g. "'+'" or "a name". */
const char *parse_token_name(int code);

#endif
