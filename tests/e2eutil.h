/* e2eutil.h - the end-to-end harness shared by test_e2e_builtins.c and
 * test_published.c: build a model with dervish, drive its value and
 * gradient from C compiled by every compiler found, parse what the driver
 * prints, and tally comparisons so one run lists every mismatch.
 * Header-only (static inline functions), on top of testutil.h. */
#ifndef DERVISH_E2EUTIL_H
#define DERVISH_E2EUTIL_H

#include "testutil.h"

#include <math.h>

#define COUNT(a) (sizeof(a) / sizeof((a)[0]))

/* ------------------------------------------------------------ comparisons */

/* Mismatches are listed on stderr and counted; each test ends with
 * e2e_tally_finish, which asserts that none were seen. */
typedef struct E2eTally {
    const char *label;  /* the model or problem, as the messages name it */
    const char *cc;     /* the compiler that built the driver */
    int point;          /* index of the evaluation point */
    int checks;
    int bad;
} E2eTally;

/* |got - want| <= tol; an infinite or NaN want must be matched exactly. */
static inline void e2e_expect_near(E2eTally *t, const char *what,
                                   double got, double want, double tol)
{
    int ok;
    t->checks++;
    if (isnan(want))
        ok = isnan(got);
    else if (isinf(want))
        ok = got == want;
    else
        ok = fabs(got - want) <= tol;   /* false for a NaN got */
    if (!ok) {
        t->bad++;
        fprintf(stderr, "%s, point %d, %s: %s = %.17g, want %.17g (tol %.3g)\n",
                t->label, t->point, t->cc, what, got, want, tol);
    }
}

/* Prints the count when DVS_E2E_REPORT is set, then fails on a mismatch. */
static inline void e2e_tally_finish(const E2eTally *t)
{
    if (getenv("DVS_E2E_REPORT")) {
        printf("%s: %d comparisons, %d failed\n", t->label, t->checks, t->bad);
        fflush(stdout);     /* a failed assertion ends the forked test */
    }
    ck_assert_msg(t->bad == 0, "%s: %d of %d comparisons failed (listed above)",
                  t->label, t->bad, t->checks);
}

/* --------------------------------------------------------------- harness */

/* A model to evaluate at npoints points. Point k sets the params, seen as a
 * flat vector, to pts[k * count ...]; inputs, if not NULL, is the C
 * initializer list of the model's input structs, one per point. */
typedef struct E2eModel {
    const char *name;
    const char *text;
    int count;          /* doubles in the param struct */
    int npoints;
    const double *pts;
    const char *inputs;
} E2eModel;

/* Each driver row: value, gradient's return value, then the gradient. */
#define E2E_ROW(m, rows, k) ((rows) + (size_t)(k) * (size_t)((m)->count + 2))

/* Appends printf output to the malloc'd string *s. */
static inline void e2e_append(char **s, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    int n = vsnprintf(NULL, 0, fmt, ap);
    va_end(ap);
    size_t len = *s ? strlen(*s) : 0;
    *s = realloc(*s, len + (size_t)n + 1);
    ck_assert_ptr_nonnull(*s);
    va_start(ap, fmt);
    vsnprintf(*s + len, (size_t)n + 1, fmt, ap);
    va_end(ap);
}

/* The C driver: evaluates value and gradient at every point and prints
 * one row per point with %.17g. The gradient is pre-filled with NaN, so a
 * member the emitted code fails to overwrite shows up. */
