/* parser.y - the model language's grammar; lemon turns this into
 * build/parser.c and build/parser.h:
 *   lemon -q -l -dbuild -T/usr/share/lemon/lempar.c grammar/parser.y
 *
 * The lexer pushes tokens one at a time (parse_model in parse.c); actions
 * build AST nodes in the compilation's arena, so no destructors are needed. */

%name DvParser
%token_prefix TOK_
%token_type {Token}
%default_type {AstExpr *}
%extra_argument {ParseState *ps}
%stack_size 30000

%include {
#include "parse_state.h"
#include <assert.h>
}

%syntax_error {
    parse_syntax_error(ps, yymajor, TOKEN);
}

/* Values live in the arena, so nothing needs freeing; this only keeps the
 * generated destructor from warning about its unused arguments. */
%token_destructor { (void)yypminor; (void)ps; }

%stack_overflow {
    parse_too_deep(ps);
}

/* Token numbering is fixed here so the lexer and tests can rely on it. */
%token NEWLINE SEMI MODEL CONST INPUT PARAM OUTPUT SIZE DEF USE
       NAME NUMBER STRING ASSIGN COMMA LPAREN RPAREN LBRACKET RBRACKET.

/* Precedence, lowest first (LANGUAGE.md section 4). */
%right QUESTION COLON.
%left OROR.
%left ANDAND.
%left EQ NE.
%left LT LE GT GE.
%left PLUS MINUS.
%left STAR SLASH.
%right NOT.
%right CARET.

/* ---------------------------------------------------------------- lines */

program ::= lines.
lines ::= .
lines ::= lines line.
line ::= end.
line ::= stmt(S) end.           { parse_add_stmt(ps, S); }
line ::= error end.
end ::= NEWLINE.
end ::= SEMI.

/* ----------------------------------------------------------- statements */

%type stmt {AstStmt *}
%type decls {DeclList}
%type decl {AstDecl}
%type exprs {ExprList}

stmt(S) ::= MODEL(K) NAME(N).
    { S = parse_stmt(ps, STMT_MODEL, K.span, N.span); S->name = parse_name(ps, N); S->name_span = N.span; }
stmt(S) ::= CONST(K) NAME(N) ASSIGN expr(E).
    { S = parse_stmt(ps, STMT_CONST, K.span, E->span); S->name = parse_name(ps, N); S->name_span = N.span; S->expr = E; }
stmt(S) ::= INPUT(K) decls(D).
    { S = parse_stmt(ps, STMT_INPUT, K.span, D.last); S->decls = D.items; S->ndecls = D.len; }
stmt(S) ::= PARAM(K) decls(D).
    { S = parse_stmt(ps, STMT_PARAM, K.span, D.last); S->decls = D.items; S->ndecls = D.len; }
stmt(S) ::= OUTPUT(K) exprs(L).
    { S = parse_names(ps, STMT_OUTPUT, K, L); }
stmt(S) ::= NAME(N) ASSIGN expr(E).
    { S = parse_stmt(ps, STMT_DEFINE, N.span, E->span); S->name = parse_name(ps, N); S->name_span = N.span; S->expr = E; }
stmt(S) ::= NAME(N) LBRACKET exprs(L) RBRACKET ASSIGN expr(E).
    { S = parse_define_indexed(ps, N, L, E); }
stmt(S) ::= SIZE(K) exprs(L).
    { S = parse_names(ps, STMT_SIZE, K, L); }
stmt(S) ::= DEF(K) NAME(N) LPAREN exprs(L) RPAREN ASSIGN expr(E).
    { S = parse_def(ps, K, N, L, E); }
stmt(S) ::= USE(K) STRING(P).
    { S = parse_use(ps, K, P); }

decls(D) ::= decl(A).                   { D = parse_decls(ps, NULL, A); }
decls(D) ::= decls(L) COMMA decl(A).    { D = parse_decls(ps, &L, A); }
decl(D) ::= NAME(N).
    { D = parse_decl(ps, N, NULL, N.span); }
decl(D) ::= NAME(N) LBRACKET exprs(L) RBRACKET(R).
    { D = parse_decl(ps, N, &L, R.span); }

exprs(L) ::= expr(E).                   { L = parse_exprs(ps, NULL, E); }
exprs(L) ::= exprs(M) COMMA expr(E).    { L = parse_exprs(ps, &M, E); }

/* ---------------------------------------------------------- expressions */

expr(E) ::= NUMBER(T).      { E = parse_number(ps, T); }
expr(E) ::= NAME(N).        { E = parse_named(ps, AST_NAME, N, NULL, N.span); }
expr(E) ::= NAME(N) LBRACKET exprs(L) RBRACKET(R).
    { E = parse_named(ps, AST_SUBSCRIPT, N, &L, R.span); }
expr(E) ::= NAME(N) LPAREN exprs(L) RPAREN(R).
    { E = parse_named(ps, AST_CALL, N, &L, R.span); }
expr(E) ::= NAME(N) LPAREN(P) RPAREN(R).
    { ExprList none = {NULL, 0, 0, P.span}; E = parse_named(ps, AST_CALL, N, &none, R.span); }
expr(E) ::= NAME(N) LPAREN exprs(L) COLON expr(B) RPAREN(R).
    { E = parse_reduce(ps, N, L, B, R.span); }
expr(E) ::= LPAREN(L) expr(A) RPAREN(R).
    { E = A; E->span = span_join(L.span, R.span); }
expr(E) ::= MINUS(T) expr(A). [NOT]     { E = parse_unary(ps, AOP_NEG, T, A); }
expr(E) ::= NOT(T) expr(A).             { E = parse_unary(ps, AOP_NOT, T, A); }
expr(E) ::= expr(A) PLUS expr(B).       { E = parse_binary(ps, AOP_ADD, A, B); }
expr(E) ::= expr(A) MINUS expr(B).      { E = parse_binary(ps, AOP_SUB, A, B); }
expr(E) ::= expr(A) STAR expr(B).       { E = parse_binary(ps, AOP_MUL, A, B); }
expr(E) ::= expr(A) SLASH expr(B).      { E = parse_binary(ps, AOP_DIV, A, B); }
expr(E) ::= expr(A) CARET expr(B).      { E = parse_binary(ps, AOP_POW, A, B); }
expr(E) ::= expr(A) LT expr(B).         { E = parse_binary(ps, AOP_LT, A, B); }
expr(E) ::= expr(A) LE expr(B).         { E = parse_binary(ps, AOP_LE, A, B); }
expr(E) ::= expr(A) GT expr(B).         { E = parse_binary(ps, AOP_GT, A, B); }
expr(E) ::= expr(A) GE expr(B).         { E = parse_binary(ps, AOP_GE, A, B); }
expr(E) ::= expr(A) EQ expr(B).         { E = parse_binary(ps, AOP_EQ, A, B); }
expr(E) ::= expr(A) NE expr(B).         { E = parse_binary(ps, AOP_NE, A, B); }
expr(E) ::= expr(A) ANDAND expr(B).     { E = parse_binary(ps, AOP_AND, A, B); }
expr(E) ::= expr(A) OROR expr(B).       { E = parse_binary(ps, AOP_OR, A, B); }
expr(E) ::= expr(C) QUESTION expr(A) COLON expr(B).
    { E = parse_select(ps, C, A, B); }
