/* test_defuse.c - def functions and use statements: values and gradients
 * of expanded defs against closed forms, expansion as plain substitution,
 * the diagnostics of defs, and how used files are found (beside the file
 * using them, then along -I), read once, refused in a cycle, and named in
 * messages.
 *
 * Derivatives are the elementary ones of calculus; where a handbook form
 * is used it is named beside the check (Abramowitz and Stegun 1964,
 * chapter 4, section numbers recalled from memory). */
#include "testutil.h"

#include "eval.h"

#include <math.h>

/* ------------------------------------------------------------ helpers */

static void set1(TuModel *m, const char *name, double v)
{
    tu_model_set(m, name, &v, 1);
}

/* The gradient (malloc'd) and in *value the output, at the values set. */
static double *gradient(TuModel *m, double *value)
{
    long n = eval_param_count(m->ev);
    double *g = calloc((size_t)n, sizeof *g);
    ck_assert_ptr_nonnull(g);
    *value = eval_gradient(m->ev, g);
    return g;
}

/* |got - want| <= tol * max(1, |want|). */
static void assert_near(double got, double want, double tol, const char *what)
{
    ck_assert_msg(fabs(got - want) <= tol * fmax(1.0, fabs(want)),
                  "%s: got %.17g, want %.17g", what, got, want);
}

/* Compile TEXT, read as the file PATH, with the -I directories DIRS;
 * returns the diagnostics printed (malloc'd), *rc the result, and leaves
 * the compilation in *c (release it with dv_free). */
static char *compile_in(DvCompilation *c, const char *path, const char *text,
                        const char *const *dirs, int ndirs, int *rc)
{
    TuCapture cap;
    DvOptions opt;
    memset(&opt, 0, sizeof opt);
    opt.diag_out = tu_capture_open(&cap);
    opt.include_dirs = dirs;
    opt.ninclude = ndirs;
    *rc = dv_compile(c, path, text, strlen(text), &opt);
    char *diag = tu_capture_close(&cap);
    c->diag.out = NULL;
    return diag;
}

/* The diagnostics of model TEXT (as t.dvs), which must fail to compile. */
static char *errors_of(const char *text)
{
    DvCompilation c;
    int rc;
    char *diag = compile_in(&c, "t.dvs", text, NULL, 0, &rc);
    ck_assert_msg(rc != 0, "expected errors from:\n%s", text);
    dv_free(&c);
    return diag;
}

static void assert_errors(const char *text, const char *want)
{
    char *got = errors_of(text);
    ck_assert_msg(strcmp(got, want) == 0, "model:\n%s\ngot:\n%s\nwant:\n%s",
                  text, got, want);
    free(got);
}

/* Write TEXT to DIR/NAME, making the directories NAME names on the way. */
static void put(const char *dir, const char *name, const char *text)
{
    char *path = tu_format("%s/%s", dir, name);
    for (char *slash = strchr(path + strlen(dir) + 1, '/'); slash;
         slash = strchr(slash + 1, '/')) {
        *slash = '\0';
        mkdir(path, 0700);
        *slash = '/';
    }
    tu_write(path, text);
    free(path);
}

/* Compile the model file DIR/NAME through the library with -I DIRS
 * (relative to DIR: the test changes into it); returns the diagnostics
 * (malloc'd) and in *rc the result.  The compilation stays in *c. */
static char *compile_file_in(DvCompilation *c, const char *dir,
                             const char *name, const char *const *dirs,
                             int ndirs, int *rc)
{
    char *path = tu_format("%s/%s", dir, name);
    char *text = tu_read(path);
    ck_assert_ptr_nonnull(text);
    char *here = getcwd(NULL, 0);
    ck_assert_int_eq(chdir(dir), 0);
    char *diag = compile_in(c, name, text, dirs, ndirs, rc);
    ck_assert_int_eq(chdir(here), 0);
    free(here);
    free(text);
    free(path);
    return diag;
}

