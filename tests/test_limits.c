/* test_limits.c - dervish at the edges of its input: huge nesting, huge
 * lines and names, array extents past every integer type, odd bytes and
 * line ends, empty and unreadable files.  Each case either builds or fails
 * with an exact first message and exit status; none may crash (a signal,
 * status 128 and up) or run past 20 s. */
#include "testutil.h"

/* N copies of the text UNIT (malloc'd). */
static char *repeat(const char *unit, size_t n)
{
    size_t len = strlen(unit);
    char *s = malloc(len * n + 1);
    ck_assert_ptr_nonnull(s);
    for (size_t i = 0; i < n; i++)
        memcpy(s + i * len, unit, len);
    s[len * n] = '\0';
    return s;
}

/* Write LEN bytes (NULs allowed) to DIR/NAME. */
static void write_raw(const char *dir, const char *name, const char *data,
                      size_t len)
{
    char *path = tu_format("%s/%s", dir, name);
    FILE *f = fopen(path, "wb");
    ck_assert_msg(f != NULL, "cannot write %s", path);
    ck_assert_uint_eq(fwrite(data, 1, len, f), len);
    fclose(f);
    free(path);
}

/* Build DIR/FILE; assert the exit status and the first line of stderr
 * (NULL: stderr must be empty). */
static void expect_build(const char *dir, const char *file, int status,
                         const char *first_line)
{
    char *err = NULL;
    char *args = tu_format("build '%s'", file);
    int rc = tu_dervish_capped(20, dir, &err, args);
    char *first = tu_first_line(err);
    ck_assert_msg(rc == status, "%s: expected status %d, found %d:\n%s",
                  file, status, rc, err);
    if (first_line)
        ck_assert_str_eq(first, first_line);
    else
        ck_assert_msg(err[0] == '\0', "%s: unexpected messages:\n%s", file,
                      err);
    free(first);
    free(args);
    free(err);
}

/* ------------------------------------------------------------- nesting */

START_TEST(parentheses_100000_deep)
{
    char *dir = tu_tmpdir();
    char *open = repeat("(", 100000), *close = repeat(")", 100000);
    char *model = tu_format("param a\ny = %sa%s\noutput y\n", open, close);
    tu_write_in(dir, "deep.dvs", model);
    /* the 10001st '(' is at column 5 + 10000 */
    expect_build(dir, "deep.dvs", 1,
                 "deep.dvs:2:10005: error: brackets nested too deeply (limit "
                 "is 10000): split the expression into named steps");
    tu_rmdir(dir);
    free(dir);
    free(open);
    free(close);
    free(model);
}
END_TEST

START_TEST(parentheses_at_the_limit_build)
{
    char *dir = tu_tmpdir();
    char *open = repeat("(", 10000), *close = repeat(")", 10000);
    char *model = tu_format("param a\ny = %sa%s * a\noutput y\n", open, close);
    tu_write_in(dir, "deep.dvs", model);
    expect_build(dir, "deep.dvs", 0, NULL);
    tu_rmdir(dir);
    free(dir);
    free(open);
    free(close);
    free(model);
}
END_TEST

/* A tower a^a^...^a of 9999 levels, inside the nesting limit: it must
 * build, or fail with a model error, within 10 s (the program's budget
 * allows no more). */
START_TEST(power_tower_at_the_nesting_limit)
{
    char *dir = tu_tmpdir();
    char *tower = repeat("a^", 9998);
    char *model = tu_format("param a\ny = %sa\noutput y\n", tower);
    tu_write_in(dir, "tower.dvs", model);
    char *err = NULL;
    int rc = tu_dervish_capped(10, dir, &err, "build tower.dvs");
    ck_assert_msg(rc == 0 || (rc == 1 && strncmp(err, "tower.dvs:2:", 12)
                                             == 0),
                  "status %d:\n%.300s", rc, err);
    tu_rmdir(dir);
    free(dir);
    free(tower);
    free(model);
    free(err);
}
END_TEST

/* ---------------------------------------------------------- long lines */

START_TEST(line_of_250000_terms)
{
    /* "a + " 250,000 times: a line of a million characters.  The sum is a
     * chain of 249,999 additions, past the nesting limit. */
    char *dir = tu_tmpdir();
    char *terms = repeat("a + ", 250000);
    terms[strlen(terms) - 3] = '\0';            /* drop the last " + " */
    ck_assert_uint_eq(strlen(terms), 999997);
    char *model = tu_format("param a\ny = %s\noutput y\n", terms);
    tu_write_in(dir, "wide.dvs", model);
    expect_build(dir, "wide.dvs", 1,
                 "wide.dvs:2:5: error: expression nested too deeply (limit "
                 "is 10000 levels): split it into named steps");
    tu_rmdir(dir);
    free(dir);
    free(terms);
    free(model);
}
END_TEST

