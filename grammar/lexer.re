/* lexer.re - the model language's tokens; re2c turns this into build/lexer.c:
 *   re2c -W -Werror --no-generation-date --no-version -o build/lexer.c grammar/lexer.re
 *
 * The lexer also decides where statements end: a newline becomes a
 * TOK_NEWLINE only outside brackets and when the statement cannot continue
 * (not after a binary operator, ',', ':', '=' or '?'). */
#include "parse.h"
#include "parser.h"

#include <errno.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

void lex_init(Lexer *lx, const Source *src, Diag *diag, Arena *arena)
{
    memset(lx, 0, sizeof *lx);
    lx->src = src;
    lx->diag = diag;
    lx->arena = arena;
    lx->cur = (const unsigned char *)src->text;
    lx->end = lx->cur + src->len;
    lx->last = TOK_NEWLINE;     /* start of input behaves like a fresh line */
}

/* True when a statement may go on past a newline after this token. */
static int continues(int code)
{
    switch (code) {
    case TOK_PLUS: case TOK_MINUS: case TOK_STAR: case TOK_SLASH:
    case TOK_CARET: case TOK_LT: case TOK_LE: case TOK_GT: case TOK_GE:
    case TOK_EQ: case TOK_NE: case TOK_ANDAND: case TOK_OROR: case TOK_NOT:
    case TOK_QUESTION: case TOK_COLON: case TOK_COMMA: case TOK_ASSIGN:
    case TOK_NEWLINE: case TOK_SEMI:
        return 1;
    default:
        return 0;
    }
}

/* The span offset of a byte of the source: its offset in the file plus
 * the file's base, so spans tell the files of a compilation apart. */
static uint32_t offset_of(const Lexer *lx, const unsigned char *at)
{
    return diag_base(lx->diag, lx->src) +
           (uint32_t)(at - (const unsigned char *)lx->src->text);
}

static Span span_of(const Lexer *lx, const unsigned char *start)
{
    Span s;
    s.off = offset_of(lx, start);
    s.len = (uint32_t)(lx->cur - start);
    return s;
}

/* Report a lexical error; the parser stays quiet about the rest of the
 * statement, whose tokens are now incomplete. */
static void lex_error(Lexer *lx, Span at, const char *fmt, ...)
{
    char msg[256];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    diag_error(lx->diag, at, "%s", msg);
    lx->error_in_stmt = 1;
}

/* (Lengths are stored: every name of the model comes through here.) */
#define WORD(w, code) {w, sizeof w - 1, code}
static int keyword(const unsigned char *s, size_t n)
{
    static const struct { const char *word; size_t len; int code; } words[] = {
        WORD("model", TOK_MODEL), WORD("const", TOK_CONST),
        WORD("input", TOK_INPUT), WORD("param", TOK_PARAM),
        WORD("output", TOK_OUTPUT), WORD("size", TOK_SIZE),
        WORD("def", TOK_DEF), WORD("use", TOK_USE),
    };
    for (size_t i = 0; i < sizeof words / sizeof words[0]; i++)
        if (words[i].len == n && memcmp(words[i].word, s, n) == 0)
            return words[i].code;
    return TOK_NAME;
}
#undef WORD

static Token op_token(const Lexer *lx, const unsigned char *start, int code)
{
    Token t;
    t.code = code;
    t.span = span_of(lx, start);
    t.num = 0;
    return t;
}

/* Scan one raw token, newlines included.  Errors are reported here and the
 * offending bytes skipped, so the parser only ever sees valid tokens. */
