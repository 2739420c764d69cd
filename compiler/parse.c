/* parse.c - drives the lexer and the lemon parser, builds AST nodes for the
 * grammar's actions, and words syntax errors in terms of what was expected. */
#include "parse_state.h"
#include "parser.h"

#include <stdlib.h>
#include <string.h>

const char *parse_token_name(int code)
{
    switch (code) {
    case 0: return "the end of the file";
    case TOK_NEWLINE: return "the end of the line";
    case TOK_SEMI: return "';'";
    case TOK_MODEL: return "'model'";
    case TOK_CONST: return "'const'";
    case TOK_INPUT: return "'input'";
    case TOK_PARAM: return "'param'";
    case TOK_OUTPUT: return "'output'";
    case TOK_SIZE: return "'size'";
    case TOK_DEF: return "'def'";
    case TOK_USE: return "'use'";
    case TOK_NAME: return "a name";
    case TOK_NUMBER: return "a number";
    case TOK_STRING: return "a string";
    case TOK_ASSIGN: return "'='";
    case TOK_COMMA: return "','";
    case TOK_LPAREN: return "'('";
    case TOK_RPAREN: return "')'";
    case TOK_LBRACKET: return "'['";
    case TOK_RBRACKET: return "']'";
    case TOK_QUESTION: return "'?'";
    case TOK_COLON: return "':'";
    case TOK_OROR: return "'||'";
    case TOK_ANDAND: return "'&&'";
    case TOK_EQ: return "'=='";
    case TOK_NE: return "'!='";
    case TOK_LT: return "'<'";
    case TOK_LE: return "'<='";
    case TOK_GT: return "'>'";
    case TOK_GE: return "'>='";
    case TOK_PLUS: return "'+'";
    case TOK_MINUS: return "'-'";
    case TOK_STAR: return "'*'";
    case TOK_SLASH: return "'/'";
    case TOK_NOT: return "'!'";
    case TOK_CARET: return "'^'";
    default: return "a token";
    }
}

/* Tokens after which an expression must follow. */
static int wants_operand(int code)
{
    switch (code) {
    case TOK_PLUS: case TOK_MINUS: case TOK_STAR: case TOK_SLASH:
    case TOK_CARET: case TOK_LT: case TOK_LE: case TOK_GT: case TOK_GE:
    case TOK_EQ: case TOK_NE: case TOK_ANDAND: case TOK_OROR: case TOK_NOT:
    case TOK_QUESTION: case TOK_COLON: case TOK_ASSIGN:
        return 1;
    default:
        return 0;
    }
}

/* Tokens that can end an expression. */
static int ends_operand(int code)
{
    return code == TOK_NAME || code == TOK_NUMBER || code == TOK_RPAREN ||
           code == TOK_RBRACKET;
}

/* Tokens that can start an expression. */
static int starts_operand(int code)
{
    return code == TOK_NAME || code == TOK_NUMBER || code == TOK_LPAREN ||
           code == TOK_MINUS || code == TOK_NOT;
}

/* The source text a span starts at (spans count from the file's base). */
static const char *text_at(const ParseState *ps, Span at)
{
    return ps->lexer.src->text + (at.off - ps->base);
}

/* How a token is named in a message: its text for names and numbers. */
static const char *describe(ParseState *ps, int code, Token tok)
{
    const char *text = text_at(ps, tok.span);
    if (code == TOK_NAME)
        return arena_printf(ps->arena, "the name '%.*s'", (int)tok.span.len,
                            text);
    if (code == TOK_NUMBER)
        return arena_printf(ps->arena, "the number '%.*s'",
                            (int)tok.span.len, text);
    return parse_token_name(code);
}

static int line_of(const ParseState *ps, Span at)
{
    int line, col;
    source_line_col(ps->lexer.src, at.off - ps->base, &line, &col);
    return line;
}

/* True when nothing but blanks precedes the token on its line. */
static int first_on_line(const ParseState *ps, Span at)
{
    const char *text = ps->lexer.src->text;
    for (uint32_t i = at.off - ps->base; i > 0; i--) {
        char c = text[i - 1];
        if (c == '\n')
            return 1;
        if (c != ' ' && c != '\t')
            return 0;
    }
    return 1;
}

/* Remember that a statement which failed may have been defining the name
 * of n bytes at text. */