/* The value of model DIR/NAME at a = 1 (its only param), which must
 * compile without a diagnostic, with -I DIRS. */
static double value_at_one(const char *dir, const char *name,
                           const char *const *dirs, int ndirs)
{
    DvCompilation c;
    int rc;
    char *diag = compile_file_in(&c, dir, name, dirs, ndirs, &rc);
    ck_assert_msg(rc == 0 && diag[0] == '\0', "%s:\n%s", name, diag);
    Evaluation *ev = eval_new(c.ir);
    *eval_slot(ev, "a") = 1;
    double v = eval_value(ev);
    eval_free(ev);
    dv_free(&c);
    free(diag);
    return v;
}

/* ------------------------------------------------- values and gradients */

/* The logistic function written as a def: the gradient must be the
 * closed form s(1 - s) times the inner derivative, s = 1/(1 + e^-z). */
START_TEST(logistic_def_gradient_is_the_closed_form)
{
    TuModel *m = tu_model("def logistic(z) = 1 / (1 + exp(-z))\n"
                         "input x\n"
                         "param w, b\n"
                         "y = logistic(w * x + b)\n"
                         "output y\n");
    static const double xs[] = {-3.0, -0.25, 0.0, 0.8, 12.5};
    for (size_t k = 0; k < sizeof xs / sizeof xs[0]; k++) {
        double x = xs[k], w = 0.7, b = -0.2;
        set1(m, "x", x);
        set1(m, "w", w);
        set1(m, "b", b);
        double y, *g = gradient(m, &y);
        double s = 1 / (1 + exp(-(w * x + b)));
        assert_near(y, s, 1e-15, "value");
        assert_near(g[0], s * (1 - s) * x, 1e-14, "dy/dw");
        assert_near(g[1], s * (1 - s), 1e-14, "dy/db");
        free(g);
    }
    tu_model_free(m);
}
END_TEST

/* Defs calling defs: f = a / sqrt(a^2 + b^2), whose partials are
 * b^2 / r^3 and -a b / r^3 with r = sqrt(a^2 + b^2). */
START_TEST(nested_defs)
{
    TuModel *m = tu_model("def sq(x) = x * x\n"
                         "def norm2(x, y) = sqrt(sq(x) + sq(y))\n"
                         "def cosine(x, y) = x / norm2(x, y)\n"
                         "param a, b\n"
                         "f = cosine(a, b)\n"
                         "output f\n");
    set1(m, "a", 3);
    set1(m, "b", -4);
    double f, *g = gradient(m, &f);
    assert_near(f, 3.0 / 5.0, 1e-15, "value");
    assert_near(g[0], 16.0 / 125.0, 1e-15, "df/da");
    assert_near(g[1], 12.0 / 125.0, 1e-15, "df/db");
    free(g);
    tu_model_free(m);
}
END_TEST

/* A def inside a reduction, with indexed arguments, and one applied to a
 * whole array: loss = sum_j c tanh(z_j), z_j = sum_i W_ji s_i, so
 * dloss/dW_ji = c (1 - tanh^2 z_j) s_i (A&S 4.5.? recalled; it follows
 * from cosh^2 - sinh^2 = 1) and dloss/dc = sum_j tanh z_j. */