static Token scan(Lexer *lx)
{
    Token t;
    const unsigned char *marker = NULL;
    (void)marker;
    t.num = 0;
    for (;;) {
        const unsigned char *start = lx->cur;
        t.span.off = offset_of(lx, start);
        t.span.len = 0;
        /*!re2c
        re2c:define:YYCTYPE = "unsigned char";
        re2c:define:YYCURSOR = lx->cur;
        re2c:define:YYMARKER = marker;
        re2c:yyfill:enable = 0;

        digits = [0-9]+;
        exponent = [eE] [+-]? digits;
        number = (digits ("." [0-9]*)? | "." digits) exponent?;
        name = [A-Za-z_] [A-Za-z0-9_]*;

        "\x00" {
            if (start >= lx->end) {
                lx->cur = start;
                t.code = 0;
                return t;
            }
            t.span = span_of(lx, start);
            lex_error(lx, t.span,
                      "NUL byte in the model file: save it as plain text");
            continue;
        }
        [ \t\f\v]+ { continue; }
        "#" [^\n\x00]* { continue; }
        "\r"? "\n" { t.code = TOK_NEWLINE; t.span = span_of(lx, start); return t; }
        "\r" {
            /* ends the line as well, so statements are not joined */
            t.span = span_of(lx, start);
            lex_error(lx, t.span,
                      "carriage return without a line feed: use \\n or \\r\\n line ends");
            t.code = TOK_NEWLINE;
            return t;
        }
        number {
            t.span = span_of(lx, start);
            errno = 0;
            t.num = strtod((const char *)start, NULL);
            if (errno == ERANGE && (t.num > 1.0 || t.num < -1.0)) {
                lex_error(lx, t.span, "number too large for a double");
                t.num = 0;
            }
            t.code = TOK_NUMBER;
            return t;
        }
        (digits ("." [0-9]*)? | "." digits) [eE] [+-]? {
            t.span = span_of(lx, start);
            lex_error(lx, t.span,
                      "number has an exponent without digits (write e.g. 1e-3)");
            t.code = TOK_NUMBER;
            return t;
        }
        name { t.span = span_of(lx, start); t.code = keyword(start, t.span.len); return t; }
        "\"" [^"\n\x00]* "\"" { t.code = TOK_STRING; t.span = span_of(lx, start); return t; }
        "\"" [^"\n\x00]* {
            t.span = span_of(lx, start);
            lex_error(lx, t.span, "string is not closed on this line");
            continue;
        }
        "+"  { return op_token(lx, start, TOK_PLUS); }
        "-"  { return op_token(lx, start, TOK_MINUS); }
        "*"  { return op_token(lx, start, TOK_STAR); }
        "/"  { return op_token(lx, start, TOK_SLASH); }
        "^"  { return op_token(lx, start, TOK_CARET); }
        "<"  { return op_token(lx, start, TOK_LT); }
        "<=" { return op_token(lx, start, TOK_LE); }
        ">"  { return op_token(lx, start, TOK_GT); }
        ">=" { return op_token(lx, start, TOK_GE); }
        "==" { return op_token(lx, start, TOK_EQ); }
        "!=" { return op_token(lx, start, TOK_NE); }
        "&&" { return op_token(lx, start, TOK_ANDAND); }
        "||" { return op_token(lx, start, TOK_OROR); }
        "!"  { return op_token(lx, start, TOK_NOT); }
        "?"  { return op_token(lx, start, TOK_QUESTION); }
        ":"  { return op_token(lx, start, TOK_COLON); }
        ","  { return op_token(lx, start, TOK_COMMA); }
        ";"  { return op_token(lx, start, TOK_SEMI); }
        "="  { return op_token(lx, start, TOK_ASSIGN); }
        "("  { return op_token(lx, start, TOK_LPAREN); }
        ")"  { return op_token(lx, start, TOK_RPAREN); }
        "["  { return op_token(lx, start, TOK_LBRACKET); }
        "]"  { return op_token(lx, start, TOK_RBRACKET); }
        [\x80-\xff]+ {
            t.span = span_of(lx, start);
            lex_error(lx, t.span,
                      "non-ASCII text outside a comment: names and operators are ASCII");
            continue;
        }
        * {
            t.span = span_of(lx, start);
            if (*start < 0x20 || *start == 0x7f)
                lex_error(lx, t.span, "unexpected control byte 0x%02X",
                          *start);
            else
                lex_error(lx, t.span, "unexpected character '%c'", *start);
            continue;
        }
        */
    }
}

Token lex_next(Lexer *lx)
{
    for (;;) {
        Token t = scan(lx);
        switch (t.code) {
        case 0:
            if (lx->open.len > 0 && !lx->failed_at_end) {
                Span open = lx->open.items[lx->open.len - 1];
                diag_error(lx->diag, open, "'%c' is never closed",
                           lx->src->text[open.off -
                                         diag_base(lx->diag, lx->src)]);
                lx->error_in_stmt = 1;
                lx->failed_at_end = 1;
            }
            /* End the last statement before the end of input. */
            if (lx->last != TOK_NEWLINE && lx->last != TOK_SEMI &&
                lx->last != 0) {
                t.code = TOK_NEWLINE;
                lx->last = TOK_NEWLINE;
                return t;
            }
            lx->last = 0;
            return t;
        case TOK_NEWLINE:
            if (lx->open.len == 0 && continues(lx->last) &&
                lx->last != TOK_NEWLINE && lx->last != TOK_SEMI) {
                lx->joined = lx->last_span;
                lx->has_joined = 1;
            }
            if (lx->open.len > 0 || continues(lx->last))
                continue;
            break;
        case TOK_LPAREN:
        case TOK_LBRACKET:
            if (lx->open.len == PARSE_MAX_DEPTH && !lx->too_deep) {
                lex_error(lx, t.span,
                          "brackets nested too deeply (limit is %d): split "
                          "the expression into named steps", PARSE_MAX_DEPTH);
                lx->too_deep = 1;
            }
            VEC_PUSH(lx->arena, lx->open, t.span);
            break;
        case TOK_RPAREN:
        case TOK_RBRACKET:
            if (lx->open.len > 0)
                lx->open.len--;
            break;
        default:
            break;
        }
        lx->last = t.code;
        lx->last_span = t.span;
        return t;
    }
}
