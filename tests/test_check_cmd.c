/* test_check_cmd.c - `dervish check`: it passes on correct models, reads
 * the --at file and reports its errors in the editor format, draws the same
 * random point for the same seed, takes runtime sizes from --size, the file
 * or the counts of its numbers, and fails, naming the entry first, where
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

/* The tangents of the same models and of every sample agree with their
 * gradients, and the samples' Hessian-vector products with differences of
 * their gradients: status 0 and the agreement lines last.  The samples
 * are checked as they stand, at the random point of seed 1. */
static const char *const samples[] = {
    "samples/arm/arm.dvs", "samples/cooling/cooling.dvs",
    "samples/greeks/greeks.dvs", "samples/kiln/kiln.dvs",
    "samples/pump/pump.dvs", "samples/pumps/pumps.dvs",
};
#define NGOOD ((int)(sizeof good_models / sizeof good_models[0]))

START_TEST(tangents_agree_with_gradients)
{
    int sample = _i >= NGOOD;
    char *text = sample ? tu_read(samples[_i - NGOOD])
                        : tu_format("%s", good_models[_i]);
    ck_assert_ptr_nonnull(text);
    char *out = NULL, *err = NULL;
    ck_assert_int_eq(run_check(text, NULL,
                               sample ? "--emit value,gradient,tangent,hessvec"
                                      : "--emit value,gradient,tangent",
                               &out, &err), 0);
    ck_assert_msg(strstr(out, "\ncheck: the tangent agrees with the gradient "
                              "(relative difference "), "%s", out);
    char *last = last_line(out);
    if (sample)
        ck_assert_str_eq(last, "check: the Hessian times the direction agrees");
    else
        ck_assert_msg(strstr(last, "check: the tangent agrees") == last, "%s",
                      out);
    free(last);
    free(out);
    free(err);
    free(text);
}
END_TEST

/* The sample that reads a shared file with 'use' is checked where it
 * stands, so the file is found: its tangent and Hessian-vector product. */
START_TEST(sample_with_used_file_agrees)
{
    char *model = realpath("samples/arrhenius/arrhenius.dvs", NULL);
    ck_assert_ptr_nonnull(model);
    char *dir = tu_tmpdir(), *out = NULL, *err = NULL;
    int rc = tu_run_dervish(dir, &out, &err, "check --emit value,gradient,"
                            "tangent,hessvec '%s'", model);
    ck_assert_msg(rc == 0, "status %d\n%s%s", rc, out, err);
    ck_assert_msg(strstr(out, "\ncheck: 2 of 2 derivatives agree within "
                              "tolerance 1e-06\n"), "%s", out);
    ck_assert_msg(strstr(out, "\ncheck: the tangent agrees with the gradient"),
                  "%s", out);
    char *last = last_line(out);
    ck_assert_str_eq(last, "check: the Hessian times the direction agrees");
    free(last);
    free(out);
    free(err);
    tu_rmdir(dir);
    free(dir);
    free(model);
}
END_TEST

/* The sample whose output is a vector: its adjoint (for a random seed),
 * its tangent and its Jacobian's rows and columns agree. */