START_TEST(defs_in_reductions_and_whole_arrays)
{
    TuModel *m = tu_model("def lin(w, x) = w * x\n"
                         "def act(u, gain) = gain * tanh(u)\n"
                         "input s[3]\n"
                         "param W[2,3], c\n"
                         "z[j] = sum(i: lin(W[j,i], s[i]))\n"
                         "h = act(z, c)\n"
                         "loss = sum(j: h[j])\n"
                         "output loss\n");
    static const double s[3] = {0.5, -1.0, 2.0};
    static const double W[2][3] = {{0.1, 0.2, -0.3}, {-0.4, 0.5, 0.25}};
    const double c = 1.75;
    tu_model_set(m, "s", s, 3);
    tu_model_set(m, "W", &W[0][0], 6);
    set1(m, "c", c);
    double loss, *g = gradient(m, &loss);
    double want = 0, dc = 0;
    for (int j = 0; j < 2; j++) {
        double z = 0;
        for (int i = 0; i < 3; i++)
            z += W[j][i] * s[i];
        want += c * tanh(z);
        dc += tanh(z);
        for (int i = 0; i < 3; i++)
            assert_near(g[3 * j + i], c * (1 - tanh(z) * tanh(z)) * s[i],
                        1e-15, "dloss/dW");
    }
    assert_near(loss, want, 1e-15, "value");
    assert_near(g[6], dc, 1e-15, "dloss/dc");
    free(g);
    tu_model_free(m);
}
END_TEST

/* A def whose body is a comparison gives a condition. */
START_TEST(def_giving_a_condition)
{
    TuModel *m = tu_model("def inside(x, lo, hi) = x >= lo && x <= hi\n"
                         "param a\n"
                         "y = inside(a, 0, 1) ? a * a : 0\n"
                         "output y\n");
    static const double as[] = {0.5, 1.0, 2.0, -0.5};
    for (size_t k = 0; k < sizeof as / sizeof as[0]; k++) {
        double a = as[k];
        set1(m, "a", a);
        double y, *g = gradient(m, &y);
        int in = a >= 0 && a <= 1;
        assert_near(y, in ? a * a : 0, 0, "value");
        assert_near(g[0], in ? 2 * a : 0, 0, "dy/da");
        free(g);
    }
    tu_model_free(m);
}
END_TEST

/* A const may call a def without conditions; the result may size an
 * array.  A parameter hides a const of the same name in the body. */
START_TEST(defs_in_constants_and_parameters_are_local)
{
    TuModel *m = tu_model("const k = 5\n"
                         "def sq(x) = x * x\n"
                         "def twice(k) = 2 * k\n"
                         "const N = sq(3) + twice(0.5)\n"
                         "param w[N]\n"
                         "y = sum(i: twice(w[i])) + k\n"
                         "output y\n");
    const IrArray *w = tu_array(m->c.ir, "w", ROLE_PARAM);
    ck_assert_int_eq(w->rank, 1);
    ck_assert_int_eq(w->dim[0], 10);
    double ones[10];
    for (int i = 0; i < 10; i++)
        ones[i] = 1;
    tu_model_set(m, "w", ones, 10);
    double y, *g = gradient(m, &y);
    assert_near(y, 25, 0, "value: sum of 2 w[i], plus k");
    for (int i = 0; i < 10; i++)
        assert_near(g[i], 2, 0, "dy/dw[i]");
    free(g);
    tu_model_free(m);
}
END_TEST

/* Expansion is substitution before lowering: a def call gives the same
 * IR, forward and reverse, as the expression written out; and an
 * argument is computed once however often the body uses it (one
 * accumulator for a sum passed in, where writing it out twice makes
 * two). */
START_TEST(expansion_is_substitution)
{
    TuModel *d = tu_model("def sq(x) = x * x\n"
                         "param a, b\n"
                         "y = sq(a + b)\n"
                         "output y\n");
    TuModel *h = tu_model("# the same model written out\n"
                         "param a, b\n"
                         "y = (a + b) * (a + b)\n"
                         "output y\n");
    char *with_def = tu_ir_text(d->c.ir), *written = tu_ir_text(h->c.ir);
    ck_assert_str_eq(with_def, written);
    free(with_def);
    free(written);
    tu_model_free(d);
    tu_model_free(h);

    TuModel *m = tu_model("def sq(x) = x * x\n"
                         "param a, w[3]\n"
                         "y = sq(a + sum(i: w[i]))\n"
                         "output y\n");
    char *ir = tu_ir_text(m->c.ir);
    ck_assert_ptr_nonnull(strstr(ir, "dvs_y_sum"));
    ck_assert_ptr_null(strstr(ir, "dvs_y_sum2"));
    free(ir);
    const double w[3] = {0.5, -0.25, 2.0};
    set1(m, "a", 0.75);
    tu_model_set(m, "w", w, 3);
    double y, *g = gradient(m, &y);
    /* (a + sum w)^2 = 3^2, and every partial is 2 (a + sum w) */
    assert_near(y, 9, 0, "value");
    for (int i = 0; i < 4; i++)
        assert_near(g[i], 6, 0, "partial");
    free(g);
    tu_model_free(m);
}
END_TEST

