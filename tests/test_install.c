/* test_install.c - the man page docs/dervish.1 (linted, its sections, and
 * every option of `dervish --help` in it) and `make install` / `make
 * uninstall` into a DESTDIR under a fresh temporary directory. */
#include "testutil.h"

#include <ctype.h>
#include <libgen.h>

#define MAN_PAGE "docs/dervish.1"

/* The man page as mandoc renders it for a terminal, with the overstrikes
 * that make bold and underline removed (malloc'd), or NULL without
 * mandoc. */
static char *rendered_man_page(void)
{
    if (!tu_have("mandoc")) {
        printf("test_install: no mandoc (Debian package mandoc): "
               "the man page is not checked\n");
        return NULL;
    }
    char *text = NULL;
    ck_assert_int_eq(tu_run("mandoc -T ascii " MAN_PAGE, &text, NULL), 0);
    char *w = text;
    for (const char *r = text; *r; r++) {
        if (r[1] == '\b' && r[2])
            r++;            /* "x\bx" or "_\bx": keep the last */
        else
            *w++ = *r;
    }
    *w = '\0';
    return text;
}

/* True when WORD occurs in TEXT not as part of a longer option or word. */
static int has_word(const char *text, const char *word)
{
    size_t n = strlen(word);
    for (const char *at = strstr(text, word); at; at = strstr(at + 1, word)) {
        int before = at > text && (isalnum((unsigned char)at[-1]) ||
                                   at[-1] == '-');
        int after = isalnum((unsigned char)at[n]) || at[n] == '-';
        if (!before && !after)
            return 1;
    }
    return 0;
}

START_TEST(man_page_lints_clean)
{
    if (!tu_have("mandoc")) {
        printf("test_install: no mandoc: the man page is not linted\n");
        return;
    }
    char *out = NULL, *err = NULL;
    int rc = tu_run("mandoc -T lint -W warning " MAN_PAGE, &out, &err);
    ck_assert_msg(rc == 0 && !out[0] && !err[0], "mandoc (status %d):\n%s%s",
                  rc, out, err);
    free(out);
    free(err);
    if (tu_have("man")) {
        rc = tu_run("LC_ALL=C MANWIDTH=80 man --warnings -l " MAN_PAGE,
                    NULL, &err);
        ck_assert_msg(rc == 0 && !err[0], "man --warnings (status %d):\n%s",
                      rc, err);
        free(err);
    }
}
END_TEST

/* Every option and command the usage text names is in the man page, so
 * the two cannot drift apart. */
START_TEST(man_page_names_every_option)
{
    char *page = rendered_man_page();
    if (!page)
        return;
    char *usage = NULL;
    ck_assert_int_eq(tu_run_dervish(NULL, &usage, NULL, "--help"), 0);
    int options = 0;
    for (const char *p = usage; *p; p++) {
        /* an option starts a word: "-o FILE", "--sweep", "| --version" */
        int word_start = p == usage || strchr(" \t\n|[", p[-1]);
        if (*p != '-' || !word_start ||
            !(islower((unsigned char)p[1]) || p[1] == '-'))
            continue;
        size_t n = strspn(p, "-abcdefghijklmnopqrstuvwxyz");
        char *option = tu_format("%.*s", (int)n, p);
        ck_assert_msg(has_word(page, option),
                      "the man page does not name %s", option);
        free(option);
        options++;
        p += n - 1;
    }
    ck_assert_int_ge(options, 13);
    static const char *const commands[] = {"build", "check", "graph"};
    for (int k = 0; k < 3; k++) {
        char *in_usage = tu_format("dervish %s [options]", commands[k]);
        char *in_page = tu_format("dervish %s [", commands[k]);
        ck_assert_ptr_nonnull(strstr(usage, in_usage));
        ck_assert_msg(strstr(page, in_page), "no synopsis of %s", commands[k]);
        free(in_usage);
        free(in_page);
    }
    free(usage);
    free(page);
}
END_TEST

START_TEST(man_page_has_its_sections)
{
    char *page = rendered_man_page();
    if (!page)
        return;
    static const char *const sections[] = {
        "\nNAME\n", "\nSYNOPSIS\n", "\nDESCRIPTION\n", "\nFILES\n",
        "\nEXIT STATUS\n", "\nEXAMPLES\n", "\nCAVEATS\n",
    };
    for (size_t k = 0; k < sizeof sections / sizeof sections[0]; k++)
        ck_assert_msg(strstr(page, sections[k]), "no section %s",
                      sections[k] + 1);
    /* the statuses of docs/cli.md, each at the start of its entry */
    const char *status = strstr(page, "\nEXIT STATUS\n");
    for (int s = 0; s <= 3; s++) {
        char *entry = tu_format("\n     %d       ", s);
        ck_assert_msg(strstr(status, entry), "no exit status %d", s);
        free(entry);
    }
    /* the safety advice, with its parts */
    const char *caveats = strstr(page, "\nCAVEATS\n");
    char *flat = tu_format("%s", caveats);
    for (char *c = flat; *c; c++)
        if (*c == '\n' || *c == ' ')
            *c = ' ';
    static const char *const advice[] = {
        "can hurt someone", "verify the derivatives", "dervish check",
        "review the emitted code", "safety practice",
    };
    for (size_t k = 0; k < sizeof advice / sizeof advice[0]; k++) {
        /* line breaks fold into runs of spaces: compare word by word */
        char *words = tu_format("%s", advice[k]);
        const char *at = flat;
        for (char *w = strtok(words, " "); w && at; w = strtok(NULL, " ")) {
            at = strstr(at, w);
            if (at)
                at += strlen(w);
        }
        ck_assert_msg(at != NULL, "CAVEATS does not say '%s'", advice[k]);
        free(words);
    }
    free(flat);
    free(page);
}
END_TEST

