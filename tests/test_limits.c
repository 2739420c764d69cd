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
 * (NULL: stderr must be empty).  A failure names the case WHAT. */
static void expect_build(const char *what, const char *dir, const char *file,
                         int status, const char *first_line)
{
    char *err = NULL;
    char *args = tu_format("build '%s'", file);
    int rc = tu_dervish_capped(20, dir, &err, args);
    char *first = tu_first_line(err);
    ck_assert_msg(rc == status, "%s: expected status %d, found %d:\n%s",
                  what, status, rc, err);
    if (first_line)
        ck_assert_msg(strcmp(first, first_line) == 0,
                      "%s: the first message is\n%s\nwhere\n%s\nwas "
                      "expected", what, first, first_line);
    else
        ck_assert_msg(err[0] == '\0', "%s: unexpected messages:\n%s", what,
                      err);
    free(first);
    free(args);
    free(err);
}

/* -------------------------------------------- builds and first messages */

/* A model of N nested parentheses around 'a', then AFTER, as y (malloc'd). */
static char *nested_parentheses(size_t n, const char *after)
{
    char *open = repeat("(", n), *close = repeat(")", n);
    char *model = tu_format("param a\ny = %sa%s%s\noutput y\n", open, close,
                            after);
    free(open);
    free(close);
    return model;
}

static char *parentheses_100000(void)
{
    return nested_parentheses(100000, "");
}

static char *parentheses_10000_times_a(void)
{
    return nested_parentheses(10000, " * a");
}

/* "a + " 250,000 times: a line of a million characters.  The sum is a
 * chain of 249,999 additions, past the nesting limit. */
static char *terms_250000(void)
{
    char *terms = repeat("a + ", 250000);
    terms[strlen(terms) - 3] = '\0';            /* drop the last " + " */
    ck_assert_msg(strlen(terms) == 999997, "line_of_250000_terms: the sum "
                  "has %zu characters, not 999997", strlen(terms));
    char *model = tu_format("param a\ny = %s\noutput y\n", terms);
    free(terms);
    return model;
}

/* How a case's model file comes to be. */
typedef enum Prepare {
    WRITE_MODEL,        /* what TEXT or MAKE gives is written; neither: none */
    MAKE_DIRECTORY,     /* FILE is an empty directory */
    WRITE_LOCKED,       /* TEXT is written, then made mode 000 */
} Prepare;

static const char nul_model[] = "param a\ny = a *\0 a\noutput y\n";

/* One build in a fresh directory, and what must come of it; a failing
 * check names the case. */
typedef struct BuildCase {
    const char *name;
    const char *file;           /* the model given to build */
    Prepare prepare;
    const char *text;           /* the model's bytes */
    size_t len;                 /* of TEXT, when it holds a NUL; else 0 */
    char *(*make)(void);        /* instead of TEXT: makes it (malloc'd) */
    int status;                 /* dervish's exit status */
    const char *first_line;     /* of stderr; NULL: stderr is empty */
    const char *header_has;     /* in the emitted header; NULL: no check */
} BuildCase;

