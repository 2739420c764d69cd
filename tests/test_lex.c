/* test_lex.c - unit tests of the lexer (grammar/lexer.re) through lex_init
 * and lex_next: token codes and spans, number values, where a newline ends a
 * statement, comments, line ends, keywords, and the messages for bad input.
 * Expected spans are counted by hand from the input strings. */
#include "testutil.h"

#include "parse.h"
#include "parser.h"

/* A short label per token code, so a whole token stream reads as one line. */
static const char *label(int code)
{
    switch (code) {
    case 0: return "eof";
    case TOK_NEWLINE: return "nl";
    case TOK_SEMI: return ";";
    case TOK_MODEL: return "model";
    case TOK_CONST: return "const";
    case TOK_INPUT: return "input";
    case TOK_PARAM: return "param";
    case TOK_OUTPUT: return "output";
    case TOK_SIZE: return "size";
    case TOK_DEF: return "def";
    case TOK_USE: return "use";
    case TOK_NAME: return "name";
    case TOK_NUMBER: return "num";
    case TOK_STRING: return "str";
    case TOK_ASSIGN: return "=";
    case TOK_COMMA: return ",";
    case TOK_LPAREN: return "(";
    case TOK_RPAREN: return ")";
    case TOK_LBRACKET: return "[";
    case TOK_RBRACKET: return "]";
    case TOK_QUESTION: return "?";
    case TOK_COLON: return ":";
    case TOK_OROR: return "||";
    case TOK_ANDAND: return "&&";
    case TOK_EQ: return "==";
    case TOK_NE: return "!=";
    case TOK_LT: return "<";
    case TOK_LE: return "<=";
    case TOK_GT: return ">";
    case TOK_GE: return ">=";
    case TOK_PLUS: return "+";
    case TOK_MINUS: return "-";
    case TOK_STAR: return "*";
    case TOK_SLASH: return "/";
    case TOK_NOT: return "!";
    case TOK_CARET: return "^";
    default: return "?unknown";
    }
}

/* The result of lexing one text to its end. */
typedef struct Lexed {
    char *tokens;       /* "label@offset+length" per token, space separated */
    char *diag;         /* every diagnostic printed */
    int errors;
    double num[16];     /* values of the first number tokens */
    int nnum;
} Lexed;

/* Lex LEN bytes of TEXT (which may hold NUL bytes) as the file "t.dvs". */
static Lexed lex_n(const char *text, size_t len)
{
    Lexed r;
    memset(&r, 0, sizeof r);
    char *copy = malloc(len + 1);
    memcpy(copy, text, len);
    copy[len] = '\0';
    Source src = {"t.dvs", copy, len, NULL, 0};
    TuCapture dcap, tcap;
    FILE *dout = tu_capture_open(&dcap), *tout = tu_capture_open(&tcap);
    Diag diag;
    diag_init(&diag, &src, dout);
    Arena arena;
    arena_init(&arena);
    Lexer lx;
    lex_init(&lx, &src, &diag, &arena);
    for (int n = 0; n < 100000; n++) {  /* bounded, in case of a bug */
        Token t = lex_next(&lx);
        fprintf(tout, "%s%s@%u+%u", n ? " " : "", label(t.code),
                (unsigned)t.span.off, (unsigned)t.span.len);
        if (t.code == TOK_NUMBER && r.nnum < 16)
            r.num[r.nnum++] = t.num;
        if (t.code == 0)
            break;
    }
    r.tokens = tu_capture_close(&tcap);
    r.diag = tu_capture_close(&dcap);
    r.errors = diag.errors;
    arena_free(&arena);
    free(copy);
    return r;
}

static Lexed lex(const char *text)
{
    return lex_n(text, strlen(text));
}

static void lexed_free(Lexed *r)
{
    free(r->tokens);
    free(r->diag);
}

/* Assert the token stream of TEXT and that it lexes without diagnostics. */
static void check_tokens(const char *text, const char *expected)
{
    Lexed r = lex(text);
    ck_assert_msg(strcmp(r.tokens, expected) == 0,
                  "input \"%s\"\n got: %s\nwant: %s", text, r.tokens, expected);
    ck_assert_str_eq(r.diag, "");
    lexed_free(&r);
}

