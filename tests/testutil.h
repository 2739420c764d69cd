/* testutil.h - shared helpers for the Check test programs: temporary
 * directories, files, running the dervish binary and C compilers, and
 * building emitted code with a driver.  Header-only (static functions) so
 * each test program stays one file. */
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

/* The dervish binary under test: $DERVISH, else build/dervish. */
static inline const char *tu_dervish(void)
{
    const char *d = getenv("DERVISH");
    return d && *d ? d : "build/dervish";
}

/* printf into a malloc'd string. */
static inline char *tu_format(const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    int n = vsnprintf(NULL, 0, fmt, ap);
    va_end(ap);
    char *s = malloc((size_t)n + 1);
    ck_assert_ptr_nonnull(s);
    va_start(ap, fmt);
    vsnprintf(s, (size_t)n + 1, fmt, ap);
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

/* Write MODEL to DIR/NAME.dvs and run dervish build on it there.  Returns
 * dervish's exit status; stderr goes to *err if err is not NULL. */
static inline int tu_build_model(const char *dir, const char *name,
                                 const char *model, char **err)
{
    char *path = tu_format("%s/%s.dvs", dir, name);
    tu_write(path, model);
    char *cmd = tu_format("cd '%s' && '%s' build %s.dvs", dir,
                          tu_abs_dervish(), name);
    int rc = tu_run(cmd, NULL, err);
    free(path);
    free(cmd);
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
