/* test_jacobian.c - models whose outputs fill a struct: the emitted value,
 * adjoint, tangent and jacobian functions, compiled with gcc and clang and
 * run, against Jacobians differentiated by hand (two of Moré, Garbow &
 * Hillstrom's problems in residual form among them); the choice of sweeps,
 * the struct's layout, invalid sizes, parts, float, --emit and `dervish
 * check`. */
#include "testutil.h"

#include <math.h>

/* ------------------------------------------------------------- helpers */

/* The N reals TEXT holds, whitespace-separated (malloc'd); fails the test
 * when it holds another number of them. */
static double *read_reals(const char *text, int n)
{
    double *v = calloc((size_t)n, sizeof *v);
    ck_assert_ptr_nonnull(v);
    const char *s = text;
    char *end;
    int k = 0;
    for (double x = strtod(s, &end); end != s; x = strtod(s, &end)) {
        if (k < n)
            v[k] = x;
        k++;
        s = end;
    }
    ck_assert_msg(k == n, "the driver printed %d numbers, want %d:\n%s", k,
                  n, text);
    return v;
}

/* |got - want| <= bound, naming entry K of WHAT when it is not. */
static void expect_near(const char *cc, const char *what, int k, double got,
                        double want, double bound)
{
    ck_assert_msg(fabs(got - want) <= bound, "%s: %s entry %d is %.17g, want "
                  "%.17g (bound %.3g)", cc, what, k, got, want, bound);
}

/* got is within N units in the last place of want: two ways of computing
 * one derivative that differ only by rounding. */
static void expect_ulps(const char *cc, const char *what, int k, double got,
                        double want, int n)
{
    double ulp = nextafter(fabs(want), INFINITY) - fabs(want);
    expect_near(cc, what, k, got, want, n * ulp);
}

/* Checks the reals a driver printed; CC names the compiler that built it. */
typedef void (*Checker)(const char *cc, const double *v);

/* Compile DIR/driver.c with DIR/NAME.c by each C compiler found, run it,
 * read the N reals it prints and hand them to CHECK. */
static void run_driver(const char *dir, const char *name, int n,
                       Checker check)
{
    int ran = 0;
    for (size_t c = 0; c < sizeof tu_compilers / sizeof *tu_compilers; c++) {
        if (!tu_have(tu_compilers[c]))
            continue;
        char *out = tu_compile_and_run(dir, name, tu_compilers[c]);
        double *v = read_reals(out, n);
        check(tu_compilers[c], v);
        free(v);
        free(out);
        ran++;
    }
    ck_assert_msg(ran > 0, "neither gcc nor clang was found");
}

/* Write MODEL to DIR/NAME.dvs and build it with OPTIONS; the build must
 * succeed.  Returns its stderr (malloc'd). */
static char *build(const char *dir, const char *name, const char *model,
                   const char *options)
{
    char *file = tu_format("%s.dvs", name), *err = NULL;
    tu_write_in(dir, file, model);
    int rc = tu_run_dervish(dir, NULL, &err, "build %s %s", options, file);
    ck_assert_msg(rc == 0, "dervish build %s %s: status %d\n%s", options,
                  file, rc, err);
    free(file);
    return err;
}

/* The N reals of V as a C initializer list, exactly (malloc'd). */
static char *c_list(const double *v, int n)
{
    char *s = tu_format("%.17g", v[0]);
    for (int k = 1; k < n; k++) {
        char *longer = tu_format("%s, %.17g", s, v[k]);
        free(s);
        s = longer;
    }
    return s;
}

/* TEXT holds NEEDLE. */
static void expect_has(const char *text, const char *needle)
{
    ck_assert_msg(strstr(text, needle) != NULL, "missing \"%s\" in:\n%s",
                  needle, text);
}

/* Function declarations in a header: lines that end with ");". */
static int declarations(const char *header)
{
    int n = 0;
    for (const char *s = strstr(header, ");\n"); s; s = strstr(s + 1, ");\n"))
        n++;
    return n;
}

/* ------------------------------------------------- the two-link arm */

/* The tip of a planar arm with links upper (l1) and fore (l2) at joint
 * angles shoulder (t1) and elbow (t2), relative to the upper link. */
static const char arm_model[] =
    "param shoulder, elbow\n"
    "input upper, fore\n"
    "x = upper*cos(shoulder) + fore*cos(shoulder + elbow)\n"
    "y = upper*sin(shoulder) + fore*sin(shoulder + elbow)\n"
    "output x, y\n";

static const double arm_at[4] = {0.3, 1.1, 0.7, 0.5};  /* t1, t2, l1, l2 */
static const double arm_seed[2] = {0.6, -1.7};          /* on x, y */
static const double arm_dir[2] = {0.8, -1.3};           /* on t1, t2 */

/* Forward kinematics differentiated by hand: with s = t1 + t2,
 * x = l1 cos t1 + l2 cos s, y = l1 sin t1 + l2 sin s, and
 * J = [[-l1 sin t1 - l2 sin s, -l2 sin s],
 *      [ l1 cos t1 + l2 cos s,  l2 cos s]]. */
static void arm_closed_form(double xy[2], double jac[2][2])
{
    double t1 = arm_at[0], s = arm_at[0] + arm_at[1];
    double l1 = arm_at[2], l2 = arm_at[3];
    xy[0] = l1 * cos(t1) + l2 * cos(s);
    xy[1] = l1 * sin(t1) + l2 * sin(s);
    jac[0][0] = -l1 * sin(t1) - l2 * sin(s);
    jac[0][1] = -l2 * sin(s);
    jac[1][0] = l1 * cos(t1) + l2 * cos(s);
    jac[1][1] = l2 * cos(s);
}

/* The arm driver prints, in order: the value (x, y); for each seed e_x,
 * e_y, arm_seed, the adjoint's out and grad; for each direction
 * e_shoulder, e_elbow, arm_dir, the tangent's out and dout; the Jacobian's
 * out and its entries row by row.  32 reals. */
#define ARM_REALS 32