/* --------------------------------------------------------- diagnostics */

START_TEST(wrong_argument_count_points_at_call_and_def)
{
    assert_errors("param a\n"
                  "def mix(x, y) = x + y\n"
                  "z = mix(a)\n"
                  "output z\n",
                  "t.dvs:3:5: error: 'mix' takes 2 arguments but 1 is given\n"
                  "    z = mix(a)\n"
                  "        ^~~~~~\n"
                  "t.dvs:2:5: note: 'mix' is defined here\n"
                  "    def mix(x, y) = x + y\n"
                  "        ^~~\n");
}
END_TEST

START_TEST(recursion_direct_and_indirect)
{
    assert_errors("param a\n"
                  "def f(x) = 1 + f(x)\n"
                  "output a\n",
                  "t.dvs:2:16: error: 'f' calls itself (f -> f): a def is "
                  "expanded where it is called, so it cannot be recursive\n"
                  "    def f(x) = 1 + f(x)\n"
                  "                   ^\n");
    assert_errors("param a\n"
                  "def f(x) = g(x)\n"
                  "def g(x) = h(x) * 2\n"
                  "def h(x) = f(x) + 1\n"
                  "output a\n",
                  "t.dvs:2:12: error: 'f' calls itself (f -> g -> h -> f): a "
                  "def is expanded where it is called, so it cannot be "
                  "recursive\n"
                  "    def f(x) = g(x)\n"
                  "               ^\n"
                  "t.dvs:4:12: note: 'h' calls 'f' here\n"
                  "    def h(x) = f(x) + 1\n"
                  "               ^\n");
}
END_TEST

START_TEST(names_a_body_may_not_use)
{
    assert_errors("param a\n"
                  "def f(x) = x * k\n"
                  "output a\n",
                  "t.dvs:2:16: error: unknown name 'k': define it before "
                  "this line\n"
                  "    def f(x) = x * k\n"
                  "                   ^\n");
    assert_errors("param a\n"
                  "def f(x) = x * a\n"
                  "y = f(2)\n"
                  "output y\n",
                  "t.dvs:2:16: error: 'a' is a param of the model; a def's "
                  "body may use only its parameters, constants and functions: "
                  "pass 'a' as an argument\n"
                  "    def f(x) = x * a\n"
                  "                   ^\n"
                  "t.dvs:1:7: note: 'a' is defined here\n"
                  "    param a\n"
                  "          ^\n");
}
END_TEST

START_TEST(def_names_follow_the_name_rules)
{
    assert_errors("param a\n"
                  "def tanh(x) = x\n"
                  "def for(x) = x\n"
                  "output a\n",
                  "t.dvs:2:5: error: 'tanh' is the name of a builtin "
                  "function; choose another name\n"
                  "    def tanh(x) = x\n"
                  "        ^~~~\n"
                  "t.dvs:3:5: error: 'for' is a C keyword; choose another "
                  "name\n"
                  "    def for(x) = x\n"
                  "        ^~~\n");
    assert_errors("param a\n"
                  "def f(x) = x\n"
                  "f = a\n"
                  "output a\n",
                  "t.dvs:3:1: error: 'f' is already defined; every name is "
                  "defined once\n"
                  "    f = a\n"
                  "    ^\n"
                  "t.dvs:2:5: note: 'f' was defined here\n"
                  "    def f(x) = x\n"
                  "        ^\n");
}
END_TEST