static inline char *e2e_driver_source(const E2eModel *m)
{
    char upper[64];
    size_t i;
    for (i = 0; m->name[i] && i + 1 < sizeof upper; i++)
        upper[i] = (char)(m->name[i] >= 'a' && m->name[i] <= 'z'
                              ? m->name[i] - 'a' + 'A' : m->name[i]);
    upper[i] = '\0';
    const char *in_arg = m->inputs ? ", &ins[k]" : "";
    char *s = NULL;
    e2e_append(&s, "#include <math.h>\n#include <stdio.h>\n"
               "#include \"%s.h\"\n\n", m->name);
    /* the header's count must match the layout the test assumes */
    e2e_append(&s, "typedef char count_ok[%s_PARAM_COUNT == %d ? 1 : -1];\n\n",
               upper, m->count);
    e2e_append(&s, "static const double pts[%d][%d] = {\n", m->npoints,
               m->count);
    for (int k = 0; k < m->npoints; k++) {
        e2e_append(&s, "    {");
        for (int j = 0; j < m->count; j++)
            e2e_append(&s, "%s%.17g", j ? ", " : "", m->pts[k * m->count + j]);
        e2e_append(&s, "},\n");
    }
    e2e_append(&s, "};\n\n");
    if (m->inputs)
        e2e_append(&s, "static const %s_input ins[%d] = {%s};\n\n", m->name,
                   m->npoints, m->inputs);
    e2e_append(&s,
               "int main(void)\n{\n"
               "    for (int k = 0; k < %d; k++) {\n"
               "        %s_param_flat x, g;\n"
               "        for (int i = 0; i < %d; i++) {\n"
               "            x.v[i] = pts[k][i];\n"
               "            g.v[i] = nan(\"\");\n"
               "        }\n"
               "        double v = %s_value(&x.p%s);\n"
               "        double r = %s_gradient(&x.p%s, &g.p);\n"
               "        printf(\"%%.17g %%.17g\", v, r);\n"
               "        for (int i = 0; i < %d; i++)\n"
               "            printf(\" %%.17g\", g.v[i]);\n"
               "        printf(\"\\n\");\n"
               "    }\n"
               "    return 0;\n}\n",
               m->npoints, m->name, m->count, m->name, in_arg, m->name, in_arg,
               m->count);
    return s;
}

/* The driver's output parsed into npoints rows (malloc'd). */
static inline double *e2e_parse_rows(const E2eModel *m, const char *out,
                                     const char *cc)
{
    size_t n = (size_t)m->npoints * (size_t)(m->count + 2);
    double *rows = malloc(n * sizeof *rows);
    ck_assert_ptr_nonnull(rows);
    const char *at = out;
    for (size_t i = 0; i < n; i++) {
        char *end;
        rows[i] = strtod(at, &end);
        ck_assert_msg(end != at, "%s (%s): driver printed too few numbers:\n%s",
                      m->name, cc, out);
        at = end;
    }
    while (*at == ' ' || *at == '\n')
        at++;
    ck_assert_msg(*at == '\0', "%s (%s): driver printed extra output:\n%s",
                  m->name, cc, out);
    return rows;
}

/* The model run by every C compiler found: rows[c] from cc[c]. */
typedef struct E2eRuns {
    int n;
    const char *cc[COUNT(tu_compilers)];
    double *rows[COUNT(tu_compilers)];
} E2eRuns;

/* Builds m with dervish (which must print nothing), then compiles and runs
 * the driver with each compiler found; fails when there is none. */
static inline E2eRuns e2e_run_model(const E2eModel *m)
{
    E2eRuns r;
    char *dir = tu_tmpdir(), *err = NULL;
    int rc = tu_build_model(dir, m->name, m->text, &err);
    ck_assert_msg(rc == 0 && err && err[0] == '\0',
                  "dervish build %s: status %d\n%s\nmodel:\n%s", m->name, rc,
                  err ? err : "", m->text);
    free(err);
    char *path = tu_format("%s/driver.c", dir), *src = e2e_driver_source(m);
    tu_write(path, src);
    free(path);
    free(src);
    r.n = 0;
    for (size_t c = 0; c < COUNT(tu_compilers); c++) {
        if (!tu_have(tu_compilers[c]))
            continue;
        char *out = tu_compile_and_run(dir, m->name, tu_compilers[c]);
        r.cc[r.n] = tu_compilers[c];
        r.rows[r.n] = e2e_parse_rows(m, out, tu_compilers[c]);
        r.n++;
        free(out);
    }
    ck_assert_msg(r.n > 0, "no C compiler found");
    tu_rmdir(dir);
    free(dir);
    return r;
}

static inline void e2e_runs_free(E2eRuns *r)
{
    for (int c = 0; c < r->n; c++)
        free(r->rows[c]);
}

#endif
