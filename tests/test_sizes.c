/* test_sizes.c - runtime sizes in emitted code.  Sized models from
 * tests/sizes are built, compiled with C drivers from the same directory
 * (by gcc and clang under the strict flags, and by gcc with ASan and UBSan)
 * and run: against the same model with one row evaluated row by row, closed
 * forms and mpmath references (size_refs.h); the work buffer's size against
 * what --explain lists; invalid and overflowing sizes; --stack-limit. */
#include "testutil.h"

#include "size_refs.h"

#include <float.h>
#include <limits.h>
#include <math.h>

#define SIZES_DIR "tests/sizes"

/* A row of a sized model runs the same operations as the one-row model and
 * the rows are combined in the same order, so only rounding differences
 * are allowed, relative to the sum of |terms| combined. */
#define ROWS_TOL 1e-13

/* A double sum of n terms is off by at most about n u (u = 2^-53) of the
 * sum of |terms| (Higham, Accuracy and Stability of Numerical Algorithms,
 * 2002, section 4.2); (n + 10) eps is twice that plus a few roundings of
 * the terms themselves. */
#define SUM_TOL(n) (((double)(n) + 10) * DBL_EPSILON)

/* Made by main and removed after the run: a failed check ends its test at
 * once, so the tests cannot be trusted to clean up themselves. */
static char work_root[4096];
static char sizes_dir[4096];    /* SIZES_DIR as an absolute path */

/* A fresh directory under work_root (malloc'd). */
static char *fresh_dir(void)
{
    char *dir = tu_format("%s/t-XXXXXX", work_root);
    ck_assert_ptr_nonnull(mkdtemp(dir));
    return dir;
}

/* The model file FILE of SIZES_DIR (malloc'd). */
static char *read_model(const char *file)
{
    char *text = tu_read_in(sizes_dir, file);
    ck_assert_msg(text != NULL, "cannot read %s/%s", SIZES_DIR, file);
    return text;
}

/* Write TEXT to DIR/NAME.dvs and build it there with --name NAME --explain
 * --emit value,gradient,tangent,hessvec and OPTIONS; returns what --explain printed (malloc'd).  Fails the test
 * on any message from dervish. */
static char *build(const char *dir, const char *name, const char *text,
                   const char *options)
{
    char *file = tu_format("%s.dvs", name);
    tu_write_in(dir, file, text);
    char *out = NULL, *err = NULL;
    int rc = tu_run_dervish(dir, &out, &err, "build --explain --emit "
                            "value,gradient,tangent,hessvec --name %s %s %s",
                            name, options, file);
    ck_assert_msg(rc == 0 && err && !*err,
                  "dervish build %s %s exited with %d:\n%s", options, name, rc,
                  err ? err : "");
    free(err);
    free(file);
    return out;
}

/* The ways every driver is compiled and run: the emitted code must compile
 * without a diagnostic under each, and ASan/UBSan see any access outside
 * the exactly sized buffers the drivers allocate. */
typedef struct Way {
    const char *cc;
    const char *flags;
    const char *env;        /* before the program on its command line */
} Way;

static const Way ways[] = {
    {"gcc", TU_STRICT " -O1", ""},
    {"clang", TU_STRICT " -O1", ""},
    {"gcc", TU_STRICT " -O1 -g -fno-omit-frame-pointer "
            "-fsanitize=address,undefined -fno-sanitize-recover=all",
     /* overruns are the point here; leak checking fails under some
      * debuggers and containers */
     "ASAN_OPTIONS=detect_leaks=0 "},
};
#define NWAYS (int)(sizeof ways / sizeof ways[0])

/* Compile SIZES_DIR/DRIVER with the C files SOURCES of DIR into DIR/EXE,
 * failing the test on any diagnostic. */
static void compile(const char *dir, const char *cc, const char *flags,
                    const char *driver, const char *sources, const char *exe)
{
    char *err = NULL;
    char *cmd = tu_format("cd '%s' && %s %s -I. -I'%s' -o %s '%s/%s' %s "
                          "-lm -pthread", dir, cc, flags, sizes_dir, exe,
                          sizes_dir, driver, sources);
    int rc = tu_run(cmd, NULL, &err);
    ck_assert_msg(rc == 0 && err && !*err, "%s failed (status %d):\n%s", cmd,
                  rc, err ? err : "");
    free(err);
    free(cmd);
}