static void remember_failed(ParseState *ps, const char *text, size_t n)
{
    VEC_PUSH(ps->keep, ps->failed, arena_strndup(ps->keep, text, n));
}

/* Remember the names the failing statement may have been defining (its
 * leading name, the name after def, or the names after const, input or
 * param), so later uses of them are not reported as unknown. */
static void note_failed_names(ParseState *ps)
{
    int first = ps->first.code;
    if (ps->stmt_failed)
        return;
    ps->stmt_failed = 1;
    if (first != TOK_NAME && first != TOK_CONST && first != TOK_INPUT &&
        first != TOK_PARAM && first != TOK_DEF)
        return;
    for (int i = 0; i < ps->stmt_names.len; i++) {
        Span n = ps->stmt_names.items[i];
        remember_failed(ps, text_at(ps, n), n.len);
        if (first == TOK_NAME || first == TOK_DEF)
            break;
    }
}

/* What a keyword does, for the error that refuses it as a name. */
static const char *keyword_role(int code)
{
    switch (code) {
    case TOK_SIZE: return "it declares runtime sizes";
    case TOK_DEF: return "it defines a function";
    case TOK_USE: return "it reads another model file";
    default: return NULL;
    }
}

void parse_syntax_error(ParseState *ps, int code, Token tok)
{
    note_failed_names(ps);
    if (ps->lexer.error_in_stmt)
        return;     /* the lexer already reported this statement */
    if (ps->lexer.open.len > 0 && first_on_line(ps, tok.span)) {
        /* A statement ran on into the next line: the bracket is the cause. */
        Span open = ps->lexer.open.items[ps->lexer.open.len - 1];
        diag_error(ps->diag, open,
                   "'%c' is never closed, so the statement runs on into "
                   "line %d", *text_at(ps, open), line_of(ps, tok.span));
        ps->lexer.open.len = 0;     /* newlines end statements again */
        return;
    }
    const char *found = describe(ps, code, tok);
    int prev = ps->prev.code;
    if (keyword_role(code) && prev != TOK_NEWLINE && prev != TOK_SEMI) {
        diag_error(ps->diag, tok.span,
                   "%s is a keyword (%s) and cannot be used as a name",
                   found, keyword_role(code));
        return;
    }
    Span joined = ps->lexer.joined;
    if (ps->lexer.has_joined && code != 0 && code != TOK_NEWLINE &&
        joined.off >= ps->first.span.off &&
        line_of(ps, tok.span) > line_of(ps, joined)) {
        /* An operator at the end of a line continued the statement onto
         * the next, where it went wrong: the operator is the likely cause. */
        diag_error(ps->diag, joined,
                   "'%.*s' ends the line, so the statement runs on into "
                   "line %d", (int)joined.len, text_at(ps, joined),
                   line_of(ps, joined) + 1);
        /* the next line probably began a definition of its own */
        for (int i = 0; i < ps->stmt_names.len; i++) {
            Span n = ps->stmt_names.items[i];
            if (n.off > joined.off && first_on_line(ps, n)) {
                remember_failed(ps, text_at(ps, n), n.len);
                break;
            }
        }
        return;
    }
    int first = ps->first.code;
    if (code == TOK_NEWLINE || code == 0) {
        /* point just past the last token, not at the next line */
        tok.span.off = ps->prev.span.off + ps->prev.span.len;
        tok.span.len = 1;
    }
    if (first == TOK_USE) {
        diag_error(ps->diag, tok.span,
                   "'use' takes one file name in quotes, as in "
                   "'use \"common.dvs\"'; found %s", found);
    } else if (first == TOK_DEF && !ps->assigned) {
        diag_error(ps->diag, tok.span,
                   "a def is written 'def NAME(a, b, ...) = EXPR', with at "
                   "least one parameter; found %s", found);
    } else if (wants_operand(prev) || prev == TOK_LPAREN ||
               prev == TOK_COMMA || prev == TOK_LBRACKET) {
        if (prev == TOK_COMMA || prev == TOK_LPAREN || prev == TOK_LBRACKET)
            diag_error(ps->diag, tok.span,
                       "expected a name or expression after '%c', found %s",
                       *text_at(ps, ps->prev.span), found);
        else
            diag_error(ps->diag, tok.span,
                       "expected an expression after %s, found %s",
                       parse_token_name(prev), found);
    } else if (prev == TOK_MODEL || prev == TOK_CONST || prev == TOK_INPUT ||
               prev == TOK_PARAM || prev == TOK_OUTPUT || prev == TOK_SIZE) {
        diag_error(ps->diag, tok.span, "expected a name after %s, found %s",
                   parse_token_name(prev), found);
    } else if ((first == TOK_NAME && ps->prev.span.off == ps->first.span.off) ||
               (first == TOK_CONST && prev == TOK_NAME &&
                ps->prev2.code == TOK_CONST)) {
        diag_error(ps->diag, tok.span,
                   "expected '=' after the name '%.*s' to define it, found %s",
                   (int)ps->prev.span.len, text_at(ps, ps->prev.span), found);
    } else if (prev == TOK_NEWLINE || prev == TOK_SEMI || prev == 0) {
        diag_error(ps->diag, tok.span,
                   "expected a statement (a definition 'name = ...', or "
                   "model, const, size, input, param, output, def or use), "
                   "found %s", found);
    } else if (ends_operand(prev) && starts_operand(code)) {
        diag_error(ps->diag, tok.span,
                   "expected an operator or the end of the statement "
                   "before %s", found);
    } else if ((code == TOK_NEWLINE || code == 0) && ps->open_selects > 0) {
        diag_error(ps->diag, tok.span,
                   "expected ':' and the other branch of '?', found the end "
                   "of the line");
    } else if (code == TOK_NEWLINE || code == 0) {
        diag_error(ps->diag, tok.span,
                   "the statement is incomplete at the end of the line");
    } else {
        diag_error(ps->diag, tok.span, "unexpected %s", found);
    }
}

