/* test_parse.c - unit tests of the parser (grammar/parser.y, parse.c)
 * through parse_model: the tree shape that precedence and associativity give
 * (LANGUAGE.md section 4), every statement kind, spans, the exact syntax
 * error messages, recovery at statement boundaries and the nesting limit. */
#include "testutil.h"

#include "parse.h"

/* One parse of a text as the file "t.dvs"; the tree lives in arena. */
typedef struct Parsed {
    Arena arena;
    Source src;
    AstModel *model;
    char *diag;         /* every diagnostic printed */
    int errors;
} Parsed;

static Parsed *parse(const char *text)
{
    Parsed *p = calloc(1, sizeof *p);
    arena_init(&p->arena);
    p->src.path = "t.dvs";
    p->src.text = text;
    p->src.len = strlen(text);
    TuCapture cap;
    Diag diag;
    diag_init(&diag, &p->src, tu_capture_open(&cap));
    p->model = parse_model(&p->arena, &diag, &p->src);
    p->diag = tu_capture_close(&cap);
    p->errors = diag.errors;
    return p;
}

static void parsed_free(Parsed *p)
{
    arena_free(&p->arena);
    free(p->diag);
    free(p);
}

/* -------------------------------------------------- printing the tree */

static const char *op_text(AstOp op)
{
    static const char *const text[] = {
        [AOP_ADD] = "+", [AOP_SUB] = "-", [AOP_MUL] = "*", [AOP_DIV] = "/",
        [AOP_POW] = "^", [AOP_NEG] = "-", [AOP_NOT] = "!", [AOP_LT] = "<",
        [AOP_LE] = "<=", [AOP_GT] = ">", [AOP_GE] = ">=", [AOP_EQ] = "==",
        [AOP_NE] = "!=", [AOP_AND] = "&&", [AOP_OR] = "||",
    };
    return text[op];
}

static void print_list(FILE *f, AstExpr **items, int n);

/* Every operator node in full parentheses, so the grouping is visible. */
static void print_expr(FILE *f, const AstExpr *e)
{
    switch (e->kind) {
    case AST_NUM:
        fprintf(f, "%.17g", e->num);
        return;
    case AST_NAME:
        fputs(e->name, f);
        return;
    case AST_SUBSCRIPT:
        fprintf(f, "%s[", e->name);
        print_list(f, e->args, e->nargs);
        fputc(']', f);
        return;
    case AST_CALL:
        fprintf(f, "%s(", e->name);
        print_list(f, e->args, e->nargs);
        fputc(')', f);
        return;
    case AST_REDUCE:
        fprintf(f, "%s{", e->name);
        print_list(f, e->bound, e->nbound);
        fputs(": ", f);
        print_expr(f, e->body);
        fputc('}', f);
        return;
    case AST_UNARY:
        fprintf(f, "(%s", op_text(e->op));
        print_expr(f, e->args[0]);
        fputc(')', f);
        return;
    case AST_BINARY:
        fputc('(', f);
        print_expr(f, e->args[0]);
        fprintf(f, " %s ", op_text(e->op));
        print_expr(f, e->args[1]);
        fputc(')', f);
        return;
    case AST_SELECT:
        fputc('(', f);
        print_expr(f, e->args[0]);
        fputs(" ? ", f);
        print_expr(f, e->args[1]);
        fputs(" : ", f);
        print_expr(f, e->args[2]);
        fputc(')', f);
        return;
    }
}

static void print_list(FILE *f, AstExpr **items, int n)
{
    for (int i = 0; i < n; i++) {
        if (i)
            fputc(',', f);
        print_expr(f, items[i]);
    }
}

static void print_stmt(FILE *f, const AstStmt *s)
{
    static const char *const kind[] = {
        [STMT_MODEL] = "model", [STMT_CONST] = "const",
        [STMT_INPUT] = "input", [STMT_PARAM] = "param",
        [STMT_DEFINE] = "define", [STMT_OUTPUT] = "output",
    };
    fputs(kind[s->kind], f);
    if (s->name)
        fprintf(f, " %s", s->name);
    if (s->nindex) {
        fputc('[', f);
        print_list(f, s->index, s->nindex);
        fputc(']', f);
    }
    for (int i = 0; i < s->ndecls; i++) {
        fprintf(f, " %s", s->decls[i].name);
        if (s->decls[i].ndims) {
            fputc('[', f);
            print_list(f, s->decls[i].dims, s->decls[i].ndims);
            fputc(']', f);
        }
    }
    if (s->nnames) {
        fputc(' ', f);
        print_list(f, s->names, s->nnames);
    }
    if (s->expr) {
        fputs(" = ", f);
        print_expr(f, s->expr);
    }
}