/* Run DIR/EXE with ARGS after ENV; returns its stdout (malloc'd) and fails
 * the test on a non-zero status or anything on stderr. */
static char *run(const char *dir, const char *env, const char *exe,
                 const char *args)
{
    char *out = NULL, *err = NULL;
    char *cmd = tu_format("cd '%s' && %s./%s %s", dir, env, exe, args);
    int rc = tu_run(cmd, &out, &err);
    ck_assert_msg(rc == 0 && err && !*err, "%s exited with %d:\n%s", cmd, rc,
                  err ? err : "");
    free(err);
    free(cmd);
    return out;
}

/* The driver's output in each way that is available (NULL for the others;
 * clang may be missing).  Release with free_outputs. */
static void run_ways(const char *dir, const char *driver, const char *sources,
                     const char *args, char *out[NWAYS])
{
    for (int w = 0; w < NWAYS; w++) {
        out[w] = NULL;
        if (!tu_have(ways[w].cc)) {
            printf("note: %s not found, the drivers are not built with it\n",
                   ways[w].cc);
            continue;
        }
        char *exe = tu_format("driver%d", w);
        compile(dir, ways[w].cc, ways[w].flags, driver, sources, exe);
        out[w] = run(dir, ways[w].env, exe, args);
        free(exe);
    }
}

static void free_outputs(char *out[NWAYS])
{
    for (int w = 0; w < NWAYS; w++)
        free(out[w]);
}

/* Run the driver once more under valgrind's memcheck, if installed. */
static void run_valgrind(const char *dir, const char *driver,
                         const char *sources)
{
    if (!tu_have("valgrind")) {
        printf("note: valgrind not found, %s is not run under it\n", driver);
        return;
    }
    compile(dir, "gcc", TU_STRICT " -O1 -g", driver, sources, "driver-vg");
    free(run(dir, "valgrind -q --error-exitcode=1 ", "driver-vg", ""));
}

/* The doubles of the arrays --explain lists after "in work: ", at sizes
 * n and m: "z[n], dvs_adj_z[n], dvs_tan_z[n]" is 3 n. */
static size_t explain_count(const char *explain, long n, long m)
{
    const char *at = strstr(explain, "in work: ");
    if (!at)
        return 0;
    size_t total = 0;
    for (at += strlen("in work: "); *at && *at != '\n';) {
        at = strchr(at, '[');
        ck_assert_ptr_nonnull(at);
        size_t count = 1;
        while (*at != ']') {
            at++;
            if (*at == 'n' || *at == 'm')
                count *= (size_t)(*at++ == 'n' ? n : m);
            else {
                char *end;
                count *= (size_t)strtoul(at, &end, 10);
                at = end;
            }
            ck_assert_msg(*at == ',' || *at == ']', "cannot read %s", explain);
        }
        total += count;
        at += strspn(at + 1, ", ") + 1;
    }
    return total;
}

/* Calls fn on each line of text, with ctx. */
static void each_line(const char *text, void (*fn)(const char *line, void *),
                      void *ctx)
{
    char *copy = tu_format("%s", text), *save = NULL;
    for (char *l = strtok_r(copy, "\n", &save); l;
         l = strtok_r(NULL, "\n", &save))
        fn(l, ctx);
    free(copy);
}

/* --------------------------------- lines every sized driver prints */

/* The "work" and "invalid" lines of sized_calls.h, counted and checked by
 * common_line: invalid sizes give NaN from both functions, a count of 0
 * and an untouched *grad; the work count equals what --explain lists. */
typedef struct Common {
    const char *label;      /* the model, for messages */
    const char *explain;    /* what --explain printed for it */
    int invalid;            /* "invalid" lines seen */
    int works;              /* "work" lines seen */
    size_t work[2];         /* the counts at the first two "work" lines */
} Common;