/* --------------------------------------------------------- used files */

START_TEST(relative_resolution_and_the_files_read)
{
    char *dir = tu_tmpdir();
    put(dir, "models/m.dvs", "use \"lib/k.dvs\"\nparam a\ny = a * K\n"
                             "output y\n");
    put(dir, "models/lib/k.dvs", "use \"base.dvs\"\nconst K = 2 * B\n");
    put(dir, "models/lib/base.dvs", "const B = 3\n");
    /* a file of the same name beside the model is not the one meant */
    put(dir, "models/base.dvs", "const B = 100\n");
    DvCompilation c;
    int rc;
    char *diag = compile_file_in(&c, dir, "models/m.dvs", NULL, 0, &rc);
    ck_assert_msg(rc == 0, "%s", diag);
    ck_assert_int_eq(c.npaths, 3);
    ck_assert_str_eq(c.paths[0], "models/m.dvs");
    ck_assert_str_eq(c.paths[1], "models/lib/k.dvs");
    ck_assert_str_eq(c.paths[2], "models/lib/base.dvs");
    dv_free(&c);
    free(diag);
    ck_assert(value_at_one(dir, "models/m.dvs", NULL, 0) == 6);
    tu_rmdir(dir);
    free(dir);
}
END_TEST

START_TEST(search_order_and_missing_files)
{
    char *dir = tu_tmpdir();
    put(dir, "m.dvs", "use \"k.dvs\"\nparam a\ny = a * K\noutput y\n");
    put(dir, "first/k.dvs", "const K = 1\n");
    put(dir, "second/k.dvs", "const K = 2\n");
    const char *both[] = {"first", "second/"}, *reversed[] = {"second", "first"};
    ck_assert(value_at_one(dir, "m.dvs", both, 2) == 1);
    ck_assert(value_at_one(dir, "m.dvs", reversed, 2) == 2);
    /* beside the model comes before any -I directory */
    put(dir, "k.dvs", "const K = 3\n");
    ck_assert(value_at_one(dir, "m.dvs", both, 2) == 3);

    put(dir, "n.dvs", "use \"none.dvs\"\nparam a\ny = a * NONE\noutput y\n");
    DvCompilation c;
    int rc;
    char *diag = compile_file_in(&c, dir, "n.dvs", both, 2, &rc);
    ck_assert_int_eq(rc, 1);
    ck_assert_str_eq(diag, "n.dvs:1:5: error: cannot find 'none.dvs' (tried "
                           "none.dvs, first/none.dvs, second/none.dvs)\n"
                           "    use \"none.dvs\"\n"
                           "        ^~~~~~~~~~\n");
    ck_assert_int_eq(c.npaths, 1);
    dv_free(&c);
    free(diag);
    tu_rmdir(dir);
    free(dir);
}
END_TEST

/* Two files that both use a third, and the model that uses it again by
 * another spelling of its path: it is read once, so its names are
 * defined once. */
START_TEST(a_file_used_twice_is_read_once)
{
    char *dir = tu_tmpdir();
    put(dir, "m.dvs", "use \"a.dvs\"\nuse \"b.dvs\"\nuse \"./common.dvs\"\n"
                      "param a\ny = a * (A + B + C)\noutput y\n");
    put(dir, "a.dvs", "use \"common.dvs\"\nconst A = C\n");
    put(dir, "b.dvs", "use \"common.dvs\"\nconst B = 2 * C\n");
    put(dir, "common.dvs", "const C = 5\n");
    DvCompilation c;
    int rc;
    char *diag = compile_file_in(&c, dir, "m.dvs", NULL, 0, &rc);
    ck_assert_msg(rc == 0 && diag[0] == '\0', "%s", diag);
    ck_assert_int_eq(c.npaths, 4);
    ck_assert_str_eq(c.paths[1], "a.dvs");
    ck_assert_str_eq(c.paths[2], "common.dvs");
    ck_assert_str_eq(c.paths[3], "b.dvs");
    dv_free(&c);
    free(diag);
    ck_assert(value_at_one(dir, "m.dvs", NULL, 0) == 20);
    tu_rmdir(dir);
    free(dir);
}
END_TEST

