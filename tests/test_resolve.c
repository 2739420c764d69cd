/* test_resolve.c - unit tests of resolve (names, constants, shapes, index
 * ranges, lowering of reductions) through parse_model and resolve_model,
 * and of the IR's hash-consing.  The IR is compared as ir_print text;
 * expected texts are written by hand from LANGUAGE.md and DESIGN.md. */
#include "testutil.h"

#include "dervish.h"
#include "parse.h"
#include "resolve.h"

/* One model taken through parse and resolve (no reverse pass). */
typedef struct Resolved {
    Arena arena;
    Source src;
    Ir *ir;
    char *diag;         /* every diagnostic printed */
    int errors, warnings;
} Resolved;

static Resolved *resolve_named(const char *path, const char *text,
                               const char *name)
{
    Resolved *r = calloc(1, sizeof *r);
    arena_init(&r->arena);
    r->src.path = path;
    r->src.text = text;
    r->src.len = strlen(text);
    TuCapture cap;
    Diag diag;
    diag_init(&diag, &r->src, tu_capture_open(&cap));
    AstModel *m = parse_model(&r->arena, &diag, &r->src);
    const char *stem = dv_stem(&r->arena, path);
    r->ir = resolve_model(&r->arena, &diag, &r->src, m, name, stem);
    r->diag = tu_capture_close(&cap);
    r->errors = diag.errors;
    r->warnings = diag.warnings;
    return r;
}

static Resolved *resolve(const char *text)
{
    return resolve_named("t.dvs", text, NULL);
}

static void resolved_free(Resolved *r)
{
    arena_free(&r->arena);
    free(r->diag);
    free(r);
}

/* Assert the forward statements of IR: EXPECTED is ir_print's text
 * without its "forward:" line. */
static void check_ir(const Ir *ir, const char *expected)
{
    char *got = tu_ir_text(ir), *want = tu_format("forward:\n%s", expected);
    ck_assert_str_eq(got, want);
    free(want);
    free(got);
}

/* Resolve TEXT and assert that it gives no diagnostics and the forward
 * statements EXPECTED, as check_ir takes them; the caller frees the result. */
static Resolved *resolve_forward(const char *text, const char *expected)
{
    Resolved *r = resolve(text);
    ck_assert_msg(r->errors == 0 && r->warnings == 0 && r->diag[0] == '\0',
                  "%s", r->diag);
    check_ir(r->ir, expected);
    return r;
}

static void check_forward(const char *text, const char *expected)
{
    resolved_free(resolve_forward(text, expected));
}

/* Assert the diagnostics of TEXT and its numbers of errors and warnings. */
static void check_diag(const char *text, int errors, int warnings,
                       const char *expected)
{
    Resolved *r = resolve(text);
    ck_assert_str_eq(r->diag, expected);
    ck_assert_int_eq(r->errors, errors);
    ck_assert_int_eq(r->warnings, warnings);
    resolved_free(r);
}

static int extent_of(const Ir *ir, const char *var)
{
    for (int i = 0; i < ir->vars.len; i++)
        if (strcmp(ir->vars.items[i].name, var) == 0)
            return ir->vars.items[i].extent;
    ck_abort_msg("no index var %s", var);
    return -1;
}

/* ------------------------------------------------- lowering reductions */

START_TEST(reduction_becomes_init_and_accumulate)
{
    Resolved *r = resolve_forward("input s[3]\n"
                                  "param W[2,3], b[2]\n"
                                  "z[j] = sum(i: W[j,i] * s[i]) + b[j]\n"
                                  "y = sum(j: z[j])\n"
                                  "output y\n",
                                  "  dvs_z_sum[j] = 0\n"
                                  "  dvs_z_sum[j] += (W[j,i] * s[i])  "
                                  "over [j,i]\n"
                                  "  z[j] = (dvs_z_sum[j] + b[j])\n"
                                  "  y = 0\n"
                                  "  y += z[j]  over [j]\n");
    /* the accumulator is a temporary with the enclosing index's extent */
    const IrArray *acc = tu_array(r->ir, "dvs_z_sum", TU_ANY_ROLE);
    ck_assert_int_eq(acc->role, ROLE_TEMP);
    ck_assert_int_eq(acc->rank, 1);
    ck_assert_int_eq(acc->dim[0], 2);
    const IrStmt *st = r->ir->forward.items;
    ck_assert_int_eq(st[0].kind, SK_SET);
    ck_assert_int_eq(st[1].kind, SK_ADD);
    ck_assert_int_eq(st[2].kind, SK_SET);
    ck_assert_int_eq(ir_tuple_len(r->ir, st[1].tuple), 1);
    ck_assert_int_eq(ir_tuple_len(r->ir, st[1].domain), 2);
    /* every statement points back at its model line */
    ck_assert_uint_eq(st[0].origin.off, 30);
    ck_assert_uint_eq(st[2].origin.off, 30);
    ck_assert_uint_eq(st[3].origin.off, 66);
    resolved_free(r);
}
END_TEST