static int common_line(const char *line, Common *c)
{
    long n, m;
    int value_nan, grad_nan, untouched, tangent_nan, dvalue_untouched;
    size_t count;
    if (sscanf(line, "invalid %ld %ld %d %d %d %zu %d %d", &n, &m, &value_nan,
               &grad_nan, &untouched, &count, &tangent_nan,
               &dvalue_untouched) == 8) {
        ck_assert_msg(value_nan && grad_nan && tangent_nan,
                      "%s: n = %ld, m = %ld: value, gradient and tangent "
                      "must be NaN", c->label, n, m);
        ck_assert_msg(untouched, "%s: n = %ld, m = %ld: *grad was written",
                      c->label, n, m);
        ck_assert_msg(dvalue_untouched, "%s: n = %ld, m = %ld: *dvalue was "
                      "written", c->label, n, m);
        ck_assert_msg(count == 0, "%s: n = %ld, m = %ld: work count %zu, "
                      "want 0", c->label, n, m, count);
        c->invalid++;
        return 1;
    }
    if (sscanf(line, "work %ld %ld %zu", &n, &m, &count) == 3) {
        ck_assert_msg(count == explain_count(c->explain, n, m),
                      "%s: n = %ld: work count %zu, --explain lists %zu",
                      c->label, n, count, explain_count(c->explain, n, m));
        if (c->works < 2)
            c->work[c->works] = count;
        c->works++;
        return 1;
    }
    return 0;
}

/* ---------------------------------------- sized against one-row models */

/* A row-by-row model: its inputs for rows_driver.c (sz_model.h), whether
 * it has a second size m, whether its rows combine by max, and the sizes
 * of an "invalid" call whose element count overflows (NULL: none). */
typedef struct RowModel {
    const char *file;       /* in SIZES_DIR */
    const char *options;    /* for the sized build only */
    const char *inputs;     /* the body of SZ_INPUTS(IN) */
    int two_sizes;          /* size n, m (else size n) */
    int combine_max;        /* the output is a max over the rows */
    const char *overflow_n, *overflow_m;
} RowModel;

static const RowModel row_models[] = {
    {"lsq.dvs", "",
     "IN(load, 1, BY_N, UNIFORM) IN(reading, 1, BY_N, UNIFORM)", 0, 0, NULL,
     NULL},
    {"logistic.dvs", "",
     "IN(current, 1, BY_N, UNIFORM) IN(speed, 1, BY_N, UNIFORM) "
     "IN(passed, 1, BY_N, LABEL)", 0, 0, NULL, NULL},
    /* 3 LONG_MAX doubles of X overflow a 64-bit size_t */
    {"net.dvs", "", "IN(X, 3, BY_N, UNIFORM) IN(flow, 1, BY_N, UNIFORM)", 0,
     0, "LONG_MAX", "0"},
    /* rows of 4 above the stack limit: one row lives in work */
    {"net.dvs", "--stack-limit 3",
     "IN(X, 3, BY_N, UNIFORM) IN(flow, 1, BY_N, UNIFORM)", 0, 0, NULL, NULL},
    {"worst.dvs", "",
     "IN(volts, 1, BY_N, UNIFORM) IN(kelvin, 1, BY_N, UNIFORM)", 0, 1, NULL,
     NULL},
    /* 2^40 x 2^40 doubles of load overflow a 64-bit size_t */
    {"grid.dvs", "",
     "IN(load, 1, BY_NM, UNIFORM) IN(rating, 1, BY_N, UNIFORM)", 1, 0,
     "(1L << 40)", "(1L << 40)"},
    {"cross.dvs", "", "IN(probe, 1, BY_N, UNIFORM) IN(ref, 1, BY_M, UNIFORM)",
     1, 0, NULL, NULL},
    /* functions written in parts of one statement: the frame holds what
     * the parts share, work pointers included, and a row's own arrays
     * stay the row block's */
    {"logistic.dvs", "--part-size 1",
     "IN(current, 1, BY_N, UNIFORM) IN(speed, 1, BY_N, UNIFORM) "
     "IN(passed, 1, BY_N, LABEL)", 0, 0, NULL, NULL},
    {"net.dvs", "--stack-limit 3 --part-size 1",
     "IN(X, 3, BY_N, UNIFORM) IN(flow, 1, BY_N, UNIFORM)", 0, 0, NULL, NULL},
    {"worst.dvs", "--part-size 1",
     "IN(volts, 1, BY_N, UNIFORM) IN(kelvin, 1, BY_N, UNIFORM)", 0, 1, NULL,
     NULL},
    {"grid.dvs", "--part-size 1",
     "IN(load, 1, BY_NM, UNIFORM) IN(rating, 1, BY_N, UNIFORM)", 1, 0,
     "(1L << 40)", "(1L << 40)"},
};

