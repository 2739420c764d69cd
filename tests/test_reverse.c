/* test_reverse.c - unit tests of the reverse pass (reverse.c) via dv_compile:
 * activity analysis, sweep order, first writes (set, or zero then add),
 * zeroed gradients of unused params, dropped unread adjoints.  Expected
 * sweeps are derived by hand with the chain rule (DESIGN.md). */
#include "testutil.h"

#include "dervish.h"

static DvCompilation *compile(const char *text)
{
    DvCompilation *c = calloc(1, sizeof *c);
    tu_compile(c, "t.dvs", text);
    return c;
}

static void compilation_free(DvCompilation *c)
{
    dv_free(c);
    free(c);
}

/* The reverse statements as ir_print shows them (after "reverse:"). */
static char *reverse_text(const Ir *ir)
{
    char *text = tu_ir_text(ir);
    char *rev = strstr(text, "reverse:\n");
    char *out = tu_format("%s", rev ? rev + strlen("reverse:\n") : "");
    free(text);
    return out;
}

/* Assert the reverse statements of a compilation. */
static void check_sweep(const DvCompilation *c, const char *expected)
{
    char *got = reverse_text(c->ir);
    ck_assert_msg(strcmp(got, expected) == 0, "%s\n got:\n%s\nwant:\n%s",
                  c->src.text, got, expected);
    free(got);
}

static void check_reverse(const char *model, const char *expected)
{
    DvCompilation *c = compile(model);
    check_sweep(c, expected);
    compilation_free(c);
}

/* ----------------------------------------------------------- activity */

START_TEST(only_active_arrays_get_adjoints)
{
    /* t depends only on the input s: the output needs it, but no param
     * reaches it, so it gets no adjoint; u and y are active */
    DvCompilation *c = compile("input s[3]\n"
                               "param a, w[3]\n"
                               "t = sum(i: s[i] * s[i])\n"
                               "u = sum(i: w[i] * s[i])\n"
                               "y = a * t + u\n"
                               "output y\n");
    const Ir *ir = c->ir;
    const IrArray *t = tu_array(ir, "t", ROLE_VALUE);
    const IrArray *s = tu_array(ir, "s", ROLE_INPUT);
    const IrArray *u = tu_array(ir, "u", ROLE_VALUE);
    const IrArray *y = tu_array(ir, "y", ROLE_VALUE);
    ck_assert(!t->varied && t->useful);
    ck_assert(!s->varied && s->useful);
    ck_assert(u->varied && u->useful);
    ck_assert(y->varied && y->useful);
    ck_assert_int_eq(t->adjoint, -1);
    ck_assert_int_eq(s->adjoint, -1);
    ck_assert_int_ge(u->adjoint, 0);
    const IrArray *adj_u = &ir->arrays.items[u->adjoint];
    ck_assert_str_eq(adj_u->name, "dvs_adj_u");
    ck_assert_int_eq(adj_u->role, ROLE_ADJOINT);
    ck_assert_int_eq(adj_u->primal, (int)(u - ir->arrays.items));
    /* a param's adjoint keeps the param's name: it is a member of *grad */
    const IrArray *w = tu_array(ir, "w", ROLE_PARAM);
    ck_assert_str_eq(ir->arrays.items[w->adjoint].name, "w");
    /* d y/d a = t, d y/d u = 1, d u/d w[i] = s[i] */
    check_sweep(c, "  dvs_adj_y = 1\n"
                   "  a = (dvs_adj_y * t)\n"
                   "  dvs_adj_u = dvs_adj_y\n"
                   "  w[i] = (dvs_adj_u * s[i])\n");
    compilation_free(c);
}
END_TEST

START_TEST(output_without_params_seeds_nothing)
{
    /* nothing to propagate: only the zeroed gradient remains */
    check_reverse("param a\ninput s\ny = s * 2\noutput y\n", "  a = 0\n");
}
END_TEST

/* ---------------------------------------------------------------- order */

START_TEST(sweep_runs_last_statement_first)
{
    DvCompilation *c = compile("param a\n"
                               "b1 = sin(a)\n"
                               "b2 = cos(b1)\n"
                               "b3 = exp(b2)\n"
                               "output b3\n");
    /* exp' = exp (the stored b3), cos' = -sin, sin' = cos */
    check_sweep(c, "  dvs_adj_b3 = 1\n"
                   "  dvs_adj_b2 = (dvs_adj_b3 * b3)\n"
                   "  dvs_adj_b1 = (dvs_adj_b2 * (-sin(b1)))\n"
                   "  a = (dvs_adj_b1 * cos(a))\n");
    /* each adjoint statement points back at its model line, last first;
     * the seed quotes the output statement */
    static const unsigned origin[] = {46, 33, 20, 8};
    const char *text = c->src.text;
    ck_assert_int_eq(c->ir->reverse.len, 4);
    for (int i = 0; i < 4; i++)
        ck_assert_uint_eq(c->ir->reverse.items[i].origin.off, origin[i]);
    ck_assert(strncmp(text + origin[0], "output b3", 9) == 0);
    ck_assert_uint_eq(c->ir->reverse.items[0].origin.len, 9);
    compilation_free(c);
}
END_TEST