START_TEST(whole_right_side_reduction_accumulates_into_the_target)
{
    check_forward("param A[2,3], B[3,4]\n"
                  "C[i,j] = sum(k: A[i,k] * B[k,j])\n"
                  "y = sum(i, j: C[i,j])\n"
                  "output y\n",
                  "  C[i,j] = 0\n"
                  "  C[i,j] += (A[i,k] * B[k,j])  over [i,j,k]\n"
                  "  y = 0\n"
                  "  y += C[i,j]  over [i,j]\n");
}
END_TEST

START_TEST(reduction_without_outer_index_is_a_scalar)
{
    /* sum(i: x[i]) does not depend on j: computed once, not per j */
    check_forward("param x[3]\n"
                  "y[j] = sum(i: x[i]) * x[j]\n"
                  "z = sum(j: y[j])\n"
                  "output z\n",
                  "  dvs_y_sum = 0\n"
                  "  dvs_y_sum += x[i]  over [i]\n"
                  "  y[j] = (dvs_y_sum * x[j])\n"
                  "  z = 0\n"
                  "  z += y[j]  over [j]\n");
    /* a second reduction in one definition gets a numbered temporary */
    check_forward("param x[3], W[2,3]\n"
                  "y[j] = sum(i: W[j,i] * x[i]) + sum(i: x[i])\n"
                  "z = sum(j: y[j])\n"
                  "output z\n",
                  "  dvs_y_sum[j] = 0\n"
                  "  dvs_y_sum[j] += (W[j,i] * x[i])  over [j,i]\n"
                  "  dvs_y_sum2 = 0\n"
                  "  dvs_y_sum2 += x[i]  over [i]\n"
                  "  y[j] = (dvs_y_sum[j] + dvs_y_sum2)\n"
                  "  z = 0\n"
                  "  z += y[j]  over [j]\n");
}
END_TEST

START_TEST(max_min_and_logsumexp_reductions)
{
    /* max starts at -inf and min at +inf; each keeps its winner's place.
     * logsumexp is shift + log(sum(exp(x - shift))), the shift the largest
     * term (0 when that is infinite), so no exp overflows */
    Resolved *r = resolve_forward("param x[4], c\n"
                                  "m = max(i: x[i])\n"
                                  "n = min(i: x[i] * c)\n"
                                  "l = logsumexp(i: x[i])\n"
                                  "y = m + n + l\n"
                                  "output y\n",
                                  "  m = -inf\n"
                                  "  dvs_m_at = 0\n"
                                  "  m max= x[i]  over [i]\n"
                                  "  n = inf\n"
                                  "  dvs_n_at = 0\n"
                                  "  n min= (x[i] * c)  over [i]\n"
                                  "  dvs_l_shift = -inf\n"
                                  "  dvs_l_shift max= x[i]  over [i]\n"
                                  "  dvs_l_shift = ((fabs(dvs_l_shift) < inf) ? "
                                  "dvs_l_shift : 0)\n"
                                  "  dvs_l_expsum = 0\n"
                                  "  dvs_l_expsum += exp((x[i] - dvs_l_shift))"
                                  "  over [i]\n"
                                  "  l = (dvs_l_shift + log(dvs_l_expsum))\n"
                                  "  y = ((m + n) + l)\n");
    const IrStmt *mx = &r->ir->forward.items[2];
    ck_assert_int_eq(mx->kind, SK_MAX);
    ck_assert_int_eq(mx->argpos, tu_array(r->ir, "dvs_m_at", TU_ANY_ROLE) -
                                     r->ir->arrays.items);
    ck_assert_int_eq(r->ir->arrays.items[mx->argpos].role, ROLE_ARGPOS);
    ck_assert_int_eq(ir_tuple_len(r->ir, mx->reduced), 1);
    ck_assert_int_eq(r->ir->forward.items[5].kind, SK_MIN);
    /* the shift gets no adjoint and its max keeps no winner */
    ck_assert_int_eq(r->ir->forward.items[7].kind, SK_MAX);
    ck_assert_int_eq(r->ir->forward.items[7].argpos, -1);
    ck_assert(tu_array(r->ir, "dvs_l_shift", TU_ANY_ROLE)->no_adjoint);
    ck_assert(!tu_array(r->ir, "dvs_l_expsum", TU_ANY_ROLE)->no_adjoint);
    resolved_free(r);
}
END_TEST