typedef struct RowsSeen {
    const RowModel *model;
    Common common;
    int cases;              /* "case" lines seen */
} RowsSeen;

/* One line of rows_driver.c's output. */
static void rows_line(const char *line, void *ctx)
{
    RowsSeen *seen = ctx;
    const char *label = seen->common.label;
    long n, m;
    size_t count;
    double value, comb, verr, gerr, gmax;
    int same;
    if (common_line(line, &seen->common))
        return;
    double terr;
    int tsame;
    ck_assert_msg(sscanf(line, "case %ld %ld %zu %lf %lf %lf %lf %d %lf %lf %d",
                         &n, &m, &count, &value, &comb, &verr, &gerr, &same,
                         &gmax, &terr, &tsame) == 11,
                  "%s: unexpected line '%s'", label, line);
    /* the tangent from its own pass (tangent.c) is the gradient times
     * the direction, to rounding */
    ck_assert_msg(terr <= 1e-12, "%s: n = %ld, m = %ld: the tangent is off "
                  "the gradient times the direction by %.3g", label, n, m,
                  terr);
    ck_assert_msg(tsame, "%s: n = %ld: the tangent function returned another "
                  "value", label, n);
    seen->cases++;
    ck_assert_msg(verr <= ROWS_TOL, "%s: n = %ld, m = %ld: value %.17g, the "
                  "rows give %.17g (error %.3g)", label, n, m, value, comb,
                  verr);
    ck_assert_msg(gerr <= ROWS_TOL, "%s: n = %ld, m = %ld: gradient off the "
                  "rows' by %.3g", label, n, m, gerr);
    ck_assert_msg(same, "%s: n = %ld: the gradient function returned another "
                  "value", label, n);
    ck_assert_msg(count == explain_count(seen->common.explain, n, m),
                  "%s: n = %ld: work count %zu, --explain lists %zu", label, n,
                  count, explain_count(seen->common.explain, n, m));
    if (n == 0 || m == 0) {
        /* no rows: the empty sum is 0, the empty max -inf (LANGUAGE.md
         * section 4, reductions), and nothing depends on the params */
        ck_assert_msg(value == (seen->model->combine_max ? -HUGE_VAL : 0.0),
                      "%s: n = %ld, m = %ld: value %.17g", label, n, m, value);
        ck_assert_msg(gmax == 0.0, "%s: no rows, gradient up to %.17g", label,
                      gmax);
    }
}

/* The expected "invalid" lines of a model: n = -1, m = -1, overflow. */
static int invalid_calls(const RowModel *m)
{
    return 1 + m->two_sizes + (m->overflow_n && LONG_MAX > 0x7fffffffL);
}

/* Sized model against the sum (or max) of its one-row version over the
 * rows, at n = 0, 1, 7, 10^4 (and m = 3, and m = 0 at n = 7); the work
 * count does not grow with n; invalid sizes. */