START_TEST(matrix_product_gives_outer_and_transposed_products)
{
    /* z[j] += W[j,i] s[i]: adj_W[j,i] = adj_z[j] s[i] (outer product),
     * adj_s[i] += adj_z[j] W[j,i] (transposed product) */
    check_reverse("param W[2,3], s[3]\n"
                  "z[j] = sum(i: W[j,i] * s[i])\n"
                  "y = sum(j: z[j])\n"
                  "output y\n",
                  "  dvs_adj_y = 1\n"
                  "  dvs_adj_z[j] = dvs_adj_y\n"
                  "  W[j,i] = (dvs_adj_z[j] * s[i])\n"
                  "  s[dvs_i0] = 0\n"
                  "  s[i] += (dvs_adj_z[j] * W[j,i])  over [j,i]\n");
}
END_TEST

/* ------------------------------------------------------- first writes */

START_TEST(first_write_sets_when_each_element_is_covered_once)
{
    DvCompilation *c = compile("param x[3], W[2,3]\n"
                               "y[j] = sum(i: W[j,i] * x[i]) + "
                               "sum(i: x[i])\n"
                               "z = sum(j: y[j])\n"
                               "output z\n");
    /* x is first written by a statement over [i] alone: a plain set; the
     * second contribution, over [j,i], accumulates */
    check_sweep(c, "  dvs_adj_z = 1\n"
                   "  dvs_adj_y[j] = dvs_adj_z\n"
                   "  dvs_adj_y_sum[j] = dvs_adj_y[j]\n"
                   "  dvs_adj_y_sum2 = 0\n"
                   "  dvs_adj_y_sum2 += dvs_adj_y[j]  over [j]\n"
                   "  x[i] = dvs_adj_y_sum2\n"
                   "  W[j,i] = (dvs_adj_y_sum[j] * x[i])\n"
                   "  x[i] += (dvs_adj_y_sum[j] * W[j,i])  over [j,i]\n");
    /* the adjoint of a temporary is named after it without the prefix */
    tu_array(c->ir, "dvs_adj_y_sum", ROLE_ADJOINT);
    const IrStmt *st = c->ir->reverse.items;
    ck_assert_int_eq(st[3].kind, SK_SET);
    ck_assert_int_eq(st[4].kind, SK_ADD);
    ck_assert_int_eq(st[5].kind, SK_SET);
    ck_assert_int_eq(st[7].kind, SK_ADD);
    compilation_free(c);
}
END_TEST

START_TEST(diagonal_write_zeroes_first)
{
    /* W[i,i] over [i] misses the off-diagonal elements: zero all of W's
     * gradient, then accumulate the diagonal */
    DvCompilation *c = compile("param W[3,3]\ny = sum(i: W[i,i])\n"
                               "output y\n");
    check_sweep(c, "  dvs_adj_y = 1\n"
                   "  W[dvs_i0,dvs_i1] = 0\n"
                   "  W[i,i] += dvs_adj_y\n");
    const IrStmt *zero = &c->ir->reverse.items[1];
    ck_assert_int_eq(zero->kind, SK_SET);
    ck_assert_int_eq(ir_tuple_len(c->ir, zero->domain), 2);
    const IrStmt *add = &c->ir->reverse.items[2];
    ck_assert_int_eq(add->kind, SK_ADD);
    ck_assert_int_eq(ir_tuple_len(c->ir, add->tuple), 2);
    ck_assert_int_eq(ir_tuple_len(c->ir, add->domain), 1);
    compilation_free(c);
}
END_TEST

START_TEST(broadcast_scalar_accumulates)
{
    /* c is read at every element of H: zero it, then sum over the array */
    check_reverse("param A[2,3], B[2,3], c\n"
                  "H = A * B + c\n"
                  "y = sum(i, j: H[i,j])\n"
                  "output y\n",
                  "  dvs_adj_y = 1\n"
                  "  dvs_adj_H[i,j] = dvs_adj_y\n"
                  "  A[dvs_i0,dvs_i1] = (dvs_adj_H[dvs_i0,dvs_i1] * "
                  "B[dvs_i0,dvs_i1])\n"
                  "  B[dvs_i0,dvs_i1] = (dvs_adj_H[dvs_i0,dvs_i1] * "
                  "A[dvs_i0,dvs_i1])\n"
                  "  c = 0\n"
                  "  c += dvs_adj_H[dvs_i0,dvs_i1]  over [dvs_i0,dvs_i1]\n");
}
END_TEST