static void check_arm(const char *cc, const double *v)
{
    double xy[2], jac[2][2];
    arm_closed_form(xy, jac);
    for (int i = 0; i < 2; i++)
        expect_near(cc, "value", i, v[i], xy[i], 1e-14 * fabs(xy[i]));
    /* every function writes out exactly as m_value does */
    for (int k = 0; k < 3; k++)
        for (int i = 0; i < 2; i++) {
            ck_assert_msg(v[2 + 4 * k + i] == v[i], "%s: adjoint %d out", cc, k);
            ck_assert_msg(v[14 + 4 * k + i] == v[i], "%s: tangent %d out", cc, k);
        }
    ck_assert(v[26] == v[0] && v[27] == v[1]);
    const double seeds[3][2] = {{1, 0}, {0, 1}, {arm_seed[0], arm_seed[1]}};
    const double dirs[3][2] = {{1, 0}, {0, 1}, {arm_dir[0], arm_dir[1]}};
    for (int k = 0; k < 3; k++)
        for (int j = 0; j < 2; j++) {
            /* adjoint: grad_j = sum_i seed_i J[i][j] */
            double want = seeds[k][0] * jac[0][j] + seeds[k][1] * jac[1][j];
            double size = fabs(seeds[k][0] * jac[0][j]) +
                          fabs(seeds[k][1] * jac[1][j]);
            expect_near(cc, "adjoint", 2 * k + j, v[4 + 4 * k + j], want,
                        1e-14 * size);
            /* tangent: dout_j = sum_i J[j][i] dir_i */
            want = jac[j][0] * dirs[k][0] + jac[j][1] * dirs[k][1];
            size = fabs(jac[j][0] * dirs[k][0]) + fabs(jac[j][1] * dirs[k][1]);
            expect_near(cc, "tangent", 2 * k + j, v[16 + 4 * k + j], want,
                        1e-14 * size);
        }
    for (int i = 0; i < 2; i++)
        for (int j = 0; j < 2; j++) {
            double got = v[28 + 2 * i + j];
            expect_near(cc, "jacobian", 2 * i + j, got, jac[i][j],
                        1e-14 * fabs(jac[i][j]));
            /* row i from the adjoint seeded e_i, column j from the tangent
             * along e_j */
            expect_ulps(cc, "jacobian vs adjoint row", 2 * i + j, got,
                        v[4 + 4 * i + j], 4);
            expect_ulps(cc, "jacobian vs tangent column", 2 * i + j, got,
                        v[16 + 4 * j + i], 4);
        }
}

START_TEST(two_link_arm_jacobian)
{
    char *dir = tu_tmpdir();
    free(build(dir, "arm", arm_model, ""));
    char *driver = tu_format(
        "#include \"arm.h\"\n#include <stdio.h>\n"
        "#define P(v) printf(\"%%.17g\\n\", (v))\n"
        "int main(void)\n{\n"
        "    const arm_param p = {%.17g, %.17g};\n"
        "    const arm_input in = {%.17g, %.17g};\n"
        "    const arm_output seeds[3] = {{1, 0}, {0, 1}, {%.17g, %.17g}};\n"
        "    const arm_param dirs[3] = {{1, 0}, {0, 1}, {%.17g, %.17g}};\n"
        "    arm_output out, dout;\n"
        "    arm_param g;\n"
        "    double jac[ARM_OUTPUT_COUNT][ARM_PARAM_COUNT];\n"
        "    arm_value(&p, &in, &out);\n"
        "    P(out.x); P(out.y);\n"
        "    for (int k = 0; k < 3; k++) {\n"
        "        arm_adjoint(&p, &in, &seeds[k], &out, &g);\n"
        "        P(out.x); P(out.y); P(g.shoulder); P(g.elbow);\n"
        "    }\n"
        "    for (int k = 0; k < 3; k++) {\n"
        "        arm_tangent(&p, &in, &dirs[k], &out, &dout);\n"
        "        P(out.x); P(out.y); P(dout.x); P(dout.y);\n"
        "    }\n"
        "    arm_jacobian(&p, &in, &out, jac);\n"
        "    P(out.x); P(out.y);\n"
        "    P(jac[0][0]); P(jac[0][1]); P(jac[1][0]); P(jac[1][1]);\n"
        "    return 0;\n}\n",
        arm_at[0], arm_at[1], arm_at[2], arm_at[3], arm_seed[0], arm_seed[1],
        arm_dir[0], arm_dir[1]);
    tu_write_in(dir, "driver.c", driver);
    run_driver(dir, "arm", ARM_REALS, check_arm);
    free(driver);
    tu_rmdir(dir);
    free(dir);
}
END_TEST

/* ----------------------------------------- a vector of residuals */

/* Exponential decay y ~ a exp(-b t) at six invented instants. */
#define RES_ROWS 6
static const double res_t[RES_ROWS] = {0.0, 0.5, 1.1, 1.8, 2.6, 3.5};
static const double res_y[RES_ROWS] = {2.05, 1.38, 0.97, 0.58, 0.31, 0.19};
static const double res_ab[2] = {2.1, 0.8};

/* The driver prints the two counts, the value's r, the jacobian's out and
 * its entries row by row. */
#define RES_REALS (2 + 2 * RES_ROWS + 2 * RES_ROWS)

/* r_i = a e_i - y_i with e_i = exp(-b t_i), so dr_i/da = e_i and
 * dr_i/db = -a t_i e_i (differentiated by hand). */
static void check_residuals(const char *cc, const double *v)
{
    ck_assert(v[0] == RES_ROWS && v[1] == 2);
    double a = res_ab[0], b = res_ab[1];
    for (int i = 0; i < RES_ROWS; i++) {
        double e = exp(-b * res_t[i]);
        double r = a * e - res_y[i], size = a * e + res_y[i];
        expect_near(cc, "value", i, v[2 + i], r, 1e-14 * size);
        ck_assert(v[2 + RES_ROWS + i] == v[2 + i]);
        const double *row = v + 2 + 2 * RES_ROWS + 2 * i;
        expect_near(cc, "dr/da", i, row[0], e, 1e-14 * e);
        double drdb = -a * res_t[i] * e;
        expect_near(cc, "dr/db", i, row[1], drdb, 1e-14 * fabs(drdb));
    }
}

START_TEST(array_output_residuals)
{
    char *dir = tu_tmpdir();
    free(build(dir, "res", "input t[6], y[6]\nparam a, b\n"
                           "r[i] = a*exp(-b*t[i]) - y[i]\noutput r\n", ""));
    /* 6 outputs, 2 params: two tangent sweeps beat six reverse ones */
    char *c = tu_read_in(dir, "res.c"), *h = tu_read_in(dir, "res.h");
    expect_has(c, "/* One tangent sweep per param, each giving a column");
    ck_assert_ptr_null(strstr(c, "One reverse sweep per output entry"));
    expect_has(h, "One res_tangent per param.");
    expect_has(h, "typedef struct res_output {\n    double r[6];\n} "
                  "res_output;");
    char *t = c_list(res_t, RES_ROWS), *y = c_list(res_y, RES_ROWS);
    char *driver = tu_format(
        "#include \"res.h\"\n#include <stdio.h>\n"
        "#define P(v) printf(\"%%.17g\\n\", (double)(v))\n"
        "int main(void)\n{\n"
        "    const res_param p = {%.17g, %.17g};\n"
        "    const res_input in = {{%s}, {%s}};\n"
        "    res_output out;\n"
        "    double jac[RES_OUTPUT_COUNT][RES_PARAM_COUNT];\n"
        "    P(RES_OUTPUT_COUNT); P(RES_PARAM_COUNT);\n"
        "    res_value(&p, &in, &out);\n"
        "    for (int i = 0; i < 6; i++) P(out.r[i]);\n"
        "    res_jacobian(&p, &in, &out, jac);\n"
        "    for (int i = 0; i < 6; i++) P(out.r[i]);\n"
        "    for (int i = 0; i < 6; i++) { P(jac[i][0]); P(jac[i][1]); }\n"
        "    return 0;\n}\n", res_ab[0], res_ab[1], t, y);
    tu_write_in(dir, "driver.c", driver);
    run_driver(dir, "res", RES_REALS, check_residuals);
    free(driver);
    free(t);
    free(y);
    free(c);
    free(h);
    tu_rmdir(dir);
    free(dir);
}
END_TEST

