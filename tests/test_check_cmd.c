/* test_check_cmd.c - `dervish check`: it passes on correct models, reads
 * the --at file and reports its errors in the editor format, draws the same
 * random point for the same seed, and fails, naming the entry first, where
 * the reverse-mode derivative and the numerical ones truly disagree. */
#include "testutil.h"

#include "dervish.h"
#include "gradcheck.h"

#include <math.h>

/* Run `dervish check ARGS m.dvs` in a fresh directory holding MODEL as
 * m.dvs and, when AT is not NULL, AT as p.at.  Returns the exit status;
 * stdout and stderr go to *out and *err (malloc'd). */
static int run_check(const char *model, const char *at, const char *args,
                     char **out, char **err)
{
    char *dir = tu_tmpdir();
    tu_write_in(dir, "m.dvs", model);
    if (at)
        tu_write_in(dir, "p.at", at);
    int rc = tu_run_dervish(dir, out, err, "check %s m.dvs", args);
    tu_rmdir(dir);
    free(dir);
    return rc;
}

/* Line n (from 0) of s, malloc'd; "" past the end. */
static char *line_of(const char *s, int n)
{
    for (; n > 0 && s && *s; n--) {
        s = strchr(s, '\n');
        s = s ? s + 1 : NULL;
    }
    return tu_first_line(s);
}

/* The last line of s, malloc'd. */
static char *last_line(const char *s)
{
    size_t n = strlen(s);
    if (n && s[n - 1] == '\n')
        n--;
    size_t start = n;
    while (start > 0 && s[start - 1] != '\n')
        start--;
    return tu_format("%.*s", (int)(n - start), s + start);
}

/* The first table row: the line after the one starting "entry ". */
static char *first_row(const char *out)
{
    const char *head = strstr(out, "\nentry ");
    ck_assert_msg(head != NULL, "no table in:\n%s", out);
    return line_of(head + 1, 1);
}

/* Field n (from 0) of a table row, split at blanks; malloc'd. */
static char *field(const char *row, int n)
{
    const char *p = row + strspn(row, " ");
    for (; n > 0 && *p; n--) {
        p += strcspn(p, " ");
        p += strspn(p, " ");
    }
    return tu_format("%.*s", (int)strcspn(p, " "), p);
}

/* Count the table rows, each ending in a status word. */
static int rows_ending(const char *out, const char *status)
{
    int n = 0;
    char *tail = tu_format("  %s", status);
    for (const char *l = out; l && *l; l = strchr(l, '\n') ? strchr(l, '\n') + 1 : NULL) {
        size_t len = strcspn(l, "\n"), t = strlen(tail);
        n += len >= t && strncmp(l + len - t, tail, t) == 0;
    }
    free(tail);
    return n;
}

/* ----------------------------------------------------- correct models */

static const char *const good_models[] = {
    /* a small network, the language reference's first example */
    "input s[3], target\nparam W[5,3], b[5], v[5], c\n"
    "z[j] = sum(i: W[j,i] * s[i]) + b[j]\nh = tanh(z)\n"
    "pred = sum(j: v[j] * h[j]) + c\nloss = 0.5 * (pred - target)^2\n"
    "output loss\n",
    /* reductions of every kind, over one and two indices */
    "input x[3]\nparam A[2,3], u[3]\n"
    "top = max(i, j: A[i,j] * x[j])\nlow[i] = min(j: A[i,j] - u[j])\n"
    "y = top + sum(i: low[i] * low[i]) + logsumexp(j: u[j] * x[j])\n"
    "output y\n",
    /* the helpers and conditions, away from their kinks */
    "param a, b, p[3]\n"
    "q = clamp(a, 0, 2) * relu(b) + softplus(a * b) + sigmoid(b)\n"
    "r = a < b ? abs(a - b)^3 : hypot(a, b) / cbrt(b)\n"
    "y = q + r + sum(i: max(p[i], a) * min(p[i], b) * exp(-p[i]))\n"
    "output y\n",
    /* erf, erfc, lgamma and atan2: Richardson only */
    ("param a, b\ny = erf(a) * erfc(b) + lgamma(a + b) + atan2(a, b)\n"
     "output y\n"),
};
static const int good_counts[] = {26, 9, 5, 2};

