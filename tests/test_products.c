/* test_products.c - the emitted tangent, Hessian-vector and Hessian
 * functions, compiled with gcc and clang and run: the Hessian of Moré,
 * Garbow & Hillstrom's problem 1 (Rosenbrock) at its standard start
 * against its closed form; the dense Hessian is exactly symmetric and its
 * columns are Hessian-vector products; invalid sizes give NaN and touch
 * nothing; --emit writes only what it lists. */
#include "testutil.h"

static const char *const compilers[] = {"gcc", "clang"};

/* Rosenbrock's function, MGH 1981 problem 1: f = 100 (x2 - x1^2)^2 +
 * (1 - x1)^2 at x0 = (-1.2, 1).  From the formula: f(x0) = 24.2 (the
 * paper's published value), gradient (-400 x1 (x2 - x1^2) - 2 (1 - x1),
 * 200 (x2 - x1^2)) = (-215.6, -88), Hessian [[1200 x1^2 - 400 x2 + 2,
 * -400 x1], [-400 x1, 200]] = [[1330, 480], [480, 200]]. */
START_TEST(rosenbrock_hessian_at_the_standard_start)
{
    char *dir = tu_tmpdir();
    tu_write_in(dir, "rb.dvs", "param x1, x2\n"
                               "f = 100 * (x2 - x1^2)^2 + (1 - x1)^2\n"
                               "output f\n");
    char *err = NULL;
    ck_assert_int_eq(tu_run_dervish(dir, NULL, &err, "build --emit "
                                    "value,tangent,hessian rb.dvs"), 0);
    ck_assert_str_eq(err, "");
    tu_write_in(dir, "driver.c",
        "#include \"rb.h\"\n#include <stdio.h>\n"
        "int main(void)\n{\n"
        "    rb_param p = {-1.2, 1.0}, d = {0.5, -2.0}, g, hv;\n"
        "    double h[RB_PARAM_COUNT][RB_PARAM_COUNT], dv;\n"
        "    double f = rb_hessian(&p, &g, h);\n"
        "    double fv = rb_hessvec(&p, &d, &g, &hv);\n"
        "    double ft = rb_tangent(&p, &d, &dv);\n"
        "    printf(\"%.17g %.17g %.17g %.17g %.17g %.17g %.17g\\n\", f, "
        "g.x1, g.x2, h[0][0], h[0][1], h[1][0], h[1][1]);\n"
        "    printf(\"%.17g %.17g %.17g %.17g %.17g\\n\", fv, hv.x1, hv.x2, "
        "ft, dv);\n"
        "    return 0;\n}\n");
    for (int c = 0; c < 2; c++) {
        if (!tu_have(compilers[c]))
            continue;
        char *out = tu_compile_and_run(dir, "rb", compilers[c]);
        double v[12];
        ck_assert_int_eq(sscanf(out, "%lf %lf %lf %lf %lf %lf %lf %lf %lf "
                                "%lf %lf %lf", &v[0], &v[1], &v[2], &v[3],
                                &v[4], &v[5], &v[6], &v[7], &v[8], &v[9],
                                &v[10], &v[11]), 12);
        const double want[7] = {24.2, -215.6, -88, 1330, 480, 480, 200};
        for (int k = 0; k < 7; k++)
            ck_assert_msg(fabs(v[k] - want[k]) <= 1e-13 * fabs(want[k]),
                          "%s: entry %d is %.17g, want %.17g", compilers[c],
                          k, v[k], want[k]);
        ck_assert(v[4] == v[5]);    /* exactly symmetric */
        /* H d with d = (0.5, -2): (1330 * 0.5 - 960, 240 - 400) */
        ck_assert(fabs(v[8] - -295.0) <= 1e-12 && fabs(v[9] - -160.0) <= 1e-12);
        ck_assert(v[7] == v[0] && v[10] == v[0]);
        /* the tangent: g . d = -215.6 * 0.5 + 176 */
        ck_assert_msg(fabs(v[11] - 68.2) <= 1e-12, "tangent %.17g", v[11]);
        free(out);
    }
    free(err);
    tu_rmdir(dir);
    free(dir);
}
END_TEST

/* A sized model's Hessian: its columns are the Hessian-vector products,
 * it is exactly symmetric, and negative sizes give NaN leaving *grad and
 * the matrix untouched. */