START_TEST(max_over_an_inner_index_keeps_the_outer_one)
{
    check_forward("param A[2,3]\n"
                  "M[i] = max(k: A[i,k])\n"
                  "y = sum(i: M[i])\n"
                  "output y\n",
                  "  M[i] = -inf\n"
                  "  dvs_M_at[i] = 0\n"
                  "  M[i] max= A[i,k]  over [i,k]\n"
                  "  y = 0\n"
                  "  y += M[i]  over [i]\n");
}
END_TEST

/* --------------------------------------------------- whole-array form */

START_TEST(whole_array_form_gets_implicit_indices)
{
    Resolved *r = resolve_forward("param A[2,3], B[2,3], c, z[4]\n"
                                  "H = A * B + c\n"
                                  "h = tanh(z)\n"
                                  "y = sum(i, j: H[i,j]) + sum(k: h[k])\n"
                                  "output y\n",
                                  "  H[dvs_i0,dvs_i1] = ((A[dvs_i0,dvs_i1] * "
                                  "B[dvs_i0,dvs_i1]) + c)\n"
                                  "  h[dvs_i0] = tanh(z[dvs_i0])\n"
                                  "  dvs_y_sum = 0\n"
                                  "  dvs_y_sum += H[i,j]  over [i,j]\n"
                                  "  dvs_y_sum2 = 0\n"
                                  "  dvs_y_sum2 += h[k]  over [k]\n"
                                  "  y = (dvs_y_sum + dvs_y_sum2)\n");
    const IrArray *h = tu_array(r->ir, "H", TU_ANY_ROLE);
    ck_assert_int_eq(h->role, ROLE_VALUE);
    ck_assert_int_eq(h->rank, 2);
    ck_assert_int_eq(h->dim[0], 2);
    ck_assert_int_eq(h->dim[1], 3);
    resolved_free(r);
}
END_TEST

START_TEST(whole_array_form_with_a_reduction_inside)
{
    /* the reduction reads z elementwise, so its accumulator is per element */
    check_forward("param z[3], x[2]\n"
                  "h = z * sum(i: x[i] * z)\n"
                  "y = sum(k: h[k])\n"
                  "output y\n",
                  "  dvs_h_sum[dvs_i0] = 0\n"
                  "  dvs_h_sum[dvs_i0] += (x[i] * z[dvs_i0])  over [dvs_i0,i]\n"
                  "  h[dvs_i0] = (z[dvs_i0] * dvs_h_sum[dvs_i0])\n"
                  "  y = 0\n"
                  "  y += h[k]  over [k]\n");
}
END_TEST

START_TEST(mixed_shapes_are_an_error)
{
    check_diag("param A[2,3], v[3]\nH = A * v\ny = sum(i: v[i])\noutput y\n",
               1, 0,
               "t.dvs:2:9: error: 'v' does not have the shape of the other "
               "arrays in this elementwise definition: use index notation, "
               "as in y[i] = ...\n"
               "    H = A * v\n"
               "            ^\n"
               "t.dvs:2:5: note: the shape was set here\n"
               "    H = A * v\n"
               "        ^\n");
}
END_TEST

/* ----------------------------------------------------------- constants */