START_TEST(max_and_logsumexp_adjoints)
{
    /* max sends the adjoint to its first winner only; logsumexp's adjoint
     * is the softmax weight exp(x[i] - shift) / expsum, and its shift gets
     * no adjoint (the result does not depend on it) */
    check_reverse("param x[4], c\n"
                  "m = max(i: x[i] * c)\n"
                  "l = logsumexp(i: x[i])\n"
                  "y = m + l\n"
                  "output y\n",
                  "  dvs_adj_y = 1\n"
                  "  dvs_adj_m = dvs_adj_y\n"
                  "  dvs_adj_l = dvs_adj_y\n"
                  "  dvs_adj_l_expsum = (dvs_adj_l * (1 / dvs_l_expsum))\n"
                  "  x[i] = (dvs_adj_l_expsum * exp((x[i] - dvs_l_shift)))\n"
                  "  x[i] += ((#i == dvs_m_at) ? (dvs_adj_m * c) : 0)\n"
                  "  c = 0\n"
                  "  c += ((#i == dvs_m_at) ? (dvs_adj_m * x[i]) : 0)  "
                  "over [i]\n");
}
END_TEST

/* ------------------------------------------- params and unread adjoints */

START_TEST(unaffected_params_are_zeroed)
{
    DvCompilation *c = compile("param a, b, c[2]\ny = a * a\noutput y\n");
    check_sweep(c, "  dvs_adj_y = 1\n"
                   "  a = (dvs_adj_y * (a + a))\n"
                   "  b = 0\n"
                   "  c[dvs_i0] = 0\n");
    /* the zeroing statements say why in the emitted comment */
    ck_assert_ptr_null(c->ir->reverse.items[1].note);
    ck_assert_str_eq(c->ir->reverse.items[2].note,
                     "b does not affect the output");
    ck_assert_str_eq(c->ir->reverse.items[3].note,
                     "c does not affect the output");
    compilation_free(c);
}
END_TEST

START_TEST(unread_adjoints_are_dropped)
{
    /* r = floor(q) passes nothing back, so the adjoint of r would be set
     * and never read: it is dropped, and b's gradient is zero */
    DvCompilation *c = compile("param a, b\n"
                               "q = a * b\n"
                               "r = floor(q)\n"
                               "y = r * a\n"
                               "output y\n");
    check_sweep(c, "  dvs_adj_y = 1\n"
                   "  a = (dvs_adj_y * r)\n"
                   "  b = 0\n");
    for (int i = 0; i < c->ir->reverse.len; i++) {
        const IrArray *t = &c->ir->arrays.items[c->ir->reverse.items[i].target];
        ck_assert_str_ne(t->name, "dvs_adj_r");
        ck_assert_str_ne(t->name, "dvs_adj_q");
    }
    compilation_free(c);
}
END_TEST

START_TEST(select_sends_the_adjoint_to_the_branch_taken)
{
    /* d/da = b where a > b, else 0; d/db = a where a > b, else 1 */
    check_reverse("param a, b\n"
                  "y = a > b ? a * b : b\n"
                  "output y\n",
                  "  dvs_adj_y = 1\n"
                  "  a = ((a > b) ? (dvs_adj_y * b) : 0)\n"
                  "  b = (dvs_adj_y * ((a > b) ? a : 1))\n");
}
END_TEST

START_TEST(pass_can_run_twice_in_one_process)
{
    /* no hidden state: a second compilation gives the same sweep */
    DvCompilation *c1 = compile("param a\ny = exp(a)\noutput y\n");
    DvCompilation *c2 = compile("param a\ny = exp(a)\noutput y\n");
    char *r1 = reverse_text(c1->ir), *r2 = reverse_text(c2->ir);
    ck_assert_str_eq(r1, "  dvs_adj_y = 1\n  a = (dvs_adj_y * y)\n");
    ck_assert_str_eq(r1, r2);
    free(r1);
    free(r2);
    compilation_free(c1);
    compilation_free(c2);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("reverse");
    TU_ADD_TESTS(tu_case(s, "reverse", 0),
                 only_active_arrays_get_adjoints,
                 output_without_params_seeds_nothing,
                 sweep_runs_last_statement_first,
                 matrix_product_gives_outer_and_transposed_products,
                 first_write_sets_when_each_element_is_covered_once,
                 diagonal_write_zeroes_first, broadcast_scalar_accumulates,
                 max_and_logsumexp_adjoints, unaffected_params_are_zeroed,
                 unread_adjoints_are_dropped,
                 select_sends_the_adjoint_to_the_branch_taken,
                 pass_can_run_twice_in_one_process);
    return tu_main(s);
}