/* Assert the token stream of LEN bytes of TEXT, whose errors are checked
 * elsewhere: lexing goes on after a bad byte or number. */
static void check_tokens_after_errors(const char *text, size_t len,
                                      const char *expected)
{
    Lexed r = lex_n(text, len);
    ck_assert_str_eq(r.tokens, expected);
    lexed_free(&r);
}

/* Assert the diagnostics of TEXT and its number of errors. */
static void check_diag(const char *text, size_t len, int errors,
                       const char *expected)
{
    Lexed r = lex_n(text, len);
    ck_assert_str_eq(r.diag, expected);
    ck_assert_int_eq(r.errors, errors);
    lexed_free(&r);
}

/* ------------------------------------------------------ tokens, spans */

START_TEST(definition_tokens_and_spans)
{
    check_tokens("z[j] = sum(i: W[j,i] * s[i]) + b[j]\n",
                 "name@0+1 [@1+1 name@2+1 ]@3+1 =@5+1 name@7+3 (@10+1 "
                 "name@11+1 :@12+1 name@14+1 [@15+1 name@16+1 ,@17+1 "
                 "name@18+1 ]@19+1 *@21+1 name@23+1 [@24+1 name@25+1 "
                 "]@26+1 )@27+1 +@29+1 name@31+1 [@32+1 name@33+1 ]@34+1 "
                 "nl@35+1 eof@36+0");
}
END_TEST

START_TEST(every_operator_and_punctuation)
{
    /* two-character operators are one token; '<' '=' apart are two */
    check_tokens("a + - * / ^ < <= > >= == != && || ! ? : , ; = ( ) [ ] < =",
                 "name@0+1 +@2+1 -@4+1 *@6+1 /@8+1 ^@10+1 <@12+1 <=@14+2 "
                 ">@17+1 >=@19+2 ==@22+2 !=@25+2 &&@28+2 ||@31+2 !@34+1 "
                 "?@36+1 :@38+1 ,@40+1 ;@42+1 =@44+1 (@46+1 )@48+1 [@50+1 "
                 "]@52+1 <@54+1 =@56+1 nl@57+0 eof@57+0");
    /* no spaces needed between tokens */
    check_tokens("a<=b==c!=!d",
                 "name@0+1 <=@1+2 name@3+1 ==@4+2 name@6+1 !=@7+2 !@9+1 "
                 "name@10+1 nl@11+0 eof@11+0");
}
END_TEST

START_TEST(keywords_and_names)
{
    check_tokens("model const input param output size def use",
                 "model@0+5 const@6+5 input@12+5 param@18+5 output@24+6 "
                 "size@31+4 def@36+3 use@40+3 nl@43+0 eof@43+0");
    /* a keyword's prefix, extension or other case is a plain name */
    check_tokens("models Param inputs mode _x use_ x9_Y sum",
                 "name@0+6 name@7+5 name@13+6 name@20+4 name@25+2 "
                 "name@28+4 name@33+4 name@38+3 nl@41+0 eof@41+0");
}
END_TEST

START_TEST(strings)
{
    check_tokens("use \"lib.dvs\"\n", "use@0+3 str@4+9 nl@13+1 eof@14+0");
    check_diag("use \"lib\n", 9, 1,
               "t.dvs:1:5: error: string is not closed on this line\n"
               "    use \"lib\n"
               "        ^~~~\n");
}
END_TEST

/* --------------------------------------------------------------- numbers */

