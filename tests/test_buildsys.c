/* test_buildsys.c - samples/build-systems under GNU make and under CMake
 * (with its Makefile generator and with Ninja), each in a temporary copy:
 * a first build whose driver prints the closed-form value and derivative,
 * a second that rebuilds nothing, then edits of the model: a comment
 * (recompiles nothing) and a constant (regenerates and recompiles the C
 * source, relinks the driver, leaves what includes the header alone). */
#include "testutil.h"

#include <math.h>
#include <time.h>

#define SAMPLE "samples/build-systems"

/* Build tools run apart from the make running the tests, with the
 * sample's own flags. */
#define CLEAN_ENV "env -u MAKEFLAGS -u MFLAGS -u MAKELEVEL -u CFLAGS "

/* ------------------------------------------------------------ helpers */

/* A temporary copy of the sample (malloc'd): its absolute path, free of
 * symbolic links, as CMake writes it. */
static char *sample_copy(void)
{
    char *tmp = tu_tmpdir();
    char *cmd = tu_format("cp -R " SAMPLE "/. '%s'", tmp);
    ck_assert_int_eq(tu_run(cmd, NULL, NULL), 0);
    free(cmd);
    char *real = realpath(tmp, NULL);
    ck_assert_ptr_nonnull(real);
    free(tmp);
    return real;
}

/* Run CMD in DIR; fails the test, quoting its output, on a non-zero
 * status or a compiler warning.  Returns its stdout (malloc'd). */
static char *run_in(const char *dir, const char *cmd)
{
    char *full = tu_format("cd '%s' && " CLEAN_ENV "%s", dir, cmd);
    char *out = NULL, *err = NULL;
    int rc = tu_run(full, &out, &err);
    ck_assert_msg(rc == 0, "%s: status %d\n%s%s", cmd, rc, out, err);
    ck_assert_msg(!strstr(out, "warning:") && !strstr(err, "warning:"),
                  "%s warned:\n%s%s", cmd, out, err);
    free(full);
    free(err);
    return out;
}

static void run_quietly(const char *dir, const char *cmd)
{
    free(run_in(dir, cmd));
}

static struct timespec mtime_of(const char *path)
{
    struct stat st;
    ck_assert_msg(stat(path, &st) == 0, "%s is missing", path);
    return st.st_mtim;
}

/* The files whose modification times tell what a build redid, under
 * their paths in the build directory; and those times. */
enum { C_SRC, HEADER, DEPS, DRIVER_OBJ, MODEL_OBJ, DRIVER, NFILES };

typedef struct Tree {
    const char *dir;            /* where the build runs */
    const char *files[NFILES];  /* relative to dir */
    struct timespec t[NFILES];
} Tree;

static void note_times(Tree *tree)
{
    for (int k = 0; k < NFILES; k++) {
        char *path = tu_format("%s/%s", tree->dir, tree->files[k]);
        tree->t[k] = mtime_of(path);
        free(path);
    }
}

/* Whether file K was written since note_times. */
static int rewritten(const Tree *tree, int k)
{
    char *path = tu_format("%s/%s", tree->dir, tree->files[k]);
    struct timespec now = mtime_of(path);
    free(path);
    return now.tv_sec != tree->t[k].tv_sec || now.tv_nsec != tree->t[k].tv_nsec;
}

/* Assert which files the last build wrote: bit K of MASK for file K. */
static void expect_rewritten(const Tree *tree, unsigned mask, const char *when)
{
    for (int k = 0; k < NFILES; k++)
        ck_assert_msg(rewritten(tree, k) == !!(mask & (1u << k)),
                      "%s: %s was %swritten", when, tree->files[k],
                      rewritten(tree, k) ? "" : "not ");
}

/* Wait until a file written now gets a later mtime than any written so
 * far in DIR (the clock of the file system may tick coarsely), so that an
 * edit is seen as newer than the last build. */
static void let_clock_tick(const char *dir)
{
    char *probe = tu_format("%s/.clock", dir);
    tu_write(probe, "");
    struct timespec before = mtime_of(probe), now = before;
    for (int tries = 0; tries < 400 && now.tv_sec == before.tv_sec &&
                        now.tv_nsec == before.tv_nsec; tries++) {
        struct timespec pause = {0, 5 * 1000 * 1000};
        nanosleep(&pause, NULL);
        tu_write(probe, "");
        now = mtime_of(probe);
    }
    unlink(probe);
    free(probe);
}

/* Replace the first FROM in the copy's model by TO. */
static void edit_model(const char *dir, const char *from, const char *to)
{
    let_clock_tick(dir);
    char *text = tu_read_in(dir, "tank.dvs");
    ck_assert_ptr_nonnull(strstr(text, from));
    char *edited = tu_replace(text, from, to);
    tu_write_in(dir, "tank.dvs", edited);
    free(text);
    free(edited);
}

/* The driver's misfit and derivative, against the closed form for the
 * sample's reading (c = 0.05, h0 = 1.44, measured = 1.2) with the time
 * step DT, derived by hand: with r = sqrt(h0) - c DT / 2 and the level
 * L = r^2, misfit = (L - measured)^2 / 2 and
 * d misfit / d c = (L - measured) * 2 r * (-DT / 2). */
static void expect_driver_output(const char *out, double dt)
{
    double r = sqrt(1.44) - 0.05 * dt / 2, level = r * r;
    double misfit = 0.5 * (level - 1.2) * (level - 1.2);
    double slope = -(level - 1.2) * r * dt;
    double got_misfit, got_slope;
    ck_assert_msg(sscanf(out, "misfit %lf\nd misfit / d c %lf", &got_misfit,
                         &got_slope) == 2, "driver printed:\n%s", out);
    ck_assert_msg(fabs(got_misfit - misfit) <= 1e-12 * fabs(misfit),
                  "misfit %.17g, closed form %.17g", got_misfit, misfit);
    ck_assert_msg(fabs(got_slope - slope) <= 1e-12 * fabs(slope),
                  "derivative %.17g, closed form %.17g", got_slope, slope);
}