/* ------------------------------------ few outputs of many params */

#define WIDE_N 40

/* Four summaries of w[40], no inputs: the sum, the sum of squares, the
 * log-sum-exp, and (sum of sines) times the sum of squares. */
static const char wide_model[] =
    "param w[40]\n"
    "s1 = sum(i: w[i])\n"
    "s2 = sum(i: w[i]^2)\n"
    "s3 = logsumexp(i: w[i])\n"
    "q = sum(i: sin(w[i]))\n"
    "s4 = q * s2\n"
    "output s1, s2, s3, s4\n";

/* The param entries the driver sets (positive: no sum cancels). */
static double wide_w(int k)
{
    return 0.3 + 0.02 * k;
}

/* Differentiated by hand: ds1/dw_k = 1, ds2/dw_k = 2 w_k, ds3/dw_k =
 * exp(w_k - s3) (the softmax weight), ds4/dw_k = cos(w_k) s2 + q 2 w_k. */
static void check_wide(const char *cc, const double *v)
{
    double s1 = 0, s2 = 0, q = 0, shift = wide_w(WIDE_N - 1), expsum = 0;
    for (int k = 0; k < WIDE_N; k++) {
        s1 += wide_w(k);
        s2 += wide_w(k) * wide_w(k);
        q += sin(wide_w(k));
        expsum += exp(wide_w(k) - shift);   /* the largest entry, shifted */
    }
    double s3 = shift + log(expsum);
    const double want[4] = {s1, s2, s3, q * s2};
    for (int i = 0; i < 4; i++)
        expect_near(cc, "value", i, v[i], want[i], 1e-13 * want[i]);
    for (int k = 0; k < WIDE_N; k++) {
        double w = wide_w(k);
        const double col[4] = {1.0, 2 * w, exp(w - s3),
                               cos(w) * s2 + q * 2 * w};
        for (int i = 0; i < 4; i++)
            expect_near(cc, "jacobian", i * WIDE_N + k,
                        v[4 + i * WIDE_N + k], col[i], 1e-13 * col[i]);
    }
}

START_TEST(reverse_chosen_for_few_outputs)
{
    char *dir = tu_tmpdir();
    free(build(dir, "wide", wide_model, ""));
    /* 4 outputs, 40 params: four reverse sweeps beat forty tangent ones */
    char *c = tu_read_in(dir, "wide.c"), *h = tu_read_in(dir, "wide.h");
    expect_has(c, "/* One reverse sweep per output entry, each giving a row");
    ck_assert_ptr_null(strstr(c, "One tangent sweep per param"));
    expect_has(h, "One wide_adjoint per output entry.");
    /* no inputs: no wide_input and no `in` argument */
    expect_has(h, "void wide_jacobian(const wide_param *p, wide_output *out, "
                  "double jac[WIDE_OUTPUT_COUNT][WIDE_PARAM_COUNT]);");
    ck_assert_ptr_null(strstr(h, "wide_input"));
    tu_write_in(dir, "driver.c",
        "#include \"wide.h\"\n#include <stdio.h>\n"
        "int main(void)\n{\n"
        "    wide_param_flat p;\n"
        "    wide_output_flat out;\n"
        "    double jac[WIDE_OUTPUT_COUNT][WIDE_PARAM_COUNT];\n"
        "    for (int k = 0; k < WIDE_PARAM_COUNT; k++)\n"
        "        p.v[k] = 0.3 + 0.02 * k;\n"
        "    wide_jacobian(&p.p, &out.o, jac);\n"
        "    for (int i = 0; i < WIDE_OUTPUT_COUNT; i++)\n"
        "        printf(\"%.17g\\n\", out.v[i]);\n"
        "    for (int i = 0; i < WIDE_OUTPUT_COUNT; i++)\n"
        "        for (int k = 0; k < WIDE_PARAM_COUNT; k++)\n"
        "            printf(\"%.17g\\n\", jac[i][k]);\n"
        "    return 0;\n}\n");
    run_driver(dir, "wide", 4 + 4 * WIDE_N, check_wide);
    free(c);
    free(h);
    tu_rmdir(dir);
    free(dir);
}
END_TEST

/* ------------------- outputs copied, read by others and reordered */

/* Listed not in definition order; p is a param, u an input, and c reads
 * the outputs b and a. */
static const char mix_model[] =
    "param p, q\n"
    "input u\n"
    "a = p*q + u\n"
    "b = 2*a + p\n"
    "c = b*a\n"
    "output c, b, a, p, u\n";

static const double mix_at[3] = {0.9, -1.3, 0.4};   /* p, q, u */
static const double mix_seed[5] = {0.5, -2.0, 3.0, 0.25, 7.0};

/* The driver prints each member's offset in doubles (c, b, a, p, u), the
 * count, the value through the flat view, the jacobian row by row and
 * the adjoint's grad for mix_seed. */
#define MIX_REALS (5 + 1 + 5 + 10 + 2)

/* By hand: a = p q + u, b = 2a + p, c = b a, so
 *   da = (q, p), db = 2 da + (1, 0) = (2q + 1, 2p),
 *   dc = a db + b da = (a (2q + 1) + b q, 2 a p + b p),
 *   dp = (1, 0), du = (0, 0). */
