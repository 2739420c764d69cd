/* test_emit.c - unit tests of the C emitter (emit_c.c) via dv_compile and
 * dv_emit, with no C compiler run: exact emitted lines, which runtime helpers
 * are copied, unused-argument casts, byte-identical output, and quoted model
 * text that cannot break its C comment (LANGUAGE.md section 6). */
#include "testutil.h"

#include "dervish.h"

/* The emitted source and header of one model. */
typedef struct Emitted {
    DvCompilation comp;
    char *c, *h;
} Emitted;

static Emitted *compile(const char *text)
{
    Emitted *e = calloc(1, sizeof *e);
    tu_compile(&e->comp, "m.dvs", text);
    return e;
}

/* Emit (again) from the compilation into e->c and e->h. */
static void emit(Emitted *e)
{
    Buf c = {0}, h = {0};
    dv_emit(&e->comp, "m.c", "m.h", &c, &h);
    free(e->c);
    free(e->h);
    e->c = c.data;
    e->h = h.data;
}

static Emitted *build(const char *text)
{
    Emitted *e = compile(text);
    emit(e);
    return e;
}

static void emitted_free(Emitted *e)
{
    dv_free(&e->comp);
    free(e->c);
    free(e->h);
    free(e);
}

static int count(const char *text, const char *what)
{
    int n = 0;
    for (const char *p = strstr(text, what); p; p = strstr(p + 1, what))
        n++;
    return n;
}

/* The text of the function whose definition starts with HEAD, up to and
 * including its closing "}\n" (malloc'd). */
static char *function(const char *c, const char *head)
{
    const char *start = strstr(c, head);
    ck_assert_msg(start != NULL, "no %s in:\n%s", head, c);
    const char *end = strstr(start, "\n}\n");
    ck_assert_ptr_nonnull(end);
    return tu_format("%.*s", (int)(end + 3 - start), start);
}

/* ------------------------------------------------------- exact output */

START_TEST(value_and_gradient_of_a_small_network)
{
    Emitted *e = build("model net\n"
                       "input  s[3]\n"
                       "param  W[2,3], v[2]\n"
                       "z[j] = sum(i: W[j,i] * s[i])\n"
                       "h = tanh(z)\n"
                       "y = sum(j: v[j] * h[j])\n"
                       "output y\n");
    char *value = function(e->c, "double net_value(");
    ck_assert_str_eq(value,
        "double net_value(const net_param *dvs_p, const net_input *dvs_in)\n"
        "{\n"
        "    /* m.dvs:4: z[j] = sum(i: W[j,i] * s[i]) */\n"
        "    double z[2];\n"
        "    for (int j = 0; j < 2; j++)\n"
        "        z[j] = 0.0;\n"
        "    for (int j = 0; j < 2; j++)\n"
        "        for (int i = 0; i < 3; i++)\n"
        "            z[j] += dvs_p->W[j][i] * dvs_in->s[i];\n"
        "\n"
        "    /* m.dvs:5: h = tanh(z) */\n"
        "    double h[2];\n"
        "    for (int dvs_i0 = 0; dvs_i0 < 2; dvs_i0++)\n"
        "        h[dvs_i0] = tanh(z[dvs_i0]);\n"
        "\n"
        "    /* m.dvs:6: y = sum(j: v[j] * h[j]) */\n"
        "    double y = 0.0;\n"
        "    for (int j = 0; j < 2; j++)\n"
        "        y += dvs_p->v[j] * h[j];\n"
        "\n"
        "    return y;\n"
        "}\n");
    free(value);
    char *grad = function(e->c, "double net_gradient(");
    /* the forward statements again, then the sweep: adj_y = 1,
     * v[j] = h[j], adj_h[j] = v[j], adj_z = adj_h (1 - h^2),
     * W[j,i] = adj_z[j] s[i] */
    ck_assert_ptr_nonnull(strstr(grad,
        "    /* The reverse sweep: adjoints, last statement first. */\n"
        "    /* adjoint of: m.dvs:7: output y */\n"
        "    double dvs_adj_y = 1.0;\n"
        "\n"
        "    /* adjoint of: m.dvs:6: y = sum(j: v[j] * h[j]) */\n"
        "    double dvs_adj_h[2];\n"
        "    for (int j = 0; j < 2; j++) {\n"
        "        dvs_grad->v[j] = dvs_adj_y * h[j];\n"
        "        dvs_adj_h[j] = dvs_adj_y * dvs_p->v[j];\n"
        "    }\n"
        "\n"
        "    /* adjoint of: m.dvs:5: h = tanh(z) */\n"
        "    double dvs_adj_z[2];\n"
        "    for (int dvs_i0 = 0; dvs_i0 < 2; dvs_i0++)\n"
        "        dvs_adj_z[dvs_i0] = dvs_adj_h[dvs_i0] * "
        "(1.0 - h[dvs_i0] * h[dvs_i0]);\n"
        "\n"
        "    /* adjoint of: m.dvs:4: z[j] = sum(i: W[j,i] * s[i]) */\n"
        "    for (int j = 0; j < 2; j++)\n"
        "        for (int i = 0; i < 3; i++)\n"
        "            dvs_grad->W[j][i] = dvs_adj_z[j] * dvs_in->s[i];\n"
        "\n"
        "    return y;\n"
        "}\n"));
    static const char head[] = "double net_gradient(const net_param *dvs_p, "
                               "const net_input *dvs_in, "
                               "net_param *dvs_grad)\n{\n";
    ck_assert(strncmp(grad, head, sizeof head - 1) == 0);
    free(grad);
    emitted_free(e);
}
END_TEST