START_TEST(name_of_a_million_characters)
{
    char *dir = tu_tmpdir();
    char *name = repeat("v", 1000000);
    char *model = tu_format("param %s\ny = %s * %s\noutput y\n", name, name,
                            name);
    tu_write_in(dir, "wide.dvs", model);
    expect_build(dir, "wide.dvs", 0, NULL);
    char *header = tu_read_in(dir, "wide.h");
    char *member = tu_format("double %s;", name);
    ck_assert_ptr_nonnull(header);
    ck_assert_msg(strstr(header, member) != NULL,
                  "the header does not declare the long param");
    tu_rmdir(dir);
    free(dir);
    free(name);
    free(model);
    free(header);
    free(member);
}
END_TEST

/* A name of 10^5 characters through dervish, both C compilers and a run:
 * y = x * x at x = 3 is 9 with dy/dx = 2x = 6 (closed form). */
START_TEST(name_of_100000_characters_runs)
{
    char *dir = tu_tmpdir();
    char *name = repeat("gain", 25000);
    char *model = tu_format("model longname\nparam %s\ny = %s * %s\n"
                            "output y\n", name, name, name);
    tu_write_in(dir, "longname.dvs", model);
    expect_build(dir, "longname.dvs", 0, NULL);
    char *driver = tu_format(
        "#include <stdio.h>\n#include \"longname.h\"\n"
        "int main(void)\n{\n"
        "    longname_param p, g;\n"
        "    p.%s = 3.0;\n"
        "    double v = longname_value(&p);\n"
        "    double w = longname_gradient(&p, &g);\n"
        "    printf(\"%%.17g %%.17g %%.17g\\n\", v, w, g.%s);\n"
        "    return 0;\n}\n", name, name);
    tu_write_in(dir, "driver.c", driver);
    int ran = 0;
    for (size_t i = 0; i < sizeof tu_compilers / sizeof tu_compilers[0]; i++) {
        if (!tu_have(tu_compilers[i]))
            continue;
        char *out = tu_compile_and_run(dir, "longname", tu_compilers[i]);
        ck_assert_str_eq(out, "9 9 6\n");
        free(out);
        ran++;
    }
    ck_assert_int_gt(ran, 0);
    tu_rmdir(dir);
    free(dir);
    free(name);
    free(model);
    free(driver);
}
END_TEST

/* -------------------------------------------------------- array extents */

START_TEST(element_counts_past_2_to_the_31_and_63)
{
    static const char *const dims[] = {
        "65536, 32768",                         /* 2^31 */
        "2147483647, 2147483647, 2147483647",   /* about 2^93 */
        "65536, 65536, 65536, 65536",           /* 2^64 */
    };
    char *dir = tu_tmpdir();
    for (size_t i = 0; i < sizeof dims / sizeof dims[0]; i++) {
        char *model = tu_format("param x[%s]\ny = x\noutput y\n", dims[i]);
        tu_write_in(dir, "big.dvs", model);
        expect_build(dir, "big.dvs", 1,
                     "big.dvs:1:7: error: 'x' would have more than "
                     "2147483647 elements, too many for one array");
        free(model);
    }
    tu_rmdir(dir);
    free(dir);
}
END_TEST

START_TEST(largest_extent_builds)
{
    char *dir = tu_tmpdir();
    tu_write_in(dir, "big.dvs", "param x[2147483647]\n"
                                "y = sum(i: x[i])\noutput y\n");
    expect_build(dir, "big.dvs", 0, NULL);
    char *header = tu_read_in(dir, "big.h");
    ck_assert_ptr_nonnull(header);
    ck_assert_ptr_nonnull(strstr(header, "double x[2147483647];"));
    tu_rmdir(dir);
    free(dir);
    free(header);
}
END_TEST

START_TEST(four_gigabyte_extent)
{
    static const char *const decls[] = {
        "input x[4294967296]",
        "const N = 4294967296\ninput x[N]",
    };
    char *dir = tu_tmpdir();
    for (size_t i = 0; i < sizeof decls / sizeof decls[0]; i++) {
        char *model = tu_format("param a\n%s\ny = a\noutput y\n", decls[i]);
        tu_write_in(dir, "big.dvs", model);
        char *first = tu_format(
            "big.dvs:%d:9: error: a dimension must be a whole number from 1 "
            "to 2147483647, not 4294967296", 2 + (int)i);
        expect_build(dir, "big.dvs", 1, first);
        free(first);
        free(model);
    }
    tu_rmdir(dir);
    free(dir);
}
END_TEST

/* ------------------------------------------------------------ the bytes */

