/* test_hessian_refs.c - the Hessian-vector product against mpmath: for each
 * model of tests/hessian_refs.h (two through lgamma, so trigamma, one of
 * MGH 1981, one mixing a dozen builtins) the emitted <model>_hessvec,
 * built by gcc and clang, and the evaluator's eval_hessvec give the value,
 * the gradient and, along each unit direction and one mixed direction,
 * the Hessian's columns and their combination.
 *
 * Reference values: tests/hessian_refs.h, made by tests/gen_hessian_refs.py
 * with mpmath 1.2.1 (see that file's first lines). */
#include "e2eutil.h"

#include "eval.h"

#include <float.h>

#include "hessian_refs.h"

#define NMODELS ((int)COUNT(hessian_models))
#define REFS_PATH "tests/hessian_refs.h"
#define GENERATOR "/usr/bin/python3 tests/gen_hessian_refs.py"

/* Tolerance: relative for the value, and relative to the largest entry
 * of the gradient or the Hessian at the point (the norm, in effect) for
 * their entries, since an entry that is the sum of larger terms carries
 * their rounding. Each entry is a few dozen correctly rounded operations,
 * libm calls within an ulp or two, and dvs_digamma and dvs_trigamma within
 * a few 2^-52 (runtime/); the rounding of a*b + 2 in gammaprod is
 * magnified by |x psi''(x) / psi'(x)|, up to 14 at its points below
 * zero. Measured: 9.5e-16 for values, 1.6e-15 for gradients and 2.7e-15
 * for Hessians (gammaprod at (0.75, -4.2)); 2e-14 keeps a margin of 7. */
#define TOL 2e-14

/* The direction after the unit ones: exact in binary, all entries used. */
static const double mixed_dir[HR_NMAX] = {0.5, -0.25, 0.75};

/* Directions per point: the n unit vectors, then mixed_dir. */
static int ndirs(const struct hr_model *m)
{
    return m->n + 1;
}

static double dir_entry(const struct hr_model *m, int d, int k)
{
    return d < m->n ? (double)(d == k) : mixed_dir[k];
}

/* What each run of the product prints, per point and direction: the value,
 * the gradient, then the Hessian times the direction. */
static int row_len(const struct hr_model *m)
{
    return 1 + 2 * m->n;
}

/* ------------------------------------------------------------ sources */

/* A driver that calls <name>_hessvec for every point and direction and
 * prints each row in %a; grad and hv are pre-filled with NaN, so an entry
 * the emitted code fails to write shows up. */
static char *driver_source(const struct hr_model *m)
{
    char *s = NULL;
    e2e_append(&s, "#include <math.h>\n#include <stdio.h>\n"
               "#include \"%s.h\"\n\n", m->name);
    e2e_append(&s, "static const double pts[%d][%d] = {\n", m->npoints, m->n);
    for (int p = 0; p < m->npoints; p++) {
        e2e_append(&s, "    {");
        for (int k = 0; k < m->n; k++)
            e2e_append(&s, "%s%a", k ? ", " : "", m->points[p].x[k]);
        e2e_append(&s, "},\n");
    }
    e2e_append(&s, "};\n\nstatic const double dirs[%d][%d] = {\n",
               ndirs(m), m->n);
    for (int d = 0; d < ndirs(m); d++) {
        e2e_append(&s, "    {");
        for (int k = 0; k < m->n; k++)
            e2e_append(&s, "%s%a", k ? ", " : "", dir_entry(m, d, k));
        e2e_append(&s, "},\n");
    }
    e2e_append(&s, "};\n\n"
               "int main(void)\n{\n"
               "    for (int p = 0; p < %d; p++)\n"
               "        for (int d = 0; d < %d; d++) {\n"
               "            %s_param_flat x, dir, g, hv;\n"
               "            for (int k = 0; k < %d; k++) {\n"
               "                x.v[k] = pts[p][k];\n"
               "                dir.v[k] = dirs[d][k];\n"
               "                g.v[k] = hv.v[k] = nan(\"\");\n"
               "            }\n"
               "            printf(\"%%a\", %s_hessvec(&x.p, &dir.p, &g.p, "
               "&hv.p));\n"
               "            for (int k = 0; k < %d; k++)\n"
               "                printf(\" %%a\", g.v[k]);\n"
               "            for (int k = 0; k < %d; k++)\n"
               "                printf(\" %%a\", hv.v[k]);\n"
               "            printf(\"\\n\");\n"
               "        }\n"
               "    return 0;\n}\n",
               m->npoints, ndirs(m), m->name, m->n, m->name, m->n, m->n);
    return s;
}