START_TEST(header_declares_the_interface)
{
    Emitted *e = build("model net\n"
                       "input  s[3], target\n"
                       "param  W[2,3], c\n"
                       "y = sum(j, i: W[j,i] * s[i]) + c - target\n"
                       "output y\n");
    static const char *const lines[] = {
        "#ifndef DVS_NET_H\n",
        "#define NET_PARAM_COUNT 7   /* doubles in net_param */\n",
        "typedef struct net_param {\n    double W[2][3];\n    double c;\n"
        "} net_param;\n",
        "typedef union net_param_flat {\n    net_param p;\n"
        "    double v[NET_PARAM_COUNT];\n} net_param_flat;\n",
        "typedef struct net_input {\n    double s[3];\n    double target;\n"
        "} net_input;\n",
        "double net_value(const net_param *p, const net_input *in);\n",
        "double net_gradient(const net_param *p, const net_input *in, "
        "net_param *grad);\n",
        "#ifdef __cplusplus\nextern \"C\" {\n#endif\n",
    };
    for (size_t i = 0; i < sizeof lines / sizeof lines[0]; i++)
        ck_assert_msg(strstr(e->h, lines[i]) != NULL, "no\n%s\nin:\n%s",
                      lines[i], e->h);
    /* the source includes the header it was given and checks the layout */
    ck_assert_ptr_nonnull(strstr(e->c, "#include \"m.h\"\n\n#include "
                                       "<math.h>\n"));
    ck_assert_ptr_nonnull(strstr(e->c, "typedef char dvs_param_is_flat["
                                       "sizeof(net_param) == NET_PARAM_COUNT "
                                       "* sizeof(double) ? 1 : -1];\n"));
    emitted_free(e);
}
END_TEST

START_TEST(model_without_inputs_has_no_input_argument)
{
    Emitted *e = build("model bare\nparam a\ny = a * a\noutput y\n");
    ck_assert_ptr_nonnull(strstr(e->c, "double bare_value(const bare_param "
                                       "*dvs_p)\n{\n"));
    ck_assert_ptr_nonnull(strstr(e->c, "double bare_gradient(const bare_param "
                                       "*dvs_p, bare_param *dvs_grad)\n{\n"));
    ck_assert_ptr_null(strstr(e->h, "bare_input"));
    ck_assert_ptr_null(strstr(e->c, "dvs_in"));
    emitted_free(e);
}
END_TEST

