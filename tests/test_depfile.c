/* test_depfile.c - `dervish build --deps` and write-if-changed: the exact
 * text of the make rule, its escapes as GNU make and ninja read them back,
 * and outputs that would get the bytes they hold keeping them, with their
 * modification time, mode and links, unless --always-write is given. */
#include "testutil.h"

#include "fileio.h"

#include <fcntl.h>
#include <time.h>

static const char model[] =
    "# the energy of a damped spring\n"
    "model spring\n"
    "const HALF = 0.5\n"
    "param k, c\n"
    "input x, v\n"
    "e = HALF * k * x^2 + HALF * v^2 * exp(-c)\n"
    "output e\n";

/* An mtime no build writes: 2001-09-09, set on files to see if they are
 * replaced. */
#define OLD ((time_t)1000000000)

/* Every run of make is kept apart from the make running the tests, and
 * without its built-in rules, which could make a deleted input. */
#define MAKE "env -u MAKEFLAGS -u MFLAGS -u MAKELEVEL make -r"

/* ------------------------------------------------------------ helpers */

/* The rule fileio_make_rule writes (malloc'd). */
static char *rule_text(const char *const *targets, int ntargets,
                       const char *const *inputs, int ninputs)
{
    Buf b = {0};
    fileio_make_rule(&b, targets, ntargets, inputs, ninputs);
    return b.data;
}

static void set_mtime(const char *dir, const char *name, time_t t)
{
    char *path = tu_format("%s/%s", dir, name);
    struct timespec ts[2] = {{t, 0}, {t, 0}};
    ck_assert_msg(utimensat(AT_FDCWD, path, ts, 0) == 0, "cannot set the "
                  "times of %s", path);
    free(path);
}

static struct stat stat_in(const char *dir, const char *name)
{
    char *path = tu_format("%s/%s", dir, name);
    struct stat st;
    ck_assert_msg(stat(path, &st) == 0, "%s is missing", path);
    free(path);
    return st;
}

/* Whether DIR/NAME still has the mtime OLD, i.e. was not replaced. */
static int kept(const char *dir, const char *name)
{
    struct stat st = stat_in(dir, name);
    return st.st_mtim.tv_sec == OLD && st.st_mtim.tv_nsec == 0;
}

static void expect_text(const char *dir, const char *name, const char *want)
{
    char *got = tu_read_in(dir, name);
    ck_assert_msg(got != NULL, "%s/%s is missing", dir, name);
    ck_assert_str_eq(got, want);
    free(got);
}

/* Run dervish with ARGS in DIR and assert success with nothing printed. */
static void build(const char *dir, const char *args)
{
    char *err = NULL;
    int rc = tu_dervish_capped(20, dir, &err, args);
    ck_assert_msg(rc == 0 && !err[0], "dervish %s: status %d\n%s", args, rc,
                  err);
    free(err);
}


/* ------------------------------------------------------ the rule text */

/* The layout of docs/cli.md: targets, a colon, the inputs with the model
 * named first, then an empty rule for every other input. */
START_TEST(rule_names_targets_then_inputs)
{
    const char *const targets[] = {"gen/kiln.c", "include/kiln.h"};
    const char *const one[] = {"kiln.dvs"};
    const char *const three[] = {"kiln.dvs", "common.dvs", "../units.dvs"};
    char *text = rule_text(targets, 2, one, 1);
    ck_assert_str_eq(text, "gen/kiln.c include/kiln.h: kiln.dvs\n");
    free(text);
    text = rule_text(targets, 2, three, 3);
    ck_assert_str_eq(text, "gen/kiln.c include/kiln.h: kiln.dvs common.dvs "
                           "../units.dvs\ncommon.dvs:\n../units.dvs:\n");
    free(text);
}
END_TEST

/* Paths that need escapes, each written as a target and as a
 * prerequisite.  The escapes are GNU make's reading rules (its manual,
 * "Rule Syntax", and its treatment of backslashes before whitespace);
 * reading_back_with_make below has make itself confirm every one. */
