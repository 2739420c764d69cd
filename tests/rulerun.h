/* rulerun.h - building and running one model that holds many builtin
 * instances, shared by test_rule_refs.c and test_stability.c: the model,
 * its emitted C compiled by each compiler and by the evaluator, and the
 * values and partials read back.  Include after rule_refs.h and
 * testutil.h. */
#ifndef DERVISH_RULERUN_H
#define DERVISH_RULERUN_H

typedef struct Run {
    const struct rr_function *fns;
    int nfns;
    char *name;                 /* the model's name */
    Buf text;                   /* the model */
    long nparams;
    double *params;             /* the flat param vector: points, weights */
    long *arg_at;               /* [f * RR_NARGS_MAX + i]: offset of arg i */
    long *weight_at;            /* [f]: offset of w_T */
    int nsources;
    const char *source[COUNT(tu_compilers) + 1];  /* who computed grad[] */
    double *grad[COUNT(tu_compilers) + 1];
} Run;

/* Argument i of function f at point k in the flat param vector. */
static long run_arg(const Run *r, int f, int i, int k)
{
    const struct rr_function *fn = &r->fns[f];
    if (fn->reduce)
        return r->arg_at[f * RR_NARGS_MAX] + (long)k * fn->nargs + i;
    return r->arg_at[f * RR_NARGS_MAX + i] + k;
}

/* The model text, and the param layout with its values. */
static void run_make_model(Run *r)
{
    Buf sum = {0};
    long at = 0;
    r->arg_at = calloc((size_t)r->nfns * RR_NARGS_MAX, sizeof *r->arg_at);
    r->weight_at = calloc((size_t)r->nfns, sizeof *r->weight_at);
    ck_assert(r->arg_at && r->weight_at);
    buf_printf(&r->text, "# one term per function, one param per point\n");
    for (int f = 0; f < r->nfns; f++) {
        const struct rr_function *fn = &r->fns[f];
        buf_put(&r->text, "param ");
        for (int i = 0; i < (fn->reduce ? 1 : fn->nargs); i++) {
            r->arg_at[f * RR_NARGS_MAX + i] = at;
            if (fn->reduce)
                buf_printf(&r->text, "a_%s[%d, %d], ", fn->tag, fn->npoints,
                           fn->nargs);
            else
                buf_printf(&r->text, "%c_%s[%d], ", 'a' + i, fn->tag,
                           fn->npoints);
            at += (long)fn->npoints * (fn->reduce ? fn->nargs : 1);
        }
        r->weight_at[f] = at;
        at += fn->npoints;
        buf_printf(&r->text, "w_%s[%d]\nr_%s[k] = w_%s[k] * (", fn->tag,
                   fn->npoints, fn->tag, fn->tag);
        for (const char *e = fn->expr; *e; e++) {
            if (*e != '@')
                buf_putn(&r->text, e, 1);
            else if (fn->reduce && *++e)    /* a reduction has only @0 */
                buf_printf(&r->text, "a_%s[k, j]", fn->tag);
            else
                buf_printf(&r->text, "%c_%s[k]", 'a' + (*++e - '0'), fn->tag);
        }
        buf_put(&r->text, ")\n");
        buf_printf(&sum, "%s sum(k: r_%s[k])", f ? " +\n   " : "y =",
                   fn->tag);
    }
    buf_printf(&r->text, "%s\noutput y\n", sum.data);
    buf_free(&sum);
    r->nparams = at;
    r->params = calloc((size_t)at, sizeof *r->params);
    ck_assert_ptr_nonnull(r->params);
    for (int f = 0; f < r->nfns; f++)
        for (int k = 0; k < r->fns[f].npoints; k++) {
            for (int i = 0; i < r->fns[f].nargs; i++)
                r->params[run_arg(r, f, i, k)] = r->fns[f].points[k].arg[i];
            r->params[r->weight_at[f] + k] = 1.0;
        }
}

/* The driver: the params as exact hex literals, one gradient call, the
 * gradient printed exactly (pre-filled with NaN, so an entry the emitted
 * code fails to write shows up). */
