/* testutil.h - shared helpers for the Check test programs: strings,
 * temporary files, running the dervish binary and C compilers, the compiler
 * as a library (compiling, capturing printed text, finding arrays) and the
 * suite boilerplate.  Header-only (static inline): each test is one file. */
#ifndef DERVISH_TESTUTIL_H
#define DERVISH_TESTUTIL_H

#include <check.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include "dervish.h"
#include "eval.h"

/* The dervish binary under test: $DERVISH, else build/dervish. */
static inline const char *tu_dervish(void)
{
    const char *d = getenv("DERVISH");
    return d && *d ? d : "build/dervish";
}

/* vprintf into a malloc'd string. */
static inline char *tu_vformat(const char *fmt, va_list ap)
{
    va_list again;
    va_copy(again, ap);
    int n = vsnprintf(NULL, 0, fmt, again);
    va_end(again);
    char *s = malloc((size_t)n + 1);
    ck_assert_ptr_nonnull(s);
    vsnprintf(s, (size_t)n + 1, fmt, ap);
    return s;
}

/* printf into a malloc'd string. */
static inline char *tu_format(const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    char *s = tu_vformat(fmt, ap);
    va_end(ap);
    return s;
}

/* A fresh directory under $TMPDIR (or /tmp); the caller may remove it
 * with tu_rmdir. */
static inline char *tu_tmpdir(void)
{
    const char *base = getenv("TMPDIR");
    char *t = tu_format("%s/dervish-test-XXXXXX", base && *base ? base : "/tmp");
    ck_assert_ptr_nonnull(mkdtemp(t));
    return t;
}

static inline void tu_rmdir(const char *dir)
{
    char *cmd = tu_format("rm -rf '%s'", dir);
    int rc = system(cmd);
    (void)rc;
    free(cmd);
}

static inline void tu_write(const char *path, const char *text)
{
    FILE *f = fopen(path, "wb");
    ck_assert_msg(f != NULL, "cannot write %s", path);
    fputs(text, f);
    fclose(f);
}

/* Write TEXT to the file NAME in directory DIR. */
static inline void tu_write_in(const char *dir, const char *name,
                               const char *text)
{
    char *path = tu_format("%s/%s", dir, name);
    tu_write(path, text);
    free(path);
}

/* The whole file, or NULL if it does not exist. */
static inline char *tu_read(const char *path)
{
    FILE *f = fopen(path, "rb");
    if (!f)
        return NULL;
    size_t cap = 4096, n = 0;
    char *s = malloc(cap);
    size_t got;
    while ((got = fread(s + n, 1, cap - n - 1, f)) > 0) {
        n += got;
        if (n + 1 >= cap)
            s = realloc(s, cap *= 2);
    }
    s[n] = '\0';
    fclose(f);
    return s;
}

/* The file NAME in directory DIR, as tu_read gives it. */
static inline char *tu_read_in(const char *dir, const char *name)
{
    char *path = tu_format("%s/%s", dir, name);
    char *text = tu_read(path);
    free(path);
    return text;
}

static inline int tu_exists(const char *path)
{
    struct stat st;
    return stat(path, &st) == 0;
}

/* Run a shell command with its stdout and stderr captured into *out and
 * *err (malloc'd; pass NULL to discard).  Returns the exit status, or -1
 * when the command died from a signal. */
static inline int tu_run(const char *cmd, char **out, char **err)
{
    char *dir = tu_tmpdir();
    char *o = tu_format("%s/out", dir), *e = tu_format("%s/err", dir);
    char *full = tu_format("(%s) >'%s' 2>'%s' </dev/null", cmd, o, e);
    int rc = system(full);
    if (out)
        *out = tu_read(o);
    if (err)
        *err = tu_read(e);
    tu_rmdir(dir);
    free(dir);
    free(o);
    free(e);
    free(full);
    if (rc == -1 || !WIFEXITED(rc))
        return -1;
    return WEXITSTATUS(rc);
}


/* The names in DIR, hidden ones too, one a line, sorted (malloc'd). */
static inline char *tu_listing(const char *dir)
{
    char *out = NULL;
    char *cmd = tu_format("LC_ALL=C ls -A '%s'", dir);
    ck_assert_int_eq(tu_run(cmd, &out, NULL), 0);
    free(cmd);
    return out;
}

/* DIR holds exactly WANT (as tu_listing gives it): no temporary remains. */
static inline void tu_expect_listing(const char *dir, const char *want)
{
    char *got = tu_listing(dir);
    ck_assert_msg(strcmp(got, want) == 0, "%s holds\n%swhere\n%swas "
                  "expected (no temporary may remain)", dir, got, want);
    free(got);
}


/* The committed data file PATH is exactly what the command GENERATOR
 * prints.  Generators run Debian's python3 with mpmath; without it the
 * check is skipped with a note. */