START_TEST(constants_are_folded)
{
    /* N + 1 = 7, 2 * 3 = 6, H = 6/4 + sqrt(16) = 5.5, -(2) = -2; the
     * power 2^3 is left to the C library like every builtin */
    Resolved *r = resolve_forward("param a\n"
                                  "const N = 2 * 3\n"
                                  "const H = N / 4 + sqrt(16)\n"
                                  "param W[N]\n"
                                  "y = a * (N + 1) - 2 * 3 + H + 2^3 + -(2) + "
                                  "sum(i: W[i])\n"
                                  "output y\n",
                                  "  dvs_y_sum = 0\n"
                                  "  dvs_y_sum += W[i]  over [i]\n"
                                  "  y = ((((((a * 7) - 6) + 5.5) + "
                                  "pow(2, 3)) + -2) + dvs_y_sum)\n");
    /* an integer const works as an array size */
    const IrArray *w = tu_array(r->ir, "W", TU_ANY_ROLE);
    ck_assert_int_eq(w->rank, 1);
    ck_assert_int_eq(w->dim[0], 6);
    resolved_free(r);
}
END_TEST

START_TEST(constant_and_dimension_errors)
{
    check_diag("param a\n"
               "const K = a\n"
               "param v[2.5], u[0], w[K]\n"
               "output a\n",
               3, 0,
               "t.dvs:2:11: error: 'a' is not a constant: constants may use "
               "only numbers and earlier constants\n"
               "    const K = a\n"
               "              ^\n"
               "t.dvs:3:9: error: a dimension must be a whole number from 1 "
               "to 2147483647, not 2.5\n"
               "    param v[2.5], u[0], w[K]\n"
               "            ^~~\n"
               "t.dvs:3:17: error: a dimension must be a whole number from 1 "
               "to 2147483647, not 0\n"
               "    param v[2.5], u[0], w[K]\n"
               "                    ^\n");
    check_diag("param a[2,2,2,2,2]\noutput a\n", 1, 0,
               "t.dvs:1:7: error: 'a' has 5 dimensions; at most 4 are "
               "allowed\n"
               "    param a[2,2,2,2,2]\n"
               "          ^~~~~~~~~~~~\n");
}
END_TEST

/* -------------------------------------------------------- hash-consing */

START_TEST(same_subexpression_is_one_node)
{
    Resolved *r = resolve("param a, b\n"
                          "u = sin(a * b) + cos(a * b)\n"
                          "output u\n");
    ck_assert_int_eq(r->errors, 0);
    const Ir *ir = r->ir;
    const IrNode *add = ir_at(ir, ir->forward.items[0].expr);
    ck_assert_int_eq(add->op, IR_ADD);
    const IrNode *s = ir_at(ir, add->arg[0]), *c = ir_at(ir, add->arg[1]);
    ck_assert_int_eq(s->op, IR_SIN);
    ck_assert_int_eq(c->op, IR_COS);
    ck_assert_int_eq(s->arg[0], c->arg[0]);
    ck_assert_int_eq(ir_at(ir, s->arg[0])->op, IR_MUL);
    resolved_free(r);
}
END_TEST