static void run_write_driver(const Run *r, const char *dir)
{
    Buf s = {0};
    char upper[64];
    size_t n = 0;
    for (; r->name[n] && n + 1 < sizeof upper; n++)
        upper[n] = (char)toupper((unsigned char)r->name[n]);
    upper[n] = '\0';
    buf_printf(&s, "#include <math.h>\n#include <stdio.h>\n#include \"%s.h\"\n"
               "\nstatic const double init[%s_PARAM_COUNT] = {\n", r->name,
               upper);
    for (long i = 0; i < r->nparams; i++)
        buf_printf(&s, "%a,%s", r->params[i], i % 4 == 3 ? "\n" : " ");
    buf_printf(&s, "};\n\nint main(void)\n{\n"
               "    static %s_param_flat x, g;\n"
               "    for (int i = 0; i < %s_PARAM_COUNT; i++) {\n"
               "        x.v[i] = init[i];\n"
               "        g.v[i] = nan(\"\");\n"
               "    }\n"
               "    %s_gradient(&x.p, &g.p);\n"
               "    for (int i = 0; i < %s_PARAM_COUNT; i++)\n"
               "        printf(\"%%a\\n\", g.v[i]);\n"
               "    return 0;\n}\n", r->name, upper, r->name, upper);
    char *path = tu_format("%s/driver.c", dir);
    tu_write(path, s.data);
    free(path);
    buf_free(&s);
}

static void run_add_source(Run *r, const char *name, double *grad)
{
    r->source[r->nsources] = name;
    r->grad[r->nsources++] = grad;
}

static double *run_parse(const Run *r, const char *out, const char *cc)
{
    double *g = malloc((size_t)r->nparams * sizeof *g);
    ck_assert_ptr_nonnull(g);
    const char *at = out;
    for (long i = 0; i < r->nparams; i++) {
        char *end;
        g[i] = strtod(at, &end);
        ck_assert_msg(end != at, "the driver built by %s printed %ld "
                      "numbers, want %ld", cc, i, r->nparams);
        at = end;
    }
    return g;
}

/* Builds the model of table fns[nfns] under NAME and takes its gradient
 * with each C compiler found and with the evaluator. */
static void run_everywhere(Run *r, const struct rr_function *fns, int nfns,
                           const char *name)
{
    r->fns = fns;
    r->nfns = nfns;
    r->name = tu_format("%s", name);
    run_make_model(r);
    char *dir = tu_tmpdir(), *err = NULL;
    int rc = tu_build_model(dir, name, r->text.data, &err);
    ck_assert_msg(rc == 0 && err && err[0] == '\0',
                  "dervish build: status %d\n%s", rc, err ? err : "");
    free(err);
    run_write_driver(r, dir);
    for (size_t c = 0; c < COUNT(tu_compilers); c++) {
        if (!tu_have(tu_compilers[c]))
            continue;
        char *out = tu_compile_and_run(dir, name, tu_compilers[c]);
        run_add_source(r, tu_compilers[c], run_parse(r, out, tu_compilers[c]));
        free(out);
    }
    ck_assert_msg(r->nsources > 0, "no C compiler found");
    tu_rmdir(dir);
    free(dir);

    DvCompilation comp;
    DvOptions opt;
    memset(&opt, 0, sizeof opt);   /* the defaults */
    opt.diag_out = stderr;
    char *path = tu_format("%s.dvs", name);
    rc = dv_compile(&comp, path, r->text.data, r->text.len, &opt);
    ck_assert_msg(rc == 0, "the model does not compile");
    free(path);
    Evaluation *ev = eval_new(comp.ir);
    ck_assert_int_eq(eval_param_count(ev), r->nparams);
    for (long i = 0; i < r->nparams; i++)
        *eval_param(ev, i) = r->params[i];
    double *grad = malloc((size_t)r->nparams * sizeof *grad);
    ck_assert_ptr_nonnull(grad);
    eval_gradient(ev, grad);
    run_add_source(r, "evaluator", grad);
    eval_free(ev);
    dv_free(&comp);
}

static void run_free(Run *r)
{
    for (int s = 0; s < r->nsources; s++)
        free(r->grad[s]);
    free(r->name);
    buf_free(&r->text);
    free(r->params);
    free(r->arg_at);
    free(r->weight_at);
}

#endif