START_TEST(nul_byte_in_the_middle)
{
    static const char model[] = "param a\ny = a *\0 a\noutput y\n";
    char *dir = tu_tmpdir();
    write_raw(dir, "nul.dvs", model, sizeof model - 1);
    expect_build(dir, "nul.dvs", 1,
                 "nul.dvs:2:8: error: NUL byte in the model file: save it as "
                 "plain text");
    tu_rmdir(dir);
    free(dir);
}
END_TEST

START_TEST(invalid_utf8_outside_a_comment)
{
    char *dir = tu_tmpdir();
    tu_write_in(dir, "bytes.dvs", "param a\ny = a * \xff\xfe a\noutput y\n");
    expect_build(dir, "bytes.dvs", 1,
                 "bytes.dvs:2:9: error: non-ASCII text outside a comment: "
                 "names and operators are ASCII");
    tu_rmdir(dir);
    free(dir);
}
END_TEST

/* Build TEXT as DIR/NAME.dvs and return the C source and header, joined
 * (malloc'd). */
static char *build_text(const char *dir, const char *name, const char *text,
                        size_t len)
{
    char *file = tu_format("%s.dvs", name);
    write_raw(dir, file, text, len);
    expect_build(dir, file, 0, NULL);
    char *c_name = tu_format("%s.c", name), *h_name = tu_format("%s.h", name);
    char *c = tu_read_in(dir, c_name), *h = tu_read_in(dir, h_name);
    ck_assert_ptr_nonnull(c);
    ck_assert_ptr_nonnull(h);
    char *both = tu_format("%s\n/* header */\n%s", c, h);
    free(c);
    free(h);
    free(c_name);
    free(h_name);
    free(file);
    return both;
}

/* The same model in two directories under one file name: FIRST and SECOND
 * must give byte-identical C. */
static void expect_same_c(const char *first, size_t first_len,
                          const char *second, size_t second_len)
{
    char *a = tu_tmpdir(), *b = tu_tmpdir();
    char *c1 = build_text(a, "plant", first, first_len);
    char *c2 = build_text(b, "plant", second, second_len);
    ck_assert_str_eq(c2, c1);
    tu_rmdir(a);
    tu_rmdir(b);
    free(a);
    free(b);
    free(c1);
    free(c2);
}

static const char plant_lf[] =
    "# a first-order plant\n"
    "model plant\n"
    "param k, tau    # gain and time constant\n"
    "input u\n"
    "y = k * u * (1 -\n"
    "    exp(-1 / tau))\n"
    "output y\n";

START_TEST(invalid_utf8_inside_comments_builds)
{
    static const char bytes[] =
        "# a first-order plant \xff\xfe\xc3 (bad UTF-8 in a comment)\n"
        "model plant\n"
        "param k, tau    # gain \x80\xbf and time constant \xe2\x82\n"
        "input u\n"
        "y = k * u * (1 -\n"
        "    exp(-1 / tau))\n"
        "output y\n";
    expect_same_c(plant_lf, sizeof plant_lf - 1, bytes, sizeof bytes - 1);
}
END_TEST

START_TEST(crlf_line_ends_give_the_same_c)
{
    size_t n = 0;
    char crlf[2 * sizeof plant_lf];
    for (const char *p = plant_lf; *p; p++) {
        if (*p == '\n')
            crlf[n++] = '\r';
        crlf[n++] = *p;
    }
    expect_same_c(plant_lf, sizeof plant_lf - 1, crlf, n);
}
END_TEST

START_TEST(crlf_error_shows_the_line_without_cr)
{
    char *dir = tu_tmpdir();
    tu_write_in(dir, "crlf.dvs", "param a\r\ny = a + q\r\noutput y\r\n");
    char *err = NULL;
    ck_assert_int_eq(tu_dervish_capped(20, dir, &err, "build crlf.dvs"), 1);
    ck_assert_str_eq(err,
                     "crlf.dvs:2:9: error: unknown name 'q': define it before "
                     "this line\n"
                     "    y = a + q\n"
                     "            ^\n"
                     "crlf.dvs: 1 error; nothing written\n");
    tu_rmdir(dir);
    free(dir);
    free(err);
}
END_TEST

START_TEST(no_trailing_newline_builds)
{
    expect_same_c(plant_lf, sizeof plant_lf - 1, plant_lf,
                  sizeof plant_lf - 2);
}
END_TEST

START_TEST(empty_and_comment_only_files)
{
    static const char *const texts[] = {"", "# nothing here\n# at all\n",
                                        "\n\n   \n"};
    char *dir = tu_tmpdir();
    for (size_t i = 0; i < sizeof texts / sizeof texts[0]; i++) {
        tu_write_in(dir, "blank.dvs", texts[i]);
        expect_build(dir, "blank.dvs", 1,
                     "blank.dvs:1:1: error: the model is empty: declare "
                     "params, define values and name the output");
    }
    tu_rmdir(dir);
    free(dir);
}
END_TEST

