/* test_lines.c - dervish build --line-directives: each line of a model
 * statement's code is pointed at the model line by #line, every return to
 * the C file names the line it is on, whole and in parts, and a C
 * compiler's message about that code names the model file and line. */
#include "testutil.h"

/* Check the #line directives of the C file PATH: a return to NAME must
 * give the number of the line after it; a model directive must give the
 * line of the last model quote above it ("m.dvs:N:" in a comment).  Returns
 * how many model directives there are. */
static int check_directives(const char *path, const char *name)
{
    char *text = tu_read(path);
    ck_assert_ptr_nonnull(text);
    int line = 0, quoted = -1, model = 0;
    char *want_c = tu_format("\"%s\"", name);
    for (char *p = text; *p;) {
        char *nl = strchr(p, '\n');
        *nl = '\0';
        line++;
        int n;
        const char *q = strstr(p, "/*");
        q = q ? strstr(q, "m.dvs:") : NULL;
        if (q && sscanf(q, "m.dvs:%d:", &n) == 1)
            quoted = n;
        if (sscanf(p, "#line %d", &n) == 1) {
            if (strstr(p, want_c)) {
                ck_assert_msg(n == line + 1, "%s:%d: '%s' names line %d",
                              path, line, p, n);
            } else {
                ck_assert_msg(strstr(p, "\"m.dvs\"") && n == quoted,
                              "%s:%d: '%s' after the quote of line %d", path,
                              line, p, quoted);
                model++;
            }
        }
        p = nl + 1;
    }
    free(want_c);
    free(text);
    return model;
}

START_TEST(directives_point_at_the_model_and_back)
{
    const char *model = "param a, b, w[3]\n"
                        "s[i] = w[i] * a + b\n"
                        "t = sum(i: s[i]^2)\n"
                        "y = t == a ? t : log(1 + t) * b\n"
                        "output y\n";
    const char *parts[2] = {"", "--part-size 1"};
    for (int k = 0; k < 2; k++) {
        char *dir = tu_tmpdir();
        tu_write_in(dir, "m.dvs", model);
        char *err = NULL;
        ck_assert_int_eq(tu_run_dervish(dir, NULL, &err, "build "
                                        "--line-directives %s m.dvs",
                                        parts[k]), 0);
        ck_assert_str_eq(err, "");
        char *path = tu_format("%s/m.c", dir);
        ck_assert_int_gt(check_directives(path, "m.c"), 10);
        free(path);
        /* the comparison of line 4 warns under -Wfloat-equal: the
         * message names the model's line */
        for (int c = 0; c < 2; c++) {
            const char *cc = c ? "clang" : "gcc";
            if (!tu_have(cc))
                continue;
            char *cmd = tu_format("cd '%s' && %s -std=c99 -Wall -Wextra "
                                  "-Wpedantic -Wfloat-equal -c m.c", dir, cc);
            char *msg = NULL;
            ck_assert_int_eq(tu_run(cmd, NULL, &msg), 0);
            ck_assert_msg(strstr(msg, "m.dvs:4:") != NULL, "%s: %s", cc, msg);
            ck_assert_msg(strstr(msg, "m.c:") == NULL, "%s: %s", cc, msg);
            free(msg);
            free(cmd);
        }
        free(err);
        tu_rmdir(dir);
        free(dir);
    }
}
END_TEST

/* Without the option there is no directive at all. */
START_TEST(no_directives_by_default)
{
    char *dir = tu_tmpdir();
    tu_write_in(dir, "m.dvs", "param a\ny = a * a\noutput y\n");
    ck_assert_int_eq(tu_run_dervish(dir, NULL, NULL, "build m.dvs"), 0);
    char *c = tu_read_in(dir, "m.c");
    ck_assert_ptr_null(strstr(c, "#line"));
    free(c);
    tu_rmdir(dir);
    free(dir);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("lines");
    TU_ADD_TESTS(tu_case(s, "lines", 60),
                 directives_point_at_the_model_and_back,
                 no_directives_by_default);
    return tu_main(s);
}