static void check_mix(const char *cc, const double *v)
{
    for (int i = 0; i < 5; i++)
        ck_assert_msg(v[i] == i, "%s: member %d at offset %g", cc, i, v[i]);
    ck_assert(v[5] == 5);
    double p = mix_at[0], q = mix_at[1], u = mix_at[2];
    double a = p * q + u, b = 2 * a + p, c = b * a;
    const double value[5] = {c, b, a, p, u};
    const double jac[5][2] = {{a * (2 * q + 1) + b * q, 2 * a * p + b * p},
                              {2 * q + 1, 2 * p}, {q, p}, {1, 0}, {0, 0}};
    for (int i = 0; i < 5; i++)
        expect_near(cc, "value", i, v[6 + i], value[i], 1e-14 * fabs(value[i]));
    ck_assert(v[9] == p && v[10] == u);     /* copied, not computed */
    for (int i = 0; i < 5; i++)
        for (int j = 0; j < 2; j++) {
            /* a's derivatives reach c along two paths: bound by both terms */
            double size = i == 0 ? fabs(a * (2 * q + 1)) + fabs(b * q) +
                                   fabs(2 * a * p) + fabs(b * p)
                                 : fabs(jac[i][j]);
            expect_near(cc, "jacobian", 2 * i + j, v[11 + 2 * i + j],
                        jac[i][j], 1e-14 * size);
        }
    /* the copied rows are exact */
    ck_assert(v[17] == 1 && v[18] == 0 && v[19] == 0 && v[20] == 0);
    /* grad = seed^T J: p gets the direct path from b and from the copy as
     * well as the ones through a; u's seed reaches nothing */
    for (int j = 0; j < 2; j++) {
        double want = 0, size = 0;
        for (int i = 0; i < 5; i++) {
            want += mix_seed[i] * jac[i][j];
            size += fabs(mix_seed[i] * jac[i][j]);
        }
        expect_near(cc, "adjoint", j, v[21 + j], want, 1e-14 * size);
    }
}

START_TEST(outputs_copied_read_and_reordered)
{
    char *dir = tu_tmpdir();
    free(build(dir, "mix", mix_model, ""));
    char *h = tu_read_in(dir, "mix.h");
    expect_has(h, "typedef struct mix_output {\n    double c;\n    double b;\n"
                  "    double a;\n    double p;\n    double u;\n} mix_output;");
    char *driver = tu_format(
        "#include \"mix.h\"\n#include <stddef.h>\n#include <stdio.h>\n"
        "#define P(v) printf(\"%%.17g\\n\", (double)(v))\n"
        "#define AT(m) P(offsetof(mix_output, m) / sizeof(double))\n"
        "int main(void)\n{\n"
        "    const mix_param p = {%.17g, %.17g};\n"
        "    const mix_input in = {%.17g};\n"
        "    const mix_output seed = {%.17g, %.17g, %.17g, %.17g, %.17g};\n"
        "    mix_output_flat out;\n"
        "    mix_param g;\n"
        "    double jac[MIX_OUTPUT_COUNT][MIX_PARAM_COUNT];\n"
        "    AT(c); AT(b); AT(a); AT(p); AT(u);\n"
        "    P(MIX_OUTPUT_COUNT);\n"
        "    mix_value(&p, &in, &out.o);\n"
        "    for (int i = 0; i < MIX_OUTPUT_COUNT; i++) P(out.v[i]);\n"
        "    mix_jacobian(&p, &in, &out.o, jac);\n"
        "    for (int i = 0; i < MIX_OUTPUT_COUNT; i++) {\n"
        "        P(jac[i][0]); P(jac[i][1]);\n"
        "    }\n"
        "    mix_adjoint(&p, &in, &seed, &out.o, &g);\n"
        "    P(g.p); P(g.q);\n"
        "    return 0;\n}\n", mix_at[0], mix_at[1], mix_at[2], mix_seed[0],
        mix_seed[1], mix_seed[2], mix_seed[3], mix_seed[4]);
    tu_write_in(dir, "driver.c", driver);
    run_driver(dir, "mix", MIX_REALS, check_mix);
    free(driver);
    free(h);
    tu_rmdir(dir);
    free(dir);
}
END_TEST

/* ------------------------------------ outputs no param reaches */

/* y = a u^2 depends on a; z = exp(u) on no param; b affects nothing. */
static const char calm_model[] =
    "param a, b\ninput u\ny = a*u^2\nz = exp(u)\noutput y, z\n";

/* Every result starts as 0x5a bytes, so a member left unwritten shows.
 * The driver prints the value, the tangent's dout along (1.3, -0.7), the
 * adjoint's grad for the seed (2, 5) and the jacobian row by row. */
static const char calm_driver[] =
    "#include \"calm.h\"\n#include <stdio.h>\n#include <string.h>\n"
    "#define P(v) printf(\"%.17g\\n\", (v))\n"
    "int main(void)\n{\n"
    "    const calm_param p = {1.5, -2.0}, dir = {1.3, -0.7};\n"
    "    const calm_input in = {0.6};\n"
    "    const calm_output seed = {2.0, 5.0};\n"
    "    calm_output out, dout;\n"
    "    calm_param g;\n"
    "    double jac[CALM_OUTPUT_COUNT][CALM_PARAM_COUNT];\n"
    "    memset(&dout, 0x5a, sizeof dout);\n"
    "    memset(&g, 0x5a, sizeof g);\n"
    "    memset(jac, 0x5a, sizeof jac);\n"
    "    calm_value(&p, &in, &out);\n"
    "    P(out.y); P(out.z);\n"
    "    calm_tangent(&p, &in, &dir, &out, &dout);\n"
    "    P(dout.y); P(dout.z);\n"
    "    calm_adjoint(&p, &in, &seed, &out, &g);\n"
    "    P(g.a); P(g.b);\n"
    "    calm_jacobian(&p, &in, &out, jac);\n"
    "    P(jac[0][0]); P(jac[0][1]); P(jac[1][0]); P(jac[1][1]);\n"
    "    return 0;\n}\n";

/* At a = 1.5, u = 0.6: y = a u^2, dy/da = u^2, and nothing else moves:
 * dz and the column of b are exactly zero. */
static void check_calm(const char *cc, const double *v)
{
    double u2 = 0.6 * 0.6;
    expect_near(cc, "value", 0, v[0], 1.5 * u2, 1e-15);
    expect_near(cc, "value", 1, v[1], exp(0.6), 1e-14 * exp(0.6));
    expect_near(cc, "tangent", 0, v[2], 1.3 * u2, 1e-15);
    expect_near(cc, "adjoint", 0, v[4], 2.0 * u2, 1e-15);
    expect_near(cc, "jacobian", 0, v[6], u2, 1e-15);
    ck_assert_msg(v[3] == 0 && v[5] == 0 && v[7] == 0 && v[8] == 0 &&
                  v[9] == 0, "%s: a zero derivative is not zero", cc);
}

/* Both outputs read only the input; k reaches nothing. */
static const char still_model[] =
    "param k\ninput u\ny = u * 2\nz = u + 1\noutput y, z\n";

static void check_still(const char *cc, const double *v)
{
    expect_near(cc, "value", 0, v[0], 1.2, 1e-15);
    expect_near(cc, "value", 1, v[1], 1.6, 1e-15);
    for (int k = 2; k < 7; k++)
        ck_assert_msg(v[k] == 0, "%s: entry %d is %g, not zero", cc, k, v[k]);
}