static inline void tu_expect_generated(const char *path, const char *generator)
{
    if (tu_run("/usr/bin/python3 -c 'import mpmath'", NULL, NULL) != 0) {
        printf("note: /usr/bin/python3 with mpmath not found; %s was not "
               "regenerated and compared\n", path);
        return;
    }
    char *committed = tu_read(path), *out = NULL, *err = NULL;
    ck_assert_msg(committed != NULL, "cannot read %s (run from the project "
                  "root)", path);
    int rc = tu_run(generator, &out, &err);
    ck_assert_msg(rc == 0, "%s failed with status %d:\n%s", generator, rc,
                  err ? err : "");
    ck_assert_msg(strcmp(out, committed) == 0, "%s differs from the output "
                  "of %s: regenerate it", path, generator);
    free(committed);
    free(out);
    free(err);
}

/* s with the first occurrence of `from` replaced by `to` (malloc'd). */
static inline char *tu_replace(const char *s, const char *from, const char *to)
{
    const char *at = strstr(s, from);
    if (!at)
        return tu_format("%s", s);
    return tu_format("%.*s%s%s", (int)(at - s), s, to, at + strlen(from));
}

/* The first line of s (malloc'd), without its newline. */
static inline char *tu_first_line(const char *s)
{
    size_t n = strcspn(s ? s : "", "\n");
    char *l = malloc(n + 1);
    memcpy(l, s ? s : "", n);
    l[n] = '\0';
    return l;
}

/* The C compilers the emitted code must satisfy; each one found is used. */
static const char *const tu_compilers[] = {"gcc", "clang"};

static inline int tu_have(const char *tool)
{
    char *cmd = tu_format("command -v %s >/dev/null 2>&1", tool);
    int ok = system(cmd) == 0;
    free(cmd);
    return ok;
}

/* The strict flags emitted code must compile cleanly under. */
#define TU_STRICT "-std=c99 -Wall -Wextra -Wpedantic -Wshadow -Werror"

/* The dervish binary as an absolute path, for commands run elsewhere. */
static inline const char *tu_abs_dervish(void)
{
    static char path[4096];
    ck_assert_msg(realpath(tu_dervish(), path) != NULL,
                  "dervish binary %s not found", tu_dervish());
    return path;
}

/* Run dervish with the arguments printf would make of FMT, in directory
 * DIR (NULL: the current one), capturing as tu_run does. */
static inline int tu_run_dervish(const char *dir, char **out, char **err,
                                 const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    char *args = tu_vformat(fmt, ap);
    va_end(ap);
    char *cmd = tu_format("cd '%s' && '%s' %s", dir ? dir : ".",
                          tu_abs_dervish(), args);
    int rc = tu_run(cmd, out, err);
    free(cmd);
    free(args);
    return rc;
}

/* Run CMD, whose dervish runs are capped with `timeout` (status 124),
 * and assert none hung or crashed.  Returns the exit status. */
static inline int tu_run_unhung(const char *cmd, char **out, char **err)
{
    int rc = tu_run(cmd, out, err);
    ck_assert_msg(rc != 124, "%s: still running at its time limit", cmd);
    ck_assert_msg(rc >= 0 && rc < 128, "%s: crashed (status %d)", cmd, rc);
    return rc;
}

/* Run dervish with ARGS in DIR, capped at SECONDS; asserts it neither hung
 * nor crashed nor printed to stdout, and returns its exit status.  Its
 * stderr goes to *err. */
static inline int tu_dervish_capped(int seconds, const char *dir, char **err,
                                    const char *args)
{
    char *out = NULL;
    char *cmd = tu_format("cd '%s' && timeout %d '%s' %s", dir, seconds,
                          tu_abs_dervish(), args);
    int rc = tu_run_unhung(cmd, &out, err);
    ck_assert_msg(out && out[0] == '\0', "dervish %s: wrote to stdout: %s",
                  args, out ? out : "");
    ck_assert_ptr_nonnull(*err);
    free(out);
    free(cmd);
    return rc;
}

/* Write MODEL to DIR/NAME.dvs and run dervish build on it there.  Returns
 * dervish's exit status; stderr goes to *err if err is not NULL. */
static inline int tu_build_model(const char *dir, const char *name,
                                 const char *model, char **err)
{
    char *file = tu_format("%s.dvs", name);
    tu_write_in(dir, file, model);
    int rc = tu_run_dervish(dir, NULL, err, "build %s", file);
    free(file);
    return rc;
}

/* Compile DIR/driver.c with DIR/NAME.c using compiler CC under the
 * strict flags, run it, and return its stdout (malloc'd).  Fails the test
 * on a compiler diagnostic or a non-zero exit. */
static inline char *tu_compile_and_run(const char *dir, const char *name,
                                       const char *cc)
{
    char *err = NULL, *out = NULL;
    char *cmd = tu_format("cd '%s' && %s " TU_STRICT " -O1 -o driver-%s "
                          "driver.c %s.c -lm", dir, cc, cc, name);
    int rc = tu_run(cmd, NULL, &err);
    ck_assert_msg(rc == 0 && err && err[0] == '\0',
                  "%s failed on the emitted code (status %d):\n%s", cc, rc,
                  err ? err : "");
    free(cmd);
    free(err);
    cmd = tu_format("cd '%s' && ./driver-%s", dir, cc);
    rc = tu_run(cmd, &out, NULL);
    ck_assert_msg(rc == 0, "driver built by %s exited with %d", cc, rc);
    free(cmd);
    return out;
}