/* All statements of a parse, one per line. */
static char *show_model(const Parsed *p)
{
    TuCapture cap;
    FILE *f = tu_capture_open(&cap);
    for (int i = 0; i < p->model->nstmts; i++) {
        print_stmt(f, p->model->stmts[i]);
        fputc('\n', f);
    }
    return tu_capture_close(&cap);
}

/* Parse "y = EXPR" and assert the printed tree of EXPR. */
static void check_expr(const char *expr, const char *expected)
{
    char *text = tu_format("y = %s\n", expr);
    Parsed *p = parse(text);
    ck_assert_msg(p->errors == 0, "%s: %s", expr, p->diag);
    ck_assert_int_eq(p->model->nstmts, 1);
    char *shown = show_model(p);
    char *want = tu_format("define y = %s\n", expected);
    ck_assert_msg(strcmp(shown, want) == 0, "%s\n got: %s\nwant: %s", expr,
                  shown, want);
    free(want);
    free(shown);
    parsed_free(p);
    free(text);
}

/* Assert the diagnostics of parsing TEXT and its number of errors. */
static void check_errors(const char *text, int errors, const char *expected)
{
    Parsed *p = parse(text);
    ck_assert_str_eq(p->diag, expected);
    ck_assert_int_eq(p->errors, errors);
    parsed_free(p);
}

/* --------------------------------------- precedence and associativity */

START_TEST(power_binds_tighter_than_unary_minus)
{
    check_expr("-x^2", "(-(x ^ 2))");
    check_expr("-2^2", "(-(2 ^ 2))");
    check_expr("x^-2", "(x ^ (-2))");
    /* unary '!' binds tighter than a comparison (level 8 over level 5) */
    check_expr("!a < b ? 1 : 0", "(((!a) < b) ? 1 : 0)");
    check_expr("!(a < b) ? 1 : 0", "((!(a < b)) ? 1 : 0)");
}
END_TEST

START_TEST(power_is_right_associative)
{
    check_expr("2^3^2", "(2 ^ (3 ^ 2))");
    check_expr("a^b^c^d", "(a ^ (b ^ (c ^ d)))");
}
END_TEST

START_TEST(arithmetic_is_left_associative)
{
    check_expr("a - b - c", "((a - b) - c)");
    check_expr("a / b / c", "((a / b) / c)");
    check_expr("a / b * c", "((a / b) * c)");
    check_expr("a - b + c", "((a - b) + c)");
}
END_TEST

START_TEST(levels_of_precedence)
{
    check_expr("a + b * c", "(a + (b * c))");
    check_expr("a * b + c", "((a * b) + c)");
    check_expr("-a * b", "((-a) * b)");
    check_expr("a * -b", "(a * (-b))");
    check_expr("(a + b) * c", "((a + b) * c)");
    check_expr("a * b ^ c", "(a * (b ^ c))");
    check_expr("a + b < c * d", "((a + b) < (c * d))");
    check_expr("a < b == c >= d", "((a < b) == (c >= d))");
}
END_TEST

START_TEST(logic_grouping)
{
    check_expr("a < b && c > d || e == f",
               "(((a < b) && (c > d)) || (e == f))");
    check_expr("a || b && c", "(a || (b && c))");
    check_expr("a && b && c", "((a && b) && c)");
    check_expr("a || b || c", "((a || b) || c)");
    check_expr("a != b && !c", "((a != b) && (!c))");
}
END_TEST

START_TEST(select_is_right_associative)
{
    check_expr("c ? a : b ? d : e", "(c ? a : (b ? d : e))");
    check_expr("c ? a ? b : d : e", "(c ? (a ? b : d) : e)");
    check_expr("x > 0 || y > 0 ? x + y : 0", "(((x > 0) || (y > 0)) ? (x + y) : 0)");
}
END_TEST