START_TEST(output_without_params)
{
    /* the tangent may not be emitted by default: ask for every kind */
    const char *emit = "--emit value,adjoint,tangent,jacobian";
    char *dir = tu_tmpdir();
    char *err = build(dir, "calm", calm_model, emit);
    expect_has(err, "calm.dvs:1:10: warning: param 'b' affects no output; "
                    "its column of the Jacobian is always zero\n");
    tu_write_in(dir, "driver.c", calm_driver);
    run_driver(dir, "calm", 10, check_calm);
    free(err);
    tu_rmdir(dir);
    free(dir);

    dir = tu_tmpdir();
    err = build(dir, "still", still_model, emit);
    expect_has(err, "still.dvs:5:8: warning: no output depends on any param; "
                    "the Jacobian is zero\n");
    tu_write_in(dir, "driver.c",
        "#include \"still.h\"\n#include <stdio.h>\n#include <string.h>\n"
        "#define P(v) printf(\"%.17g\\n\", (v))\n"
        "int main(void)\n{\n"
        "    const still_param p = {0.5}, dir = {1.0};\n"
        "    const still_input in = {0.6};\n"
        "    const still_output seed = {1.0, 1.0};\n"
        "    still_output out, dout;\n"
        "    still_param g;\n"
        "    double jac[STILL_OUTPUT_COUNT][STILL_PARAM_COUNT];\n"
        "    memset(&dout, 0x5a, sizeof dout);\n"
        "    memset(&g, 0x5a, sizeof g);\n"
        "    memset(jac, 0x5a, sizeof jac);\n"
        "    still_tangent(&p, &in, &dir, &out, &dout);\n"
        "    still_adjoint(&p, &in, &seed, &out, &g);\n"
        "    still_jacobian(&p, &in, &out, jac);\n"
        "    P(out.y); P(out.z); P(dout.y); P(dout.z); P(g.k);\n"
        "    P(jac[0][0]); P(jac[1][0]);\n"
        "    return 0;\n}\n");
    run_driver(dir, "still", 7, check_still);
    free(err);
    tu_rmdir(dir);
    free(dir);
}
END_TEST

/* --------------------------------------------- a sized model */

/* A fit's summary over n rows: the sum of squared residuals and the
 * largest residual. */
static const char sized_model[] =
    "size n\n"
    "input t[n], y[n]\n"
    "param a, b\n"
    "r[i] = a*exp(-b*t[i]) - y[i]\n"
    "s = sum(i: r[i]^2)\n"
    "m = max(i: r[i])\n"
    "output s, m\n";

/* Invented rows; the largest residual is row 3 by a margin of 0.2. */
#define SIZED_ROWS 7
static const double sized_t[SIZED_ROWS] = {0.0, 0.3, 0.7, 1.2, 1.6, 2.1, 2.9};
static const double sized_y[SIZED_ROWS] = {1.62, 1.31, 1.02, 0.35, 0.49, 0.21,
                                           0.19};
static const double sized_ab[2] = {1.8, 0.9};
static const double sized_seed[2] = {0.5, -2.0};   /* on s, m */
static const double sized_dir[2] = {0.8, -1.3};    /* on a, b */

/* The driver prints its own direct computation of s and m, the value,
 * the adjoint's grad, the tangent's dout, the jacobian's out and entries,
 * and then, for size -1, the work count and for value, adjoint, tangent
 * and jacobian whether every output is NaN and every other result still
 * holds its 0x5a bytes. */
#define SIZED_REALS (2 + 2 + 2 + 2 + 2 + 4 + 1 + 8)

/* By hand, with e_i = exp(-b t_i) and r_i = a e_i - y_i:
 *   ds/da = sum 2 r_i e_i,  ds/db = sum 2 r_i (-a t_i e_i),
 *   dm/da = e_k,  dm/db = -a t_k e_k  with k the row of the largest r. */
static void check_sized(const char *cc, const double *v)
{
    double a = sized_ab[0], b = sized_ab[1];
    double jac[2][2] = {{0, 0}, {0, 0}}, size[2][2] = {{0, 0}, {0, 0}};
    double s = 0, m = -HUGE_VAL;
    int k = 0;
    for (int i = 0; i < SIZED_ROWS; i++) {
        double e = exp(-b * sized_t[i]), r = a * e - sized_y[i];
        s += r * r;
        jac[0][0] += 2 * r * e;
        jac[0][1] += 2 * r * (-a * sized_t[i] * e);
        size[0][0] += fabs(2 * r * e);
        size[0][1] += fabs(2 * r * a * sized_t[i] * e);
        if (r > m) {
            m = r;
            k = i;
        }
    }
    ck_assert_int_eq(k, 3);
    jac[1][0] = exp(-b * sized_t[k]);
    jac[1][1] = -a * sized_t[k] * exp(-b * sized_t[k]);
    size[1][0] = fabs(jac[1][0]);
    size[1][1] = fabs(jac[1][1]);
    /* the driver's direct computation, then the emitted value */
    expect_near(cc, "direct s", 0, v[0], s, 1e-14 * s);
    expect_near(cc, "direct m", 0, v[1], m, 1e-14);
    expect_near(cc, "value s", 0, v[2], v[0], 1e-14 * s);
    expect_near(cc, "value m", 0, v[3], v[1], 1e-15);
    for (int j = 0; j < 2; j++) {
        double want = sized_seed[0] * jac[0][j] + sized_seed[1] * jac[1][j];
        double bound = 1e-13 * (fabs(sized_seed[0]) * size[0][j] +
                                fabs(sized_seed[1]) * size[1][j]);
        expect_near(cc, "adjoint", j, v[4 + j], want, bound);
        want = jac[j][0] * sized_dir[0] + jac[j][1] * sized_dir[1];
        bound = 1e-13 * (size[j][0] * fabs(sized_dir[0]) +
                         size[j][1] * fabs(sized_dir[1]));
        expect_near(cc, "tangent", j, v[6 + j], want, bound);
    }
    ck_assert(v[8] == v[2] && v[9] == v[3]);
    for (int i = 0; i < 2; i++)
        for (int j = 0; j < 2; j++)
            expect_near(cc, "jacobian", 2 * i + j, v[10 + 2 * i + j],
                        jac[i][j], 1e-13 * size[i][j]);
    ck_assert_msg(v[14] == 0, "%s: work count %g for size -1", cc, v[14]);
    for (int f = 0; f < 4; f++)
        ck_assert_msg(v[15 + 2 * f] == 1 && v[16 + 2 * f] == 1, "%s: size -1, "
                      "function %d: outputs NaN %g, rest untouched %g", cc, f,
                      v[15 + 2 * f], v[16 + 2 * f]);
}