START_TEST(constructors_return_existing_nodes)
{
    Arena arena;
    arena_init(&arena);
    Source src = {"t.dvs", "", 0, NULL, 0};
    Ir *ir = ir_new(&arena, &src);
    int dim[1] = {3};
    Span none = {0, 0};
    int32_t x = ir_add_array(ir, "x", ROLE_PARAM, 0, dim, none);
    int32_t v = ir_add_array(ir, "v", ROLE_PARAM, 1, dim, none);
    int32_t i = ir_add_var(ir, "i", 3), j = ir_add_var(ir, "j", 3);
    int32_t ij[2] = {i, j}, ji[2] = {j, i};
    ck_assert_int_eq(ir_tuple(ir, ij, 2), ir_tuple(ir, ij, 2));
    ck_assert_int_ne(ir_tuple(ir, ij, 2), ir_tuple(ir, ji, 2));
    ck_assert_int_eq(ir_tuple(ir, NULL, 0), ir_tuple(ir, NULL, 0));
    int32_t scalar = ir_tuple(ir, NULL, 0), ti = ir_tuple(ir, &i, 1);
    ck_assert_int_eq(ir_tuple_len(ir, ti), 1);
    ck_assert_int_eq(ir_tuple_vars(ir, ti)[0], i);
    NodeId rx = ir_read(ir, x, scalar);
    ck_assert_int_eq(ir_read(ir, x, scalar), rx);
    ck_assert_int_ne(ir_read(ir, v, ti), ir_read(ir, v, ir_tuple(ir, &j, 1)));
    ck_assert_int_eq(ir_const(ir, 2.5), ir_const(ir, 2.5));
    /* constants compare by bit pattern: 0.0 and -0.0 are two nodes */
    ck_assert_int_ne(ir_const(ir, 0.0), ir_const(ir, -0.0));
    NodeId two = ir_const(ir, 2.0);
    NodeId p = ir_node(ir, IR_MUL, two, rx, NO_NODE);
    ck_assert_int_eq(ir_node(ir, IR_MUL, two, rx, NO_NODE), p);
    /* operand order matters: no algebra in hash-consing */
    ck_assert_int_ne(ir_node(ir, IR_MUL, rx, two, NO_NODE), p);
    ck_assert_int_eq(ir_index(ir, i), ir_index(ir, i));
    /* thousands of distinct nodes survive the table growing */
    NodeId first = ir_const(ir, 1000.0);
    for (int k = 0; k < 5000; k++)
        ir_const(ir, (double)k);
    ck_assert_int_eq(ir_const(ir, 1000.0), first);
    ck_assert_int_eq(ir_node(ir, IR_MUL, two, rx, NO_NODE), p);
    arena_free(&arena);
}
END_TEST

/* ----------------------------------------------------- dead definitions */

START_TEST(dead_definitions_are_pruned_with_a_warning)
{
    Resolved *r = resolve("param a, b\n"
                          "q = a + 1\n"
                          "r = q * 2\n"
                          "y = a * a\n"
                          "output y\n");
    ck_assert_int_eq(r->errors, 0);
    ck_assert_int_eq(r->warnings, 3);
    ck_assert_str_eq(r->diag,
                     "t.dvs:2:1: warning: 'q' is defined but no output "
                     "depends on it; it is left out of the emitted code\n"
                     "    q = a + 1\n"
                     "    ^\n"
                     "t.dvs:3:1: warning: 'r' is defined but no output "
                     "depends on it; it is left out of the emitted code\n"
                     "    r = q * 2\n"
                     "    ^\n"
                     "t.dvs:1:10: warning: param 'b' does not affect the "
                     "output; its gradient is always zero\n"
                     "    param a, b\n"
                     "             ^\n");
    check_ir(r->ir, "  y = (a * a)\n");
    resolved_free(r);
}
END_TEST

START_TEST(output_without_params_is_a_warning)
{
    check_diag("param a\ninput s\ny = s * 2\noutput y\n", 0, 2,
               "t.dvs:1:7: warning: param 'a' does not affect the output; "
               "its gradient is always zero\n"
               "    param a\n"
               "          ^\n"
               "t.dvs:4:8: warning: output 'y' does not depend on any param; "
               "its gradient is zero\n"
               "    output y\n"
               "           ^\n");
}
END_TEST

/* ----------------------------------------------------- index ranges */

START_TEST(index_ranges_come_from_subscripts)
{
    /* W[j, i] gives j < rows(W) = 2 and i < cols(W) = 5 */
    Resolved *r = resolve("input s[5]\n"
                          "param W[2,5]\n"
                          "z[j] = sum(i: W[j,i] * s[i])\n"
                          "y = sum(k: z[k])\n"
                          "output y\n");
    ck_assert_str_eq(r->diag, "");
    ck_assert_int_eq(extent_of(r->ir, "j"), 2);
    ck_assert_int_eq(extent_of(r->ir, "i"), 5);
    ck_assert_int_eq(extent_of(r->ir, "k"), 2);
    const IrArray *z = tu_array(r->ir, "z", TU_ANY_ROLE);
    ck_assert_int_eq(z->rank, 1);
    ck_assert_int_eq(z->dim[0], 2);
    resolved_free(r);
}
END_TEST