static const struct {
    const char *path, *as_target, *as_prereq;
} escapes[] = {
    {"with space.dvs", "with\\ space.dvs", "with\\ space.dvs"},
    {"hash#1.dvs", "hash\\#1.dvs", "hash\\#1.dvs"},
    {"dollar$x.dvs", "dollar$$x.dvs", "dollar$$x.dvs"},
    {"colon:y.dvs", "colon\\:y.dvs", "colon\\:y.dvs"},
    /* '%' makes a pattern of a target, but is plain in a prerequisite */
    {"pct%z.dvs", "pct\\%z.dvs", "pct%z.dvs"},
    /* a backslash before an escaped character is doubled, and one more
     * added; others stay single */
    {"back\\ slash.dvs", "back\\\\\\ slash.dvs", "back\\\\\\ slash.dvs"},
    {"two\\\\ slashes.dvs", "two\\\\\\\\\\ slashes.dvs",
     "two\\\\\\\\\\ slashes.dvs"},
    {"back\\#.dvs", "back\\\\\\#.dvs", "back\\\\\\#.dvs"},
    {"mid\\dle.dvs", "mid\\dle.dvs", "mid\\dle.dvs"},
};

START_TEST(rule_escapes_what_make_reads_specially)
{
    for (size_t i = 0; i < sizeof escapes / sizeof escapes[0]; i++) {
        const char *const targets[] = {"m.c"};
        const char *const inputs[] = {"m.dvs", escapes[i].path};
        char *text = rule_text(targets, 1, inputs, 2);
        char *want = tu_format("m.c: m.dvs %s\n%s:\n", escapes[i].as_prereq,
                               escapes[i].as_target);
        ck_assert_msg(strcmp(text, want) == 0, "'%s' gives\n%sinstead of\n%s",
                      escapes[i].path, text, want);
        free(text);
        free(want);
        /* a path written as the first target */
        const char *const as_target[] = {escapes[i].path};
        const char *const model_only[] = {"m.dvs"};
        text = rule_text(as_target, 1, model_only, 1);
        want = tu_format("%s: m.dvs\n", escapes[i].as_target);
        ck_assert_str_eq(text, want);
        free(text);
        free(want);
    }
}
END_TEST

START_TEST(rule_refuses_what_make_cannot_hold)
{
    ck_assert_str_eq(fileio_rule_refuses("two\nlines.dvs"), "a line break");
    ck_assert_str_eq(fileio_rule_refuses("cr\r.dvs"), "a line break");
    ck_assert_str_eq(fileio_rule_refuses("tab\t.dvs"), "a tab");
    ck_assert_str_eq(fileio_rule_refuses("a;b.dvs"), "';'");
    ck_assert_str_eq(fileio_rule_refuses("a=b.dvs"), "'='");
    ck_assert_str_eq(fileio_rule_refuses("a|b.dvs"), "'|'");
    ck_assert_str_eq(fileio_rule_refuses("end\\"), "a backslash at its end");
    for (size_t i = 0; i < sizeof escapes / sizeof escapes[0]; i++)
        ck_assert_ptr_null(fileio_rule_refuses(escapes[i].path));
}
END_TEST

/* GNU make, the reference for the format, reads the rule back: with every
 * file present and the targets newer, `make -q TARGET` finds them up to
 * date; an input made newer, or deleted, makes each target out of date
 * (status 1: the empty rules keep make from stopping with status 2).  A
 * name make read wrongly would be a file that does not exist (status 2),
 * or leave the target without that input (status 0). */
START_TEST(reading_back_with_make)
{
    if (!tu_have("make")) {
        printf("test_depfile: no make: the rule is not read back\n");
        return;
    }
    char *dir = tu_tmpdir();
    char *sub = tu_format("%s/gen dir", dir);
    ck_assert_int_eq(mkdir(sub, 0700), 0);
    enum { NIN = sizeof escapes / sizeof escapes[0] + 1 };
    const char *const targets[] = {"gen dir/a#1.c", "50%.h"};
    const char *inputs[NIN] = {"m.dvs"};
    for (int i = 1; i < NIN; i++)
        inputs[i] = escapes[i - 1].path;
    char *text = rule_text(targets, 2, inputs, NIN);
    tu_write_in(dir, "rule.d", text);
    /* recipes for the targets: without one, make -q has nothing to run */
    tu_write_in(dir, "Makefile", "include rule.d\n%.c:\n\t@:\n%.h:\n\t@:\n");
    for (int i = 0; i < NIN; i++) {
        tu_write_in(dir, inputs[i], "");
        set_mtime(dir, inputs[i], OLD);
    }
    for (int t = 0; t < 2; t++) {
        tu_write_in(dir, targets[t], "");
        set_mtime(dir, targets[t], OLD + 100);
    }
    for (int change = -1; change < NIN; change++) {
        /* change -1: nothing changed; else input `change` is newer, then
         * (for the inputs with an empty rule) deleted */
        for (int deleted = 0; deleted <= (change > 0); deleted++) {
            if (change >= 0 && !deleted)
                set_mtime(dir, inputs[change], OLD + 200);
            char *path = change >= 0 ? tu_format("%s/%s", dir, inputs[change])
                                     : NULL;
            if (deleted)
                ck_assert_int_eq(unlink(path), 0);
            for (int t = 0; t < 2; t++) {
                char *err = NULL;
                char *cmd = tu_format("cd '%s' && " MAKE " -q '%s'", dir,
                                      targets[t]);
                int rc = tu_run(cmd, NULL, &err);
                ck_assert_msg(rc == (change >= 0), "make -q '%s' with '%s' %s:"
                              " status %d\n%s\nrule:\n%s", targets[t],
                              change >= 0 ? inputs[change] : "nothing",
                              deleted ? "deleted" : "newer", rc, err, text);
                free(err);
                free(cmd);
            }
            if (deleted)
                tu_write(path, "");
            if (change >= 0)
                set_mtime(dir, inputs[change], OLD);
            free(path);
        }
    }
    tu_rmdir(dir);
    free(dir);
    free(sub);
    free(text);
}
END_TEST