/* ---------------------------------------------------------- primaries */

START_TEST(calls_subscripts_and_reductions)
{
    check_expr("atan2(y1, x)", "atan2(y1,x)");
    check_expr("f()", "f()");
    check_expr("clamp(x, -1, 1)", "clamp(x,(-1),1)");
    check_expr("W[j, i] * s[i]", "(W[j,i] * s[i])");
    check_expr("sum(i: W[j,i] * s[i]) + b[j]",
               "(sum{i: (W[j,i] * s[i])} + b[j])");
    check_expr("sum(i, j: A[i,j])", "sum{i,j: A[i,j]}");
    check_expr("max(i: sum(j: A[i,j]))", "max{i: sum{j: A[i,j]}}");
    check_expr("logsumexp(k: z[k]) - z[0]",
               "(logsumexp{k: z[k]} - z[0])");
    /* the reduction covers exactly what is inside its parentheses */
    check_expr("sum(i: x[i]) * 2", "(sum{i: x[i]} * 2)");
    check_expr("max(a, b)", "max(a,b)");
}
END_TEST

START_TEST(numbers_in_expressions)
{
    check_expr(".5 * 1e-3 + 6.02E23",
               "((0.5 * 0.001) + 6.02e+23)");
}
END_TEST

START_TEST(statements_of_every_kind)
{
    Parsed *p = parse("model kiln\n"
                      "const N = 2 * 3\n"
                      "input  s[3], target\n"
                      "param  W[N,3], b[N]; param c\n"
                      "z[j] = sum(i: W[j,i] * s[i]) + b[j]\n"
                      "h = tanh(z)\n"
                      "output h, z\n");
    ck_assert_str_eq(p->diag, "");
    char *shown = show_model(p);
    ck_assert_str_eq(shown,
                     "model kiln\n"
                     "const N = (2 * 3)\n"
                     "input s[3] target\n"
                     "param W[N,3] b[N]\n"
                     "param c\n"
                     "define z[j] = (sum{i: (W[j,i] * s[i])} + b[j])\n"
                     "define h = tanh(z)\n"
                     "output h,z\n");
    free(shown);
    const AstStmt *const *s = (const AstStmt *const *)p->model->stmts;
    ck_assert_int_eq(s[0]->kind, STMT_MODEL);
    ck_assert_int_eq(s[1]->kind, STMT_CONST);
    ck_assert_int_eq(s[2]->kind, STMT_INPUT);
    ck_assert_int_eq(s[3]->kind, STMT_PARAM);
    ck_assert_int_eq(s[4]->kind, STMT_PARAM);
    ck_assert_int_eq(s[5]->kind, STMT_DEFINE);
    ck_assert_int_eq(s[5]->nindex, 1);
    ck_assert_int_eq(s[6]->kind, STMT_DEFINE);
    ck_assert_int_eq(s[6]->nindex, 0);
    ck_assert_int_eq(s[7]->kind, STMT_OUTPUT);
    ck_assert_int_eq(s[7]->nnames, 2);
    parsed_free(p);
}
END_TEST