START_TEST(disagreeing_ranges_show_both_positions)
{
    check_diag("param W[2,3], x[4], a\n"
               "y[j] = sum(i: W[j,i] * x[i])\n"
               "output a\n",
               1, 0,
               "t.dvs:2:26: error: index 'i' ranges over 4 here (dimension 1 "
               "of 'x') but over 3 where it was first used\n"
               "    y[j] = sum(i: W[j,i] * x[i])\n"
               "                             ^\n"
               "t.dvs:2:19: note: 'i' got the range 3 here\n"
               "    y[j] = sum(i: W[j,i] * x[i])\n"
               "                      ^\n");
}
END_TEST

START_TEST(unbound_and_rangeless_indices)
{
    check_diag("param x[3]\ny = x[i]\noutput y\n", 1, 0,
               "t.dvs:2:7: error: index 'i' is not bound: add it to the left "
               "side or reduce over it\n"
               "    y = x[i]\n"
               "          ^\n");
    check_diag("param x[3]\ny[j] = sum(i: x[i])\noutput q\nq = 1\n", 2, 0,
               "t.dvs:2:3: error: cannot tell the range of index 'j': use it "
               "as a subscript of an array on the right side\n"
               "    y[j] = sum(i: x[i])\n"
               "      ^\n"
               "t.dvs:3:8: error: unknown name 'q': define it before 'output'\n"
               "    output q\n"
               "           ^\n");
    check_diag("param a\ny = sum(i: a)\noutput y\n", 1, 0,
               "t.dvs:2:9: error: cannot tell the range of index 'i': use it "
               "as a subscript of an array inside the reduction\n"
               "    y = sum(i: a)\n"
               "            ^\n");
    /* (the subscript x[x] is then reported too; only the first error
     * is the cause, so only it is checked) */
    static const char first[] =
        "t.dvs:2:9: error: index 'x' has the name of a value; index names "
        "must differ from every name the model defines\n"
        "    y = sum(x: x[x])\n"
        "            ^\n"
        "t.dvs:1:7: note: 'x' is defined here\n"
        "    param x[3]\n"
        "          ^~~~\n";
    Resolved *r = resolve("param x[3]\ny = sum(x: x[x])\noutput y\n");
    ck_assert_msg(strncmp(r->diag, first, sizeof first - 1) == 0, "%s",
                  r->diag);
    resolved_free(r);
    check_diag("param A[3,3]\ny = sum(i: sum(i: A[i,i]))\noutput y\n", 1, 0,
               "t.dvs:2:16: error: index 'i' is bound twice: it is already "
               "bound by the left side or an enclosing reduction\n"
               "    y = sum(i: sum(i: A[i,i]))\n"
               "                   ^\n"
               "t.dvs:2:9: note: 'i' is first bound here\n"
               "    y = sum(i: sum(i: A[i,i]))\n"
               "            ^\n");
}
END_TEST

START_TEST(subscript_count_must_match_rank)
{
    check_diag("param W[2,3], v[2], a\ny[j] = W[j] + v[j]\noutput a\n", 1, 0,
               "t.dvs:2:8: error: 'W' has 2 dimensions but 1 subscript is "
               "given here\n"
               "    y[j] = W[j] + v[j]\n"
               "           ^~~~\n");
    check_diag("param W[2,2], v[2], a\ny[j] = v * W[j, j]\noutput a\n", 1, 0,
               "t.dvs:2:8: error: 'v' is an array: in index notation "
               "subscript it, as in v[i]\n"
               "    y[j] = v * W[j, j]\n"
               "           ^\n");
}
END_TEST

/* ------------------------------------------------------- name errors */