START_TEST(sized_equals_rows)
{
    const RowModel *m = &row_models[_i];
    char *label = tu_format("%s %s", m->file, m->options);
    char *dir = fresh_dir();
    char *text = read_model(m->file);
    const char *sizes = m->two_sizes ? "size n, m\n" : "size n\n";
    ck_assert_ptr_nonnull(strstr(text, sizes));
    char *one_text = tu_replace(text, sizes, m->two_sizes
                                ? "const n = 1\nconst m = 1\n"
                                : "const n = 1\n");
    char *explain = build(dir, "sz", text, m->options);
    free(build(dir, "one", one_text, ""));
    ck_assert_msg(strncmp(explain, "sz: row by row over n:", 22) == 0,
                  "%s: --explain says\n%s", label, explain);

    char *config = tu_format(
        "#define SZ_INPUTS(IN) %s\n#define SZ_TWO_SIZES %d\n"
        "#define SZ_COMBINE_MAX %d\n", m->inputs, m->two_sizes,
        m->combine_max);
    if (m->overflow_n) {
        char *more = tu_format("%s#define SZ_OVERFLOW_N %s\n"
                               "#define SZ_OVERFLOW_M %s\n", config,
                               m->overflow_n, m->overflow_m);
        free(config);
        config = more;
    }
    tu_write_in(dir, "sz_model.h", config);

    char *out[NWAYS];
    run_ways(dir, "rows_driver.c", "sz.c one.c", "", out);
    for (int w = 0; w < NWAYS; w++) {
        if (!out[w])
            continue;
        RowsSeen seen = {m, {label, explain, 0, 0, {0, 0}}, 0};
        each_line(out[w], rows_line, &seen);
        ck_assert_int_eq(seen.cases, m->two_sizes ? 5 : 4);
        ck_assert_int_eq(seen.common.invalid, invalid_calls(m));
        ck_assert_int_eq(seen.common.works, 2);
        ck_assert_msg(seen.common.work[0] == seen.common.work[1],
                      "%s: row by row, yet the work count grows with n: %zu "
                      "doubles at n = 1, %zu at n = 100000\n--explain:\n%s",
                      label, seen.common.work[0], seen.common.work[1],
                      explain);
    }
    free_outputs(out);
    free(config);
    free(explain);
    free(one_text);
    free(text);
    free(dir);
    free(label);
}
END_TEST

/* -------------------------------------------- rows kept in work: centred */

typedef struct CentredSeen {
    Common common;
    int cases;              /* "case" lines seen */
} CentredSeen;

static void centred_line(const char *line, void *ctx)
{
    CentredSeen *seen = ctx;
    long n;
    size_t count;
    double value, closed, verr, aerr, berr;
    int same;
    if (common_line(line, &seen->common))
        return;
    ck_assert_msg(sscanf(line, "case %ld %zu %lf %lf %lf %lf %lf %d", &n,
                         &count, &value, &closed, &verr, &aerr, &berr,
                         &same) == 8, "centred: unexpected line '%s'", line);
    seen->cases++;
    /* closed form in centred.dvs's header: a^2 Sxx, 2 a Sxx, 0 */
    ck_assert_msg(verr <= SUM_TOL(n), "centred: n = %ld: value %.17g, closed "
                  "form %.17g (error %.3g)", n, value, closed, verr);
    ck_assert_msg(aerr <= SUM_TOL(n), "centred: n = %ld: d/da off by %.3g", n,
                  aerr);
    ck_assert_msg(berr <= SUM_TOL(n), "centred: n = %ld: d/db off 0 by %.3g",
                  n, berr);
    ck_assert(same);
    ck_assert_msg(count == explain_count(seen->common.explain, n, 0),
                  "centred: n = %ld: work count %zu, --explain lists %zu", n,
                  count, explain_count(seen->common.explain, n, 0));
    if (n == 0)
        ck_assert_msg(value == 0.0, "centred: no rows, value %.17g", value);
}

/* The mean-centred model keeps z, its adjoint and their tangents in work
 * (exactly 4 n doubles, as --explain lists); value and gradient against the closed
 * form; invalid n; once under valgrind. */
START_TEST(rows_in_work_match_closed_form)
{
    char *dir = fresh_dir();
    char *text = read_model("centred.dvs");
    char *explain = build(dir, "sz", text, "");
    ck_assert_str_eq(explain, "sz: not row by row over n: a row needs a value "
                              "computed from all the rows; the arrays of rows "
                              "are kept in work.\n"
                              "  in work: z[n], dvs_adj_z[n], dvs_tan_z[n], "
                              "dvs_tan_dvs_adj_z[n]\n");
    ck_assert_uint_eq(explain_count(explain, 10000, 0), 40000);
    char *out[NWAYS];
    run_ways(dir, "centred_driver.c", "sz.c", "", out);
    for (int w = 0; w < NWAYS; w++) {
        if (!out[w])
            continue;
        CentredSeen seen = {{"centred", explain, 0, 0, {0, 0}}, 0};
        each_line(out[w], centred_line, &seen);
        ck_assert_int_eq(seen.cases, 4);
        ck_assert_int_eq(seen.common.invalid, 1);
        ck_assert_int_eq(seen.common.works, 2);
        ck_assert_uint_eq(seen.common.work[0], 4);
        ck_assert_uint_eq(seen.common.work[1], 400000);
    }
    run_valgrind(dir, "centred_driver.c", "sz.c");
    free_outputs(out);
    free(explain);
    free(text);
    free(dir);
}
END_TEST