START_TEST(max_reduction_keeps_its_winner_only_for_the_gradient)
{
    Emitted *e = build("model mx\n"
                       "param x[4], W[2,4]\n"
                       "m[j] = max(i: W[j,i] * x[i])\n"
                       "y = sum(j: m[j])\n"
                       "output y\n");
    char *value = function(e->c, "double mx_value(");
    ck_assert_ptr_nonnull(strstr(value,
        "    double m[2];\n"
        "    for (int j = 0; j < 2; j++)\n"
        "        m[j] = -HUGE_VAL;\n"
        "    for (int j = 0; j < 2; j++) {\n"
        "        for (int i = 0; i < 4; i++) {\n"
        "            double dvs_next = dvs_p->W[j][i] * dvs_p->x[i];\n"
        "            if (dvs_next > m[j]) {\n"
        "                m[j] = dvs_next;\n"
        "            }\n"
        "        }\n"
        "    }\n"));
    ck_assert_ptr_null(strstr(value, "dvs_m_at"));
    free(value);
    char *grad = function(e->c, "double mx_gradient(");
    ck_assert_ptr_nonnull(strstr(grad,
        "    long dvs_m_at[2];\n"
        "    for (int j = 0; j < 2; j++)\n"
        "        dvs_m_at[j] = 0;\n"));
    ck_assert_ptr_nonnull(strstr(grad,
        "                m[j] = dvs_next;\n"
        "                dvs_m_at[j] = i;\n"));
    ck_assert_ptr_nonnull(strstr(grad,
        "            dvs_grad->W[j][i] = i == dvs_m_at[j] ? "
        "dvs_adj_m[j] * dvs_p->x[i] : 0.0;\n"));
    free(grad);
    emitted_free(e);
}
END_TEST

/* A tiny evaluator for the integer position expressions the emitter
 * writes: numbers, the names k, i and j, '+', '*', brackets and casts to
 * long. */
typedef struct PosExpr {
    const char *at;
    int k, i, j;
} PosExpr;

static long pos_sum(PosExpr *p);

static long pos_atom(PosExpr *p)
{
    while (*p->at == ' ')
        p->at++;
    if (strncmp(p->at, "(long)", 6) == 0) {
        p->at += 6;
        return pos_atom(p);
    }
    if (*p->at == '(') {
        p->at++;
        long v = pos_sum(p);
        while (*p->at == ' ')
            p->at++;
        ck_assert_int_eq(*p->at, ')');
        p->at++;
        return v;
    }
    if (*p->at >= '0' && *p->at <= '9')
        return strtol(p->at, (char **)&p->at, 10);
    char c = *p->at++;
    ck_assert_msg(c == 'k' || c == 'i' || c == 'j', "unexpected '%c'", c);
    return c == 'k' ? p->k : c == 'i' ? p->i : p->j;
}

/* OPERAND (OP OPERAND)*, where OP is '+' or '*'. */
static long pos_chain(PosExpr *p, char op, long (*operand)(PosExpr *))
{
    long v = operand(p);
    for (;;) {
        while (*p->at == ' ')
            p->at++;
        if (*p->at != op)
            return v;
        p->at++;
        long w = operand(p);
        v = op == '+' ? v + w : v * w;
    }
}

static long pos_product(PosExpr *p)
{
    return pos_chain(p, '*', pos_atom);
}

static long pos_sum(PosExpr *p)
{
    return pos_chain(p, '+', pos_product);
}

START_TEST(winner_position_over_three_indices)
{
    /* max over k < 2, i < 3, j < 2: the stored winner must be the
     * row-major flat position (k*3 + i)*2 + j that the reverse sweep
     * compares with */
    Emitted *e = build("model am\nparam Y[2,3,2]\n"
                       "ymax = max(k, i, j: Y[k, i, j])\noutput ymax\n");
    static const char store[] = "                    dvs_ymax_at = ";
    const char *at = strstr(e->c, store);
    ck_assert_msg(at != NULL, "no winner store in:\n%s", e->c);
    char *rhs = tu_format("%.*s", (int)strcspn(at + sizeof store - 1, ";"),
                          at + sizeof store - 1);
    for (int k = 0; k < 2; k++)
        for (int i = 0; i < 3; i++)
            for (int j = 0; j < 2; j++) {
                PosExpr p = {rhs, k, i, j};
                long got = pos_sum(&p);
                ck_assert_msg(got == (k * 3 + i) * 2 + j && *p.at == '\0',
                              "%s gives %ld at k=%d i=%d j=%d", rhs, got, k,
                              i, j);
            }
    free(rhs);
    emitted_free(e);
}
END_TEST