START_TEST(numbers_are_exact_doubles)
{
    /* Expected values are C's own decimal literals, which the compiler
     * rounds to the nearest double (C99 6.4.4.2) as strtod does. */
    Lexed r = lex("3 2.5 .5 1e-3 6.02E23 7. 1E+2 0.1 00012 4.25e-1");
    ck_assert_str_eq(r.tokens,
                     "num@0+1 num@2+3 num@6+2 num@9+4 num@14+7 num@22+2 "
                     "num@25+4 num@30+3 num@34+5 num@40+7 nl@47+0 eof@47+0");
    ck_assert_int_eq(r.nnum, 10);
    ck_assert(r.num[0] == 3.0);
    ck_assert(r.num[1] == 2.5);
    ck_assert(r.num[2] == 0.5);
    ck_assert(r.num[3] == 1e-3);
    ck_assert(r.num[4] == 6.02e23);
    ck_assert(r.num[5] == 7.0);
    ck_assert(r.num[6] == 100.0);
    ck_assert(r.num[7] == 0.1);
    ck_assert(r.num[8] == 12.0);
    ck_assert(r.num[9] == 0.425);
    ck_assert_int_eq(r.errors, 0);
    lexed_free(&r);
}
END_TEST

START_TEST(a_minus_sign_is_an_operator)
{
    Lexed r = lex("-2e-3");
    ck_assert_str_eq(r.tokens, "-@0+1 num@1+4 nl@5+0 eof@5+0");
    ck_assert(r.num[0] == 2e-3);
    lexed_free(&r);
}
END_TEST

START_TEST(number_errors)
{
    check_diag("x = 1e + 2\n", 11, 1,
               "t.dvs:1:5: error: number has an exponent without digits "
               "(write e.g. 1e-3)\n"
               "    x = 1e + 2\n"
               "        ^~\n");
    check_diag("x = 2.5E-\n", 10, 1,
               "t.dvs:1:5: error: number has an exponent without digits "
               "(write e.g. 1e-3)\n"
               "    x = 2.5E-\n"
               "        ^~~~~\n");
    check_diag("x = 1e999\n", 10, 1,
               "t.dvs:1:5: error: number too large for a double\n"
               "    x = 1e999\n"
               "        ^~~~~\n");
    /* the bad number is still a number token, so parsing can go on */
    check_tokens_after_errors("1e+ 2", 5, "num@0+3 num@4+1 nl@5+0 eof@5+0");
}
END_TEST

/* -------------------------------------------------------------- newlines */

START_TEST(newline_ends_a_statement)
{
    /* after a name, a number, ')' or ']' the newline is a token */
    check_tokens("a\n2\nf(x)\nb[i]\n",
                 "name@0+1 nl@1+1 num@2+1 nl@3+1 name@4+1 (@5+1 name@6+1 "
                 ")@7+1 nl@8+1 name@9+1 [@10+1 name@11+1 ]@12+1 nl@13+1 "
                 "eof@14+0");
}
END_TEST

START_TEST(newline_after_binary_operators_continues)
{
    static const char *const ops[] = {"+", "-", "*", "/", "^", "<", "<=",
                                      ">", ">=", "==", "!=", "&&", "||"};
    for (size_t i = 0; i < sizeof ops / sizeof ops[0]; i++) {
        char *text = tu_format("a %s\nb\n", ops[i]);
        size_t n = strlen(ops[i]);
        /* a, the operator, b on the next line, one newline after b */
        char *want = tu_format("name@0+1 %s@2+%zu name@%zu+1 nl@%zu+1 "
                               "eof@%zu+0", ops[i], n, 3 + n, 4 + n, 5 + n);
        check_tokens(text, want);
        free(text);
        free(want);
    }
}
END_TEST

START_TEST(newline_after_punctuation_continues)
{
    check_tokens("x =\n1", "name@0+1 =@2+1 num@4+1 nl@5+0 eof@5+0");
    check_tokens("param a,\nb", "param@0+5 name@6+1 ,@7+1 name@9+1 nl@10+0 "
                                "eof@10+0");
    check_tokens("c ?\na :\nb", "name@0+1 ?@2+1 name@4+1 :@6+1 name@8+1 "
                                "nl@9+0 eof@9+0");
    check_tokens("!\na", "!@0+1 name@2+1 nl@3+0 eof@3+0");
}
END_TEST