void parse_too_deep(ParseState *ps)
{
    if (!ps->too_deep)
        diag_error(ps->diag, ps->prev.span,
                   "expression nested too deeply for the parser: split it "
                   "into named steps");
    ps->too_deep = 1;
}

void parse_add_stmt(ParseState *ps, AstStmt *s)
{
    if (s)
        VEC_PUSH(ps->keep, ps->stmts, s);
}

const char *parse_name(ParseState *ps, Token name)
{
    return arena_strndup(ps->arena, text_at(ps, name.span), name.span.len);
}

AstStmt *parse_stmt(ParseState *ps, AstStmtKind kind, Span first, Span last)
{
    AstStmt *s = arena_alloc(ps->arena, sizeof *s);
    s->kind = kind;
    s->span = span_join(first, last);
    return s;
}

AstStmt *parse_names(ParseState *ps, AstStmtKind kind, Token keyword,
                     ExprList names)
{
    AstStmt *s = parse_stmt(ps, kind, keyword.span, names.last);
    for (int i = 0; i < names.len; i++)
        if (names.items[i]->kind != AST_NAME) {
            if (kind == STMT_OUTPUT)
                diag_error(ps->diag, names.items[i]->span,
                           "'output' takes names of values; define the "
                           "expression first ('y = ...') and output 'y'");
            else
                diag_error(ps->diag, names.items[i]->span,
                           "'size' takes names, as in 'size n, m'");
            /* the names it did give stay quiet when used later */
            for (int k = 0; kind == STMT_SIZE && k < names.len; k++)
                if (names.items[k]->kind == AST_NAME)
                    remember_failed(ps, names.items[k]->name,
                                    strlen(names.items[k]->name));
            return NULL;
        }
    s->names = names.items;
    s->nnames = names.len;
    return s;
}

AstStmt *parse_define_indexed(ParseState *ps, Token name, ExprList index,
                              AstExpr *e)
{
    AstStmt *s = parse_stmt(ps, STMT_DEFINE, name.span, e->span);
    s->name = parse_name(ps, name);
    s->name_span = name.span;
    s->expr = e;
    for (int i = 0; i < index.len; i++)
        if (index.items[i]->kind != AST_NAME) {
            diag_error(ps->diag, index.items[i]->span,
                       "the left side takes index names, as in "
                       "'%s[i, j] = ...'", s->name);
            remember_failed(ps, s->name, strlen(s->name));
            return NULL;
        }
    s->index = index.items;
    s->nindex = index.len;
    return s;
}