static void expect_text(const char *path, const char *want)
{
    char *got = tu_read(path);
    ck_assert_msg(got != NULL, "%s is missing", path);
    ck_assert_str_eq(got, want);
    free(got);
}

/* --------------------------------------------------------------- make */

START_TEST(make_pattern_rule)
{
    char *dir = sample_copy();
    char *make = tu_format("make DERVISH='%s'", tu_abs_dervish());
    Tree tree = {dir, {"tank.c", "tank.h", "tank.d", "driver.o", "tank.o",
                       "driver"}, {{0, 0}}};
    char *out = run_in(dir, make);
    ck_assert_ptr_nonnull(strstr(out, "build -o tank.c --deps tank.d "
                                      "tank.dvs\n"));
    free(out);
    char *deps = tu_format("%s/tank.d", dir);
    expect_text(deps, "tank.c tank.h: tank.dvs\n");
    out = run_in(dir, "./driver");
    expect_driver_output(out, 2);
    free(out);

    /* nothing changed: make has nothing to do */
    note_times(&tree);
    char *question = tu_format("%s -q", make);
    run_quietly(dir, question);
    run_quietly(dir, make);
    expect_rewritten(&tree, 0, "a second make");

    /* a comment: dervish runs, and every file stays as it was */
    edit_model(dir, "# seconds between", "# the seconds between");
    out = run_in(dir, make);
    ck_assert_ptr_nonnull(strstr(out, "build -o tank.c"));
    expect_rewritten(&tree, 0, "make after a new comment");
    free(out);

    /* a constant: a new source, recompiled and linked; the header stays,
     * so the driver's object is not recompiled */
    edit_model(dir, "DT = 2 ", "DT = 4 ");
    run_quietly(dir, make);
    expect_rewritten(&tree, 1u << C_SRC | 1u << MODEL_OBJ | 1u << DRIVER,
                     "make after a new constant");
    out = run_in(dir, "./driver");
    expect_driver_output(out, 4);
    free(out);
    note_times(&tree);
    run_quietly(dir, make);
    expect_rewritten(&tree, 0, "make once more");

    tu_rmdir(dir);
    free(dir);
    free(make);
    free(deps);
    free(question);
}
END_TEST

/* -------------------------------------------------------------- CMake */

/* Configure the copy DIR with GENERATOR into DIR/build, then the same
 * steps as for make; with Ninja, `ninja -n` must also find no work after
 * each build. */
static void cmake_flow(const char *generator)
{
    char *dir = sample_copy();
    char *bin = tu_format("%s/build", dir);
    char *configure = tu_format("cmake -S . -B build -G '%s' -DDERVISH='%s'",
                                generator, tu_abs_dervish());
    run_quietly(dir, configure);
    int ninja = strcmp(generator, "Ninja") == 0;
    const char *build = "cmake --build build";
    Tree tree = {bin, {"tank.c", "tank.h", "tank.d",
                       "CMakeFiles/driver.dir/driver.c.o",
                       "CMakeFiles/driver.dir/tank.c.o", "driver"}, {{0, 0}}};
    run_quietly(dir, build);
    char *deps = tu_format("%s/tank.d", bin);
    char *rule = tu_format("tank.c tank.h: %s/tank.dvs\n", dir);
    expect_text(deps, rule);
    char *out = run_in(bin, "./driver");
    expect_driver_output(out, 2);
    free(out);

    note_times(&tree);
    run_quietly(dir, build);
    expect_rewritten(&tree, 0, "a second build");
    for (int edit = 0; edit < 2; edit++) {
        if (edit == 0)
            edit_model(dir, "# seconds between", "# the seconds between");
        else
            edit_model(dir, "DT = 2 ", "DT = 4 ");
        run_quietly(dir, build);
        expect_rewritten(&tree, edit ? 1u << C_SRC | 1u << MODEL_OBJ |
                                       1u << DRIVER : 0,
                         edit ? "a build after a new constant"
                              : "a build after a new comment");
        if (ninja) {
            out = run_in(dir, "ninja -C build -n");
            ck_assert_msg(strstr(out, "no work to do") != NULL,
                          "ninja -n after a build:\n%s", out);
            free(out);
        }
    }
    out = run_in(bin, "./driver");
    expect_driver_output(out, 4);
    free(out);

    tu_rmdir(dir);
    free(dir);
    free(bin);
    free(configure);
    free(deps);
    free(rule);
}

START_TEST(cmake_with_makefiles)
{
    if (!tu_have("cmake")) {
        printf("test_buildsys: no cmake (Debian package cmake): the CMake "
               "sample is not built\n");
        return;
    }
    cmake_flow("Unix Makefiles");
}
END_TEST

START_TEST(cmake_with_ninja)
{
    if (!tu_have("cmake") || !tu_have("ninja")) {
        printf("test_buildsys: no cmake or ninja (Debian packages cmake, "
               "ninja-build): the CMake sample is not built with Ninja\n");
        return;
    }
    cmake_flow("Ninja");
}
END_TEST

int main(void)
{
    Suite *s = suite_create("buildsys");
    TU_ADD_TESTS(tu_case(s, "make", 60), make_pattern_rule);
    TU_ADD_TESTS(tu_case(s, "cmake", 60), cmake_with_makefiles,
                 cmake_with_ninja);
    return tu_main(s);
}