START_TEST(struct_output_sample_agrees)
{
    char *text = tu_read("samples/buoy/buoy.dvs");
    ck_assert_ptr_nonnull(text);
    char *out = NULL, *err = NULL;
    ck_assert_int_eq(run_check(text, NULL, "", &out, &err), 0);
    ck_assert_str_eq(err, "");
    ck_assert_msg(strstr(out, "\ncheck: 2 of 2 derivatives agree within "
                              "tolerance 1e-06\n"), "%s", out);
    ck_assert_msg(strstr(out, "\ncheck: the tangent agrees with the gradient"),
                  "%s", out);
    ck_assert_msg(strstr(out, "\nJacobian, 4 x 2: 8 of 8 entries of its rows "
                              "(reverse sweeps) agree with\n"), "%s", out);
    char *last = last_line(out);
    ck_assert_str_eq(last, "check: the Jacobian's rows and columns agree");
    free(last);
    free(out);
    free(err);
    free(text);
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

/* ------------------------------------------------------ runtime sizes */

/* A line through n points; the sum of squares (not the mean) stays finite
 * with no points at all. */
static const char *const line_fit =
    "size n\ninput x[n], y[n]\nparam a, b\n"
    "pred[k] = a * x[k] + b\n"
    "loss = sum(k: (pred[k] - y[k])^2)\noutput loss\n";

/* The count of numbers on the line of out that starts with PREFIX. */
static int numbers_on(const char *out, const char *prefix)
{
    const char *l = strstr(out, prefix);
    ck_assert_msg(l != NULL, "no line '%s' in:\n%s", prefix, out);
    int n = 0;
    for (const char *p = l + strlen(prefix); *p && *p != '\n'; p++)
        n += *p == '.';
    return n;
}

/* Line 1 of a passing run of line_fit, and the start of line 3 (the first
 * value printed back). */
static void assert_size_lines(const char *out, const char *size_line,
                              const char *first_value)
{
    char *l1 = line_of(out, 1), *l3 = line_of(out, 3), *last = last_line(out);
    ck_assert_str_eq(l1, size_line);
    ck_assert_msg(strncmp(l3, first_value, strlen(first_value)) == 0,
                  "line 3: %s", l3);
    ck_assert_str_eq(last, "check: 2 of 2 derivatives agree within "
                           "tolerance 1e-06");
    free(l1);
    free(l3);
    free(last);
}

START_TEST(a_size_given_nowhere_is_defaulted)
{
    char *out = NULL, *err = NULL;
    ck_assert_int_eq(run_check(line_fit, NULL, "", &out, &err), 0);
    ck_assert_str_eq(err, "");
    assert_size_lines(out, "size n = 3 by default (set it with --size n=N or "
                           "in the --at file)", "n = 3");
    ck_assert_int_eq(numbers_on(out, "\nx ="), 3);
    ck_assert_int_eq(numbers_on(out, "\ny ="), 3);
    free(out);
    free(err);
}
END_TEST

START_TEST(a_size_from_the_command_line)
{
    char *out = NULL;
    ck_assert_int_eq(run_check(line_fit, NULL, "--size n=5", &out, NULL), 0);
    assert_size_lines(out, "size n = 5 from --size n=5", "n = 5");
    ck_assert_int_eq(numbers_on(out, "\nx ="), 5);
    free(out);
    /* the command line wins over the file */
    ck_assert_int_eq(run_check(line_fit, "n = 4\n", "--size n=2 --at p.at",
                               &out, NULL), 0);
    assert_size_lines(out, "size n = 2 from --size n=2", "n = 2");
    ck_assert_int_eq(numbers_on(out, "\nx ="), 2);
    free(out);
}
END_TEST

START_TEST(a_size_from_the_at_file)
{
    char *out = NULL;
    ck_assert_int_eq(run_check(line_fit, "# four points\nn = 4\n", "--at p.at",
                               &out, NULL), 0);
    /* the file sets n, so the values printed back leave it out */
    assert_size_lines(out, "size n = 4 from line 2 of p.at", "x = ");
    ck_assert_int_eq(numbers_on(out, "\nx ="), 4);
    ck_assert_ptr_null(strstr(out, "\nn = "));
    free(out);
}
END_TEST

/* 12 numbers for X[n,3] give n = 4, and y agrees.  With w = (1, 2, -1),
 * b = 0.5 and the integer data below, the residuals X w + b - y are
 * (0.5, 1.5, -0.5, 2.5) (by hand), so loss = 0.25 + 2.25 + 0.25 + 6.25 =
 * 9, dloss/dw = 2 X^T r = (6, 8, 4) and dloss/db = 2 sum r = 8. */
START_TEST(a_size_from_the_count_of_numbers)
{
    static const char *const model =
        "size n\ninput X[n, 3], y[n]\nparam w[3], b\n"
        "r[k] = sum(j: X[k, j] * w[j]) + b - y[k]\n"
        "loss = sum(k: r[k]^2)\noutput loss\n";
    char *out = NULL, *err = NULL;
    ck_assert_int_eq(run_check(model,
                               "X = 1 0 0\n    0 1 0\n    0 0 1\n    1 1 1\n"
                               "y = 1 1 0 0\nw = 1 2 -1\nb = 0.5\n",
                               "--at p.at", &out, &err), 0);
    ck_assert_str_eq(err, "");
    char *l0 = line_of(out, 0), *l1 = line_of(out, 1), *l3 = line_of(out, 3);
    ck_assert_str_eq(l0, "check: model m (m.dvs) at the values in p.at");
    ck_assert_str_eq(l1, "size n = 4 from the 12 numbers of 'X' on line 1 "
                         "of p.at");
    ck_assert_str_eq(l3, "value: loss = 9");
    /* every entry is exact, so the table keeps flat order */
    static const char *const want[4][2] = {
        {"w[0]", "6"}, {"w[1]", "8"}, {"w[2]", "4"}, {"b", "8"}};
    for (int k = 0; k < 4; k++) {
        char *row = line_of(strstr(out, "\nentry ") + 1, 1 + k);
        char *name = field(row, 0), *rev = field(row, 1), *num = field(row, 2);
        ck_assert_str_eq(name, want[k][0]);
        ck_assert_str_eq(rev, want[k][1]);
        ck_assert_str_eq(num, want[k][1]);
        free(name);
        free(rev);
        free(num);
        free(row);
    }
    free(l0);
    free(l1);
    free(l3);
    free(out);
    free(err);
    /* a square X[n,n]: 9 numbers give n = 3 */
    ck_assert_int_eq(run_check("size n\ninput X[n, n]\nparam c\n"
                               "y = c * sum(i, j: X[i, j])\noutput y\n",
                               "X = 1 2 3 4 5 6 7 8 9\nc = 2\n", "--at p.at",
                               &out, NULL), 0);
    l1 = line_of(out, 1);
    l3 = line_of(out, 3);
    ck_assert_str_eq(l1, "size n = 3 from the 9 numbers of 'X' on line 1 of "
                         "p.at");
    ck_assert_str_eq(l3, "value: y = 90");
    free(l1);
    free(l3);
    free(out);
}
END_TEST

/* No data: the sum of squares over no points is 0 and so is its gradient
 * (an empty sum), and the check still runs. */
START_TEST(a_size_of_zero)
{
    static const struct {
        const char *at, *args, *size_line;
    } cases[] = {
        {NULL, "--size n=0", "size n = 0 from --size n=0"},
        {"x =\ny =\n", "--at p.at", "size n = 0 from the 0 numbers of 'x' "
                                    "on line 1 of p.at"},
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        char *out = NULL;
        ck_assert_int_eq(run_check(line_fit, cases[i].at, cases[i].args, &out,
                                   NULL), 0);
        char *l1 = line_of(out, 1), *last = last_line(out);
        ck_assert_str_eq(l1, cases[i].size_line);
        ck_assert_ptr_nonnull(strstr(out, "\nvalue: loss = 0\n"));
        ck_assert_str_eq(last, "check: 2 of 2 derivatives agree within "
                               "tolerance 1e-06");
        for (int k = 0; k < 2; k++) {
            char *row = line_of(strstr(out, "\nentry ") + 1, 1 + k);
            char *rev = field(row, 1), *num = field(row, 2);
            ck_assert_str_eq(rev, "0");
            ck_assert_str_eq(num, "0");
            free(rev);
            free(num);
            free(row);
        }
        free(l1);
        free(last);
        free(out);
    }
    /* printed back, an empty input is its name alone */
    char *out = NULL;
    ck_assert_int_eq(run_check(line_fit, NULL, "--size n=0", &out, NULL), 0);
    ck_assert_ptr_nonnull(strstr(out, "\nn = 0\nx =\ny =\na = "));
    free(out);
}
END_TEST

/* The printed values, sizes included, give back the same point. */
START_TEST(printed_sizes_reproduce_the_point)
{
    char *out = NULL, *again = NULL;
    ck_assert_int_eq(run_check(line_fit, NULL, "--seed 3 --size n=6", &out,
                               NULL), 0);
    const char *values = strstr(out, "\nn = 6\n") + 1;
    const char *table = strstr(out, "\nvalue: ");
    ck_assert_ptr_nonnull(table);
    char *at = tu_format("%.*s", (int)(table - values), values);
    ck_assert_int_eq(run_check(line_fit, at, "--at p.at", &again, NULL), 0);
    char *l1 = line_of(again, 1);
    ck_assert_str_eq(l1, "size n = 6 from line 1 of p.at");
    ck_assert_str_eq(strstr(again, "\nvalue: "), table);
    free(l1);
    free(at);
    free(out);
    free(again);
}
END_TEST

/* Every error that --size can give: status 2, one line. */
START_TEST(bad_size_options)
{
    static const struct {
        const char *model, *args, *err;
    } cases[] = {
        {NULL, "--size n", "dervish: --size n: expected NAME=N, as in --size "
                           "n=100\n"},
        {NULL, "--size =4", "dervish: --size =4: expected NAME=N, as in "
                            "--size n=100\n"},
        {NULL, "--size n=-1", "dervish: --size n=-1: N must be a whole number "
                              "from 0 to 2147483647\n"},
        {NULL, "--size n=2.5", "dervish: --size n=2.5: N must be a whole "
                               "number from 0 to 2147483647\n"},
        {NULL, "--size n=", "dervish: --size n=: N must be a whole number "
                            "from 0 to 2147483647\n"},
        {NULL, "--size n=2147483648", "dervish: --size n=2147483648: N must "
                                      "be a whole number from 0 to "
                                      "2147483647\n"},
        {NULL, "--size N=4", "dervish: --size N=4: the model has no size "
                             "called 'N' (its size is n)\n"},
        {"size n, m\ninput x[n], y[m]\nparam a\n"
         "z = a * sum(i: x[i]) * sum(j: y[j])\noutput z\n",
         "--size k=1", "dervish: --size k=1: the model has no size called 'k' "
                       "(its sizes are n and m)\n"},
        {"param a\ny = a * a\noutput y\n", "--size n=1",
         "dervish: --size n=1: the model has no size called 'n' (it declares "
         "none)\n"},
        {NULL, "--size n=4 --size n=5", "dervish: --size n=5: n is already "
                                        "set by --size n=4\n"},
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        char *out = NULL, *err = NULL;
        const char *model = cases[i].model ? cases[i].model : line_fit;
        ck_assert_int_eq(run_check(model, NULL, cases[i].args, &out, &err), 2);
        ck_assert_str_eq(out, "");
        ck_assert_str_eq(err, cases[i].err);
        free(out);
        free(err);
    }
}
END_TEST

/* Sizes in the --at file and counts that disagree with them, reported in
 * place; each case is a file of its own, as counts are checked only when
 * the rest of the file is clean. */
START_TEST(size_errors_in_the_at_file)
{
    static const char *const two_sizes =
        "size n, m\ninput A[n, m], y[n]\nparam c\n"
        "z = c * sum(i, j: A[i, j] * y[i])\noutput z\n";
    static const struct {
        const char *model, *at, *args, *err;
    } cases[] = {
        {NULL, "x = 1 2 3 4\ny = 1 2 3\n", "",
         "p.at:2:1: error: 'y' has 3 numbers, but y[n] needs 4 with n = 4 "
         "(from the 4 numbers of 'x' on line 1)\n"
         "    y = 1 2 3\n"
         "    ^\n"},
        {NULL, "y = 1 2\n", "--size n=3",
         "p.at:1:1: error: 'y' has 2 numbers, but y[n] needs 3 with n = 3 "
         "(from --size n=3)\n"
         "    y = 1 2\n"
         "    ^\n"},
        {NULL, "x = 1\nn = 2\n", "",
         "p.at:1:1: error: 'x' has 1 number, but x[n] needs 2 with n = 2 "
         "(from line 2)\n"
         "    x = 1\n"
         "    ^\n"},
        {NULL, "n = 2.5\nx = 1 2\nn = 2\nn =\n", "",
         "p.at:1:5: error: the size 'n' must be a whole number from 0 to "
         "2147483647, not 2.5\n"
         "    n = 2.5\n"
         "        ^~~\n"
         "p.at:3:1: error: 'n' is given twice (first on line 1)\n"
         "    n = 2\n"
         "    ^\n"
         "p.at:4:1: error: 'n' is given twice (first on line 1)\n"
         "    n =\n"
         "    ^\n"},
        {NULL, "n = 1 2\nm = 3\n", "",
         "p.at:1:7: error: too many numbers for 'n': a size takes one\n"
         "    n = 1 2\n"
         "          ^\n"
         "p.at:2:1: error: unknown name 'm': the model has no param, input or "
         "size called that\n"
         "    m = 3\n"
         "    ^\n"},
        {NULL, "n =\nx = 1\n", "",
         "p.at:1:1: error: 'n' is a size and needs a whole number\n"
         "    n =\n"
         "    ^\n"},
        {two_sizes, "A = 1 2 3 4 5 6\n", "",
         "p.at:1:1: error: cannot tell n and m from the 6 numbers of 'A': "
         "give all but one of them with --size or in this file\n"
         "    A = 1 2 3 4 5 6\n"
         "    ^\n"},
        {two_sizes, "y = 1 2\nA = 1 2 3 4 5\n", "",
         "p.at:2:1: error: 'A' has 5 numbers, but no whole m gives A[n,m] "
         "that many with n = 2 (from the 2 numbers of 'y' on line 1)\n"
         "    A = 1 2 3 4 5\n"
         "    ^\n"},
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        char *out = NULL, *err = NULL;
        const char *model = cases[i].model ? cases[i].model : line_fit;
        char *args = tu_format("%s --at p.at", cases[i].args);
        ck_assert_int_eq(run_check(model, cases[i].at, args, &out, &err), 1);
        ck_assert_str_eq(out, "");
        ck_assert_str_eq(err, cases[i].err);
        free(args);
        free(out);
        free(err);
    }
}
END_TEST

/* Sizes that make an array too large for the evaluator stop the check
 * before anything is allocated: status 1, one line naming every size. */
START_TEST(sizes_too_large_for_an_array)
{
    static const char *const grid =
        "size n, m\ninput A[n, m]\nparam c\n"
        "y = c * sum(i, j: A[i, j])\noutput y\n";
    static const struct {
        const char *at, *args, *err;
    } cases[] = {
        /* 100000 * 100000 = 1e10 > 2^31 - 1, the element limit */
        {NULL, "--size n=100000 --size m=100000",
         "dervish: with n = 100000, m = 100000, 'A' would have more than "
         "2147483647 elements\n"},
        /* m takes its default 3: (2^31 - 1) * 3 is past the limit */
        {"n = 2147483647\n", "--at p.at",
         "dervish: with n = 2147483647, m = 3, 'A' would have more than "
         "2147483647 elements\n"},
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        char *out = NULL, *err = NULL;
        ck_assert_int_eq(run_check(grid, cases[i].at, cases[i].args, &out,
                                   &err), 1);
        ck_assert_str_eq(out, "");
        ck_assert_str_eq(err, cases[i].err);
        free(out);
        free(err);
    }
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

/* Scale by 1.001 the statements of LIST that write TARGET, as a wrong rule
 * would; returns how many there were. */
static int spoil(Ir *ir, IrStmtList *list, int32_t target)
{
    int changed = 0;
    for (int i = 0; i < list->len; i++) {
        IrStmt *s = &list->items[i];
        if (s->target == target) {
            s->expr = ir_node(ir, IR_MUL, s->expr, ir_const(ir, 1.001),
                              NO_NODE);
            changed++;
        }
    }
    return changed;
}

/* A wrong derivative rule, simulated by scaling the reverse statement that
 * writes a's gradient: the complex step exposes it. */
START_TEST(a_wrong_gradient_is_named_first)
{
    const char *text = "param a, b, c\ny = a * sin(b) + c * c\noutput y\n";
    DvCompilation c;
    tu_compile(&c, "w.dvs", text);
    ck_assert(spoil(c.ir, &c.ir->reverse, c.ir->arrays.items[0].adjoint));
    TuCapture report;
    CheckOptions opt = {NULL, 3, 1e-6, tu_capture_open(&report), NULL, 0};
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

/* With --emit ...,tangent, check also compares the tangent along a random
 * direction with the gradient times that direction: on a correct model
 * (a max over an index, a row of a sum, transcendental calls) they agree
 * to rounding. */
START_TEST(the_tangent_is_checked_against_the_gradient)
{
    const char *model = "param w[4], b\ninput x[4]\n"
                        "z[i] = tanh(w[i] * x[i] + b)\n"
                        "y = max(i: z[i]) + log(1 + sum(i: z[i]^2))\n"
                        "output y\n";
    char *out, *err;
    ck_assert_int_eq(run_check(model, NULL, "--emit value,gradient,tangent",
                               &out, &err), 0);
    ck_assert_str_eq(err, "");
    double t, g;
    const char *at = strstr(out, "tangent along a random direction (seed 1):");
    ck_assert_msg(at && sscanf(strchr(at, ':') + 1, "%lf", &t) == 1, "%s",
                  out);
    at = strstr(out, "the gradient times that direction:");
    ck_assert_msg(at && sscanf(strchr(at, ':') + 1, "%lf", &g) == 1, "%s",
                  out);
    ck_assert_msg(t != 0 && fabs(t - g) <= 1e-14 * fabs(g), "%.17g %.17g",
                  t, g);
    char *last = last_line(out);
    ck_assert_msg(strstr(last, "check: the tangent agrees with the gradient "
                               "(relative difference ") == last &&
                      strstr(last, ", tolerance 1e-06)"), "%s", last);
    free(last);
    free(out);
    free(err);
}
END_TEST

/* The report of check on TEXT compiled with the products EMIT (besides
 * value and gradient), after spoil() on the statements of one product:
 * the tangent of the output, or the Hessian-vector product's entry for
 * the first param.  Check must fail. */
static char *spoiled_check(const char *text, int emit)
{
    DvCompilation c;
    DvOptions o;
    memset(&o, 0, sizeof o);
    o.emit = DV_EMIT_DEFAULT | emit;
    ck_assert_int_eq(dv_compile(&c, "s.dvs", text, strlen(text), &o), 0);
    Ir *ir = c.ir;
    if (emit == DV_EMIT_TANGENT)
        ck_assert(spoil(ir, &ir->tangent,
                        ir->arrays.items[ir->output].tangent));
    else
        ck_assert(spoil(ir, &ir->hv_reverse,
                        ir->arrays.items[ir->arrays.items[0].adjoint].tangent));
    TuCapture report;
    CheckOptions opt = {NULL, 3, 1e-6, tu_capture_open(&report), NULL, 0};
    ck_assert_int_eq(check_run(&c, &opt), 1);
    dv_free(&c);
    return tu_capture_close(&report);
}

/* A wrong tangent statement (scaled by 1.001) is reported and fails the
 * check, though every gradient entry agrees. */
START_TEST(a_wrong_tangent_is_a_mismatch)
{
    char *out = spoiled_check("param a, b\ny = a * sin(b)\noutput y\n",
                              DV_EMIT_TANGENT);
    ck_assert_msg(strstr(out, "check: 2 of 2 derivatives agree"), "%s", out);
    char *last = last_line(out);
    ck_assert_msg(strstr(last, "check: the tangent disagrees with the "
                               "gradient (") == last, "%s", last);
    free(last);
    free(out);
}
END_TEST

/* With --emit ...,hessvec, check compares the Hessian times a random
 * direction with differences of the gradient, entry by entry. */
START_TEST(the_hessian_vector_product_is_checked)
{
    const char *model = "param w[3], b\ninput x[3]\n"
                        "z[i] = tanh(w[i] * x[i] + b) * exp(-w[i]^2)\n"
                        "y = log(1 + sum(i: z[i]^2)) + hypot(b, 2 * b + 1)\n"
                        "output y\n";
    char *out, *err;
    ck_assert_int_eq(run_check(model, NULL, "--emit value,gradient,hessvec",
                               &out, &err), 0);
    ck_assert_str_eq(err, "");
    ck_assert_msg(strstr(out, "Hessian times a random direction (seed 1): 4 of "
                              "4 entries agree with\n  differences of the "
                              "gradient (largest error "), "%s", out);
    char *last = last_line(out);
    ck_assert_str_eq(last, "check: the Hessian times the direction agrees");
    free(last);
    free(out);
    free(err);
}
END_TEST

/* A wrong second derivative (the statement writing one entry of the
 * Hessian-vector product, scaled by 1.001) is reported. */
START_TEST(a_wrong_hessian_vector_product_is_a_mismatch)
{
    char *out = spoiled_check("param a, b\ny = a * sin(b) + a^3\noutput y\n",
                              DV_EMIT_HESSVEC);
    ck_assert_msg(strstr(out, "check: 2 of 2 derivatives agree"), "%s", out);
    ck_assert_msg(strstr(out, "): 1 of 2 entries agree with"), "%s", out);
    char *last = last_line(out);
    ck_assert_str_eq(last, "check: the Hessian times the direction disagrees");
    free(last);
    free(out);
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
    tcase_add_loop_test(tc, correct_models_pass, 0, NGOOD);
    tcase_add_test(tc, struct_output_sample_agrees);
    tcase_add_test(tc, sample_with_used_file_agrees);
    tcase_add_loop_test(tc, tangents_agree_with_gradients, 0,
                        NGOOD + (int)(sizeof samples / sizeof samples[0]));
    TU_ADD_TESTS(tc,
                 at_file_sets_the_point, missing_names_stay_random,
                 at_file_errors_are_reported_in_place,
                 numbers_need_a_name_and_must_be_finite,
                 unreadable_at_file_is_status_3, seeds_are_reproducible,
                 printed_values_reproduce_the_point, a_jump_is_a_mismatch,
                 tolerance_is_honoured, a_wrong_gradient_is_named_first,
                 the_tangent_is_checked_against_the_gradient,
                 a_wrong_tangent_is_a_mismatch,
                 the_hessian_vector_product_is_checked,
                 a_wrong_hessian_vector_product_is_a_mismatch,
                 a_value_that_is_not_finite_is_reported,
                 an_entry_without_numerical_derivative_is_unchecked);
    TU_ADD_TESTS(tu_case(s, "sizes", 60),
                 a_size_given_nowhere_is_defaulted,
                 a_size_from_the_command_line, a_size_from_the_at_file,
                 a_size_from_the_count_of_numbers, a_size_of_zero,
                 printed_sizes_reproduce_the_point, bad_size_options,
                 size_errors_in_the_at_file, sizes_too_large_for_an_array);
    return tu_main(s);
}