AstStmt *parse_def(ParseState *ps, Token keyword, Token name,
                   ExprList params, AstExpr *body)
{
    AstStmt *s = parse_stmt(ps, STMT_DEF, keyword.span, body->span);
    s->name = parse_name(ps, name);
    s->name_span = name.span;
    s->expr = body;
    for (int i = 0; i < params.len; i++)
        if (params.items[i]->kind != AST_NAME) {
            diag_error(ps->diag, params.items[i]->span,
                       "a def's parameters are names, as in "
                       "'def %s(x, y) = ...'", s->name);
            remember_failed(ps, s->name, strlen(s->name));
            return NULL;
        }
    s->names = params.items;
    s->nnames = params.len;
    return s;
}

AstStmt *parse_use(ParseState *ps, Token keyword, Token path)
{
    AstStmt *s = parse_stmt(ps, STMT_USE, keyword.span, path.span);
    /* the string's text without its quotes */
    s->path = arena_strndup(ps->arena, text_at(ps, path.span) + 1,
                            path.span.len - 2);
    s->path_span = path.span;
    return s;
}

DeclList parse_decls(ParseState *ps, DeclList *list, AstDecl d)
{
    DeclList l = {NULL, 0, 0, d.span};
    if (list)
        l = *list;
    VEC_PUSH(ps->arena, l, d);
    l.last = d.span;
    return l;
}

AstDecl parse_decl(ParseState *ps, Token name, ExprList *dims, Span last)
{
    AstDecl d;
    memset(&d, 0, sizeof d);
    d.name = parse_name(ps, name);
    d.span = span_join(name.span, last);
    if (dims) {
        d.dims = dims->items;
        d.ndims = dims->len;
    }
    return d;
}

ExprList parse_exprs(ParseState *ps, ExprList *list, AstExpr *e)
{
    ExprList l = {NULL, 0, 0, e->span};
    if (list)
        l = *list;
    VEC_PUSH(ps->arena, l, e);
    l.last = e->span;
    return l;
}

static AstExpr *new_expr(ParseState *ps, AstExprKind kind, Span span)
{
    AstExpr *e = arena_alloc(ps->arena, sizeof *e);
    e->kind = kind;
    e->span = span;
    e->depth = 1;
    return e;
}

/* Give e the height of its tallest child plus one, and report trees deeper
 * than later phases are allowed to recurse. */
static AstExpr *set_depth(ParseState *ps, AstExpr *e)
{
    int d = 0;
    for (int i = 0; i < e->nargs; i++)
        if (e->args[i]->depth > d)
            d = e->args[i]->depth;
    if (e->body && e->body->depth > d)
        d = e->body->depth;
    e->depth = d + 1;
    if (e->depth > PARSE_MAX_DEPTH && !ps->too_deep) {
        diag_error(ps->diag, e->span,
                   "expression nested too deeply (limit is %d levels): "
                   "split it into named steps", PARSE_MAX_DEPTH);
        ps->too_deep = 1;
    }
    return e;
}

AstExpr *parse_number(ParseState *ps, Token t)
{
    AstExpr *e = new_expr(ps, AST_NUM, t.span);
    e->num = t.num;
    return e;
}

AstExpr *parse_named(ParseState *ps, AstExprKind kind, Token name,
                     ExprList *args, Span last)
{
    AstExpr *e = new_expr(ps, kind, span_join(name.span, last));
    e->name = parse_name(ps, name);
    e->name_span = name.span;
    if (args) {
        e->args = args->items;
        e->nargs = args->len;
    }
    return set_depth(ps, e);
}

AstExpr *parse_reduce(ParseState *ps, Token name, ExprList bound,
                      AstExpr *body, Span last)
{
    AstExpr *e = new_expr(ps, AST_REDUCE, span_join(name.span, last));
    e->name = parse_name(ps, name);
    e->name_span = name.span;
    for (int i = 0; i < bound.len; i++)
        if (bound.items[i]->kind != AST_NAME) {
            diag_error(ps->diag, bound.items[i]->span,
                       "a reduction binds index names before ':', as in "
                       "'sum(i: x[i])'");
            break;
        }
    e->bound = bound.items;
    e->nbound = bound.len;
    e->body = body;
    return set_depth(ps, e);
}