START_TEST(cycle_of_three_files)
{
    char *dir = tu_tmpdir();
    put(dir, "a.dvs", "use \"lib/b.dvs\"\nparam p\ny = p\noutput y\n");
    put(dir, "lib/b.dvs", "use \"c.dvs\"\n");
    put(dir, "lib/c.dvs", "# closes the cycle\nuse \"../a.dvs\"\n");
    DvCompilation c;
    int rc;
    char *diag = compile_file_in(&c, dir, "a.dvs", NULL, 0, &rc);
    ck_assert_int_eq(rc, 1);
    ck_assert_str_eq(diag, "lib/c.dvs:2:5: error: the files use each other in "
                           "a cycle: a.dvs uses lib/b.dvs uses lib/c.dvs uses "
                           "a.dvs\n"
                           "    use \"../a.dvs\"\n"
                           "        ^~~~~~~~~~\n");
    dv_free(&c);
    free(diag);
    tu_rmdir(dir);
    free(dir);
}
END_TEST

/* Messages about a used file name it and its own line numbers, and a
 * statement a used file may not hold also points at the use. */
START_TEST(messages_name_the_used_file)
{
    char *dir = tu_tmpdir();
    put(dir, "m.dvs", "param a\nuse \"lib.dvs\"\ny = f(a)\noutput y\n");
    put(dir, "lib.dvs", "# helpers\ndef f(x) = x * LOST\ninput t\n");
    DvCompilation c;
    int rc;
    char *diag = compile_file_in(&c, dir, "m.dvs", NULL, 0, &rc);
    ck_assert_int_eq(rc, 1);
    ck_assert_str_eq(diag, "lib.dvs:2:16: error: unknown name 'LOST': define "
                           "it before this line\n"
                           "    def f(x) = x * LOST\n"
                           "                   ^~~~\n"
                           "lib.dvs:3:1: error: a used file may hold only "
                           "const, def and use statements, not 'input'\n"
                           "    input t\n"
                           "    ^~~~~~~\n"
                           "m.dvs:2:5: note: 'lib.dvs' is used here\n"
                           "    use \"lib.dvs\"\n"
                           "        ^~~~~~~~~\n");
    dv_free(&c);
    free(diag);
    tu_rmdir(dir);
    free(dir);
}
END_TEST

START_TEST(unreadable_used_file)
{
    char *dir = tu_tmpdir();
    put(dir, "m.dvs", "use \"lib.dvs\"\nparam a\ny = a * K\noutput y\n");
    put(dir, "lib.dvs/README", "a directory, not a model file\n");
    char *err = NULL;
    int rc = tu_dervish_capped(20, dir, &err, "build m.dvs");
    ck_assert_int_eq(rc, 1);
    ck_assert_str_eq(err, "dervish: cannot read lib.dvs: it is a directory\n"
                          "m.dvs:1:5: error: cannot read 'lib.dvs', the file "
                          "used here\n"
                          "    use \"lib.dvs\"\n"
                          "        ^~~~~~~~~\n"
                          "m.dvs: 1 error; nothing written\n");
    free(err);
    tu_rmdir(dir);
    free(dir);
}
END_TEST