START_TEST(statement_and_expression_spans)
{
    /* offsets:   0         1         2         3
     *            0123456789012345678901234567890123456 */
    Parsed *p = parse("param  W[5,3], b[5]\n"
                      "y = (a + b) * f(c, d[i])\n");
    ck_assert_int_eq(p->errors, 0);
    const AstStmt *decl = p->model->stmts[0];
    ck_assert_uint_eq(decl->span.off, 0);
    ck_assert_uint_eq(decl->span.len, 19);          /* up to b[5] */
    ck_assert_uint_eq(decl->decls[0].span.off, 7);  /* W[5,3] */
    ck_assert_uint_eq(decl->decls[0].span.len, 6);
    ck_assert_uint_eq(decl->decls[1].span.off, 15); /* b[5] */
    ck_assert_uint_eq(decl->decls[1].span.len, 4);
    const AstStmt *def = p->model->stmts[1];
    ck_assert_uint_eq(def->span.off, 20);
    ck_assert_uint_eq(def->span.len, 24);
    ck_assert_uint_eq(def->name_span.off, 20);
    ck_assert_uint_eq(def->name_span.len, 1);
    const AstExpr *mul = def->expr;
    ck_assert_uint_eq(mul->span.off, 24);           /* (a + b) * f(...) */
    ck_assert_uint_eq(mul->span.len, 20);
    ck_assert_uint_eq(mul->args[0]->span.off, 24);  /* brackets included */
    ck_assert_uint_eq(mul->args[0]->span.len, 7);
    const AstExpr *call = mul->args[1];
    ck_assert_uint_eq(call->span.off, 34);
    ck_assert_uint_eq(call->span.len, 10);
    ck_assert_uint_eq(call->name_span.off, 34);
    ck_assert_uint_eq(call->name_span.len, 1);
    ck_assert_uint_eq(call->args[1]->span.off, 39); /* d[i] */
    ck_assert_uint_eq(call->args[1]->span.len, 4);
    /* heights: leaves 1, d[i] 2, f(..) 3, the product 4 */
    ck_assert_int_eq(call->args[1]->depth, 2);
    ck_assert_int_eq(mul->depth, 4);
    parsed_free(p);
}
END_TEST

START_TEST(statement_continues_over_lines)
{
    Parsed *p = parse("y = a +\n"
                      "    b *\n"
                      "    c\n"
                      "z = f(a,\n"
                      "      b)\n"
                      "w = c ?\n"
                      "    a :\n"
                      "    b\n");
    ck_assert_str_eq(p->diag, "");
    char *shown = show_model(p);
    ck_assert_str_eq(shown, "define y = (a + (b * c))\n"
                            "define z = f(a,b)\n"
                            "define w = (c ? a : b)\n");
    free(shown);
    parsed_free(p);
}
END_TEST

/* ------------------------------------------------------- syntax errors */

START_TEST(missing_operand_messages)
{
    /* the operator joined the lines, so it is blamed */
    check_errors("param a\ny = a +\noutput y\n", 1,
                 "t.dvs:2:7: error: '+' ends the line, so the statement runs "
                 "on into line 3\n"
                 "    y = a +\n"
                 "          ^\n");
    check_errors("y = \n", 1,
                 "t.dvs:1:4: error: expected an expression after '=', found "
                 "the end of the line\n"
                 "    y = \n"
                 "       ^\n");
    check_errors("y = 1 +* a\n", 1,
                 "t.dvs:1:8: error: expected an expression after '+', found "
                 "'*'\n"
                 "    y = 1 +* a\n"
                 "           ^\n");
    check_errors("y = f(a, )\n", 1,
                 "t.dvs:1:10: error: expected a name or expression after ',', "
                 "found ')'\n"
                 "    y = f(a, )\n"
                 "             ^\n");
    check_errors("y = W[]\n", 1,
                 "t.dvs:1:7: error: expected a name or expression after '[', "
                 "found ']'\n"
                 "    y = W[]\n"
                 "          ^\n");
}
END_TEST

START_TEST(missing_operator_and_stray_token_messages)
{
    check_errors("y = a b\n", 1,
                 "t.dvs:1:7: error: expected an operator or the end of the "
                 "statement before the name 'b'\n"
                 "    y = a b\n"
                 "          ^\n");
    check_errors("y = 2 (a)\n", 1,
                 "t.dvs:1:7: error: expected an operator or the end of the "
                 "statement before '('\n"
                 "    y = 2 (a)\n"
                 "          ^\n");
    check_errors("y = a)\n", 1,
                 "t.dvs:1:6: error: unexpected ')'\n"
                 "    y = a)\n"
                 "         ^\n");
    check_errors("+ y\n", 1,
                 "t.dvs:1:1: error: expected a statement (a definition "
                 "'name = ...', or model, const, size, input, param, "
                 "output, def or use), found '+'\n"
                 "    + y\n"
                 "    ^\n");
}
END_TEST

