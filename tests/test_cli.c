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
    ck_assert_int_eq(tu_run_dervish(NULL, &out, NULL, "--help"), 0);
    ck_assert_ptr_nonnull(strstr(out, "dervish build"));
    ck_assert_ptr_nonnull(strstr(out, "dervish check"));
    free(out);
    ck_assert_int_eq(tu_run_dervish(NULL, &out, NULL, "--version"), 0);
    ck_assert_str_eq(out, "dervish 0.1.0\n");
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
        ck_assert_int_eq(tu_run_dervish(NULL, NULL, &err, "%s", args[i]), 2);
        ck_assert_msg(strncmp(err, "dervish: ", 9) == 0, "message: %s", err);
        free(err);
    }
}
END_TEST

START_TEST(missing_model_is_status_3)
{
    char *err = NULL;
    ck_assert_int_eq(tu_run_dervish(NULL, NULL, &err,
                                    "build /nonexistent/m.dvs"), 3);
    ck_assert_str_eq(err, "dervish: cannot read /nonexistent/m.dvs: "
                          "No such file or directory\n");
    free(err);
}
END_TEST

START_TEST(default_outputs_and_names)
{
    char *dir = tu_tmpdir();
    ck_assert_int_eq(tu_build_model(dir, "tiny", good_model, NULL), 0);
    char *ctext = tu_read_in(dir, "tiny.c");
    char *htext = tu_read_in(dir, "tiny.h");
    ck_assert_ptr_nonnull(ctext);
    ck_assert_ptr_nonnull(htext);
    ck_assert_ptr_nonnull(strstr(ctext, "#include \"tiny.h\""));
    ck_assert_ptr_nonnull(strstr(htext, "double tiny_value(const tiny_param *p);"));
    ck_assert_ptr_nonnull(strstr(htext, "#define TINY_PARAM_COUNT 2 "));
    /* same input, same output, byte for byte */
    ck_assert_int_eq(tu_run_dervish(dir, NULL, NULL,
                                    "build -o again.c tiny.dvs"), 0);
    char *atext = tu_read_in(dir, "again.c");
    /* only the file names differ: the banner and the #include */
    char *banner = tu_replace(ctext, "/* tiny.c - ", "/* again.c - ");
    char *expected = tu_replace(banner, "#include \"tiny.h\"",
                                "#include \"again.h\"");
    ck_assert_str_eq(atext, expected);
    tu_rmdir(dir);
    free(dir);
    free(ctext);
    free(htext);
    free(atext);
    free(banner);
    free(expected);
}
END_TEST

START_TEST(errors_leave_outputs_untouched)
{
    char *dir = tu_tmpdir();
    tu_write_in(dir, "m.c", "previous source\n");
    ck_assert_int_eq(tu_build_model(dir, "m", "param a\ny = a +\noutput y\n",
                                    NULL), 1);
    char *ctext = tu_read_in(dir, "m.c"), *h = tu_format("%s/m.h", dir);
    ck_assert_str_eq(ctext, "previous source\n");
    ck_assert(!tu_exists(h));
    char *out = NULL;
    char *cmd = tu_format("ls -A '%s'", dir);
    tu_run(cmd, &out, NULL);
    ck_assert_str_eq(out, "m.c\nm.dvs\n");     /* no temporary files left */
    tu_rmdir(dir);
    free(dir);
    free(ctext);
    free(h);
    free(cmd);
    free(out);
}
END_TEST

START_TEST(refuses_to_overwrite_the_model)
{
    char *dir = tu_tmpdir();
    tu_write_in(dir, "m.dvs", good_model);
    ck_assert_int_eq(tu_run_dervish(dir, NULL, NULL,
                                    "build -o m.dvs m.dvs"), 2);
    char *mtext = tu_read_in(dir, "m.dvs");
    ck_assert_str_eq(mtext, good_model);
    tu_rmdir(dir);
    free(dir);
    free(mtext);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("cli");
    TU_ADD_TESTS(tu_case(s, "cli", 60),
                 help_and_version, bad_command_line_is_status_2,
                 missing_model_is_status_3, default_outputs_and_names,
                 errors_leave_outputs_untouched,
                 refuses_to_overwrite_the_model);
    return tu_main(s);
}