/* ------------------------------------------- the compiler as a library */

/* Text printed to a FILE, collected in memory: tu_capture_open gives the
 * FILE, tu_capture_close closes it and returns the text (malloc'd). */
typedef struct TuCapture {
    char *text;
    size_t len;
    FILE *f;
} TuCapture;

static inline FILE *tu_capture_open(TuCapture *cap)
{
    cap->text = NULL;
    cap->len = 0;
    cap->f = open_memstream(&cap->text, &cap->len);
    ck_assert_ptr_nonnull(cap->f);
    return cap->f;
}

static inline char *tu_capture_close(TuCapture *cap)
{
    fclose(cap->f);
    return cap->text;
}

/* Compile model TEXT, read as the file PATH, into *c (release it with
 * dv_free).  Fails the test, quoting the diagnostics, on a model error. */
static inline void tu_compile(DvCompilation *c, const char *path,
                              const char *text)
{
    TuCapture cap;
    DvOptions opt;
    memset(&opt, 0, sizeof opt);   /* the defaults */
    opt.diag_out = tu_capture_open(&cap);
    int rc = dv_compile(c, path, text, strlen(text), &opt);
    char *diag = tu_capture_close(&cap);
    c->diag.out = NULL;     /* the capture is closed: say nothing more */
    ck_assert_msg(rc == 0 && c->diag.errors == 0, "model has errors:\n%s\n%s",
                  text, diag);
    free(diag);
}

/* The IR as ir_print writes it (malloc'd). */
static inline char *tu_ir_text(const Ir *ir)
{
    TuCapture cap;
    ir_print(ir, tu_capture_open(&cap));
    return tu_capture_close(&cap);
}


/* A compiled model with an evaluation of it, sizes at SIZES (one per
 * `size` name) or, with SIZES NULL, a model without sizes. */
typedef struct TuModel {
    DvCompilation c;
    Evaluation *ev;
} TuModel;

static inline TuModel *tu_model_sized(const char *text, const long *sizes)
{
    TuModel *m = calloc(1, sizeof *m);
    ck_assert_ptr_nonnull(m);
    tu_compile(&m->c, "t.dvs", text);
    m->ev = sizes ? eval_new_sized(m->c.ir, sizes) : eval_new(m->c.ir);
    return m;
}

static inline TuModel *tu_model(const char *text)
{
    return tu_model_sized(text, NULL);
}

static inline void tu_model_free(TuModel *m)
{
    eval_free(m->ev);
    dv_free(&m->c);
    free(m);
}

/* Set the n values of the param or input NAME. */
static inline void tu_model_set(TuModel *m, const char *name, const double *v,
                                size_t n)
{
    double *slot = eval_slot(m->ev, name);
    ck_assert_msg(slot != NULL, "no param or input '%s'", name);
    memcpy(slot, v, n * sizeof *v);
}

/* The array named NAME with role ROLE (TU_ANY_ROLE: the first of any role);
 * fails the test when there is none. */
#define TU_ANY_ROLE (-1)

static inline const IrArray *tu_array(const Ir *ir, const char *name, int role)
{
    for (int i = 0; i < ir->arrays.len; i++) {
        const IrArray *a = &ir->arrays.items[i];
        if (strcmp(a->name, name) == 0 && (role < 0 || (int)a->role == role))
            return a;
    }
    ck_abort_msg("no array %s with role %d (%d: any)", name, role,
                 TU_ANY_ROLE);
    return NULL;
}

/* ------------------------------------------------------ suite boilerplate */

/* A new test case NAME in suite S, with a timeout in seconds (0 keeps
 * Check's default). */
static inline TCase *tu_case(Suite *s, const char *name, double timeout)
{
    TCase *tc = tcase_create(name);
    if (timeout > 0)
        tcase_set_timeout(tc, timeout);
    suite_add_tcase(s, tc);
    return tc;
}

/* Add the tests listed (START_TEST names) to test case TC, in order. */
#define TU_ADD_TESTS(tc, ...)                                                  \
    do {                                                                       \
        TCase *tu_tc_ = (tc);                                                  \
        const TTest *const tu_tests_[] = {__VA_ARGS__};                        \
        for (size_t tu_k_ = 0;                                                 \
             tu_k_ < sizeof tu_tests_ / sizeof tu_tests_[0]; tu_k_++)          \
            tcase_add_test(tu_tc_, tu_tests_[tu_k_]);                          \
    } while (0)

/* Run every test of suite s; the exit status is non-zero on a failure. */
static inline int tu_main(Suite *s)
{
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_ENV);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}

#endif