START_TEST(statement_level_messages)
{
    check_errors("output a + 1\n", 1,
                 "t.dvs:1:8: error: 'output' takes names of values; define "
                 "the expression first ('y = ...') and output 'y'\n"
                 "    output a + 1\n"
                 "           ^~~~~\n");
    check_errors("y[1] = a\n", 1,
                 "t.dvs:1:3: error: the left side takes index names, as in "
                 "'y[i, j] = ...'\n"
                 "    y[1] = a\n"
                 "      ^\n");
    check_errors("y = sum(1: a)\n", 1,
                 "t.dvs:1:9: error: a reduction binds index names before "
                 "':', as in 'sum(i: x[i])'\n"
                 "    y = sum(1: a)\n"
                 "            ^\n");
    check_errors("size N, 2\n", 1,
                 "t.dvs:1:9: error: 'size' takes names, as in 'size n, m'\n"
                 "    size N, 2\n"
                 "            ^\n");
    check_errors("def f(x, 2) = x\n", 1,
                 "t.dvs:1:10: error: a def's parameters are names, as in "
                 "'def f(x, y) = ...'\n"
                 "    def f(x, 2) = x\n"
                 "             ^\n");
}
END_TEST

START_TEST(unclosed_bracket_is_one_error)
{
    /* the lexer names the bracket; the parser adds nothing at the end */
    check_errors("y = f(a\n", 1,
                 "t.dvs:1:6: error: '(' is never closed\n"
                 "    y = f(a\n"
                 "         ^\n");
}
END_TEST

START_TEST(bracket_left_open_runs_into_the_next_line)
{
    /* the next line's first token is where parsing fails, but the open
     * bracket is the cause */
    check_errors("param a\ny = (a\noutput y\n", 1,
                 "t.dvs:2:5: error: '(' is never closed, so the statement "
                 "runs on into line 3\n"
                 "    y = (a\n"
                 "        ^\n");
}
END_TEST

static int listed(const AstModel *m, const char *name)
{
    for (int i = 0; i < m->nfailed; i++)
        if (strcmp(m->failed_names[i], name) == 0)
            return 1;
    return 0;
}

START_TEST(names_of_failed_statements_are_remembered)
{
    /* later uses of y, u and v should not be reported as unknown */
    Parsed *p = parse("y = a)\nparam u, v w\nz = 1\n");
    ck_assert_int_eq(p->errors, 2);
    ck_assert(listed(p->model, "y"));
    ck_assert(listed(p->model, "u"));
    ck_assert(listed(p->model, "v"));
    ck_assert(!listed(p->model, "a"));
    ck_assert(!listed(p->model, "z"));
    ck_assert_int_eq(p->model->nstmts, 1);
    parsed_free(p);
}
END_TEST

START_TEST(recovery_at_statement_boundaries)
{
    Parsed *p = parse("param a, b\n"
                      "y = a b\n"                /* error 1 */
                      "u = a * b\n"
                      "v = (a + ) * 2\n"         /* error 2 */
                      "w = u + 1; x = * u; t = u\n" /* error 3 */
                      "output t\n");
    ck_assert_str_eq(p->diag,
                     "t.dvs:2:7: error: expected an operator or the end of "
                     "the statement before the name 'b'\n"
                     "    y = a b\n"
                     "          ^\n"
                     "t.dvs:4:10: error: expected an expression after '+', "
                     "found ')'\n"
                     "    v = (a + ) * 2\n"
                     "             ^\n"
                     "t.dvs:5:16: error: expected an expression after '=', "
                     "found '*'\n"
                     "    w = u + 1; x = * u; t = u\n"
                     "                   ^\n");
    ck_assert_int_eq(p->errors, 3);
    /* every good statement is kept, the bad ones are not */
    char *shown = show_model(p);
    ck_assert_str_eq(shown, "param a b\n"
                            "define u = (a * b)\n"
                            "define w = (u + 1)\n"
                            "define t = u\n"
                            "output t\n");
    free(shown);
    parsed_free(p);
}
END_TEST

START_TEST(adjacent_bad_statements_are_each_reported)
{
    /* each statement recovers on its own, so a bad statement right after
     * another bad one is still reported */
    check_errors("param a\ny = a b\nz = = 3\nw = a\noutput w\n", 2,
                 "t.dvs:2:7: error: expected an operator or the end of the "
                 "statement before the name 'b'\n"
                 "    y = a b\n"
                 "          ^\n"
                 "t.dvs:3:5: error: expected an expression after '=', found "
                 "'='\n"
                 "    z = = 3\n"
                 "        ^\n");
}
END_TEST

