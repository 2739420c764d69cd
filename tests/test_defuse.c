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
 * printed (malloc'd) and in *rc the result.  The compilation stays in *c
 * (release it with dv_free). */
static char *compile_file_in(DvCompilation *c, const char *dir,
                             const char *name, const char *const *dirs,
                             int ndirs, int *rc)
{
    char *path = tu_format("%s/%s", dir, name);
    char *text = tu_read(path);
    ck_assert_ptr_nonnull(text);
    char *here = getcwd(NULL, 0);
    ck_assert_int_eq(chdir(dir), 0);
    TuCapture cap;
    DvOptions opt;
    memset(&opt, 0, sizeof opt);
    opt.diag_out = tu_capture_open(&cap);
    opt.include_dirs = dirs;
    opt.ninclude = ndirs;
    *rc = dv_compile(c, name, text, strlen(text), &opt);
    char *diag = tu_capture_close(&cap);
    c->diag.out = NULL;     /* the capture is closed: say nothing more */
    ck_assert_int_eq(chdir(here), 0);
    free(here);
    free(text);
    free(path);
    return diag;
}

/* The N paths, joined by spaces (malloc'd). */
static char *joined(const char *const *paths, int n)
{
    char *s = tu_format("%s", "");
    for (int i = 0; i < n; i++) {
        char *longer = tu_format("%s%s%s", s, i ? " " : "", paths[i]);
        free(s);
        s = longer;
    }
    return s;
}

/* A file a case writes before compiling. */
typedef struct ModelFile {
    const char *path;           /* relative to the case's directory */
    const char *text;
} ModelFile;

/* A model compiled through the library from files written in a fresh
 * directory, and all that must come of it.  A failing check names the
 * case. */
typedef struct CompileCase {
    const char *name;
    ModelFile files[4];         /* the model compiled first; the rest after */
    const char *include[2];     /* -I directories, the unused ones NULL */
    int status;                 /* dv_compile's result */
    const char *diag;           /* every diagnostic printed, exactly */
    const char *read;           /* c.paths, joined; NULL: not checked */
    double value;               /* of the model at a = 1, when status is 0 */
} CompileCase;

#define COUNT(array) (sizeof (array) / sizeof (array)[0])

/* Write the files of case K into DIR, which may hold more already,
 * compile its model there and check every result K names. */
static void expect_case_in(const char *dir, const CompileCase *k)
{
    for (size_t f = 0; f < COUNT(k->files) && k->files[f].path; f++)
        put(dir, k->files[f].path, k->files[f].text);
    int ndirs = 0;
    while (ndirs < (int)COUNT(k->include) && k->include[ndirs])
        ndirs++;
    DvCompilation c;
    int rc;
    char *diag = compile_file_in(&c, dir, k->files[0].path, k->include, ndirs,
                                 &rc);
    ck_assert_msg(rc == k->status, "%s: status %d, want %d:\n%s", k->name,
                  rc, k->status, diag);
    ck_assert_msg(strcmp(diag, k->diag) == 0,
                  "%s: diagnostics\n%s\nwhere\n%s\nwas wanted", k->name, diag,
                  k->diag);
    if (k->read) {
        char *read = joined(c.paths, c.npaths);
        ck_assert_msg(strcmp(read, k->read) == 0, "%s: read '%s', want '%s'",
                      k->name, read, k->read);
        free(read);
    }
    if (k->status == 0) {
        Evaluation *ev = eval_new(c.ir);
        *eval_slot(ev, "a") = 1;
        double v = eval_value(ev);
        ck_assert_msg(v == k->value, "%s: value %.17g at a = 1, want %.17g",
                      k->name, v, k->value);
        eval_free(ev);
    }
    dv_free(&c);
    free(diag);
}

/* Check case K in a directory of its own. */
static void expect_case(const CompileCase *k)
{
    char *dir = tu_tmpdir();
    expect_case_in(dir, k);
    tu_rmdir(dir);
    free(dir);
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

/* Defs the resolver refuses, each a model of its own. */
static const CompileCase def_error_cases[] = {
    {.name = "wrong_argument_count_points_at_call_and_def",
     .files = {{"t.dvs", "param a\n"
                         "def mix(x, y) = x + y\n"
                         "z = mix(a)\n"
                         "output z\n"}},
     .status = 1,
     .diag = "t.dvs:3:5: error: 'mix' takes 2 arguments but 1 is given\n"
             "    z = mix(a)\n"
             "        ^~~~~~\n"
             "t.dvs:2:5: note: 'mix' is defined here\n"
             "    def mix(x, y) = x + y\n"
             "        ^~~\n"},
    {.name = "direct_recursion",
     .files = {{"t.dvs", "param a\n"
                         "def f(x) = 1 + f(x)\n"
                         "output a\n"}},
     .status = 1,
     .diag = "t.dvs:2:16: error: 'f' calls itself (f -> f): a def is "
             "expanded where it is called, so it cannot be recursive\n"
             "    def f(x) = 1 + f(x)\n"
             "                   ^\n"},
    {.name = "indirect_recursion",
     .files = {{"t.dvs", "param a\n"
                         "def f(x) = g(x)\n"
                         "def g(x) = h(x) * 2\n"
                         "def h(x) = f(x) + 1\n"
                         "output a\n"}},
     .status = 1,
     .diag = "t.dvs:2:12: error: 'f' calls itself (f -> g -> h -> f): a "
             "def is expanded where it is called, so it cannot be "
             "recursive\n"
             "    def f(x) = g(x)\n"
             "               ^\n"
             "t.dvs:4:12: note: 'h' calls 'f' here\n"
             "    def h(x) = f(x) + 1\n"
             "               ^\n"},
    {.name = "unknown_name_in_a_body",
     .files = {{"t.dvs", "param a\n"
                         "def f(x) = x * k\n"
                         "output a\n"}},
     .status = 1,
     .diag = "t.dvs:2:16: error: unknown name 'k': define it before "
             "this line\n"
             "    def f(x) = x * k\n"
             "                   ^\n"},
    {.name = "param_of_the_model_in_a_body",
     .files = {{"t.dvs", "param a\n"
                         "def f(x) = x * a\n"
                         "y = f(2)\n"
                         "output y\n"}},
     .status = 1,
     .diag = "t.dvs:2:16: error: 'a' is a param of the model; a def's "
             "body may use only its parameters, constants and functions: "
             "pass 'a' as an argument\n"
             "    def f(x) = x * a\n"
             "                   ^\n"
             "t.dvs:1:7: note: 'a' is defined here\n"
             "    param a\n"
             "          ^\n"},
    {.name = "def_named_as_a_builtin_or_a_c_keyword",
     .files = {{"t.dvs", "param a\n"
                         "def tanh(x) = x\n"
                         "def for(x) = x\n"
                         "output a\n"}},
     .status = 1,
     .diag = "t.dvs:2:5: error: 'tanh' is the name of a builtin "
             "function; choose another name\n"
             "    def tanh(x) = x\n"
             "        ^~~~\n"
             "t.dvs:3:5: error: 'for' is a C keyword; choose another "
             "name\n"
             "    def for(x) = x\n"
             "        ^~~\n"},
    {.name = "def_name_defined_again",
     .files = {{"t.dvs", "param a\n"
                         "def f(x) = x\n"
                         "f = a\n"
                         "output a\n"}},
     .status = 1,
     .diag = "t.dvs:3:1: error: 'f' is already defined; every name is "
             "defined once\n"
             "    f = a\n"
             "    ^\n"
             "t.dvs:2:5: note: 'f' was defined here\n"
             "    def f(x) = x\n"
             "        ^\n"},
};

START_TEST(def_errors)
{
    expect_case(&def_error_cases[_i]);
}
END_TEST

/* --------------------------------------------------------- used files */

/* How used files are found and read, each case in a directory of its
 * own.  The files read are the model's path as given, then each used
 * file's as found, once each, in the order first read (dervish.h). */
static const CompileCase use_cases[] = {
    /* a use is resolved beside the file that says it; a file of the same
     * name beside the model is not the one meant */
    {.name = "relative_resolution_and_the_files_read",
     .files = {{"models/m.dvs", "use \"lib/k.dvs\"\nparam a\ny = a * K\n"
                                "output y\n"},
               {"models/lib/k.dvs", "use \"base.dvs\"\nconst K = 2 * B\n"},
               {"models/lib/base.dvs", "const B = 3\n"},
               {"models/base.dvs", "const B = 100\n"}},
     .diag = "",
     .read = "models/m.dvs models/lib/k.dvs models/lib/base.dvs",
     .value = 6},
    /* the -I directories are searched in the order given */
    {.name = "search_order_first_then_second",
     .files = {{"m.dvs", "use \"k.dvs\"\nparam a\ny = a * K\noutput y\n"},
               {"first/k.dvs", "const K = 1\n"},
               {"second/k.dvs", "const K = 2\n"}},
     .include = {"first", "second/"},
     .diag = "",
     .read = "m.dvs first/k.dvs",
     .value = 1},
    {.name = "search_order_second_then_first",
     .files = {{"m.dvs", "use \"k.dvs\"\nparam a\ny = a * K\noutput y\n"},
               {"first/k.dvs", "const K = 1\n"},
               {"second/k.dvs", "const K = 2\n"}},
     .include = {"second", "first"},
     .diag = "",
     .read = "m.dvs second/k.dvs",
     .value = 2},
    /* beside the model comes before any -I directory */
    {.name = "search_order_beside_the_model_first",
     .files = {{"m.dvs", "use \"k.dvs\"\nparam a\ny = a * K\noutput y\n"},
               {"first/k.dvs", "const K = 1\n"},
               {"second/k.dvs", "const K = 2\n"},
               {"k.dvs", "const K = 3\n"}},
     .include = {"first", "second/"},
     .diag = "",
     .read = "m.dvs k.dvs",
     .value = 3},
    {.name = "missing_file_names_every_place_tried",
     .files = {{"n.dvs", "use \"none.dvs\"\nparam a\ny = a * NONE\n"
                         "output y\n"},
               {"first/k.dvs", "const K = 1\n"},
               {"second/k.dvs", "const K = 2\n"}},
     .include = {"first", "second/"},
     .status = 1,
     .diag = "n.dvs:1:5: error: cannot find 'none.dvs' (tried "
             "none.dvs, first/none.dvs, second/none.dvs)\n"
             "    use \"none.dvs\"\n"
             "        ^~~~~~~~~~\n",
     .read = "n.dvs"},
    /* two files that both use a third, and the model that uses it again
     * by another spelling of its path: it is read once, so its names are
     * defined once */
    {.name = "a_file_used_twice_is_read_once",
     .files = {{"m.dvs", "use \"a.dvs\"\nuse \"b.dvs\"\nuse \"./common.dvs\"\n"
                         "param a\ny = a * (A + B + C)\noutput y\n"},
               {"a.dvs", "use \"common.dvs\"\nconst A = C\n"},
               {"b.dvs", "use \"common.dvs\"\nconst B = 2 * C\n"},
               {"common.dvs", "const C = 5\n"}},
     .diag = "",
     .read = "m.dvs a.dvs common.dvs b.dvs",
     .value = 20},
    {.name = "cycle_of_three_files",
     .files = {{"a.dvs", "use \"lib/b.dvs\"\nparam p\ny = p\noutput y\n"},
               {"lib/b.dvs", "use \"c.dvs\"\n"},
               {"lib/c.dvs", "# closes the cycle\nuse \"../a.dvs\"\n"}},
     .status = 1,
     .diag = "lib/c.dvs:2:5: error: the files use each other in "
             "a cycle: a.dvs uses lib/b.dvs uses lib/c.dvs uses "
             "a.dvs\n"
             "    use \"../a.dvs\"\n"
             "        ^~~~~~~~~~\n"},
    /* messages about a used file name it and its own line numbers, and a
     * statement a used file may not hold also points at the use */
    {.name = "messages_name_the_used_file",
     .files = {{"m.dvs", "param a\nuse \"lib.dvs\"\ny = f(a)\noutput y\n"},
               {"lib.dvs", "# helpers\ndef f(x) = x * LOST\ninput t\n"}},
     .status = 1,
     .diag = "lib.dvs:2:16: error: unknown name 'LOST': define "
             "it before this line\n"
             "    def f(x) = x * LOST\n"
             "                   ^~~~\n"
             "lib.dvs:3:1: error: a used file may hold only "
             "const, def and use statements, not 'input'\n"
             "    input t\n"
             "    ^~~~~~~\n"
             "m.dvs:2:5: note: 'lib.dvs' is used here\n"
             "    use \"lib.dvs\"\n"
             "        ^~~~~~~~~\n",
     .read = "m.dvs lib.dvs"},
};

START_TEST(used_files)
{
    expect_case(&use_cases[_i]);
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

/* A chain of 102 files, each using the next: the 101st use is refused,
 * so the model and f1 to f100 are read. */
START_TEST(nesting_limit)
{
    char *dir = tu_tmpdir();
    char *chain[103];           /* chain[k] is fk.dvs; chain[0] the model */
    chain[0] = tu_format("%s", "m.dvs");
    for (int k = 1; k <= 102; k++)
        chain[k] = tu_format("f%d.dvs", k);
    for (int k = 1; k <= 101; k++) {
        char *text = tu_format("use \"%s\"\n", chain[k + 1]);
        put(dir, chain[k], text);
        free(text);
    }
    put(dir, chain[102], "const DEEP = 1\n");
    char *read = joined((const char *const *)chain, 101);
    const CompileCase model = {
        .name = "nesting_limit",
        .files = {{"m.dvs", "use \"f1.dvs\"\nparam a\ny = a\noutput y\n"}},
        .status = 1,
        .diag = "f100.dvs:1:5: error: used files nest more than "
                "100 deep\n"
                "    use \"f101.dvs\"\n"
                "        ^~~~~~~~~~\n",
        .read = read,
    };
    expect_case_in(dir, &model);
    for (int k = 0; k <= 102; k++)
        free(chain[k]);
    free(read);
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
                 expansion_is_substitution);
    tcase_add_loop_test(defs, def_errors, 0, (int)COUNT(def_error_cases));
    TCase *uses = tu_case(s, "uses", 60);
    tcase_add_loop_test(uses, used_files, 0, (int)COUNT(use_cases));
    TU_ADD_TESTS(uses, unreadable_used_file, nesting_limit, include_option);
    return tu_main(s);
}