/* The line of C text holding AT (malloc'd, for failure messages). */
static char *line_at(const char *c, const char *at)
{
    const char *start = at;
    while (start > c && start[-1] != '\n')
        start--;
    return tu_format("%.*s", (int)strcspn(start, "\n"), start);
}

/* Assert that the emitted C has no "--" (a decrement) anywhere. */
static void check_no_decrement(const char *c)
{
    const char *at = strstr(c, "--");
    if (at) {
        char *line = line_at(c, at);
        ck_abort_msg("a decrement in the emitted code: %s", line);
    }
}

START_TEST(double_negation_is_not_a_decrement)
{
    /* "- -z" written without a space or bracket would be C's "--z", a
     * decrement: a wrong value, or code that does not compile */
    Emitted *e = build("model neg\ninput s\nparam a\nz = s * 2\n"
                       "y = -(-z) + a\noutput y\n");
    check_no_decrement(e->c);
    emitted_free(e);
    /* d/dx (1 - (-2) x) = -(-2): a negated negative constant */
    e = build("model neg\nparam x\ny = 1 - -2 * x\noutput y\n");
    check_no_decrement(e->c);
    emitted_free(e);
}
END_TEST

START_TEST(negated_contribution_is_a_subtraction)
{
    Emitted *e = build("model neg\nparam x[3], a\n"
                       "y = a * a - sum(i: x[i] * a)\noutput y\n");
    /* adj of the sum is -adj_y; a += adj_sum * x[i] over i, in the same
     * loop as x's adjoints (one model line, one domain) */
    ck_assert_ptr_nonnull(strstr(e->c, "    double dvs_adj_y_sum = "
                                       "-dvs_adj_y;\n"));
    ck_assert_ptr_nonnull(strstr(e->c,
        "    for (int i = 0; i < 3; i++) {\n"
        "        dvs_grad->x[i] = dvs_adj_y_sum * dvs_p->a;\n"
        "        dvs_grad->a += dvs_adj_y_sum * dvs_p->x[i];\n"
        "    }\n"));
    /* SK_ADD of a negation is written with -= */
    Emitted *f = build("model neg2\nparam x[3], a\n"
                       "y = sum(i: -(x[i] * a))\noutput y\n");
    ck_assert_ptr_nonnull(strstr(f->c, "        y -= dvs_p->x[i] * "
                                       "dvs_p->a;\n"));
    emitted_free(f);
    emitted_free(e);
}
END_TEST

START_TEST(numbers_read_back_exactly)
{
    /* the shortest decimal that reads back as the same double; whole
     * numbers keep a ".0" so they stay doubles in C */
    Emitted *e = build("model nums\nparam a\n"
                       "y = 0.1 * a + 3 * a * a + 1e-300 * a + 6.02e23 "
                       "+ 0.30000000000000004 * a\n"
                       "output y\n");
    char *value = function(e->c, "double nums_value(");
    ck_assert_ptr_nonnull(strstr(value,
        "double y = 0.1 * dvs_p->a + 3.0 * dvs_p->a * dvs_p->a + "
        "1e-300 * dvs_p->a + 6.02e+23 + 0.30000000000000004 * dvs_p->a;\n"));
    free(value);
    emitted_free(e);
}
END_TEST

/* ------------------------------------------------------------ helpers */

START_TEST(helpers_are_copied_only_when_used)
{
    Emitted *e = build("model plain\nparam a\ny = tanh(a) * exp(a)\n"
                       "output y\n");
    ck_assert_ptr_null(strstr(e->c, "dvs_sigmoid"));
    ck_assert_int_eq(count(e->c, "static double dvs_"), 0);
    emitted_free(e);

    e = build("model sig\nparam a, b\n"
              "y = sigmoid(a) * b + sigmoid(b)\noutput y\n");
    ck_assert_int_eq(count(e->c, "static double dvs_sigmoid(double x)\n"), 1);
    ck_assert_int_eq(count(e->c, "static double dvs_"), 1);
    emitted_free(e);
}
END_TEST