/* The build directory of the dervish under test (malloc'd). */
static char *build_dir(void)
{
    char *copy = tu_format("%s", tu_dervish());
    char *dir = tu_format("%s", dirname(copy));
    free(copy);
    return dir;
}

/* Run `make TARGET` with VARS for the dervish under test; -o keeps make
 * from rebuilding it, so nothing is written outside DESTDIR.  The caller's
 * make flags (a jobserver, say) are not passed on. */
static int run_make(const char *target, const char *vars, char **err)
{
    char *b = build_dir();
    char *cmd = tu_format("umask 077 && env -u MAKEFLAGS -u MFLAGS -u MAKELEVEL"
                          " make -s %s B='%s' -o '%s/dervish' %s",
                          target, b, b, vars);
    int rc = tu_run(cmd, NULL, err);
    free(cmd);
    free(b);
    return rc;
}

static void assert_mode(const char *path, mode_t mode)
{
    struct stat st;
    ck_assert_msg(stat(path, &st) == 0, "%s was not installed", path);
    ck_assert_msg(S_ISREG(st.st_mode), "%s is not a regular file", path);
    ck_assert_msg((st.st_mode & 07777) == mode, "%s has mode %o, not %o",
                  path, (unsigned)(st.st_mode & 07777), (unsigned)mode);
}

START_TEST(install_and_uninstall_into_destdir)
{
    char *dest = tu_tmpdir();
    char *vars = tu_format("DESTDIR='%s' PREFIX=/usr", dest);
    char *bin = tu_format("%s/usr/bin/dervish", dest);
    char *man = tu_format("%s/usr/share/man/man1/dervish.1", dest);
    char *err = NULL;
    ck_assert_msg(run_make("install", vars, &err) == 0, "install: %s", err);
    free(err);
    /* the modes are install's, whatever the umask (077 here) */
    assert_mode(bin, 0755);
    assert_mode(man, 0644);
    char *page = tu_read(man), *source = tu_read(MAN_PAGE);
    ck_assert_str_eq(page, source);
    char *want = NULL, *got = NULL;
    char *cmd = tu_format("'%s' --version", bin);
    ck_assert_int_eq(tu_run_dervish(NULL, &want, NULL, "--version"), 0);
    ck_assert_int_eq(tu_run(cmd, &got, NULL), 0);
    ck_assert_str_eq(got, want);

    ck_assert_msg(run_make("uninstall", vars, &err) == 0, "uninstall: %s",
                  err);
    free(err);
    ck_assert(!tu_exists(bin));
    ck_assert(!tu_exists(man));
    char *left = NULL;
    char *find = tu_format("find '%s' ! -type d", dest);
    ck_assert_int_eq(tu_run(find, &left, NULL), 0);
    ck_assert_str_eq(left, "");
    tu_rmdir(dest);
    free(dest);
    free(vars);
    free(bin);
    free(man);
    free(page);
    free(source);
    free(want);
    free(got);
    free(cmd);
    free(left);
    free(find);
}
END_TEST

START_TEST(mandir_moves_the_man_page)
{
    char *dest = tu_tmpdir();
    char *vars = tu_format("DESTDIR='%s' PREFIX=/opt/dv MANDIR=/opt/man", dest);
    char *man = tu_format("%s/opt/man/man1/dervish.1", dest);
    char *bin = tu_format("%s/opt/dv/bin/dervish", dest);
    ck_assert_int_eq(run_make("install", vars, NULL), 0);
    assert_mode(man, 0644);
    assert_mode(bin, 0755);
    ck_assert_int_eq(run_make("uninstall", vars, NULL), 0);
    ck_assert(!tu_exists(man));
    ck_assert(!tu_exists(bin));
    tu_rmdir(dest);
    free(dest);
    free(vars);
    free(man);
    free(bin);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("install");
    TU_ADD_TESTS(tu_case(s, "man page", 30), man_page_lints_clean,
                 man_page_names_every_option, man_page_has_its_sections);
    TU_ADD_TESTS(tu_case(s, "install", 60), install_and_uninstall_into_destdir,
                 mandir_moves_the_man_page);
    return tu_main(s);
}