AstExpr *parse_unary(ParseState *ps, AstOp op, Token t, AstExpr *a)
{
    AstExpr *e = new_expr(ps, AST_UNARY, span_join(t.span, a->span));
    e->op = op;
    e->args = arena_alloc(ps->arena, sizeof *e->args);
    e->args[0] = a;
    e->nargs = 1;
    return set_depth(ps, e);
}

AstExpr *parse_binary(ParseState *ps, AstOp op, AstExpr *a, AstExpr *b)
{
    AstExpr *e = new_expr(ps, AST_BINARY, span_join(a->span, b->span));
    e->op = op;
    e->args = arena_alloc(ps->arena, 2 * sizeof *e->args);
    e->args[0] = a;
    e->args[1] = b;
    e->nargs = 2;
    return set_depth(ps, e);
}

AstExpr *parse_select(ParseState *ps, AstExpr *c, AstExpr *a, AstExpr *b)
{
    AstExpr *e = new_expr(ps, AST_SELECT, span_join(c->span, b->span));
    e->args = arena_alloc(ps->arena, 3 * sizeof *e->args);
    e->args[0] = c;
    e->args[1] = a;
    e->args[2] = b;
    e->nargs = 3;
    return set_depth(ps, e);
}

/* After the statements ending at a boundary are visited: free their trees,
 * or leave them to the visitor and take its arena for the next ones. */
static void next_trees(ParseState *ps, ParseVisitor *v)
{
    if (v->trees)
        ps->arena = v->trees(v->ctx);
    else
        arena_clear(ps->arena);
}

/* Limits of the quick scan below; longer or deeper statements go to the
 * parser, whose own limits are far above these. */
#define QUICK_TOKENS 256
#define QUICK_NESTING 32

/* Binary operators of the grammar other than '?' and ':'. */
static int quick_binary(int code)
{
    return wants_operand(code) && code != TOK_NOT && code != TOK_QUESTION &&
           code != TOK_COLON && code != TOK_ASSIGN;
}

/* For a visitor that only reads names: scan a statement of the form
 * 'NAME = EXPR' whose EXPR uses numbers, names, subscripts, calls,
 * parentheses and operators other than '?:' (no reductions).  Every such
 * statement the parser accepts without a message, so when the scan
 * succeeds the visitor gets the statement without a tree.  Otherwise (any
 * other form, a lexical error, a syntax error) the lexer is put back and
 * the parser reads the statement as usual, reporting what it finds. */
static int quick_define(ParseState *ps, ParseVisitor *v, Diag *quiet)
{
    Lexer saved = ps->lexer;
    ps->lexer.diag = quiet;
    quiet->errors = 0;
    char nest[QUICK_NESTING];   /* '(' group, 'f' call, '[' subscript */
    int depth = 0, operand = 1, ok = 0;
    Token name = lex_next(&ps->lexer), prev = name, t = name;
    if (name.code == TOK_NAME && lex_next(&ps->lexer).code == TOK_ASSIGN)
        for (int n = 0; n < QUICK_TOKENS; n++) {
            prev = t;
            t = lex_next(&ps->lexer);
            if (quiet->errors || ps->lexer.open.len > QUICK_NESTING)
                break;
            int c = t.code;
            if (operand) {
                if (c == TOK_NAME || c == TOK_NUMBER)
                    operand = 0;
                else if (c == TOK_LPAREN)
                    nest[depth++] = '(';
                else if (c == TOK_RPAREN && depth > 0 &&
                         nest[depth - 1] == 'f' && prev.code == TOK_LPAREN)
                    depth--, operand = 0;       /* f() */
                else if (c != TOK_MINUS && c != TOK_NOT)
                    break;
            } else if (quick_binary(c)) {
                operand = 1;
            } else if ((c == TOK_LPAREN || c == TOK_LBRACKET) &&
                       prev.code == TOK_NAME) {
                nest[depth++] = c == TOK_LPAREN ? 'f' : '[';
                operand = 1;
            } else if (c == TOK_COMMA && depth > 0 && nest[depth - 1] != '(') {
                operand = 1;
            } else if (c == TOK_RPAREN && depth > 0 && nest[depth - 1] != '[') {
                depth--;
            } else if (c == TOK_RBRACKET && depth > 0 &&
                       nest[depth - 1] == '[') {
                depth--;
            } else {
                ok = (c == TOK_NEWLINE || c == TOK_SEMI) && depth == 0;
                break;
            }
            if (depth == QUICK_NESTING)
                break;
        }
    ps->lexer.diag = saved.diag;
    if (!ok) {
        ps->lexer = saved;
        return 0;
    }
    AstStmt *s = arena_alloc(ps->arena, sizeof *s);
    s->kind = STMT_DEFINE;
    s->name = parse_name(ps, name);
    s->name_span = name.span;
    s->span = span_join(name.span, prev.span);
    v->visit(v->ctx, s);
    next_trees(ps, v);
    ps->first = name;
    ps->prev2 = prev;
    ps->prev = t;
    return 1;
}