START_TEST(helpers_needed_by_the_gradient_are_copied)
{
    /* abs' is sign, lgamma' is digamma, hypot' is hypot_slope, softplus'
     * is sigmoid: each appears once, in the runtime's order */
    Emitted *e = build("model hl\nparam a, x[3]\n"
                       "y = abs(a) + lgamma(a) + hypot(sum(i: x[i]), a) + "
                       "softplus(a)\n"
                       "output y\n");
    static const char *const defs[] = {
        "static double dvs_digamma(double x)",
        "static double dvs_hypot_slope(double a, double b)",
        "static double dvs_sigmoid(double x)",
        "static double dvs_sign(double x)",
        "static double dvs_softplus(double x)",
    };
    const char *at = e->c;
    for (size_t i = 0; i < sizeof defs / sizeof defs[0]; i++) {
        ck_assert_msg(count(e->c, defs[i]) == 1, "%s: %d copies", defs[i],
                      count(e->c, defs[i]));
        const char *p = strstr(e->c, defs[i]);
        ck_assert_msg(p > at, "%s out of order", defs[i]);
        at = p;
    }
    ck_assert_int_eq(count(e->c, "static double dvs_"), 5);
    emitted_free(e);
}
END_TEST

START_TEST(unused_arguments_are_cast_to_void)
{
    /* the value function does not read inputs: (void)dvs_in; */
    Emitted *e = build("model tiny\ninput s\nparam a, b\nunused = s * a\n"
                       "y = a * b\noutput y\n");
    char *value = function(e->c, "double tiny_value(");
    ck_assert_ptr_nonnull(strstr(value, ")\n{\n    (void)dvs_in;\n    /* "));
    ck_assert_ptr_null(strstr(value, "(void)dvs_p;"));
    free(value);
    emitted_free(e);
    /* inputs read: no cast */
    e = build("model tiny\ninput s\nparam a\ny = a * s\noutput y\n");
    ck_assert_ptr_null(strstr(e->c, "(void)dvs_in;"));
    emitted_free(e);
    /* the output does not depend on the params: the value function does
     * not read *p, the gradient only writes zeros */
    e = build("model tiny\ninput s\nparam a\ny = s * 2\noutput y\n");
    char *v2 = function(e->c, "double tiny_value(");
    ck_assert_ptr_nonnull(strstr(v2, ")\n{\n    (void)dvs_p;\n    /* "));
    free(v2);
    char *g2 = function(e->c, "double tiny_gradient(");
    ck_assert_ptr_nonnull(strstr(g2, "(void)dvs_p;\n"));
    ck_assert_ptr_nonnull(strstr(g2, "    dvs_grad->a = 0.0;\n"));
    free(g2);
    emitted_free(e);
}
END_TEST

/* ------------------------------------------------------- determinism */

START_TEST(output_is_deterministic)
{
    static const char model[] = "model det\ninput s[3]\nparam w[3], c\n"
                                "y = sigmoid(sum(i: w[i] * s[i]) + c)\n"
                                "output y\n";
    Emitted *a = build(model);
    char *c1 = tu_format("%s", a->c), *h1 = tu_format("%s", a->h);
    emit(a);    /* the same compilation, emitted again */
    ck_assert_str_eq(a->c, c1);
    ck_assert_str_eq(a->h, h1);
    Emitted *b = build(model);  /* a fresh compilation */
    ck_assert_str_eq(b->c, c1);
    ck_assert_str_eq(b->h, h1);
    free(c1);
    free(h1);
    emitted_free(a);
    emitted_free(b);
}
END_TEST

/* ------------------------------------------------ comments stay closed */

/* The comment lines of C text that quote the model ("/" "* m.dvs:" or
 * "adjoint of:"), each checked to hold no comment delimiter or "??"
 * between its own opening and closing. */
static int check_quoted_comments(const char *c)
{
    int n = 0;
    for (const char *line = c; line && *line;) {
        const char *end = strchr(line, '\n');
        size_t len = end ? (size_t)(end - line) : strlen(line);
        char *l = tu_format("%.*s", (int)len, line);
        if (strstr(l, "/* m.dvs:") || strstr(l, "/* adjoint of: m.dvs:")) {
            const char *open = strstr(l, "/*");
            const char *body = open + 2;
            size_t blen = strlen(body);
            ck_assert_msg(blen >= 3 && strcmp(body + blen - 3, " */") == 0,
                          "comment not closed at the end: %s", l);
            char *inner = tu_format("%.*s", (int)(blen - 2), body);
            ck_assert_msg(!strstr(inner, "*/") && !strstr(inner, "/*") &&
                          !strstr(inner, "??"), "unsafe comment: %s", l);
            free(inner);
            n++;
        }
        free(l);
        line = end ? end + 1 : NULL;
    }
    return n;
}