/* A chain of 102 files, each using the next: the 101st use is refused. */
START_TEST(nesting_limit)
{
    char *dir = tu_tmpdir();
    put(dir, "m.dvs", "use \"f1.dvs\"\nparam a\ny = a\noutput y\n");
    for (int k = 1; k <= 101; k++) {
        char *name = tu_format("f%d.dvs", k);
        char *text = tu_format("use \"f%d.dvs\"\n", k + 1);
        put(dir, name, text);
        free(text);
        free(name);
    }
    put(dir, "f102.dvs", "const DEEP = 1\n");
    DvCompilation c;
    int rc;
    char *diag = compile_file_in(&c, dir, "m.dvs", NULL, 0, &rc);
    ck_assert_int_eq(rc, 1);
    ck_assert_str_eq(diag, "f100.dvs:1:5: error: used files nest more than "
                           "100 deep\n"
                           "    use \"f101.dvs\"\n"
                           "        ^~~~~~~~~~\n");
    ck_assert_int_eq(c.npaths, 101);
    dv_free(&c);
    free(diag);
    tu_rmdir(dir);
    free(dir);
}
END_TEST

/* -I for build, check and graph, as "-I DIR" and "-IDIR". */
START_TEST(include_option)
{
    char *dir = tu_tmpdir();
    put(dir, "m.dvs", "use \"gain.dvs\"\nparam a\ny = amplify(a)\noutput y\n");
    put(dir, "inc/gain.dvs", "def amplify(x) = 3 * x\n");
    char *err = NULL;
    ck_assert_int_eq(tu_dervish_capped(20, dir, &err, "build -I inc m.dvs"),
                     0);
    ck_assert_str_eq(err, "");
    free(err);
    char *c_text = tu_read_in(dir, "m.c");
    ck_assert_ptr_nonnull(strstr(c_text, "3.0 * dvs_p->a"));
    free(c_text);
    char *out = NULL;
    ck_assert_int_eq(tu_run_dervish(dir, &out, &err, "check -Iinc m.dvs"), 0);
    ck_assert_ptr_nonnull(strstr(out, "1 of 1 derivatives agree"));
    free(out);
    free(err);
    ck_assert_int_eq(tu_run_dervish(dir, &out, &err, "graph -I inc/ m.dvs"),
                     0);
    ck_assert_ptr_nonnull(strstr(out, "digraph"));
    free(out);
    free(err);
    /* without -I the file is not found */
    ck_assert_int_eq(tu_run_dervish(dir, NULL, &err, "check m.dvs"), 1);
    ck_assert_ptr_nonnull(strstr(err, "cannot find 'gain.dvs' (tried "
                                      "gain.dvs)"));
    free(err);
    ck_assert_int_eq(tu_run_dervish(dir, NULL, &err, "build m.dvs -I"), 2);
    ck_assert_str_eq(err, "dervish: option -I needs a value\n"
                          "(run 'dervish --help' for the options)\n");
    free(err);
    char *many = tu_format("%s", "build m.dvs");
    for (int k = 0; k < 65; k++) {
        char *more = tu_format("%s -I inc", many);
        free(many);
        many = more;
    }
    ck_assert_int_eq(tu_run_dervish(dir, NULL, &err, "%s", many), 2);
    ck_assert_str_eq(err, "dervish: at most 64 -I options\n"
                          "(run 'dervish --help' for the options)\n");
    free(err);
    free(many);
    tu_rmdir(dir);
    free(dir);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("def and use");
    TCase *defs = tu_case(s, "defs", 30);
    TU_ADD_TESTS(defs, logistic_def_gradient_is_the_closed_form, nested_defs,
                 defs_in_reductions_and_whole_arrays, def_giving_a_condition,
                 defs_in_constants_and_parameters_are_local,
                 expansion_is_substitution,
                 wrong_argument_count_points_at_call_and_def,
                 recursion_direct_and_indirect, names_a_body_may_not_use,
                 def_names_follow_the_name_rules);
    TCase *uses = tu_case(s, "uses", 60);
    TU_ADD_TESTS(uses, relative_resolution_and_the_files_read,
                 search_order_and_missing_files,
                 a_file_used_twice_is_read_once, cycle_of_three_files,
                 messages_name_the_used_file, unreadable_used_file,
                 nesting_limit, include_option);
    return tu_main(s);
}