/* A model path with a space, '#', ':' and '$', built by dervish under
 * ninja: `ninja -t deps` lists the path as given, and a newer model makes
 * the generated files out of date although build.ninja does not name it. */
START_TEST(reading_back_with_ninja)
{
    if (!tu_have("ninja")) {
        printf("test_depfile: no ninja: the rule is not read by ninja\n");
        return;
    }
    char *dir = tu_tmpdir();
    tu_write_in(dir, "spring 1#a:b$x.dvs", model);
    char *ninja = tu_format(
        "rule dervish\n"
        "  command = '%s' build -o spring.c --deps spring.d "
        "'spring 1#a:b$$x.dvs'\n"
        "  depfile = spring.d\n"
        "  deps = gcc\n"
        "build spring.c | spring.h: dervish\n", tu_abs_dervish());
    tu_write_in(dir, "build.ninja", ninja);
    char *out = NULL, *cmd = tu_format("cd '%s' && ninja", dir);
    ck_assert_int_eq(tu_run(cmd, &out, NULL), 0);
    free(out);
    free(cmd);
    cmd = tu_format("cd '%s' && ninja -t deps spring.c", dir);
    ck_assert_int_eq(tu_run(cmd, &out, NULL), 0);
    ck_assert_msg(strstr(out, "\n    spring 1#a:b$x.dvs\n\n") != NULL,
                  "ninja -t deps:\n%s", out);
    free(out);
    free(cmd);
    cmd = tu_format("cd '%s' && ninja -n", dir);
    ck_assert_int_eq(tu_run(cmd, &out, NULL), 0);
    ck_assert_msg(strstr(out, "no work to do") != NULL, "ninja -n:\n%s", out);
    free(out);
    set_mtime(dir, "spring.c", OLD + 100);
    set_mtime(dir, "spring.h", OLD + 100);
    set_mtime(dir, "spring 1#a:b$x.dvs", OLD + 200);
    ck_assert_int_eq(tu_run(cmd, &out, NULL), 0);
    ck_assert_msg(strstr(out, "[1/1]") != NULL, "ninja -n after the model "
                  "changed:\n%s", out);
    tu_rmdir(dir);
    free(dir);
    free(ninja);
    free(out);
    free(cmd);
}
END_TEST

/* ---------------------------------------------- the --deps file itself */

START_TEST(deps_file_exact_text)
{
    static const struct { const char *args, *deps, *text; } cases[] = {
        /* outputs in other directories, a model name to escape */
        {"build -o gen/s.c --header include/s.h --deps deps/s.d "
         "'my model#1.dvs'", "deps/s.d",
         "gen/s.c include/s.h: my\\ model\\#1.dvs\n"},
        /* the default outputs are here, whatever the model's directory */
        {"build --deps s.d sub/spring.dvs", "s.d",
         "spring.c spring.h: sub/spring.dvs\n"},
        /* the header beside the source, both with characters to escape */
        {"build -o 'out put/s$1.c' --deps s.d spring.dvs", "s.d",
         "out\\ put/s$$1.c out\\ put/s$$1.h: spring.dvs\n"},
        {"build -o 'gen/a:b.c' --deps 'deps/a b.d' 'my model#1.dvs'",
         "deps/a b.d", "gen/a\\:b.c gen/a\\:b.h: my\\ model\\#1.dvs\n"},
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        char *dir = tu_tmpdir();
        static const char *const subs[] = {"gen", "include", "deps", "sub",
                                           "out put"};
        for (size_t k = 0; k < sizeof subs / sizeof subs[0]; k++) {
            char *sub = tu_format("%s/%s", dir, subs[k]);
            ck_assert_int_eq(mkdir(sub, 0700), 0);
            free(sub);
        }
        tu_write_in(dir, "my model#1.dvs", model);
        tu_write_in(dir, "spring.dvs", model);
        tu_write_in(dir, "sub/spring.dvs", model);
        build(dir, cases[i].args);
        expect_text(dir, cases[i].deps, cases[i].text);
        tu_rmdir(dir);
        free(dir);
    }
}
END_TEST

