/* test_names.c - names that C libraries declare (y0, j0, j1, gamma, index,
 * time) and one-letter or common names (p, in, grad, i, work) are
 * ordinary model names: the emitted C must compile warning-free with them,
 * under -Wshadow, also where the C library's extensions are declared, and
 * compute the right gradient. */
#include "testutil.h"

/* Every such name as a param, input or value; y = sum of smooth terms so
 * each gradient entry is a known closed form (standard calculus). */
static const char *const model =
    "model libnames\n"
    "param y0, j1, gamma, index, p\n"
    "input time, in, grad\n"
    "i = y0 * j1 + gamma^2\n"
    "j0 = index * time + sin(p)\n"
    "work = i + j0 * in + grad\n"
    "output work\n";

/* The driver includes the headers that declare y0, j1, gamma (<math.h>
 * with extensions), index (<strings.h>) and time (<time.h>), then checks
 * value and gradient at one point. */
static const char *const driver =
    "#include <math.h>\n#include <stdio.h>\n#include <strings.h>\n"
    "#include <time.h>\n#include \"libnames.h\"\n"
    "int main(void)\n{\n"
    "    libnames_param p = {0.5, -1.25, 2.0, 3.0, 0.75}, g;\n"
    "    libnames_input in = {4.0, -2.0, 1.5};\n"
    "    double v = libnames_gradient(&p, &in, &g);\n"
    "    printf(\"%.17g %.17g %.17g %.17g %.17g %.17g\\n\", v, g.y0, g.j1,\n"
    "           g.gamma, g.index, g.p);\n"
    "    return 0;\n}\n";

START_TEST(library_names_compile_cleanly_and_work)
{
    static const char *const defines[] = {"", "-D_GNU_SOURCE",
                                          "-D_DEFAULT_SOURCE"};
    char *dir = tu_tmpdir();
    char *err = NULL;
    ck_assert_int_eq(tu_build_model(dir, "libnames", model, &err), 0);
    ck_assert_str_eq(err, "");
    tu_write_in(dir, "driver.c", driver);
    /* y0 = 0.5, j1 = -1.25, gamma = 2, index = 3, p = 0.75; time = 4,
     * in = -2, grad = 1.5.  work = y0 j1 + gamma^2 + (index time + sin p)
     * in + grad; d/dy0 = j1, d/dj1 = y0, d/dgamma = 2 gamma,
     * d/dindex = time in, d/dp = cos(p) in. */
    double j0 = 3.0 * 4.0 + sin(0.75);
    double want[6] = {0.5 * -1.25 + 4.0 + j0 * -2.0 + 1.5, -1.25, 0.5, 4.0,
                      4.0 * -2.0, cos(0.75) * -2.0};
    for (size_t c = 0; c < sizeof tu_compilers / sizeof *tu_compilers; c++) {
        if (!tu_have(tu_compilers[c]))
            continue;
        for (size_t d = 0; d < sizeof defines / sizeof *defines; d++) {
            char *cc = tu_format("%s %s", tu_compilers[c], defines[d]);
            char *out = tu_compile_and_run(dir, "libnames", cc);
            double got[6];
            ck_assert_int_eq(sscanf(out, "%lf %lf %lf %lf %lf %lf", &got[0],
                                    &got[1], &got[2], &got[3], &got[4],
                                    &got[5]), 6);
            for (int k = 0; k < 6; k++)
                ck_assert_msg(fabs(got[k] - want[k]) <=
                                  1e-15 * fmax(1.0, fabs(want[k])),
                              "%s: entry %d is %.17g, want %.17g", cc, k,
                              got[k], want[k]);
            free(out);
            free(cc);
        }
    }
    tu_rmdir(dir);
    free(dir);
    free(err);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("names");
    TU_ADD_TESTS(tu_case(s, "names", 60), library_names_compile_cleanly_and_work);
    return tu_main(s);
}