START_TEST(sized_model_outputs)
{
    char *dir = tu_tmpdir();
    free(build(dir, "fit", sized_model,
               "--emit value,adjoint,tangent,jacobian"));
    char *t = c_list(sized_t, SIZED_ROWS), *y = c_list(sized_y, SIZED_ROWS);
    char *driver = tu_format(
        "#include \"fit.h\"\n#include <math.h>\n#include <stdio.h>\n"
        "#include <stdlib.h>\n#include <string.h>\n"
        "#define P(v) printf(\"%%.17g\\n\", (double)(v))\n"
        "#define SET(x) memset(&(x), 0x5a, sizeof (x))\n"
        "/* every byte of x is still 0x5a */\n"
        "static int untouched(const void *x, size_t n)\n{\n"
        "    const unsigned char *b = x;\n"
        "    for (size_t i = 0; i < n; i++)\n"
        "        if (b[i] != 0x5a)\n            return 0;\n"
        "    return 1;\n}\n"
        "#define KEPT(x) untouched(&(x), sizeof (x))\n"
        "#define NANS(o) P(isnan((o).s) && isnan((o).m))\n"
        "int main(void)\n{\n"
        "    static const double t[] = {%s}, y[] = {%s};\n"
        "    const fit_param p = {%.17g, %.17g}, dir = {%.17g, %.17g};\n"
        "    const fit_output seed = {%.17g, %.17g};\n"
        "    fit_input in = {%d, t, y};\n"
        "    fit_output out, dout;\n"
        "    fit_param g;\n"
        "    double jac[FIT_OUTPUT_COUNT][FIT_PARAM_COUNT];\n"
        "    double s = 0, m = -HUGE_VAL;\n"
        "    for (int i = 0; i < %d; i++) {\n"
        "        double r = p.a * exp(-p.b * t[i]) - y[i];\n"
        "        s += r * r;\n"
        "        m = r > m ? r : m;\n"
        "    }\n"
        "    P(s); P(m);\n"
        "    double *work = malloc((fit_work_count(&in) + 1) * sizeof *work);\n"
        "    fit_value(&p, &in, &out, work);\n"
        "    P(out.s); P(out.m);\n"
        "    fit_adjoint(&p, &in, &seed, &out, &g, work);\n"
        "    P(g.a); P(g.b);\n"
        "    fit_tangent(&p, &in, &dir, &out, &dout, work);\n"
        "    P(dout.s); P(dout.m);\n"
        "    fit_jacobian(&p, &in, &out, jac, work);\n"
        "    P(out.s); P(out.m);\n"
        "    P(jac[0][0]); P(jac[0][1]); P(jac[1][0]); P(jac[1][1]);\n"
        "    in.n = -1;\n"
        "    P(fit_work_count(&in));\n"
        "    fit_value(&p, &in, &out, work);\n"
        "    NANS(out); P(1);\n"
        "    SET(g); fit_adjoint(&p, &in, &seed, &out, &g, work);\n"
        "    NANS(out); P(KEPT(g));\n"
        "    SET(dout); fit_tangent(&p, &in, &dir, &out, &dout, work);\n"
        "    NANS(out); P(KEPT(dout));\n"
        "    SET(jac); fit_jacobian(&p, &in, &out, jac, work);\n"
        "    NANS(out); P(KEPT(jac));\n"
        "    free(work);\n"
        "    return 0;\n}\n", t, y, sized_ab[0], sized_ab[1], sized_dir[0],
        sized_dir[1], sized_seed[0], sized_seed[1], SIZED_ROWS, SIZED_ROWS);
    tu_write_in(dir, "driver.c", driver);
    run_driver(dir, "fit", SIZED_REALS, check_sized);
    free(driver);
    free(t);
    free(y);
    tu_rmdir(dir);
    free(dir);
}
END_TEST

/* ---------------------------------------------- parts and float */

/* A sized fit with four outputs, one of them a param, for the three
 * builds compared below. */
static const char decay_model[] =
    "size n\n"
    "input t[n], y[n]\n"
    "param a, b, c\n"
    "r[i] = a*exp(-b*t[i]) + c - y[i]\n"
    "s = sum(i: r[i]^2) / n\n"
    "g = sigmoid(a - c) * s\n"
    "lo = min(i: r[i])\n"
    "output s, g, lo, c\n";

/* The driver, for REAL double or float: the value, the adjoint's grad for
 * a seed, the tangent's dout along a direction, and the jacobian's out
 * and entries.  Invented rows; every printed entry is at least 0.01 in
 * magnitude or exactly 0 or 1. */
static const char decay_driver[] =
    "#include \"decay.h\"\n#include <stdio.h>\n#include <stdlib.h>\n"
    "#define P(v) printf(\"%.17g\\n\", (double)(v))\n"
    "int main(void)\n{\n"
    "    static const REAL t[] = {(REAL)0.2, (REAL)0.5, (REAL)0.9, (REAL)1.4,\n"
    "                             (REAL)2.0, (REAL)2.7};\n"
    "    static const REAL y[] = {(REAL)1.75, (REAL)1.41, (REAL)1.36,\n"
    "                             (REAL)0.93, (REAL)0.52, (REAL)0.61};\n"
    "    const decay_input in = {6, t, y};\n"
    "    const decay_param p = {(REAL)1.4, (REAL)0.6, (REAL)0.3};\n"
    "    const decay_param dir = {(REAL)0.8, (REAL)-1.3, (REAL)0.5};\n"
    "    const decay_output seed = {(REAL)0.5, (REAL)-2.0, (REAL)1.5,\n"
    "                               (REAL)0.75};\n"
    "    decay_output_flat out, dout;\n"
    "    decay_param_flat g;\n"
    "    REAL jac[DECAY_OUTPUT_COUNT][DECAY_PARAM_COUNT];\n"
    "    REAL *work = malloc((decay_work_count(&in) + 1) * sizeof *work);\n"
    "    decay_value(&p, &in, &out.o, work);\n"
    "    for (int i = 0; i < DECAY_OUTPUT_COUNT; i++) P(out.v[i]);\n"
    "    decay_adjoint(&p, &in, &seed, &out.o, &g.p, work);\n"
    "    for (int j = 0; j < DECAY_PARAM_COUNT; j++) P(g.v[j]);\n"
    "    decay_tangent(&p, &in, &dir, &out.o, &dout.o, work);\n"
    "    for (int i = 0; i < DECAY_OUTPUT_COUNT; i++) P(dout.v[i]);\n"
    "    decay_jacobian(&p, &in, &out.o, jac, work);\n"
    "    for (int i = 0; i < DECAY_OUTPUT_COUNT; i++) {\n"
    "        P(out.v[i]);\n"
    "        for (int j = 0; j < DECAY_PARAM_COUNT; j++) P(jac[i][j]);\n"
    "    }\n"
    "    free(work);\n"
    "    return 0;\n}\n";

#define DECAY_REALS (4 + 3 + 4 + 4 * 4)

/* Build decay in DIR/SUB with OPTIONS, beside its driver for REAL. */
static void decay_build(const char *dir, const char *sub, const char *options,
                        const char *real)
{
    char *where = tu_format("%s/%s", dir, sub);
    ck_assert_int_eq(mkdir(where, 0700), 0);
    free(build(where, "decay", decay_model, options));
    char *driver = tu_format("#define REAL %s\n%s", real, decay_driver);
    tu_write_in(where, "driver.c", driver);
    free(driver);
    free(where);
}