/* An absolute model path stays absolute, so the rule holds wherever make
 * runs. */
START_TEST(deps_file_keeps_an_absolute_model_path)
{
    char *dir = tu_tmpdir();
    tu_write_in(dir, "spring.dvs", model);
    char *args = tu_format("build --deps s.d '%s/spring.dvs'", dir);
    build(dir, args);
    char *want = tu_format("spring.c spring.h: %s/spring.dvs\n", dir);
    expect_text(dir, "s.d", want);
    tu_rmdir(dir);
    free(dir);
    free(args);
    free(want);
}
END_TEST

/* A special file is written in place every time: the rule reaches a pipe. */
START_TEST(deps_to_a_pipe)
{
    char *dir = tu_tmpdir();
    tu_write_in(dir, "spring.dvs", model);
    for (int run = 0; run < 2; run++) {
        char *cmd = tu_format("cd '%s' && timeout 20 '%s' build --deps "
                              "/dev/stdout spring.dvs | cat", dir,
                              tu_abs_dervish());
        char *out = NULL, *err = NULL;
        ck_assert_int_eq(tu_run_unhung(cmd, &out, &err), 0);
        ck_assert_str_eq(err, "");
        ck_assert_str_eq(out, "spring.c spring.h: spring.dvs\n");
        free(cmd);
        free(out);
        free(err);
    }
    tu_expect_listing(dir, "spring.c\nspring.dvs\nspring.h\n");
    tu_rmdir(dir);
    free(dir);
}
END_TEST

/* ---------------------------------------------------- write-if-changed */

/* A new directory with spring.dvs built into spring.c, spring.h and s.d,
 * all three then given the mtime OLD. */
static char *built_project(void)
{
    char *dir = tu_tmpdir();
    tu_write_in(dir, "spring.dvs", model);
    build(dir, "build --deps s.d spring.dvs");
    set_mtime(dir, "spring.c", OLD);
    set_mtime(dir, "spring.h", OLD);
    set_mtime(dir, "s.d", OLD);
    return dir;
}

START_TEST(identical_outputs_keep_their_mtime)
{
    char *dir = built_project();
    char *c = tu_read_in(dir, "spring.c");
    build(dir, "build --deps s.d spring.dvs");
    ck_assert(kept(dir, "spring.c"));
    ck_assert(kept(dir, "spring.h"));
    ck_assert(kept(dir, "s.d"));
    expect_text(dir, "spring.c", c);
    tu_expect_listing(dir, "s.d\nspring.c\nspring.dvs\nspring.h\n");
    tu_rmdir(dir);
    free(dir);
    free(c);
}
END_TEST

/* Each output is replaced exactly when its own text changes. */
START_TEST(changed_outputs_are_replaced_one_by_one)
{
    char *dir = built_project();
    char *c = tu_read_in(dir, "spring.c"), *h = tu_read_in(dir, "spring.h");
    /* a constant changes the source only */
    char *edited = tu_replace(model, "HALF = 0.5", "HALF = 0.25");
    tu_write_in(dir, "spring.dvs", edited);
    build(dir, "build --deps s.d spring.dvs");
    ck_assert(!kept(dir, "spring.c"));
    char *c2 = tu_read_in(dir, "spring.c");
    ck_assert_str_ne(c2, c);
    ck_assert(kept(dir, "spring.h"));
    ck_assert(kept(dir, "s.d"));
    /* a new param changes the header too */
    set_mtime(dir, "spring.c", OLD);
    char *more = tu_replace(edited, "param k, c", "param k, c, d");
    char *used = tu_replace(more, "exp(-c)", "exp(-c) + d");
    tu_write_in(dir, "spring.dvs", used);
    build(dir, "build --deps s.d spring.dvs");
    ck_assert(!kept(dir, "spring.c"));
    ck_assert(!kept(dir, "spring.h"));
    ck_assert(kept(dir, "s.d"));
    char *h2 = tu_read_in(dir, "spring.h");
    ck_assert_str_ne(h2, h);
    /* the header named another way changes the rule only */
    set_mtime(dir, "spring.c", OLD);
    set_mtime(dir, "spring.h", OLD);
    build(dir, "build --header ./spring.h --deps s.d spring.dvs");
    ck_assert(kept(dir, "spring.c"));
    ck_assert(kept(dir, "spring.h"));
    ck_assert(!kept(dir, "s.d"));
    expect_text(dir, "s.d", "spring.c ./spring.h: spring.dvs\n");
    tu_expect_listing(dir, "s.d\nspring.c\nspring.dvs\nspring.h\n");
    tu_rmdir(dir);
    free(dir);
    free(c);
    free(h);
    free(edited);
    free(c2);
    free(more);
    free(used);
    free(h2);
}
END_TEST