/* ------------------------------------------------------------ the paths */

START_TEST(directory_as_the_model)
{
    char *dir = tu_tmpdir();
    char *sub = tu_format("%s/models.dvs", dir);
    ck_assert_int_eq(mkdir(sub, 0700), 0);
    expect_build(dir, "models.dvs", 3,
                 "dervish: cannot read models.dvs: it is a directory");
    tu_rmdir(dir);
    free(dir);
    free(sub);
}
END_TEST

START_TEST(missing_model)
{
    char *dir = tu_tmpdir();
    expect_build(dir, "missing.dvs", 3,
                 "dervish: cannot read missing.dvs: No such file or "
                 "directory");
    tu_rmdir(dir);
    free(dir);
}
END_TEST

START_TEST(model_without_read_permission)
{
    char *dir = tu_tmpdir();
    char *path = tu_format("%s/locked.dvs", dir);
    tu_write(path, "param a\ny = a\noutput y\n");
    ck_assert_int_eq(chmod(path, 0), 0);
    if (access(path, R_OK) == 0) {
        /* root reads a file of mode 000: nothing to test here */
        printf("note: model_without_read_permission skipped: mode 000 is "
               "still readable for this user (uid %d)\n", (int)geteuid());
    } else {
        expect_build(dir, "locked.dvs", 3,
                     "dervish: cannot read locked.dvs: Permission denied");
    }
    tu_rmdir(dir);
    free(dir);
    free(path);
}
END_TEST

START_TEST(model_that_fails_to_read)
{
    /* /proc/self/mem opens, but reading at offset 0 fails with EIO */
    char *dir = tu_tmpdir();
    expect_build(dir, "/proc/self/mem", 3,
                 "dervish: cannot read /proc/self/mem: Input/output error");
    tu_rmdir(dir);
    free(dir);
}
END_TEST

START_TEST(model_given_as_an_output)
{
    static const char model[] = "param a\ny = a * a\noutput y\n";
    static const char *const args[] = {
        "build -o m.dvs m.dvs", "build --header m.dvs m.dvs",
        "build -o ./m.dvs m.dvs", "build -o link.dvs m.dvs",
        "build -o m.c --header ../same/m.dvs m.dvs",
    };
    char *dir = tu_tmpdir();
    char *same = tu_format("%s/same", dir);
    ck_assert_int_eq(mkdir(same, 0700), 0);
    tu_write_in(same, "m.dvs", model);
    char *link = tu_format("%s/link.dvs", same);
    ck_assert_int_eq(symlink("m.dvs", link), 0);
    for (size_t i = 0; i < sizeof args / sizeof args[0]; i++) {
        char *err = NULL;
        ck_assert_int_eq(tu_dervish_capped(20, same, &err, args[i]), 2);
        ck_assert_str_eq(err, "dervish: refusing to overwrite the model file "
                              "'m.dvs'\n(run 'dervish --help' for the "
                              "options)\n");
        char *text = tu_read_in(same, "m.dvs");
        ck_assert_str_eq(text, model);
        free(text);
        free(err);
    }
    /* nothing else was written beside the model */
    char *listing = NULL;
    char *cmd = tu_format("ls -A '%s'", same);
    tu_run(cmd, &listing, NULL);
    ck_assert_str_eq(listing, "link.dvs\nm.dvs\n");
    tu_rmdir(dir);
    free(dir);
    free(same);
    free(link);
    free(listing);
    free(cmd);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("limits");
    TU_ADD_TESTS(tu_case(s, "nesting and size", 60),
                 parentheses_100000_deep, parentheses_at_the_limit_build,
                 power_tower_at_the_nesting_limit,
                 line_of_250000_terms, name_of_a_million_characters,
                 name_of_100000_characters_runs,
                 element_counts_past_2_to_the_31_and_63,
                 largest_extent_builds, four_gigabyte_extent);
    TU_ADD_TESTS(tu_case(s, "bytes", 30),
                 nul_byte_in_the_middle, invalid_utf8_outside_a_comment,
                 invalid_utf8_inside_comments_builds,
                 crlf_line_ends_give_the_same_c,
                 crlf_error_shows_the_line_without_cr,
                 no_trailing_newline_builds, empty_and_comment_only_files);
    TU_ADD_TESTS(tu_case(s, "paths", 30),
                 directory_as_the_model, missing_model,
                 model_without_read_permission, model_that_fails_to_read,
                 model_given_as_an_output);
    return tu_main(s);
}