/* What a float build must also compile cleanly under. */
#define FLOAT_WARNINGS "-Wdouble-promotion -Wfloat-conversion"

/* Compile DIR/SUB's decay driver with compiler CC under the strict flags
 * and EXTRA, run it and return what it prints (malloc'd). */
static char *decay_run(const char *dir, const char *sub, const char *cc,
                       const char *extra)
{
    char *err = NULL, *out = NULL;
    char *cmd = tu_format("cd '%s/%s' && %s " TU_STRICT " %s -O1 -o driver-%s "
                          "driver.c decay.c -lm && ./driver-%s", dir, sub, cc,
                          extra, cc, cc);
    int rc = tu_run(cmd, &out, &err);
    ck_assert_msg(rc == 0 && err && err[0] == '\0', "%s in %s: status %d\n%s",
                  cc, sub, rc, err ? err : "");
    free(cmd);
    free(err);
    return out;
}

START_TEST(parts_and_float)
{
    char *dir = tu_tmpdir();
    const char *emit = "--emit value,adjoint,tangent,jacobian";
    char *opts = tu_format("%s --part-size 1", emit);
    decay_build(dir, "whole", emit, "double");
    decay_build(dir, "parts", opts, "double");
    free(opts);
    opts = tu_format("%s --real float", emit);
    decay_build(dir, "float", opts, "float");
    free(opts);
    char *c = tu_read_in(dir, "parts/decay.c");
    char *w = tu_read_in(dir, "whole/decay.c");
    expect_has(c, "static void dvs_adjoint_part1(");
    ck_assert_ptr_null(strstr(w, "_part1("));
    free(c);
    free(w);
    int ran = 0;
    for (size_t k = 0; k < sizeof tu_compilers / sizeof *tu_compilers; k++) {
        const char *cc = tu_compilers[k];
        if (!tu_have(cc))
            continue;
        ran++;
        char *whole = decay_run(dir, "whole", cc, "");
        char *parts = decay_run(dir, "parts", cc, "");
        char *single = decay_run(dir, "float", cc, FLOAT_WARNINGS);
        /* the parts compute the very same operations */
        ck_assert_msg(strcmp(whole, parts) == 0, "%s: parts differ:\n%s\n"
                      "whole:\n%s", cc, parts, whole);
        double *d = read_reals(whole, DECAY_REALS);
        double *f = read_reals(single, DECAY_REALS);
        for (int i = 0; i < DECAY_REALS; i++) {
            ck_assert_msg(d[i] == 0 || d[i] == 1 || fabs(d[i]) >= 0.01,
                          "entry %d is %g: pick other points", i, d[i]);
            /* Float rounds each of the few dozen operations behind an
             * entry to 6e-8 relative; entries are at least 0.01, so 1e-5
             * relative leaves margin yet catches any wrong term. */
            expect_near(cc, "float vs double", i, f[i], d[i],
                        1e-5 * fabs(d[i]));
        }
        free(d);
        free(f);
        free(whole);
        free(parts);
        free(single);
    }
    ck_assert_msg(ran > 0, "neither gcc nor clang was found");
    tu_rmdir(dir);
    free(dir);
}
END_TEST

/* ------------------------------------------------ --emit rules */

/* dervish build with ARGS in a fresh directory holding only FILE (from
 * MODEL) must fail with status 1, print exactly WANT and write nothing. */
static void expect_refused(const char *file, const char *model,
                           const char *args, const char *want)
{
    char *dir = tu_tmpdir(), *err = NULL;
    tu_write_in(dir, file, model);
    int rc = tu_run_dervish(dir, NULL, &err, "build %s %s", args, file);
    ck_assert_msg(rc == 1, "build %s: status %d", args, rc);
    ck_assert_str_eq(err, want);
    char *listing = tu_format("%s\n", file);
    tu_expect_listing(dir, listing);
    free(listing);
    free(err);
    tu_rmdir(dir);
    free(dir);
}

START_TEST(emit_kinds_against_outputs)
{
    static const char *const scalar_only[] = {"gradient", "hessvec",
                                              "hessian"};
    for (int k = 0; k < 3; k++) {
        char *args = tu_format("--emit value,%s", scalar_only[k]);
        char *want = tu_format(
            "arm.dvs:5:1: error: --emit %s needs one scalar output, and this "
            "model's outputs fill a struct: emit adjoint (the gradient of "
            "any weighting of the outputs) or jacobian\n"
            "    output x, y\n    ^~~~~~~~~~~\n"
            "arm.dvs: 1 error; nothing written\n", scalar_only[k]);
        expect_refused("arm.dvs", arm_model, args, want);
        free(args);
        free(want);
    }
    static const char *const struct_only[] = {"adjoint", "jacobian"};
    for (int k = 0; k < 2; k++) {
        char *args = tu_format("--emit %s", struct_only[k]);
        char *want = tu_format(
            "one.dvs:3:8: error: --emit %s is for models whose outputs are "
            "not one scalar; 'y' is one: emit gradient (or tangent)\n"
            "    output y\n           ^\n"
            "one.dvs: 1 error; nothing written\n", struct_only[k]);
        expect_refused("one.dvs", "param a\ny = a^2\noutput y\n", args, want);
        free(args);
        free(want);
    }

    /* defaults: value, adjoint, jacobian and the sweep the jacobian uses */
    char *dir = tu_tmpdir();
    char *err = build(dir, "arm", arm_model, "");
    ck_assert_str_eq(err, "");
    char *h = tu_read_in(dir, "arm.h");
    expect_has(h, "/* arm.h - value, adjoint, tangent and jacobian of the "
                  "model arm (arm.dvs).");
    expect_has(h, "\nvoid arm_value(const arm_param *p, const arm_input *in, "
                  "arm_output *out);\n");
    expect_has(h, "\nvoid arm_adjoint(const arm_param *p, const arm_input *in, "
                  "const arm_output *seed, arm_output *out, arm_param *grad);\n");
    expect_has(h, "\nvoid arm_tangent(const arm_param *p, const arm_input *in, "
                  "const arm_param *dir, arm_output *out, arm_output *dout);\n");
    expect_has(h, "\nvoid arm_jacobian(const arm_param *p, const arm_input *in, "
                  "arm_output *out, double "
                  "jac[ARM_OUTPUT_COUNT][ARM_PARAM_COUNT]);\n");
    ck_assert_int_eq(declarations(h), 4);
    free(h);
    free(err);
    err = build(dir, "wide", wide_model, "");
    h = tu_read_in(dir, "wide.h");
    expect_has(h, "/* wide.h - value, adjoint and jacobian of the model wide "
                  "(wide.dvs).");
    expect_has(h, "\nvoid wide_value(");
    expect_has(h, "\nvoid wide_adjoint(");
    expect_has(h, "\nvoid wide_jacobian(");
    ck_assert_int_eq(declarations(h), 3);
    free(h);
    free(err);
    tu_rmdir(dir);
    free(dir);
}
END_TEST