START_TEST(correct_models_pass)
{
    char *out = NULL, *err = NULL;
    ck_assert_int_eq(run_check(good_models[_i], NULL, "", &out, &err), 0);
    ck_assert_str_eq(err, "");
    char *first = line_of(out, 0), *last = last_line(out);
    ck_assert_str_eq(first, "check: model m (m.dvs) at random values, seed 1");
    char *want = tu_format("check: %d of %d derivatives agree within "
                           "tolerance 1e-06", good_counts[_i], good_counts[_i]);
    ck_assert_str_eq(last, want);
    ck_assert_int_eq(rows_ending(out, "ok"), good_counts[_i]);
    /* the model that needs Richardson says so */
    int has_note = strstr(out, "note: no complex step through") != NULL;
    ck_assert_int_eq(has_note, _i == 3);
    free(want);
    free(first);
    free(last);
    free(out);
    free(err);
}
END_TEST

/* ------------------------------------------------------ the --at file */

static const char *const small_model =
    "param a, W[2,2]\ninput s\ny = a * sum(i, j: W[i,j]) * s\noutput y\n";

/* y = a s sum W, so at a = 2, W = (1 2; 3 4), s = 0.5: y = 10,
 * dy/da = s sum W = 5, dy/dW_ij = a s = 1. */
START_TEST(at_file_sets_the_point)
{
    char *out = NULL, *err = NULL;
    ck_assert_int_eq(run_check(small_model,
                               "# a point to check\n"
                               "a = 2\n"
                               "W = 1, 2   # first row\n"
                               "    3 4\n"
                               "\n"
                               "s=0.5\n",
                               "--at p.at", &out, &err),
                     0);
    ck_assert_str_eq(err, "");
    char *l0 = line_of(out, 0), *l2 = line_of(out, 2), *row = first_row(out);
    ck_assert_str_eq(l0, "check: model m (m.dvs) at the values in p.at");
    ck_assert_str_eq(l2, "value: y = 10");
    ck_assert_ptr_null(strstr(out, "random"));
    /* every entry is exact, so the table keeps flat order */
    static const char *const want[] = {"a", "5", "5", "complex", "step",
                                       "0.0e+00", "0.0e+00", "ok"};
    for (int k = 0; k < 8; k++) {
        char *f = field(row, k);
        ck_assert_msg(strcmp(f, want[k]) == 0, "row: %s", row);
        free(f);
    }
    ck_assert_int_eq(rows_ending(out, "ok"), 5);
    free(l0);
    free(l2);
    free(row);
    free(out);
    free(err);
}
END_TEST

/* Names the file leaves out keep the values the seed gives them. */
START_TEST(missing_names_stay_random)
{
    char *all = NULL, *part = NULL;
    ck_assert_int_eq(run_check(small_model, NULL, "--seed 7", &all, NULL), 0);
    ck_assert_int_eq(run_check(small_model, "a = 2\n", "--seed 7 --at p.at",
                               &part, NULL), 0);
    char *l0 = line_of(part, 0), *l1 = line_of(part, 1);
    ck_assert_str_eq(l0, "check: model m (m.dvs) at the values in p.at, the "
                         "rest random with seed 7");
    ck_assert_str_eq(l1, "random values, uniform in [0.1, 0.9] (in --at "
                         "format, to reuse or edit):");
    char *w_all = line_of(all, 3), *w_part = line_of(part, 2);
    ck_assert_msg(strncmp(w_all, "W = ", 4) == 0, "%s", w_all);
    ck_assert_str_eq(w_part, w_all);
    ck_assert_ptr_null(strstr(part, "\na = "));
    free(l0);
    free(l1);
    free(w_all);
    free(w_part);
    free(all);
    free(part);
}
END_TEST

START_TEST(at_file_errors_are_reported_in_place)
{
    char *out = NULL, *err = NULL;
    ck_assert_int_eq(run_check(small_model,
                               "a = 1 2\n"
                               "W = 1 2 3\n"
                               "foo = 4\n"
                               "y = 1\n"
                               "s = 1.5x\n"
                               "a = 3\n"
                               "W 3\n"
                               "= 2\n",
                               "--at p.at", &out, &err),
                     1);
    ck_assert_str_eq(out, "");
    ck_assert_str_eq(err,
        "p.at:1:7: error: too many numbers for 'a': it needs 1 (a scalar)\n"
        "    a = 1 2\n"
        "          ^\n"
        "p.at:2:1: error: 'W' needs 4 numbers (W[2,2]) but has 3\n"
        "    W = 1 2 3\n"
        "    ^\n"
        "p.at:3:1: error: unknown name 'foo': the model has no param or input "
        "called that\n"
        "    foo = 4\n"
        "    ^~~\n"
        "p.at:4:1: error: 'y' is a value the model computes; only params and "
        "inputs are given values\n"
        "    y = 1\n"
        "    ^\n"
        "p.at:5:5: error: '1.5x' is not a number\n"
        "    s = 1.5x\n"
        "        ^~~~\n"
        "p.at:6:1: error: 'a' is given twice (first on line 1)\n"
        "    a = 3\n"
        "    ^\n"
        "p.at:7:1: error: expected '=' after 'W'\n"
        "    W 3\n"
        "    ^\n"
        "p.at:8:1: error: '=' without a name before it\n"
        "    = 2\n"
        "    ^\n");
    free(out);
    free(err);
}
END_TEST