START_TEST(model_comments_cannot_break_the_emitted_comment)
{
    /* a statement over several lines with comments between its parts:
     * the quote drops the model comments */
    Emitted *e = build("model cm\nparam a, b\n"
                       "y = a *   # ends here */ and /* opens ?\?= \\\n"
                       "    b     # what?\? */\n"
                       "output y\n");
    ck_assert_ptr_nonnull(strstr(e->c, "    /* m.dvs:3: y = a * b */\n"));
    ck_assert_int_eq(check_quoted_comments(e->c), 4);
    emitted_free(e);
}
END_TEST

START_TEST(quoted_text_is_defused)
{
    /* Point a statement's origin at raw text holding comment delimiters
     * and trigraph starts: the emitter must still write one closed,
     * harmless comment.  (Only comments can hold such text in a valid
     * model, and they are dropped; this checks the quoting itself.) */
    static const char model[] = "model q\nparam a\ny = a * a\noutput y\n"
                                "#x */ a /* b ?\?) c ?\?/ d */* e f\n";
    Emitted *e = compile(model);
    const char *raw = strstr(e->comp.src.text, "x */");
    Span at = {(uint32_t)(raw - e->comp.src.text), 0};
    at.len = (uint32_t)strlen(raw) - 1;
    e->comp.ir->forward.items[0].origin = at;
    emit(e);
    ck_assert_int_ge(check_quoted_comments(e->c), 1);
    ck_assert_ptr_nonnull(strstr(e->c, "    /* m.dvs:5: x * / a / * b ? ?) c "
                                       "? ?/ d * / * e f */\n"));
    emitted_free(e);
}
END_TEST

START_TEST(long_statements_are_cut_in_the_quote)
{
    /* "y = a + a + ... + a" with 101 terms: the quote stops after 160
     * visible characters (blanks between them are not counted) and says
     * so: y, =, a and 78 times "+ a" make 159, then one more "+" */
    char *sum = tu_format("%s", "y = a");
    char *cut = NULL;
    for (int i = 0; i < 100; i++) {
        if (i == 78)
            cut = tu_format("%s +", sum);
        char *more = tu_format("%s + a", sum);
        free(sum);
        sum = more;
    }
    char *model = tu_format("model lengthy\nparam a\n%s\noutput y\n", sum);
    Emitted *e = build(model);
    char *want = tu_format("    /* m.dvs:3: %s ... */\n", cut);
    ck_assert_msg(strstr(e->c, want) != NULL, "no\n%s\nin:\n%s", want, e->c);
    free(want);
    free(model);
    free(cut);
    free(sum);
    emitted_free(e);
}
END_TEST

/* A function of more than four part sizes is written as parts: with parts
 * of 2 statements, the 10 forward statements of the value make 5 parts;
 * a value read only in its own part stays local there, one read by a
 * later part (s2 by s3, s1 by s8) lives in the frame, and the output is
 * returned from the frame. */