static const BuildCase build_cases[] = {
    /* nesting; the 10001st '(' is at column 5 + 10000 */
    {.name = "parentheses_100000_deep", .file = "deep.dvs",
     .make = parentheses_100000, .status = 1,
     .first_line = "deep.dvs:2:10005: error: brackets nested too deeply "
                   "(limit is 10000): split the expression into named steps"},
    {.name = "parentheses_at_the_limit_build", .file = "deep.dvs",
     .make = parentheses_10000_times_a},
    {.name = "line_of_250000_terms", .file = "wide.dvs", .make = terms_250000,
     .status = 1,
     .first_line = "wide.dvs:2:5: error: expression nested too deeply (limit "
                   "is 10000 levels): split it into named steps"},

    /* array extents: element counts past 2^31 and 2^63, the largest extent
     * and one of 4 GiB */
    {.name = "element_count_2_to_the_31", .file = "big.dvs",
     .text = "param x[65536, 32768]\ny = x\noutput y\n", .status = 1,
     .first_line = "big.dvs:1:7: error: 'x' would have more than "
                   "2147483647 elements, too many for one array"},
    {.name = "element_count_about_2_to_the_93", .file = "big.dvs",
     .text = "param x[2147483647, 2147483647, 2147483647]\ny = x\n"
             "output y\n",
     .status = 1,
     .first_line = "big.dvs:1:7: error: 'x' would have more than "
                   "2147483647 elements, too many for one array"},
    {.name = "element_count_2_to_the_64", .file = "big.dvs",
     .text = "param x[65536, 65536, 65536, 65536]\ny = x\noutput y\n",
     .status = 1,
     .first_line = "big.dvs:1:7: error: 'x' would have more than "
                   "2147483647 elements, too many for one array"},
    {.name = "largest_extent_builds", .file = "big.dvs",
     .text = "param x[2147483647]\ny = sum(i: x[i])\noutput y\n",
     .header_has = "double x[2147483647];"},
    {.name = "four_gigabyte_extent", .file = "big.dvs",
     .text = "param a\ninput x[4294967296]\ny = a\noutput y\n", .status = 1,
     .first_line = "big.dvs:2:9: error: a dimension must be a whole number "
                   "from 1 to 2147483647, not 4294967296"},
    {.name = "four_gigabyte_extent_from_a_const", .file = "big.dvs",
     .text = "param a\nconst N = 4294967296\ninput x[N]\ny = a\noutput y\n",
     .status = 1,
     .first_line = "big.dvs:3:9: error: a dimension must be a whole number "
                   "from 1 to 2147483647, not 4294967296"},

    /* the bytes */
    {.name = "nul_byte_in_the_middle", .file = "nul.dvs", .text = nul_model,
     .len = sizeof nul_model - 1, .status = 1,
     .first_line = "nul.dvs:2:8: error: NUL byte in the model file: save it "
                   "as plain text"},
    {.name = "invalid_utf8_outside_a_comment", .file = "bytes.dvs",
     .text = "param a\ny = a * \xff\xfe a\noutput y\n", .status = 1,
     .first_line = "bytes.dvs:2:9: error: non-ASCII text outside a comment: "
                   "names and operators are ASCII"},
    {.name = "empty_file", .file = "blank.dvs", .text = "", .status = 1,
     .first_line = "blank.dvs:1:1: error: the model is empty: declare "
                   "params, define values and name the output"},
    {.name = "comment_only_file", .file = "blank.dvs",
     .text = "# nothing here\n# at all\n", .status = 1,
     .first_line = "blank.dvs:1:1: error: the model is empty: declare "
                   "params, define values and name the output"},
    {.name = "blank_lines_only_file", .file = "blank.dvs", .text = "\n\n   \n",
     .status = 1,
     .first_line = "blank.dvs:1:1: error: the model is empty: declare "
                   "params, define values and name the output"},

    /* the paths */
    {.name = "directory_as_the_model", .file = "models.dvs",
     .prepare = MAKE_DIRECTORY, .status = 3,
     .first_line = "dervish: cannot read models.dvs: it is a directory"},
    {.name = "missing_model", .file = "missing.dvs", .status = 3,
     .first_line = "dervish: cannot read missing.dvs: No such file or "
                   "directory"},
    {.name = "model_without_read_permission", .file = "locked.dvs",
     .prepare = WRITE_LOCKED, .text = "param a\ny = a\noutput y\n",
     .status = 3,
     .first_line = "dervish: cannot read locked.dvs: Permission denied"},
    /* /proc/self/mem opens, but reading at offset 0 fails with EIO */
    {.name = "model_that_fails_to_read", .file = "/proc/self/mem",
     .status = 3,
     .first_line = "dervish: cannot read /proc/self/mem: Input/output error"},
};

/* Make case K's model file in DIR; returns 0 when the case cannot be
 * tested for this user (it says why). */
static int make_model_file(const char *dir, const BuildCase *k)
{
    char *path = tu_format("%s/%s", dir, k->file);
    int testable = 1;
    if (k->prepare == MAKE_DIRECTORY) {
        ck_assert_int_eq(mkdir(path, 0700), 0);
    } else if (k->make) {
        char *model = k->make();
        tu_write(path, model);
        free(model);
    } else if (k->text) {
        write_raw(dir, k->file, k->text, k->len ? k->len : strlen(k->text));
    }
    if (k->prepare == WRITE_LOCKED) {
        ck_assert_int_eq(chmod(path, 0), 0);
        if (access(path, R_OK) == 0) {
            /* root reads a file of mode 000: nothing to test here */
            printf("note: %s skipped: mode 000 is still readable for this "
                   "user (uid %d)\n", k->name, (int)geteuid());
            testable = 0;
        }
    }
    free(path);
    return testable;
}