START_TEST(sized_hessian_columns_and_invalid_sizes)
{
    char *dir = tu_tmpdir();
    tu_write_in(dir, "fit.dvs",
                "size n\ninput t[n], y[n]\nparam a, k, c\n"
                "r[i] = a * exp(-k * t[i]) + c * t[i]^2 - y[i]\n"
                "loss = log(1 + sum(i: r[i]^2)) + max(i: r[i])\n"
                "output loss\n");
    char *err = NULL;
    ck_assert_int_eq(tu_run_dervish(dir, NULL, &err, "build --emit "
                                    "hessvec,hessian fit.dvs"), 0);
    ck_assert_str_eq(err, "");
    tu_write_in(dir, "driver.c",
        "#include \"fit.h\"\n#include <math.h>\n#include <stdio.h>\n"
        "#include <stdlib.h>\n#include <string.h>\n"
        "int main(void)\n{\n"
        "    double t[5] = {0.1, 0.4, 0.9, 1.3, 2.0};\n"
        "    double y[5] = {1.9, 1.5, 1.2, 0.8, 1.1};\n"
        "    fit_input in = {5, t, y};\n"
        "    double *work = malloc((fit_work_count(&in) + 1) * sizeof *work);\n"
        "    fit_param_flat p = {{1.7, 0.8, 0.2}}, g, hv, e;\n"
        "    double h[FIT_PARAM_COUNT][FIT_PARAM_COUNT];\n"
        "    fit_hessian(&p.p, &in, &g.p, h, work);\n"
        "    double worst = 0;\n"
        "    for (int k = 0; k < FIT_PARAM_COUNT; k++) {\n"
        "        memset(&e, 0, sizeof e);\n"
        "        e.v[k] = 1.0;\n"
        "        fit_hessvec(&p.p, &in, &e.p, &g.p, &hv.p, work);\n"
        "        for (int j = 0; j < FIT_PARAM_COUNT; j++) {\n"
        "            worst = fmax(worst, fabs(h[j][k] - hv.v[j]) /\n"
        "                                fmax(1.0, fabs(hv.v[j])));\n"
        "            if (h[j][k] != h[k][j])\n"
        "                return 2;\n"
        "        }\n"
        "    }\n"
        "    fit_input bad = {-1, NULL, NULL};\n"
        "    fit_param_flat g2;\n"
        "    memset(&g2, 0x5a, sizeof g2);\n"
        "    double h2[FIT_PARAM_COUNT][FIT_PARAM_COUNT];\n"
        "    memset(h2, 0x5a, sizeof h2);\n"
        "    double r = fit_hessian(&p.p, &bad, &g2.p, h2, NULL);\n"
        "    unsigned char *b = (unsigned char *)&g2, *c = (unsigned char *)h2;\n"
        "    int untouched = 1;\n"
        "    for (size_t i = 0; i < sizeof g2; i++) untouched &= b[i] == 0x5a;\n"
        "    for (size_t i = 0; i < sizeof h2; i++) untouched &= c[i] == 0x5a;\n"
        "    printf(\"%.3g %d %d\\n\", worst, isnan(r) != 0, untouched);\n"
        "    free(work);\n"
        "    return 0;\n}\n");
    for (int c = 0; c < 2; c++) {
        if (!tu_have(compilers[c]))
            continue;
        char *out = tu_compile_and_run(dir, "fit", compilers[c]);
        double worst;
        int nan_back, untouched;
        ck_assert_int_eq(sscanf(out, "%lf %d %d", &worst, &nan_back,
                                &untouched), 3);
        /* the mean of two products that differ by rounding */
        ck_assert_msg(worst <= 1e-13, "%s: column off by %g", compilers[c],
                      worst);
        ck_assert(nan_back && untouched);
        free(out);
    }
    free(err);
    tu_rmdir(dir);
    free(dir);
}
END_TEST

/* --emit writes only the functions it lists, with only the helpers they
 * call; hessian brings hessvec, which it calls. */
START_TEST(emit_writes_only_what_it_lists)
{
    char *dir = tu_tmpdir();
    tu_write_in(dir, "m.dvs", "param a, b\ny = sigmoid(a) * b + abs(a - b)\n"
                              "output y\n");
    char *err = NULL;
    ck_assert_int_eq(tu_run_dervish(dir, NULL, &err, "build --emit tangent "
                                    "m.dvs"), 0);
    char *h = tu_read_in(dir, "m.h"), *c = tu_read_in(dir, "m.c");
    ck_assert_ptr_nonnull(strstr(h, "double m_tangent(const m_param *p, "
                                    "const m_param *dir, double *dvalue);"));
    ck_assert_ptr_null(strstr(h, "m_value("));
    ck_assert_ptr_null(strstr(h, "m_gradient("));
    ck_assert_ptr_nonnull(strstr(c, "/* m.c - tangent of the model m"));
    ck_assert_ptr_nonnull(strstr(c, "static double dvs_sigmoid("));
    free(h);
    free(c);
    free(err);
    ck_assert_int_eq(tu_run_dervish(dir, NULL, &err, "build --emit "
                                    "value,hessian m.dvs"), 0);
    h = tu_read_in(dir, "m.h");
    ck_assert_ptr_nonnull(strstr(h, "/* m.h - value, hessvec and hessian of "
                                    "the model m"));
    ck_assert_ptr_nonnull(strstr(h, "double m_hessvec("));
    ck_assert_ptr_nonnull(strstr(h, "double m_hessian(const m_param *p, "
                                    "m_param *grad, double "
                                    "hess[M_PARAM_COUNT][M_PARAM_COUNT]);"));
    free(h);
    free(err);
    tu_rmdir(dir);
    free(dir);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("products");
    TU_ADD_TESTS(tu_case(s, "products", 60),
                 rosenbrock_hessian_at_the_standard_start,
                 sized_hessian_columns_and_invalid_sizes,
                 emit_writes_only_what_it_lists);
    return tu_main(s);
}