/* ---------------------------------------------- dervish check */

START_TEST(check_struct_outputs)
{
    char *dir = tu_tmpdir(), *out = NULL, *err = NULL;
    tu_write_in(dir, "arm.dvs", arm_model);
    int rc = tu_run_dervish(dir, &out, &err, "check arm.dvs");
    ck_assert_msg(rc == 0, "check: status %d\n%s%s", rc, out, err);
    expect_has(out, "the weighted sum");
    expect_has(out, "check: 2 of 2 derivatives agree");
    expect_has(out, "check: the Jacobian's rows and columns agree");
    free(out);
    free(err);
    tu_rmdir(dir);
    free(dir);
}
END_TEST

/* --------------------------- published problems in residual form */

/* Moré, Garbow & Hillstrom (1981) define their test functions as sums of
 * squares of residuals f_i(x): here two of them with the residuals as the
 * outputs, at the paper's standard start x0.  The sum of the squared
 * outputs must be the published f(x0) (19192 for Wood and 215 for Powell's
 * singular function, recalled from the paper, and each also follows from
 * the residuals below by hand), and the Jacobian the hand-differentiated
 * one.
 *
 * Problem 14 (Wood), x0 = (-3, -1, -3, -1): f1 = 10 (x2 - x1^2),
 * f2 = 1 - x1, f3 = sqrt(90) (x4 - x3^2), f4 = 1 - x3,
 * f5 = sqrt(10) (x2 + x4 - 2), f6 = (x2 - x4) / sqrt(10); rows of J:
 * (-20 x1, 10, 0, 0) = (60, 10, 0, 0), (-1, 0, 0, 0),
 * (0, 0, -2 sqrt(90) x3, sqrt(90)) = (0, 0, 6 sqrt(90), sqrt(90)),
 * (0, 0, -1, 0), (0, sqrt(10), 0, sqrt(10)),
 * (0, 1/sqrt(10), 0, -1/sqrt(10)).
 *
 * Problem 13 (Powell singular), x0 = (3, -1, 0, 1): f1 = x1 + 10 x2,
 * f2 = sqrt(5) (x3 - x4), f3 = (x2 - 2 x3)^2, f4 = sqrt(10) (x1 - x4)^2;
 * rows of J: (1, 10, 0, 0), (0, 0, sqrt(5), -sqrt(5)),
 * (0, 2 (x2 - 2 x3), -4 (x2 - 2 x3), 0) = (0, -2, 4, 0),
 * (2 sqrt(10) (x1 - x4), 0, 0, -2 sqrt(10) (x1 - x4))
 * = (4 sqrt(10), 0, 0, -4 sqrt(10)).  The square roots are written to 17
 * digits from python3-mpmath at 30 digits. */
typedef struct Residuals {
    const char *name, *model, *x0;
    int nout;
    double f0;              /* the published sum of squares at x0 */
    double jac[6][4];
} Residuals;

static const Residuals mgh[2] = {
    {"wood",
     "param x1, x2, x3, x4\n"
     "f1 = 10 * (x2 - x1^2)\nf2 = 1 - x1\nf3 = sqrt(90) * (x4 - x3^2)\n"
     "f4 = 1 - x3\nf5 = sqrt(10) * (x2 + x4 - 2)\nf6 = (x2 - x4) / sqrt(10)\n"
     "output f1, f2, f3, f4, f5, f6\n",
     "-3, -1, -3, -1", 6, 19192,
     {{60, 10, 0, 0}, {-1, 0, 0, 0}, {0, 0, 56.920997883030828, 9.4868329805051380},
      {0, 0, -1, 0}, {0, 3.1622776601683793, 0, 3.1622776601683793},
      {0, 0.31622776601683793, 0, -0.31622776601683793}}},
    {"powell",
     "param x1, x2, x3, x4\n"
     "f1 = x1 + 10 * x2\nf2 = sqrt(5) * (x3 - x4)\nf3 = (x2 - 2 * x3)^2\n"
     "f4 = sqrt(10) * (x1 - x4)^2\n"
     "output f1, f2, f3, f4\n",
     "3, -1, 0, 1", 4, 215,
     {{1, 10, 0, 0}, {0, 0, 2.2360679774997897, -2.2360679774997897},
      {0, -2, 4, 0}, {12.649110640673517, 0, 0, -12.649110640673517}}},
};

static int mgh_case;

/* The driver prints the sum of the squared outputs, then J row by row. */
static void check_mgh(const char *cc, const double *v)
{
    const Residuals *r = &mgh[mgh_case];
    expect_near(cc, "sum of squares", 0, v[0], r->f0, 1e-12 * r->f0);
    for (int i = 0; i < r->nout; i++)
        for (int k = 0; k < 4; k++)
            expect_near(cc, "jacobian", 4 * i + k, v[1 + 4 * i + k],
                        r->jac[i][k], 1e-14 * fabs(r->jac[i][k]));
}

START_TEST(mgh_residual_jacobians)
{
    mgh_case = _i;
    const Residuals *r = &mgh[_i];
    char *dir = tu_tmpdir();
    free(build(dir, r->name, r->model, ""));
    char *driver = tu_format(
        "#include \"%s.h\"\n#include <stdio.h>\n"
        "int main(void)\n{\n"
        "    %s_param_flat x = {{%s}};\n"
        "    %s_output_flat f;\n"
        "    double jac[%d][4], ss = 0;\n"
        "    %s_jacobian(&x.p, &f.o, jac);\n"
        "    for (int i = 0; i < %d; i++)\n"
        "        ss += f.v[i] * f.v[i];\n"
        "    printf(\"%%.17g\\n\", ss);\n"
        "    for (int i = 0; i < %d; i++)\n"
        "        for (int k = 0; k < 4; k++)\n"
        "            printf(\"%%.17g\\n\", jac[i][k]);\n"
        "    return 0;\n}\n",
        r->name, r->name, r->x0, r->name, r->nout, r->name, r->nout, r->nout);
    tu_write_in(dir, "driver.c", driver);
    run_driver(dir, r->name, 1 + 4 * r->nout, check_mgh);
    free(driver);
    tu_rmdir(dir);
    free(dir);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("jacobian");
    TU_ADD_TESTS(tu_case(s, "jacobian", 60), two_link_arm_jacobian,
                 array_output_residuals, reverse_chosen_for_few_outputs,
                 outputs_copied_read_and_reordered, output_without_params,
                 sized_model_outputs, parts_and_float,
                 emit_kinds_against_outputs, check_struct_outputs);
    TCase *published = tu_case(s, "published", 60);
    tcase_add_loop_test(published, mgh_residual_jacobians, 0, 2);
    return tu_main(s);
}