START_TEST(numbers_need_a_name_and_must_be_finite)
{
    char *err = NULL;
    ck_assert_int_eq(run_check(small_model, "  0.5 # for a\ns = inf\n",
                               "--at p.at", NULL, &err), 1);
    ck_assert_str_eq(err,
        "p.at:1:3: error: a number before any 'name =': say which param or "
        "input the numbers are for\n"
        "      0.5 # for a\n"
        "      ^~~\n"
        "p.at:2:5: error: 'inf' is not a finite number\n"
        "    s = inf\n"
        "        ^~~\n");
    free(err);
}
END_TEST

START_TEST(unreadable_at_file_is_status_3)
{
    char *out = NULL, *err = NULL;
    ck_assert_int_eq(run_check(small_model, NULL, "--at /nonexistent/p.at",
                               &out, &err), 3);
    ck_assert_str_eq(out, "");
    ck_assert_str_eq(err, "dervish: cannot read /nonexistent/p.at: No such "
                          "file or directory\n");
    free(out);
    free(err);
}
END_TEST

/* ------------------------------------------------------ random points */

START_TEST(seeds_are_reproducible)
{
    char *a = NULL, *b = NULL, *c = NULL;
    ck_assert_int_eq(run_check(good_models[0], NULL, "--seed 42", &a, NULL), 0);
    ck_assert_int_eq(run_check(good_models[0], NULL, "--seed 42", &b, NULL), 0);
    ck_assert_int_eq(run_check(good_models[0], NULL, "--seed 43", &c, NULL), 0);
    ck_assert_str_eq(a, b);
    char *va = line_of(a, 2), *vc = line_of(c, 2);
    ck_assert_str_ne(va, vc);
    free(va);
    free(vc);
    free(a);
    free(b);
    free(c);
}
END_TEST

/* The printed values, saved as a file, give back the same point. */
START_TEST(printed_values_reproduce_the_point)
{
    char *out = NULL, *again = NULL;
    ck_assert_int_eq(run_check(good_models[0], NULL, "--seed 5", &out, NULL), 0);
    const char *values = strchr(out, '\n');
    values = strchr(values + 1, '\n') + 1;
    const char *table = strstr(out, "\nvalue: ");
    ck_assert_ptr_nonnull(table);
    char *at = tu_format("%.*s", (int)(table - values), values);
    ck_assert_int_eq(run_check(good_models[0], at, "--at p.at", &again, NULL),
                     0);
    ck_assert_str_eq(strstr(again, "\nvalue: "), table);
    free(at);
    free(out);
    free(again);
}
END_TEST

/* --------------------------------------------------------- mismatches */

/* floor(a) jumps at 2 and sign(b) at 0; the rules say 0 there, central
 * differences see the step, so the jumping entry comes first and fails. */
static const char *const jump_model =
    "param a, b\ny = floor(a) + a * b + 3 * sign(b - 1)\noutput y\n";

START_TEST(a_jump_is_a_mismatch)
{
    static const struct {
        const char *at;
        const char *first;  /* the entry named first */
        int status;
    } cases[] = {
        {"a = 2\nb = 0.5\n", "a ", 1},        /* exactly at floor's jump */
        {"a = 1.9996\nb = 0.5\n", "a ", 1},   /* h = 0.002 straddles it */
        {"a = 1.5\nb = 1\n", "b ", 1},        /* at sign's jump */
        {"a = 2.5\nb = 0.5\n", "", 0},        /* away from both: the rules hold */
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        char *out = NULL;
        ck_assert_int_eq(run_check(jump_model, cases[i].at, "--at p.at", &out,
                                   NULL), cases[i].status);
        char *row = first_row(out), *last = last_line(out);
        if (cases[i].status) {
            ck_assert_msg(strncmp(row, cases[i].first, 2) == 0 &&
                              strstr(row, "richardson") &&
                              strstr(row, "  MISMATCH*"),
                          "row: %s", row);
            ck_assert_str_eq(last, "check: 1 derivative disagrees");
            ck_assert_ptr_nonnull(strstr(out, "* the complex step agrees with "
                                              "the reverse mode"));
        } else {
            ck_assert_int_eq(rows_ending(out, "ok"), 2);
        }
        free(row);
        free(last);
        free(out);
    }
}
END_TEST