/* ------------------------------------------------ mpmath: defects.dvs */

/* The mean Poisson loss of defects.dvs, which reads n as a number, at
 * n = 1, 7, 10^3, 10^4 against mpmath (size_refs.h, made by
 * tests/gen_size_refs.py). */
START_TEST(mean_over_rows_matches_mpmath)
{
    char *dir = fresh_dir();
    char *text = read_model("defects.dvs");
    char *explain = build(dir, "sz", text, "");
    ck_assert_msg(strncmp(explain, "sz: row by row over n:", 22) == 0,
                  "defects: --explain says\n%s", explain);
    const int ncases = (int)(sizeof sr_defects / sizeof sr_defects[0]);
    char *args = tu_format("%s", "");
    for (int k = 0; k < ncases; k++) {
        char *more = tu_format("%s %ld", args, sr_defects[k].n);
        free(args);
        args = more;
    }
    char *out[NWAYS];
    run_ways(dir, "defects_driver.c", "sz.c", args, out);
    for (int w = 0; w < NWAYS; w++) {
        if (!out[w])
            continue;
        const char *at = out[w];
        for (int k = 0; k < ncases; k++) {
            const struct sr_case *r = &sr_defects[k];
            long n;
            double got[3];
            int same, used;
            ck_assert_int_eq(sscanf(at, "case %ld %lf %lf %lf %d\n%n", &n,
                                    &got[0], &got[1], &got[2], &same, &used),
                             5);
            at += used;
            ck_assert_int_eq(n, r->n);
            ck_assert(same);
            for (int j = 0; j < 3; j++)
                ck_assert_msg(fabs(got[j] - r->ref[j]) <=
                                  SUM_TOL(n) * r->scale[j],
                              "defects: n = %ld, %s: %.17g, mpmath %.17g", n,
                              j == 0 ? "value" : j == 1 ? "d/da" : "d/db",
                              got[j], r->ref[j]);
        }
        ck_assert_str_eq(at, "");
    }
    free_outputs(out);
    free(args);
    free(explain);
    free(text);
    free(dir);
}
END_TEST

/* ------------------------------------------------------- --stack-limit */

typedef struct WideSeen {
    int reports;            /* lines of a build against the closed form */
    int identical;          /* the two builds gave the same bits */
    size_t work;            /* inwork_work_count */
} WideSeen;

static void wide_line(const char *line, void *ctx)
{
    WideSeen *seen = ctx;
    char name[16];
    double verr, gerr;
    int same;
    if (sscanf(line, "work %zu", &seen->work) == 1)
        return;
    if (sscanf(line, "identical %d", &seen->identical) == 1)
        return;
    ck_assert_msg(sscanf(line, "%15s %lf %lf %d", name, &verr, &gerr, &same)
                      == 4, "wide: unexpected line '%s'", line);
    /* the closed form adds the terms in the emitted code's order */
    ck_assert_msg(verr <= ROWS_TOL && gerr <= ROWS_TOL,
                  "wide (%s): value off the closed form by %.3g, gradient "
                  "by %.3g", name, verr, gerr);
    ck_assert(same);
    seen->reports++;
}

/* A 1000 x 1000 intermediate goes to work under the default stack limit,
 * stays local with --stack-limit 2000000, and both give the closed form
 * (in wide.dvs) and the same bits. */