/* Feed the whole source to the parser.  With a visitor, the statements
 * are handed over at each statement boundary (where the parser holds no
 * tree) and their trees freed; else they collect in ps->stmts. */
static void run(ParseState *ps, ParseVisitor *v)
{
    Diag *diag = ps->diag;
    ps->prev.code = TOK_NEWLINE;
    ps->base = diag_base(diag, ps->lexer.src);
    lex_init(&ps->lexer, ps->lexer.src, diag, ps->keep);
    void *parser = DvParserAlloc(malloc);
    if (!parser) {
        fputs("dervish: out of memory\n", stderr);
        exit(3);
    }
    Diag quiet;
    diag_init(&quiet, diag->src, NULL);
    quiet.files = diag->files;
    for (;;) {
        int fresh = ps->prev.code == TOK_NEWLINE || ps->prev.code == TOK_SEMI;
        if (fresh && v && v->names_only && quick_define(ps, v, &quiet))
            continue;
        Token t = lex_next(&ps->lexer);
        if (fresh) {
            ps->first = t;
            ps->stmt_names.len = 0;
            ps->stmt_failed = 0;
            ps->open_selects = 0;
            ps->assigned = 0;
            ps->lexer.error_in_stmt = 0;
            ps->lexer.has_joined = 0;
        }
        if (t.code == TOK_NAME)
            VEC_PUSH(ps->keep, ps->stmt_names, t.span);
        ps->open_selects += (t.code == TOK_QUESTION) - (t.code == TOK_COLON);
        DvParser(parser, t.code, t, ps);
        if (t.code == TOK_ASSIGN && ps->lexer.open.len == 0)
            ps->assigned = 1;
        if (t.code == TOK_NEWLINE || t.code == TOK_SEMI) {
            /* Statements are independent: parse each as a whole program,
             * so recovery from an error never reaches into the next one
             * and its errors are reported in full. */
            DvParser(parser, 0, t, ps);
            DvParserFinalize(parser);
            DvParserInit(parser);
        }
        int done = t.code == 0 || ps->too_deep || ps->lexer.too_deep ||
                   diag->errors > diag->max_errors;
        if (v && (done || t.code == TOK_NEWLINE || t.code == TOK_SEMI)) {
            for (int i = 0; i < ps->stmts.len; i++)
                v->visit(v->ctx, ps->stmts.items[i]);
            ps->stmts.len = 0;
            next_trees(ps, v);
        }
        if (done)
            break;
        ps->prev2 = ps->prev;
        ps->prev = t;
    }
    DvParserFree(parser, free);
}

AstModel *parse_model(Arena *arena, Diag *diag, const Source *src)
{
    ParseState ps;
    memset(&ps, 0, sizeof ps);
    ps.arena = ps.keep = arena;
    ps.diag = diag;
    ps.lexer.src = src;
    run(&ps, NULL);
    AstModel *m = arena_alloc(arena, sizeof *m);
    m->stmts = ps.stmts.items;
    m->nstmts = ps.stmts.len;
    m->failed_names = ps.failed.items;
    m->nfailed = ps.failed.len;
    return m;
}

void parse_each(Arena *arena, Diag *diag, const Source *src, ParseVisitor *v)
{
    ParseState ps;
    memset(&ps, 0, sizeof ps);
    Arena trees;
    arena_init(&trees);
    ps.arena = v->trees ? v->trees(v->ctx) : &trees;
    ps.keep = arena;
    ps.diag = diag;
    ps.lexer.src = src;
    run(&ps, v);
    arena_free(&trees);
    v->failed = ps.failed.items;
    v->nfailed = ps.failed.len;
}