START_TEST(newline_inside_brackets_continues)
{
    check_tokens("f(a\n,\nb\n)\n",
                 "name@0+1 (@1+1 name@2+1 ,@4+1 name@6+1 )@8+1 nl@9+1 "
                 "eof@10+0");
    check_tokens("W[j\n, i]\n",
                 "name@0+1 [@1+1 name@2+1 ,@4+1 name@6+1 ]@7+1 nl@8+1 "
                 "eof@9+0");
    /* nested: only the outermost close makes newlines count again */
    check_tokens("f(g(a)\n)\nb",
                 "name@0+1 (@1+1 name@2+1 (@3+1 name@4+1 )@5+1 )@7+1 "
                 "nl@8+1 name@9+1 nl@10+0 eof@10+0");
}
END_TEST

START_TEST(blank_lines_give_one_newline)
{
    /* leading blank lines give none; a run of them gives one */
    check_tokens("\n\na\n\n\nb\n\n",
                 "name@2+1 nl@3+1 name@6+1 nl@7+1 eof@9+0");
}
END_TEST

START_TEST(semicolon_separates_statements)
{
    check_tokens("a = 1; b = 2\n",
                 "name@0+1 =@2+1 num@4+1 ;@5+1 name@7+1 =@9+1 num@11+1 "
                 "nl@12+1 eof@13+0");
    /* a newline right after ';' adds no empty statement */
    check_tokens("a;\nb", "name@0+1 ;@1+1 name@3+1 nl@4+0 eof@4+0");
}
END_TEST

START_TEST(end_of_input_ends_the_last_statement)
{
    check_tokens("a", "name@0+1 nl@1+0 eof@1+0");
    check_tokens("a\n", "name@0+1 nl@1+1 eof@2+0");
    check_tokens("a;", "name@0+1 ;@1+1 eof@2+0");
    check_tokens("", "eof@0+0");
    check_tokens("# only a comment", "eof@16+0");
}
END_TEST

START_TEST(comments)
{
    /* an operator inside a comment does not continue the line */
    check_tokens("a # b +\nc\n", "name@0+1 nl@7+1 name@8+1 nl@9+1 eof@10+0");
    /* a comment after an operator does not end the statement */
    check_tokens("a + # why\nb\n", "name@0+1 +@2+1 name@10+1 nl@11+1 eof@12+0");
    /* a line holding only a comment adds nothing */
    check_tokens("a\n# note\nb\n", "name@0+1 nl@1+1 name@9+1 nl@10+1 eof@11+0");
    /* bytes outside ASCII are fine inside a comment */
    check_tokens("a # temp \xc2\xb0" "C\n", "name@0+1 nl@12+1 eof@13+0");
}
END_TEST

START_TEST(crlf_line_ends)
{
    /* \r\n is one newline token of two bytes */
    check_tokens("a = 1\r\nb\r\n",
                 "name@0+1 =@2+1 num@4+1 nl@5+2 name@7+1 nl@8+2 eof@10+0");
    check_tokens("x +\r\ny\r\n", "name@0+1 +@2+1 name@5+1 nl@6+2 eof@8+0");
}
END_TEST

/* ---------------------------------------------------------------- errors */

START_TEST(bad_characters)
{
    check_diag("y = a @ b\n", 10, 1,
               "t.dvs:1:7: error: unexpected character '@'\n"
               "    y = a @ b\n"
               "          ^\n");
    check_diag("y = a $\n", 8, 1,
               "t.dvs:1:7: error: unexpected character '$'\n"
               "    y = a $\n"
               "          ^\n");
    /* a run of non-ASCII bytes (here a two-byte UTF-8 letter) is one error */
    check_diag("param a\ny = \xc3\xa9 + 1\n", 19, 1,
               "t.dvs:2:5: error: non-ASCII text outside a comment: names "
               "and operators are ASCII\n"
               "    y = \xc3\xa9 + 1\n"
               "        ^~\n");
    check_diag("y = \x01" "a\n", 7, 1,
               "t.dvs:1:5: error: unexpected control byte 0x01\n"
               "    y =  a\n"
               "        ^\n");
    /* the bad byte is skipped and lexing goes on */
    check_tokens_after_errors("a @ b", 5, "name@0+1 name@4+1 nl@5+0 eof@5+0");
}
END_TEST