START_TEST(errors_stop_at_the_limit)
{
    /* diag_init allows 20 errors; the 21st is counted, not shown, and
     * parsing stops there */
    char *text = tu_format("%s", "");
    for (int i = 0; i < 30; i++) {
        char *more = tu_format("%sy%d = a b\nok%d = 1\n", text, i, i);
        free(text);
        text = more;
    }
    Parsed *p = parse(text);
    ck_assert_int_eq(p->errors, 21);
    ck_assert_ptr_nonnull(strstr(p->diag, "t.dvs: too many errors (limit is "
                                          "20); stopping\n"));
    ck_assert_ptr_null(strstr(p->diag, "y20"));
    /* ok0 .. ok19 came before the 21st error, in y20 */
    ck_assert_int_eq(p->model->nstmts, 20);
    parsed_free(p);
    free(text);
}
END_TEST

/* ------------------------------------------------------- nesting limit */

/* "y = a OP a OP ... a" with TERMS terms: with '+' a left-leaning tree
 * TERMS levels high. */
static char *chain(int terms, char op)
{
    char *s = malloc(7 + 2 * (size_t)terms);
    size_t n = 5;
    strcpy(s, "y = a");
    for (int i = 1; i < terms; i++) {
        s[n++] = op;
        s[n++] = 'a';
    }
    strcpy(s + n, "\n");
    return s;
}

START_TEST(deepest_tree_accepted)
{
    char *text = chain(PARSE_MAX_DEPTH, '+');
    Parsed *p = parse(text);
    ck_assert_str_eq(p->diag, "");
    ck_assert_int_eq(p->model->nstmts, 1);
    ck_assert_int_eq(p->model->stmts[0]->expr->depth, PARSE_MAX_DEPTH);
    parsed_free(p);
    free(text);
}
END_TEST

START_TEST(tree_over_the_limit_is_an_error)
{
    char *text = chain(PARSE_MAX_DEPTH + 1, '+');
    Parsed *p = parse(text);
    ck_assert_int_eq(p->errors, 1);
    char *first = tu_first_line(p->diag);
    ck_assert_str_eq(first, "t.dvs:1:5: error: expression nested too deeply "
                            "(limit is 10000 levels): split it into named "
                            "steps");
    free(first);
    parsed_free(p);
    free(text);
}
END_TEST

START_TEST(parser_stack_limit_is_an_error_not_a_crash)
{
    /* a^a^...^a with 20000 terms: right-associative, so every operator
     * waits on the parser's stack until the end; the stack gives out first
     * and that is reported as a model error */
    char *text = chain(20000, '^');
    Parsed *p = parse(text);
    ck_assert_int_eq(p->errors, 1);
    ck_assert_ptr_nonnull(strstr(p->diag, "error: expression nested too "
                                          "deeply for the parser: split it "
                                          "into named steps\n"));
    ck_assert_int_eq(p->model->nstmts, 0);
    parsed_free(p);
    free(text);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("parser");
    TU_ADD_TESTS(tu_case(s, "parser", 0),
                 power_binds_tighter_than_unary_minus,
                 power_is_right_associative, arithmetic_is_left_associative,
                 levels_of_precedence, logic_grouping,
                 select_is_right_associative, calls_subscripts_and_reductions,
                 numbers_in_expressions, statements_of_every_kind,
                 statement_and_expression_spans,
                 statement_continues_over_lines, missing_operand_messages,
                 missing_operator_and_stray_token_messages,
                 statement_level_messages, unclosed_bracket_is_one_error,
                 bracket_left_open_runs_into_the_next_line,
                 names_of_failed_statements_are_remembered,
                 recovery_at_statement_boundaries,
                 adjacent_bad_statements_are_each_reported,
                 errors_stop_at_the_limit, deepest_tree_accepted,
                 tree_over_the_limit_is_an_error,
                 parser_stack_limit_is_an_error_not_a_crash);
    return tu_main(s);
}