START_TEST(always_write_replaces_identical_outputs)
{
    char *dir = built_project();
    char *c = tu_read_in(dir, "spring.c");
    build(dir, "build --always-write --deps s.d spring.dvs");
    ck_assert(!kept(dir, "spring.c"));
    ck_assert(!kept(dir, "spring.h"));
    ck_assert(!kept(dir, "s.d"));
    expect_text(dir, "spring.c", c);
    expect_text(dir, "s.d", "spring.c spring.h: spring.dvs\n");
    tu_expect_listing(dir, "s.d\nspring.c\nspring.dvs\nspring.h\n");
    tu_rmdir(dir);
    free(dir);
    free(c);
}
END_TEST

/* A file left alone keeps its mode and its hard links; a replaced one is
 * a new file (0666 less the umask, its own inode). */
START_TEST(kept_file_keeps_mode_and_links)
{
    char *dir = built_project();
    char *src = tu_format("%s/spring.c", dir), *twin = tu_format("%s/twin.c",
                                                                 dir);
    ck_assert_int_eq(chmod(src, 0600), 0);
    ck_assert_int_eq(link(src, twin), 0);
    build(dir, "build --deps s.d spring.dvs");
    struct stat a = stat_in(dir, "spring.c"), b = stat_in(dir, "twin.c");
    ck_assert_uint_eq(a.st_mode & 07777, 0600);
    ck_assert(a.st_ino == b.st_ino);
    char *cmd = tu_format("cd '%s' && umask 022 && timeout 20 '%s' build "
                          "--always-write --deps s.d spring.dvs", dir,
                          tu_abs_dervish());
    ck_assert_int_eq(tu_run_unhung(cmd, NULL, NULL), 0);
    a = stat_in(dir, "spring.c");
    b = stat_in(dir, "twin.c");
    ck_assert_uint_eq(a.st_mode & 07777, 0644);
    ck_assert(a.st_ino != b.st_ino);
    tu_rmdir(dir);
    free(dir);
    free(src);
    free(twin);
    free(cmd);
}
END_TEST

/* An output named through a symbolic link: the file behind it is compared
 * and left alone, and the link stays a link. */
START_TEST(kept_file_behind_a_link)
{
    char *dir = tu_tmpdir();
    tu_write_in(dir, "spring.dvs", model);
    char *link_path = tu_format("%s/link.h", dir);
    tu_write_in(dir, "real.h", "/* real.h from an earlier build */\n");
    ck_assert_int_eq(symlink("real.h", link_path), 0);
    build(dir, "build --header link.h spring.dvs");
    set_mtime(dir, "real.h", OLD);
    build(dir, "build --header link.h spring.dvs");
    ck_assert(kept(dir, "real.h"));
    struct stat st;
    ck_assert_int_eq(lstat(link_path, &st), 0);
    ck_assert_msg(S_ISLNK(st.st_mode), "link.h was replaced by a file");
    tu_expect_listing(dir, "link.h\nreal.h\nspring.c\nspring.dvs\n");
    tu_rmdir(dir);
    free(dir);
    free(link_path);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("depfile");
    TU_ADD_TESTS(tu_case(s, "rule text", 30), rule_names_targets_then_inputs,
                 rule_escapes_what_make_reads_specially,
                 rule_refuses_what_make_cannot_hold);
    TU_ADD_TESTS(tu_case(s, "read back", 60), reading_back_with_make,
                 reading_back_with_ninja);
    TU_ADD_TESTS(tu_case(s, "--deps", 30), deps_file_exact_text,
                 deps_file_keeps_an_absolute_model_path, deps_to_a_pipe);
    TU_ADD_TESTS(tu_case(s, "write if changed", 30),
                 identical_outputs_keep_their_mtime,
                 changed_outputs_are_replaced_one_by_one,
                 always_write_replaces_identical_outputs,
                 kept_file_keeps_mode_and_links, kept_file_behind_a_link);
    return tu_main(s);
}