START_TEST(stack_limit_moves_big_arrays_to_work)
{
    char *dir = fresh_dir();
    char *text = read_model("wide.dvs");
    char *in_work = build(dir, "inwork", text, "");
    char *on_stack = build(dir, "onstack", text, "--stack-limit 2000000");
    ck_assert_str_eq(in_work, "inwork: the model has no size.\n"
                              "  in work: P[1000,1000], "
                              "dvs_adj_P[1000,1000], dvs_tan_P[1000,1000]\n");
    ck_assert_str_eq(on_stack, "onstack: the model has no size.\n"
                               "  no arrays in work.\n");
    char *h = tu_read_in(dir, "inwork.h");
    ck_assert_ptr_nonnull(strstr(h, "double inwork_value(const inwork_param "
                                    "*p, const inwork_input *in, double "
                                    "*work);"));
    ck_assert_ptr_nonnull(strstr(h, "size_t inwork_work_count(const "
                                    "inwork_input *in);"));
    free(h);
    h = tu_read_in(dir, "onstack.h");
    ck_assert_ptr_null(strstr(h, "work"));
    free(h);

    char *out[NWAYS];
    run_ways(dir, "wide_driver.c", "inwork.c onstack.c", "", out);
    for (int w = 0; w < NWAYS; w++) {
        if (!out[w])
            continue;
        WideSeen seen = {0, 0, 0};
        each_line(out[w], wide_line, &seen);
        ck_assert_int_eq(seen.reports, 2);
        ck_assert_msg(seen.identical, "wide: the two builds differ");
        ck_assert_uint_ge(seen.work, 1000000);
        ck_assert_uint_eq(seen.work, explain_count(in_work, 0, 0));
    }
    free_outputs(out);
    free(on_stack);
    free(in_work);
    free(text);
    free(dir);
}
END_TEST

/* ------------------------------------------------------------ --explain */

/* The exact --explain text for a row-by-row model and a fallback one,
 * under their own names. */
START_TEST(explain_says_how_and_why)
{
    static const struct {
        const char *file;
        const char *text;
    } want[] = {
        {"lsq.dvs", "lsq: row by row over n: each row is computed, used and "
                    "dropped, so scratch does not grow with n.\n"
                    "  no arrays in work (the work argument may be NULL).\n"},
        {"centred.dvs", "centred: not row by row over n: a row needs a value "
                        "computed from all the rows; the arrays of rows are "
                        "kept in work.\n"
                        "  in work: z[n], dvs_adj_z[n]\n"},
    };
    char *dir = fresh_dir();
    for (size_t k = 0; k < sizeof want / sizeof want[0]; k++) {
        char *text = read_model(want[k].file);
        tu_write_in(dir, want[k].file, text);
        char *out = NULL, *err = NULL;
        ck_assert_int_eq(tu_run_dervish(dir, &out, &err, "build --explain %s",
                                        want[k].file), 0);
        ck_assert_str_eq(err, "");
        ck_assert_str_eq(out, want[k].text);
        free(out);
        free(err);
        free(text);
    }
    free(dir);
}
END_TEST

int main(void)
{
    const char *tmp = getenv("TMPDIR");
    snprintf(work_root, sizeof work_root, "%s/dervish-sizes-XXXXXX",
             tmp && *tmp ? tmp : "/tmp");
    if (!mkdtemp(work_root) || !realpath(SIZES_DIR, sizes_dir)) {
        fprintf(stderr, "test_sizes: no temporary directory or no %s\n",
                SIZES_DIR);
        return EXIT_FAILURE;
    }
    Suite *s = suite_create("sizes");
    TCase *tc = tu_case(s, "sizes", 60);
    tcase_add_loop_test(tc, sized_equals_rows, 0,
                        (int)(sizeof row_models / sizeof row_models[0]));
    TU_ADD_TESTS(tc, rows_in_work_match_closed_form,
                 mean_over_rows_matches_mpmath,
                 stack_limit_moves_big_arrays_to_work,
                 explain_says_how_and_why);
    int rc = tu_main(s);
    /* not tu_rmdir: its checks may only run inside a test */
    char cmd[4200];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", work_root);
    if (system(cmd) != 0)
        fprintf(stderr, "test_sizes: cannot remove %s\n", work_root);
    return rc;
}