START_TEST(long_functions_are_written_in_parts)
{
    Emitted *e = compile("param a, b\n"
                         "s1 = a * b\ns2 = sin(s1)\ns3 = s2 + b\n"
                         "s4 = s3 * s3\ns5 = s4 - a\ns6 = cos(s5)\n"
                         "s7 = s6 * a\ns8 = s7 + s1\ns9 = s8 * b\n"
                         "s10 = s9 + 1\noutput s10\n");
    emit(e);
    ck_assert_int_eq(count(e->c, "_part"), 0);  /* 10 statements: whole */
    e->comp.part_size = 2;
    emit(e);
    ck_assert_msg(strstr(e->c, "struct dvs_value_frame {\n"
                               "    double s1;\n    double s2;\n"
                               "    double s4;\n    double s6;\n"
                               "    double s8;\n    double s10;\n};\n"),
                  "%s", e->c);
    ck_assert_msg(strstr(e->c,
        "/* m_value, part 2. */\n"
        "static void dvs_value_part2(const m_param *dvs_p, "
        "struct dvs_value_frame *dvs_f)\n{\n"
        "    /* m.dvs:4: s3 = s2 + b */\n"
        "    double s3 = dvs_f->s2 + dvs_p->b;\n\n"
        "    /* m.dvs:5: s4 = s3 * s3 */\n"
        "    dvs_f->s4 = s3 * s3;\n}\n"), "%s", e->c);
    char *value = function(e->c, "double m_value(");
    ck_assert_str_eq(value,
        "double m_value(const m_param *dvs_p)\n{\n"
        "    struct dvs_value_frame dvs_frame;\n"
        "    for (int dvs_k = 0; dvs_k < 5; dvs_k++)\n"
        "        dvs_value_parts[dvs_k](dvs_p, &dvs_frame);\n\n"
        "    return dvs_frame.s10;\n}\n");
    ck_assert_int_eq(count(e->c, "static void dvs_value_part"), 5);
    ck_assert_msg(strstr(e->c, "static void (*const dvs_value_parts[5])"
                               "(const m_param *, struct dvs_value_frame *) "
                               "= {\n    dvs_value_part1, dvs_value_part2, "
                               "dvs_value_part3, dvs_value_part4,\n"
                               "    dvs_value_part5\n};\n"), "%s", e->c);
    /* the reverse sweep opens a part of its own */
    ck_assert_msg(strstr(e->c, "struct dvs_gradient_frame *dvs_f)\n{\n"
                               "    (void)dvs_p;\n    (void)dvs_grad;\n"
                               "    /* The reverse sweep: adjoints, last "
                               "statement first. */\n"), "%s", e->c);
    free(value);
    emitted_free(e);
}
END_TEST

/* The innermost loop reads memory with unit stride where that takes
 * fewer jumping accesses: A[j, i] summed over j for each i runs i inside.
 * Summed over j and k, C[i, k, j] cannot: j would have to come inside k,
 * which changes the order each t[i] adds its terms in (and so its
 * rounding); the domain's order stays. */
START_TEST(loops_run_with_unit_stride_where_the_sums_allow)
{
    Emitted *e = build("param A[4, 3], x[4], C[3, 2, 5]\n"
                       "y[i] = sum(j: A[j, i] * x[j])\n"
                       "t[i] = sum(j, k: C[i, k, j])\n"
                       "loss = sum(i: y[i] * t[i])\noutput loss\n");
    ck_assert_msg(strstr(e->c, "    for (int j = 0; j < 4; j++)\n"
                               "        for (int i = 0; i < 3; i++)\n"
                               "            y[i] += dvs_p->A[j][i] * "
                               "dvs_p->x[j];\n"), "%s", e->c);
    ck_assert_msg(strstr(e->c, "    for (int i = 0; i < 3; i++)\n"
                               "        for (int j = 0; j < 5; j++)\n"
                               "            for (int k = 0; k < 2; k++)\n"
                               "                t[i] += dvs_p->C[i][k][j];\n"),
                  "%s", e->c);
    /* the gradient of A: one write per point, any order; A[j][i] and the
     * adjoint of y[i] want i inside */
    ck_assert_msg(strstr(e->c, "    for (int j = 0; j < 4; j++)\n"
                               "        for (int i = 0; i < 3; i++)"),
                  "%s", e->c);
    ck_assert_int_eq(count(e->c, "for (int i = 0; i < 3; i++)\n"
                                 "        for (int j = 0; j < 4; j++)"), 0);
    emitted_free(e);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("emit");
    TU_ADD_TESTS(tu_case(s, "emit", 0),
                 value_and_gradient_of_a_small_network,
                 header_declares_the_interface,
                 model_without_inputs_has_no_input_argument,
                 max_reduction_keeps_its_winner_only_for_the_gradient,
                 winner_position_over_three_indices,
                 double_negation_is_not_a_decrement,
                 negated_contribution_is_a_subtraction,
                 numbers_read_back_exactly, helpers_are_copied_only_when_used,
                 helpers_needed_by_the_gradient_are_copied,
                 unused_arguments_are_cast_to_void, output_is_deterministic,
                 model_comments_cannot_break_the_emitted_comment,
                 quoted_text_is_defused, long_statements_are_cut_in_the_quote,
                 long_functions_are_written_in_parts,
                 loops_run_with_unit_stride_where_the_sums_allow);
    return tu_main(s);
}