static double *parse_rows(const struct hr_model *m, const char *out,
                          const char *cc)
{
    size_t n = (size_t)m->npoints * (size_t)ndirs(m) * (size_t)row_len(m);
    double *rows = malloc(n * sizeof *rows);
    ck_assert_ptr_nonnull(rows);
    const char *at = out;
    for (size_t i = 0; i < n; i++) {
        char *end;
        rows[i] = strtod(at, &end);
        ck_assert_msg(end != at, "%s (%s): the driver printed %zu numbers, "
                      "want %zu", m->name, cc, i, n);
        at = end;
    }
    return rows;
}

/* The rows as the emitted C compiled by cc gives them. */
static double *emitted_rows(const struct hr_model *m, const char *dir,
                            const char *cc)
{
    char *out = tu_compile_and_run(dir, m->name, cc);
    double *rows = parse_rows(m, out, cc);
    free(out);
    return rows;
}

/* The same rows from the evaluator (no C compiler involved). */
static double *evaluator_rows(const struct hr_model *m)
{
    DvCompilation comp;
    DvOptions opt;
    memset(&opt, 0, sizeof opt);
    opt.diag_out = stderr;
    opt.emit = DV_EMIT_VALUE | DV_EMIT_GRADIENT | DV_EMIT_HESSVEC;
    char *path = tu_format("%s.dvs", m->name);
    ck_assert_msg(dv_compile(&comp, path, m->text, strlen(m->text), &opt) == 0,
                  "%s does not compile", m->name);
    free(path);
    Evaluation *ev = eval_new(comp.ir);
    ck_assert_int_eq(eval_param_count(ev), m->n);
    double *rows = malloc((size_t)m->npoints * (size_t)ndirs(m) *
                          (size_t)row_len(m) * sizeof *rows);
    ck_assert_ptr_nonnull(rows);
    double *row = rows, dir[HR_NMAX];
    for (int p = 0; p < m->npoints; p++)
        for (int d = 0; d < ndirs(m); d++, row += row_len(m)) {
            for (int k = 0; k < m->n; k++) {
                *eval_param(ev, k) = m->points[p].x[k];
                dir[k] = dir_entry(m, d, k);
            }
            row[0] = eval_hessvec(ev, dir, row + 1, row + 1 + m->n);
        }
    eval_free(ev);
    dv_free(&comp);
    return rows;
}

/* ---------------------------------------------------------- comparison */

static double largest(const double *v, int n)
{
    double big = 0;
    for (int k = 0; k < n; k++)
        big = fmax(big, fabs(v[k]));
    return big;
}

/* Every row of one source against the references; mismatches go to the
 * tally. */
static void compare_rows(const struct hr_model *m, const double *rows,
                         E2eTally *t)
{
    const double *row = rows;
    for (int p = 0; p < m->npoints; p++) {
        const struct hr_point *r = &m->points[p];
        double gscale = largest(r->grad, m->n), hscale = 0;
        for (int i = 0; i < m->n; i++)
            hscale = fmax(hscale, largest(r->hess[i], m->n));
        t->point = p;
        for (int d = 0; d < ndirs(m); d++, row += row_len(m)) {
            e2e_expect_near(t, "value", row[0], r->value,
                            TOL * fabs(r->value));
            for (int i = 0; i < m->n; i++) {
                char *what = tu_format("gradient %d (direction %d)", i, d);
                e2e_expect_near(t, what, row[1 + i], r->grad[i],
                                TOL * gscale);
                free(what);
                /* (H dir)_i, summed here from exact mpmath entries */
                double want = 0;
                for (int k = 0; k < m->n; k++)
                    want += r->hess[i][k] * dir_entry(m, d, k);
                what = tu_format("(H dir)_%d, direction %d", i, d);
                e2e_expect_near(t, what, row[1 + m->n + i], want,
                                TOL * hscale);
                free(what);
            }
        }
    }
}