START_TEST(each_build_case)
{
    const BuildCase *k = &build_cases[_i];
    char *dir = tu_tmpdir();
    if (make_model_file(dir, k)) {
        expect_build(k->name, dir, k->file, k->status, k->first_line);
        if (k->header_has) {
            char *header_name = tu_replace(k->file, ".dvs", ".h");
            char *header = tu_read_in(dir, header_name);
            ck_assert_msg(header && strstr(header, k->header_has),
                          "%s: %s does not hold '%s'", k->name, header_name,
                          k->header_has);
            free(header);
            free(header_name);
        }
    }
    tu_rmdir(dir);
    free(dir);
}
END_TEST

/* ------------------------------------------------------------- nesting */

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

/* ---------------------------------------------------------- long names */

START_TEST(name_of_a_million_characters)
{
    char *dir = tu_tmpdir();
    char *name = repeat("v", 1000000);
    char *model = tu_format("param %s\ny = %s * %s\noutput y\n", name, name,
                            name);
    tu_write_in(dir, "wide.dvs", model);
    expect_build("name_of_a_million_characters", dir, "wide.dvs", 0, NULL);
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
    expect_build("name_of_100000_characters_runs", dir, "longname.dvs",
                 0, NULL);
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

/* ------------------------------------------------------------ the bytes */

/* Build TEXT as DIR/NAME.dvs and return the C source and header, joined
 * (malloc'd). */
static char *build_text(const char *dir, const char *name, const char *text,
                        size_t len)
{
    char *file = tu_format("%s.dvs", name);
    write_raw(dir, file, text, len);
    expect_build(file, dir, file, 0, NULL);
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

/* ---------------------------------------------------------- warnings */

/* A model of 150 unused values: the first 100 warnings are shown, then
 * one line says the rest are counted; --fail-on-warning counts all. */
START_TEST(warnings_are_capped)
{
    Buf model = {0};
    buf_put(&model, "param p\n");
    for (int k = 1; k <= 150; k++)
        buf_printf(&model, "a%d = p + %d\n", k, k);
    buf_put(&model, "y = p * 2\noutput y\n");
    char *dir = tu_tmpdir(), *err = NULL;
    tu_write_in(dir, "m.dvs", model.data);
    ck_assert_int_eq(tu_dervish_capped(20, dir, &err, "build m.dvs"), 0);
    int shown = 0;
    for (const char *l = strstr(err, ": warning: "); l;
         l = strstr(l + 1, ": warning: "))
        shown++;
    ck_assert_int_eq(shown, 100);
    ck_assert_msg(strstr(err, "m.dvs:101:1: warning: 'a100' is defined but no "
                              "output depends on it") != NULL, "%s", err);
    char *tail = tu_format("m.dvs: more than 100 warnings; the rest are "
                           "counted but not shown\n");
    ck_assert_str_eq(err + strlen(err) - strlen(tail), tail);
    free(err);
    err = NULL;
    ck_assert_int_eq(tu_dervish_capped(20, dir, &err, "build "
                                       "--fail-on-warning m.dvs"), 1);
    ck_assert_msg(strstr(err, "\nm.dvs: 150 warnings, treated as errors "
                              "(--fail-on-warning); nothing written\n"),
                  "%s", err);
    tu_rmdir(dir);
    free(dir);
    free(err);
    free(tail);
    buf_free(&model);
}
END_TEST

/* ------------------------------------------------------------ the paths */

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
    tcase_add_loop_test(tu_case(s, "builds and first messages", 60),
                        each_build_case, 0,
                        (int)(sizeof build_cases / sizeof build_cases[0]));
    TU_ADD_TESTS(tu_case(s, "nesting and size", 60),
                 power_tower_at_the_nesting_limit,
                 name_of_a_million_characters,
                 name_of_100000_characters_runs);
    TU_ADD_TESTS(tu_case(s, "bytes", 30),
                 invalid_utf8_inside_comments_builds,
                 crlf_line_ends_give_the_same_c,
                 crlf_error_shows_the_line_without_cr,
                 no_trailing_newline_builds);
    TU_ADD_TESTS(tu_case(s, "paths", 30), model_given_as_an_output);
    TU_ADD_TESTS(tu_case(s, "warnings", 30), warnings_are_capped);
    return tu_main(s);
}