/* relu'(0) is 0 by convention, central differences give 1/2: a mismatch of
 * 0.5, accepted only with a looser tolerance. */
START_TEST(tolerance_is_honoured)
{
    const char *model = "param a, b\ny = relu(a) + b * b\noutput y\n";
    char *out = NULL;
    ck_assert_int_eq(run_check(model, "a = 0\nb = 1\n", "--at p.at", &out,
                               NULL), 1);
    char *row = first_row(out), *name = field(row, 0), *num = field(row, 2);
    ck_assert_str_eq(name, "a");
    ck_assert_msg(fabs(strtod(num, NULL) - 0.5) < 1e-9, "row: %s", row);
    free(row);
    free(name);
    free(num);
    free(out);
    ck_assert_int_eq(run_check(model, "a = 0\nb = 1\n",
                               "--at p.at --tolerance 0.6", &out, NULL), 0);
    char *last = last_line(out);
    ck_assert_str_eq(last, "check: 2 of 2 derivatives agree within "
                           "tolerance 0.6");
    free(last);
    free(out);
}
END_TEST

/* A wrong derivative rule, simulated by scaling the reverse statement that
 * writes a's gradient: the complex step exposes it. */
START_TEST(a_wrong_gradient_is_named_first)
{
    const char *text = "param a, b, c\ny = a * sin(b) + c * c\noutput y\n";
    DvCompilation c;
    tu_compile(&c, "w.dvs", text);
    Ir *ir = c.ir;
    int32_t adj_a = ir->arrays.items[0].adjoint;
    int changed = 0;
    for (int i = 0; i < ir->reverse.len; i++) {
        IrStmt *s = &ir->reverse.items[i];
        if (s->target == adj_a) {
            s->expr = ir_node(ir, IR_MUL, s->expr, ir_const(ir, 1.001),
                              NO_NODE);
            changed = 1;
        }
    }
    ck_assert(changed);
    TuCapture report;
    CheckOptions opt = {NULL, 3, 1e-6, tu_capture_open(&report)};
    ck_assert_int_eq(check_run(&c, &opt), 1);
    char *out = tu_capture_close(&report);
    char *row = first_row(out), *last = last_line(out);
    ck_assert_msg(strncmp(row, "a ", 2) == 0 &&
                      strstr(row, "complex step") && strstr(row, "  MISMATCH"),
                  "row: %s", row);
    ck_assert_ptr_null(strstr(out, "MISMATCH*"));
    ck_assert_int_eq(rows_ending(out, "ok"), 2);
    ck_assert_str_eq(last, "check: 1 derivative disagrees");
    free(row);
    free(last);
    free(out);
    dv_free(&c);
}
END_TEST

START_TEST(a_value_that_is_not_finite_is_reported)
{
    char *out = NULL;
    ck_assert_int_eq(run_check("param a\ny = log(a)\noutput y\n", "a = -1\n",
                               "--at p.at", &out, NULL), 1);
    char *last = last_line(out);
    ck_assert_str_eq(last, "  choose other values with --at");
    ck_assert_ptr_nonnull(strstr(out, "\ncheck: y is not finite at this "
                                      "point, so no derivative can be "
                                      "compared;\n"));
    free(last);
    free(out);
}
END_TEST

/* Near the edge of sqrt's domain with erf on top, neither Richardson (x - h
 * < 0.5) nor the complex step (erf) gives a number: unchecked, status 1. */
START_TEST(an_entry_without_numerical_derivative_is_unchecked)
{
    char *out = NULL;
    ck_assert_int_eq(run_check("param a\ny = erf(sqrt(a - 0.5))\noutput y\n",
                               "a = 0.5000001\n", "--at p.at", &out, NULL), 1);
    ck_assert_int_eq(rows_ending(out, "unchecked"), 1);
    char *last = last_line(out);
    ck_assert_str_eq(last, "check: 1 derivative disagrees");
    free(last);
    free(out);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("check command");
    TCase *tc = tu_case(s, "check", 60);
    tcase_add_loop_test(tc, correct_models_pass, 0,
                        (int)(sizeof good_models / sizeof good_models[0]));
    TU_ADD_TESTS(tc,
                 at_file_sets_the_point, missing_names_stay_random,
                 at_file_errors_are_reported_in_place,
                 numbers_need_a_name_and_must_be_finite,
                 unreadable_at_file_is_status_3, seeds_are_reproducible,
                 printed_values_reproduce_the_point, a_jump_is_a_mismatch,
                 tolerance_is_honoured, a_wrong_gradient_is_named_first,
                 a_value_that_is_not_finite_is_reported,
                 an_entry_without_numerical_derivative_is_unchecked);
    return tu_main(s);
}