START_TEST(reserved_and_repeated_names)
{
    check_diag("param a\n"
               "int = a\n"
               "sin = 2\n"
               "dvs_x = a\n"
               "_Bad = a\n"
               "y = a\n"
               "y = 2 * a\n"
               "output y\n",
               5, 0,
               "t.dvs:2:1: error: 'int' is a C keyword; choose another name\n"
               "    int = a\n"
               "    ^~~\n"
               "t.dvs:3:1: error: 'sin' is the name of a builtin function; "
               "choose another name\n"
               "    sin = 2\n"
               "    ^~~\n"
               "t.dvs:4:1: error: 'dvs_x' starts with 'dvs_' or 'DVS_', "
               "prefixes dervish reserves for the names it invents in "
               "emitted code; choose another name\n"
               "    dvs_x = a\n"
               "    ^~~~~\n"
               "t.dvs:5:1: error: '_Bad' is reserved in C (names starting "
               "with '__' or '_' and a capital letter belong to the C "
               "implementation); choose another name\n"
               "    _Bad = a\n"
               "    ^~~~\n"
               "t.dvs:7:1: error: 'y' is already defined; every name is "
               "defined once\n"
               "    y = 2 * a\n"
               "    ^\n"
               "t.dvs:6:1: note: 'y' was defined here\n"
               "    y = a\n"
               "    ^\n");
    /* the model's exported names are taken too */
    check_diag("model kiln\nparam a\nkiln_value = a\noutput a\n", 1, 0,
               "t.dvs:3:1: error: 'kiln_value' is the name of a symbol the "
               "emitted code exports; choose another name\n"
               "    kiln_value = a\n"
               "    ^~~~~~~~~~\n");
    /* every function and type the model may export, whatever --emit */
    static const char *const exported[] = {
        "kiln_gradient", "kiln_tangent", "kiln_hessvec", "kiln_hessian",
        "kiln_adjoint", "kiln_jacobian", "kiln_param", "kiln_input",
        "kiln_output", "kiln_param_flat", "kiln_output_flat",
        "kiln_work_count", "KILN_PARAM_COUNT", "KILN_OUTPUT_COUNT"};
    for (size_t k = 0; k < sizeof exported / sizeof *exported; k++) {
        char *model = tu_format("model kiln\nparam a\n%s = a\noutput a\n",
                                exported[k]);
        Resolved *r = resolve(model);
        ck_assert_msg(r->errors == 1 && strstr(r->diag, "the name of a symbol "
                                               "the emitted code exports"),
                      "%s: %s", exported[k], r->diag);
        resolved_free(r);
        free(model);
    }
    /* names near them are the model's to use */
    check_diag("model kiln\nparam a\nkiln_valued = a\nKILN_COUNT = a\n"
               "kiln_OUTPUT_COUNT = a\noutput kiln_valued, KILN_COUNT, "
               "kiln_OUTPUT_COUNT\n", 0, 0, "");
}
END_TEST

START_TEST(names_used_wrongly)
{
    check_diag("param a, x[3]\n"
               "u = sin\n"
               "q = f(a)\n"
               "r = x(a)\n"
               "s = sum(a)\n"
               "t = max(a)\n"
               "v = y + a\n"
               "w = w + a\n"
               "output a\n",
               7, 0,
               "t.dvs:2:5: error: 'sin' is a function: call it, as in sin(x)\n"
               "    u = sin\n"
               "        ^~~\n"
               "t.dvs:3:5: error: unknown function 'f'\n"
               "    q = f(a)\n"
               "        ^\n"
               "t.dvs:4:5: error: 'x' is a value, not a function; use [ ] to "
               "subscript an array\n"
               "    r = x(a)\n"
               "        ^\n"
               "t.dvs:5:5: error: 'sum' reduces over an index: write "
               "sum(i: ...)\n"
               "    s = sum(a)\n"
               "        ^~~~~~\n"
               "t.dvs:6:5: error: 'max' takes two values, as in max(a, b), or "
               "reduces over an index, as in max(i: x[i])\n"
               "    t = max(a)\n"
               "        ^~~~~~\n"
               "t.dvs:7:5: error: unknown name 'y': define it before this "
               "line\n"
               "    v = y + a\n"
               "        ^\n"
               "t.dvs:8:5: error: 'w' is used in its own definition\n"
               "    w = w + a\n"
               "        ^\n");
    check_diag("param a\ny = atan2(a)\noutput y\n", 1, 0,
               "t.dvs:2:5: error: 'atan2' takes 2 arguments but 1 is given\n"
               "    y = atan2(a)\n"
               "        ^~~~~~~~\n");
}
END_TEST