START_TEST(nul_byte_and_lone_carriage_return)
{
    static const char nul[] = "a = 1\0 + 2\n";
    /* the NUL shows as a space in the quoted line */
    check_diag(nul, sizeof nul - 1, 1,
               "t.dvs:1:6: error: NUL byte in the model file: save it as "
               "plain text\n"
               "    a = 1  + 2\n"
               "         ^\n");
    check_tokens_after_errors(nul, sizeof nul - 1,
                              "name@0+1 =@2+1 num@4+1 +@7+1 num@9+1 "
                              "nl@10+1 eof@11+0");
    /* a lone carriage return is reported and still ends the line */
    check_diag("a\rb\n", 4, 1,
               "t.dvs:1:2: error: carriage return without a line feed: use "
               "\\n or \\r\\n line ends\n"
               "    a\n"
               "     ^\n");
    check_tokens_after_errors("a\rb\n", 4,
                              "name@0+1 nl@1+1 name@2+1 nl@3+1 eof@4+0");
}
END_TEST

START_TEST(unclosed_bracket_reported_once_at_its_position)
{
    Lexed r = lex("y = f(a,\n  b\n");
    ck_assert_str_eq(r.diag, "t.dvs:1:6: error: '(' is never closed\n"
                             "    y = f(a,\n"
                             "         ^\n");
    ck_assert_int_eq(r.errors, 1);
    /* the statement still ends, then the input */
    ck_assert_str_eq(r.tokens, "name@0+1 =@2+1 name@4+1 (@5+1 name@6+1 "
                               ",@7+1 name@11+1 nl@13+0 eof@13+0");
    lexed_free(&r);
    /* the innermost open bracket is the one named */
    check_diag("x = W[(a]\n", 10, 1,
               "t.dvs:1:6: error: '[' is never closed\n"
               "    x = W[(a]\n"
               "         ^\n");
}
END_TEST

START_TEST(bracket_nesting_limit)
{
    /* PARSE_MAX_DEPTH open brackets are fine; one more is reported once,
     * at the bracket that crosses the limit */
    for (int extra = 0; extra <= 1; extra++) {
        int deep = PARSE_MAX_DEPTH + extra;
        char *text = malloc((size_t)deep + 8);
        memset(text, '(', (size_t)deep);
        strcpy(text + deep, "a");
        Lexed r = lex(text);
        ck_assert_int_eq(r.errors, 1 + extra);  /* and: never closed */
        if (extra) {
            char *want = tu_format("t.dvs:1:%d: error: brackets nested too "
                                   "deeply (limit is %d): split the "
                                   "expression into named steps\n",
                                   PARSE_MAX_DEPTH + 1, PARSE_MAX_DEPTH);
            ck_assert_msg(strncmp(r.diag, want, strlen(want)) == 0, "%.200s",
                          r.diag);
            free(want);
        }
        lexed_free(&r);
        free(text);
    }
}
END_TEST

START_TEST(lines_and_columns_of_later_lines)
{
    check_diag("param a\n\n  y = a ` 1\n", 20, 1,
               "t.dvs:3:9: error: unexpected character '`'\n"
               "      y = a ` 1\n"
               "            ^\n");
}
END_TEST

int main(void)
{
    Suite *s = suite_create("lexer");
    TU_ADD_TESTS(tu_case(s, "lexer", 0),
                 definition_tokens_and_spans, every_operator_and_punctuation,
                 keywords_and_names, strings, numbers_are_exact_doubles,
                 a_minus_sign_is_an_operator, number_errors,
                 newline_ends_a_statement,
                 newline_after_binary_operators_continues,
                 newline_after_punctuation_continues,
                 newline_inside_brackets_continues,
                 blank_lines_give_one_newline, semicolon_separates_statements,
                 end_of_input_ends_the_last_statement, comments,
                 crlf_line_ends, bad_characters,
                 nul_byte_and_lone_carriage_return,
                 unclosed_bracket_reported_once_at_its_position,
                 bracket_nesting_limit, lines_and_columns_of_later_lines);
    return tu_main(s);
}
