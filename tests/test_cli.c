/* test_cli.c - the dervish command line: help, version, exit statuses,
 * default output names, and that errors leave outputs untouched. */
#include "testutil.h"

static const char *const good_model =
    "model tiny\n"
    "param a, b\n"
    "y = a * b + sin(a)\n"
    "output y\n";

START_TEST(help_and_version)
{
    char *out = NULL;
    char *cmd = tu_format("'%s' --help", tu_dervish());
    ck_assert_int_eq(tu_run(cmd, &out, NULL), 0);
    ck_assert_ptr_nonnull(strstr(out, "dervish build"));
    ck_assert_ptr_nonnull(strstr(out, "dervish check"));
    free(cmd);
    free(out);
    cmd = tu_format("'%s' --version", tu_dervish());
    ck_assert_int_eq(tu_run(cmd, &out, NULL), 0);
    ck_assert_str_eq(out, "dervish 0.1.0\n");
    free(cmd);
    free(out);
}
END_TEST

START_TEST(bad_command_line_is_status_2)
{
    static const char *const args[] = {
        "", "frobnicate x.dvs", "build", "build --bogus x.dvs",
        "build a.dvs b.dvs", "build -o", "check --seed x m.dvs",
    };
    for (size_t i = 0; i < sizeof args / sizeof args[0]; i++) {
        char *err = NULL;
        char *cmd = tu_format("'%s' %s", tu_dervish(), args[i]);
        ck_assert_int_eq(tu_run(cmd, NULL, &err), 2);
        ck_assert_msg(strncmp(err, "dervish: ", 9) == 0, "message: %s", err);
        free(cmd);
        free(err);
    }
}
END_TEST

START_TEST(missing_model_is_status_3)
{
    char *err = NULL;
    char *cmd = tu_format("'%s' build /nonexistent/m.dvs", tu_dervish());
    ck_assert_int_eq(tu_run(cmd, NULL, &err), 3);
    ck_assert_str_eq(err, "dervish: cannot read /nonexistent/m.dvs: "
                          "No such file or directory\n");
    free(cmd);
    free(err);
}
END_TEST

START_TEST(default_outputs_and_names)
{
    char *dir = tu_tmpdir();
    ck_assert_int_eq(tu_build_model(dir, "tiny", good_model, NULL), 0);
    char *c = tu_format("%s/tiny.c", dir), *h = tu_format("%s/tiny.h", dir);
    char *ctext = tu_read(c), *htext = tu_read(h);
    ck_assert_ptr_nonnull(ctext);
    ck_assert_ptr_nonnull(htext);
    ck_assert_ptr_nonnull(strstr(ctext, "#include \"tiny.h\""));
    ck_assert_ptr_nonnull(strstr(htext, "double tiny_value(const tiny_param *p);"));
    ck_assert_ptr_nonnull(strstr(htext, "#define TINY_PARAM_COUNT 2 "));
    /* same input, same output, byte for byte */
    char *cmd = tu_format("cd '%s' && '%s' build -o again.c tiny.dvs", dir,
                          tu_abs_dervish());
    ck_assert_int_eq(tu_run(cmd, NULL, NULL), 0);
    char *again = tu_format("%s/again.c", dir);
    char *atext = tu_read(again);
    /* only the file names differ: the banner and the #include */
    char *banner = tu_replace(ctext, "/* tiny.c - ", "/* again.c - ");
    char *expected = tu_replace(banner, "#include \"tiny.h\"",
                                "#include \"again.h\"");
    ck_assert_str_eq(atext, expected);
    tu_rmdir(dir);
}
END_TEST

START_TEST(errors_leave_outputs_untouched)
{
    char *dir = tu_tmpdir();
    char *c = tu_format("%s/m.c", dir), *h = tu_format("%s/m.h", dir);
    tu_write(c, "previous source\n");
    ck_assert_int_eq(tu_build_model(dir, "m", "param a\ny = a +\noutput y\n",
                                    NULL), 1);
    ck_assert_str_eq(tu_read(c), "previous source\n");
    ck_assert(!tu_exists(h));
    char *out = NULL;
    char *cmd = tu_format("ls -A '%s'", dir);
    tu_run(cmd, &out, NULL);
    ck_assert_str_eq(out, "m.c\nm.dvs\n");     /* no temporary files left */
    tu_rmdir(dir);
}
END_TEST

START_TEST(refuses_to_overwrite_the_model)
{
    char *dir = tu_tmpdir();
    char *m = tu_format("%s/m.dvs", dir);
    tu_write(m, good_model);
    char *cmd = tu_format("cd '%s' && '%s' build -o m.dvs m.dvs", dir,
                          tu_abs_dervish());
    ck_assert_int_eq(tu_run(cmd, NULL, NULL), 2);
    ck_assert_str_eq(tu_read(m), good_model);
    tu_rmdir(dir);
}
END_TEST

static Suite *cli_suite(void)
{
    Suite *s = suite_create("cli");
    TCase *tc = tcase_create("cli");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, help_and_version);
    tcase_add_test(tc, bad_command_line_is_status_2);
    tcase_add_test(tc, missing_model_is_status_3);
    tcase_add_test(tc, default_outputs_and_names);
    tcase_add_test(tc, errors_leave_outputs_untouched);
    tcase_add_test(tc, refuses_to_overwrite_the_model);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return tu_main(cli_suite());
}