START_TEST(conditions_and_numbers_are_kept_apart)
{
    check_diag("param a\ny = a > 0\noutput y\n", 1, 0,
               "t.dvs:2:5: error: a comparison is a condition, not a number: "
               "use it as the first operand of '?:', as in (x > 0 ? x : 0)\n"
               "    y = a > 0\n"
               "        ^~~~~\n");
    check_diag("param a\ny = a ? 1 : 2\noutput y\n", 1, 0,
               "t.dvs:2:5: error: expected a condition such as 'x > 0' here, "
               "found a number\n"
               "    y = a ? 1 : 2\n"
               "        ^\n");
    check_forward("param a, b\n"
                  "y = a > 0 && !(b < 1) || a == b ? a : -b\n"
                  "output y\n",
                  "  y = ((((a > 0) && (!(b < 1))) || (a == b)) ? a : (-b))\n");
}
END_TEST

/* ------------------------------------------------- outputs and params */

START_TEST(model_level_errors)
{
    check_diag("input s\ny = s\noutput y\n", 1, 0,
               "t.dvs:3:1: error: nothing to differentiate: the model "
               "declares no 'param'\n"
               "    output y\n"
               "    ^~~~~~~~\n");
    check_diag("param a\ny = a\n", 1, 0,
               "t.dvs:2:1: error: the model has no output: add 'output NAME' "
               "naming the value to differentiate\n"
               "    y = a\n"
               "    ^~~~~\n");
    check_diag("param a, x[3]\ny = a\nz = a\noutput y, z, y\n", 1, 0,
               "t.dvs:4:14: error: 'y' is already an output\n"
               "    output y, z, y\n"
               "                 ^\n");
    check_diag("param a, x[3]\ny = a\nz = a\noutput y, z\n", 0, 1,
               "t.dvs:1:10: warning: param 'x' affects no output; its column "
               "of the Jacobian is always zero\n"
               "    param a, x[3]\n"
               "             ^~~~\n");
    check_diag("param x[3]\noutput x\n", 0, 0, "");     /* a struct */
}
END_TEST

START_TEST(model_name_sources)
{
    Resolved *r = resolve_named("dir/t.dvs", "model kiln\nparam a\noutput a\n",
                                NULL);
    ck_assert_str_eq(r->ir->model, "kiln");
    resolved_free(r);
    /* --name overrides the model statement */
    r = resolve_named("t.dvs", "model kiln\nparam a\noutput a\n", "oven");
    ck_assert_str_eq(r->ir->model, "oven");
    resolved_free(r);
    /* the file's stem, made into a C name */
    r = resolve_named("a/heat-flow.v2.dvs", "param a\noutput a\n", NULL);
    ck_assert_str_eq(r->ir->model, "heat_flow_v2");
    ck_assert_str_eq(r->diag, "");
    resolved_free(r);
    r = resolve_named("3d.dvs", "param a\noutput a\n", NULL);
    ck_assert_str_eq(r->diag, "3d.dvs:1:1: error: cannot make a C name from "
                              "the file name '3d': add a 'model NAME' "
                              "statement or use --name\n"
                              "    param a\n"
                              "    ^\n");
    resolved_free(r);
    check_diag("param a\nmodel foo\noutput a\n", 1, 0,
               "t.dvs:2:1: error: 'model' must be the first statement of the "
               "file\n"
               "    model foo\n"
               "    ^~~~~~~~~\n");
}
END_TEST

int main(void)
{
    Suite *s = suite_create("resolve");
    TU_ADD_TESTS(tu_case(s, "resolve", 0),
                 reduction_becomes_init_and_accumulate,
                 whole_right_side_reduction_accumulates_into_the_target,
                 reduction_without_outer_index_is_a_scalar,
                 max_min_and_logsumexp_reductions,
                 max_over_an_inner_index_keeps_the_outer_one,
                 whole_array_form_gets_implicit_indices,
                 whole_array_form_with_a_reduction_inside,
                 mixed_shapes_are_an_error, constants_are_folded,
                 constant_and_dimension_errors, same_subexpression_is_one_node,
                 constructors_return_existing_nodes,
                 dead_definitions_are_pruned_with_a_warning,
                 output_without_params_is_a_warning,
                 index_ranges_come_from_subscripts,
                 disagreeing_ranges_show_both_positions,
                 unbound_and_rangeless_indices,
                 subscript_count_must_match_rank, reserved_and_repeated_names,
                 names_used_wrongly, conditions_and_numbers_are_kept_apart,
                 model_level_errors, model_name_sources);
    return tu_main(s);
}