START_TEST(hessvec_matches_mpmath)
{
    const struct hr_model *m = &hessian_models[_i];
    char *dir = tu_tmpdir(), *err = NULL, *file = tu_format("%s.dvs", m->name);
    tu_write_in(dir, file, m->text);
    int rc = tu_run_dervish(dir, NULL, &err, "build --emit "
                            "value,gradient,hessvec %s", file);
    ck_assert_msg(rc == 0 && err && err[0] == '\0', "dervish build %s: "
                  "status %d\n%s", file, rc, err ? err : "");
    char *src = driver_source(m);
    tu_write_in(dir, "driver.c", src);
    E2eTally t = {m->name, NULL, 0, 0, 0};
    for (size_t c = 0; c < COUNT(tu_compilers); c++) {
        if (!tu_have(tu_compilers[c]))
            continue;
        double *rows = emitted_rows(m, dir, tu_compilers[c]);
        t.cc = tu_compilers[c];
        compare_rows(m, rows, &t);
        free(rows);
    }
    ck_assert_msg(t.checks > 0, "no C compiler found");
    double *rows = evaluator_rows(m);
    t.cc = "evaluator";
    compare_rows(m, rows, &t);
    free(rows);
    e2e_tally_finish(&t);
    free(src);
    free(file);
    free(err);
    tu_rmdir(dir);
    free(dir);
}
END_TEST

/* ----------------------------------------------------- the data itself */

/* The gradient of Rosenbrock's function at MGH's x0 = (-1.2, 1) and its
 * Hessian, from the problem's formula f = (10 (x2 - x1^2))^2 + (1 - x1)^2
 * (Moré, Garbow & Hillstrom 1981, problem 1): gradient (-215.6, -88),
 * Hessian [[1330, 480], [480, 200]]; and f(x0) = 24.2, the published
 * value. A check of the data file against a source outside mpmath. */
START_TEST(rosenbrock_data_matches_the_formula)
{
    const struct hr_model *m = NULL;
    for (int k = 0; k < NMODELS; k++)
        if (strcmp(hessian_models[k].name, "rosenbrock") == 0)
            m = &hessian_models[k];
    ck_assert_ptr_nonnull(m);
    const struct hr_point *r = &m->points[0];
    ck_assert(r->x[0] == -1.2 && r->x[1] == 1.0);
    ck_assert_double_eq_tol(r->value, 24.2, 1e-14);
    ck_assert_double_eq_tol(r->grad[0], -215.6, 1e-12);
    ck_assert_double_eq_tol(r->grad[1], -88.0, 1e-12);
    ck_assert_double_eq_tol(r->hess[0][0], 1330.0, 1e-12);
    ck_assert_double_eq_tol(r->hess[0][1], 480.0, 1e-12);
    ck_assert_double_eq_tol(r->hess[1][0], 480.0, 1e-12);
    ck_assert_double_eq_tol(r->hess[1][1], 200.0, 1e-12);
}
END_TEST

/* The committed data file is exactly what the generator prints. */
START_TEST(generator_reproduces_the_data_file)
{
    tu_expect_generated(REFS_PATH, GENERATOR);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("hessian references");
    TU_ADD_TESTS(tu_case(s, "data", 60), rosenbrock_data_matches_the_formula,
                 generator_reproduces_the_data_file);
    tcase_add_loop_test(tu_case(s, "models", 60), hessvec_matches_mpmath, 0,
                        NMODELS);
    return tu_main(s);
}
