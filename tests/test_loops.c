/* test_loops.c - repeat loops (compiler/emit_roll.c): models whose
 * statements repeat a few forms (the benchmark chain, random ones from
 * loopmodel.h, wide forms, loops read from later parts) are built with
 * loops and with --loop-repeats 0, and every function of the two builds
 * must give the same reals bit for bit; the chain's gradient is also
 * checked against its derivative by hand and central differences; and
 * the CLI's --loop-repeats, when loops are written, and `dervish check`. */
#include "loopmodel.h"

/* ------------------------------------------------------------- helpers */

/* Occurrences of needle in text. */
static int count_of(const char *text, const char *needle)
{
    int n = 0;
    for (const char *s = strstr(text, needle); s; s = strstr(s + 1, needle))
        n++;
    return n;
}

/* Repeat loops in an emitted C source: each opens with this comment. */
static int loops_in(const char *c_source)
{
    return count_of(c_source, "repeats of one form");
}

/* Run dervish with ARGS in DIR; it must succeed.  Returns its stderr. */
static char *dervish_ok(const char *dir, const char *args)
{
    char *err = NULL;
    int rc = tu_run_dervish(dir, NULL, &err, "%s", args);
    ck_assert_msg(rc == 0, "dervish %s: status %d\n%s", args, rc, err);
    return err;
}

/* The model bench/gen_chain.sh writes for N statements over NP params
 * (malloc'd); run from the project root, as make check does. */
static char *chain_model(int n, int np)
{
    char *out = NULL, *err = NULL;
    char *cmd = tu_format("sh bench/gen_chain.sh %d %d chain", n, np);
    int rc = tu_run(cmd, &out, &err);
    ck_assert_msg(rc == 0, "%s: status %d\n%s", cmd, rc, err);
    free(cmd);
    free(err);
    return out;
}

/* A C compiler found: the preferred one, else the other. */
static const char *compiler(const char *prefer, const char *other)
{
    if (tu_have(prefer))
        return prefer;
    ck_assert_msg(tu_have(other), "neither %s nor %s was found", prefer,
                  other);
    return other;
}

/* Compile DIR/FILE with every C compiler found under the strict flags and
 * FLAGS, into an object: no diagnostic may appear. */
static void compiles_clean(const char *dir, const char *file,
                           const char *flags)
{
    int ran = 0;
    for (size_t c = 0; c < sizeof tu_compilers / sizeof *tu_compilers; c++) {
        if (!tu_have(tu_compilers[c]))
            continue;
        char *err = NULL;
        char *cmd = tu_format("cd '%s' && %s " TU_STRICT " %s -c -o /dev/null "
                              "%s", dir, tu_compilers[c], flags, file);
        int rc = tu_run(cmd, NULL, &err);
        ck_assert_msg(rc == 0 && err && err[0] == '\0',
                      "%s: status %d\n%.3000s", cmd, rc, err ? err : "");
        free(cmd);
        free(err);
        ran++;
    }
    ck_assert_msg(ran > 0, "neither gcc nor clang was found");
}

/* --------------------------------------- rolled against plain, bit for bit */

/* One model built twice, with loops (named la<i>) and with --loop-repeats 0
 * (lb<i>), both driven at the same points by one driver that compares what
 * every function returns and writes, bit for bit. */
typedef struct Pair {
    const char *label;  /* names the model in messages */
    const char *text;   /* the model */
    int nparam;         /* reals in the param struct */
    int ninput;         /* scalar inputs (0: none) */
    int noutput;        /* 0: one scalar output; else scalar outputs */
    const char *options;    /* for both builds */
    const char *loops;      /* for the build with loops only */
    int all;            /* also tangent and hessvec, or tangent and jacobian */
    int built;          /* out: both builds succeeded */
    int loops_written;  /* out: repeat loops in the build with loops */
    long compared;      /* out: reals compared */
} Pair;

/* How the driver is built and what it runs on. */
typedef struct Batch {
    const char *real;   /* "double" or "float" */
    const char *cc;     /* the C compiler */
    const char *cflags; /* optimisation flags, besides TU_STRICT */
    int points;         /* points each model is evaluated at */
} Batch;

/* Reals the driver compares per point for the pair p. */
static long reals_per_point(const Pair *p)
{
    long np = p->nparam, no = p->noutput;
    if (no == 0)    /* the two returns, the gradient; the tangent's return
                       and derivative, hessvec's return, gradient, product */
        return p->all ? 5 + 3 * np : 2 + np;
    /* outputs of every call; the adjoint's gradient; the tangent's
       derivative; the Jacobian */
    return p->all ? 4 * no + np + no + no * np : 2 * no + np;
}

/* The driver's comparison helpers, shared by every pair. */
static const char driver_head[] =
    "#include <math.h>\n#include <stdio.h>\n#include <string.h>\n\n"
    "static long compared[%d], nonfinite[%d], differ[%d];\n\n"
    "/* a and b hold n reals each: count those that differ in any bit and\n"
    " * show the first few. */\n"
    "static void same(int c, int k, const char *what, const real *a,\n"
    "                 const real *b, int n)\n{\n"
    "    for (int i = 0; i < n; i++) {\n"
    "        compared[c]++;\n"
    "        if (memcmp(&a[i], &b[i], sizeof a[i]) != 0) {\n"
    "            if (differ[c]++ < 5)\n"
    "                printf(\"model %%d, point %%d: %%s[%%d] is %%a with loops, \"\n"
    "                       \"%%a without\\n\", c, k, what, i, (double)a[i],\n"
    "                       (double)b[i]);\n"
    "        } else if (!isfinite(a[i])) {\n"
    "            nonfinite[c]++;\n"
    "        }\n"
    "    }\n}\n\n"
    "static void set2(real *a, real *b, const real *from, int n)\n{\n"
    "    for (int i = 0; i < n; i++)\n"
    "        a[i] = b[i] = from ? from[i] : (real)NAN;\n}\n\n";

/* The reals of one point for pair p (params, direction, output seed,
 * inputs) as a C initializer, drawn from rng. */
static void write_point(FILE *f, const Pair *p, const Batch *b, uint64_t *rng)
{
    int n = 2 * p->nparam + p->noutput + p->ninput;
    fputs("        {", f);
    for (int i = 0; i < n; i++) {
        double x = rm_unit(rng) * 2 - 1;
        if (i < p->nparam)
            x *= 1.5;
        else if (i < 2 * p->nparam)
            x *= 0.5;
        if (strcmp(b->real, "float") == 0)
            fprintf(f, "%s%.9g", i ? ", " : "", (double)(float)x);
        else
            fprintf(f, "%s%.17g", i ? ", " : "", x);
    }
    fputs("},\n", f);
}

/* The driver's function for pair c: both builds at every point. */
static void write_case(FILE *f, const Pair *p, int c, const Batch *b)
{
    int np = p->nparam, no = p->noutput, ni = p->ninput;
    uint64_t rng = 0x10f5ULL + (uint64_t)c;
    fprintf(f, "static void run%d(void)\n{\n"
               "    static const real at[%d][%d] = {\n",
            c, b->points, 2 * np + no + ni);
    for (int k = 0; k < b->points; k++)
        write_point(f, p, b, &rng);
    fprintf(f, "    };\n    for (int k = 0; k < %d; k++) {\n", b->points);
    /* what the functions write starts as NaN, so a real one of them
     * leaves unwritten shows */
    fprintf(f, "        la%d_param_flat pa, da, ga;\n"
               "        lb%d_param_flat pb, db, gb;\n"
               "        set2(pa.v, pb.v, at[k], %d);\n"
               "        set2(da.v, db.v, at[k] + %d, %d);\n"
               "        set2(ga.v, gb.v, NULL, %d);\n",
            c, c, np, np, np, np);
    const char *ia = "", *ib = "";
    if (ni) {
        fprintf(f, "        la%d_input ia;\n        lb%d_input ib;\n", c, c);
        for (int i = 0; i < ni; i++)
            fprintf(f, "        ia.x%d = ib.x%d = at[k][%d];\n", i, i,
                    2 * np + no + i);
        ia = ", &ia";
        ib = ", &ib";
    }
    if (no == 0) {
        fprintf(f, "        real ra[4], rb[4];\n"
                   "        ra[0] = la%d_value(&pa.p%s);\n"
                   "        rb[0] = lb%d_value(&pb.p%s);\n"
                   "        ra[1] = la%d_gradient(&pa.p%s, &ga.p);\n"
                   "        rb[1] = lb%d_gradient(&pb.p%s, &gb.p);\n"
                   "        same(%d, k, \"value and gradient's value\", ra, rb, 2);\n"
                   "        same(%d, k, \"gradient\", ga.v, gb.v, %d);\n",
                c, ia, c, ib, c, ia, c, ib, c, c, np);
        if (p->all)
            fprintf(f, "        la%d_param_flat ha, va;\n"
                       "        lb%d_param_flat hb, vb;\n"
                       "        set2(ha.v, hb.v, NULL, %d);\n"
                       "        set2(va.v, vb.v, NULL, %d);\n"
                       "        real ta = (real)NAN, tb = (real)NAN;\n"
                       "        ra[2] = la%d_tangent(&pa.p%s, &da.p, &ta);\n"
                       "        rb[2] = lb%d_tangent(&pb.p%s, &db.p, &tb);\n"
                       "        ra[3] = la%d_hessvec(&pa.p%s, &da.p, &ha.p, &va.p);\n"
                       "        rb[3] = lb%d_hessvec(&pb.p%s, &db.p, &hb.p, &vb.p);\n"
                       "        same(%d, k, \"tangent's and hessvec's values\",\n"
                       "             ra + 2, rb + 2, 2);\n"
                       "        same(%d, k, \"tangent\", &ta, &tb, 1);\n"
                       "        same(%d, k, \"hessvec's gradient\", ha.v, hb.v, %d);\n"
                       "        same(%d, k, \"hessvec\", va.v, vb.v, %d);\n",
                    c, c, np, np, c, ia, c, ib, c, ia, c, ib, c, c, c, np, c,
                    np);
    } else {
        fprintf(f, "        la%d_output_flat oa[4], sa, ta;\n"
                   "        lb%d_output_flat ob[4], sb, tb;\n"
                   "        for (int i = 0; i < 4; i++)\n"
                   "            set2(oa[i].v, ob[i].v, NULL, %d);\n"
                   "        set2(ta.v, tb.v, NULL, %d);\n"
                   "        set2(sa.v, sb.v, at[k] + %d, %d);\n"
                   "        la%d_value(&pa.p%s, &oa[0].o);\n"
                   "        lb%d_value(&pb.p%s, &ob[0].o);\n"
                   "        la%d_adjoint(&pa.p%s, &sa.o, &oa[1].o, &ga.p);\n"
                   "        lb%d_adjoint(&pb.p%s, &sb.o, &ob[1].o, &gb.p);\n"
                   "        same(%d, k, \"value\", oa[0].v, ob[0].v, %d);\n"
                   "        same(%d, k, \"adjoint's outputs\", oa[1].v, ob[1].v, %d);\n"
                   "        same(%d, k, \"adjoint\", ga.v, gb.v, %d);\n",
                c, c, no, no, 2 * np, no, c, ia, c, ib, c, ia, c, ib, c, no,
                c, no, c, np);
        if (p->all)
            fprintf(f, "        real ja[%d][%d], jb[%d][%d];\n"
                       "        la%d_tangent(&pa.p%s, &da.p, &oa[2].o, &ta.o);\n"
                       "        lb%d_tangent(&pb.p%s, &db.p, &ob[2].o, &tb.o);\n"
                       "        la%d_jacobian(&pa.p%s, &oa[3].o, ja);\n"
                       "        lb%d_jacobian(&pb.p%s, &ob[3].o, jb);\n"
                       "        same(%d, k, \"tangent's outputs\", oa[2].v, ob[2].v, %d);\n"
                       "        same(%d, k, \"tangent\", ta.v, tb.v, %d);\n"
                       "        same(%d, k, \"jacobian's outputs\", oa[3].v, ob[3].v, %d);\n"
                       "        for (int i = 0; i < %d; i++)\n"
                       "            same(%d, k, \"jacobian row\", ja[i], jb[i], %d);\n",
                    no, np, no, np, c, ia, c, ib, c, ia, c, ib, c, no, c, no,
                    c, no, no, c, np);
    }
    fputs("    }\n}\n\n", f);
}

/* Write DIR/driver.c for the built pairs. */
static void write_driver(const char *dir, const Pair *ps, int n,
                         const Batch *b)
{
    char *path = tu_format("%s/driver.c", dir);
    FILE *f = fopen(path, "w");
    ck_assert_msg(f != NULL, "cannot write %s", path);
    fprintf(f, "/* driver.c - each model with and without loops */\n"
               "typedef %s real;\n", b->real);
    for (int c = 0; c < n; c++)
        if (ps[c].built)
            fprintf(f, "#include \"la%d.h\"\n#include \"lb%d.h\"\n", c, c);
    fprintf(f, driver_head, n, n, n);
    for (int c = 0; c < n; c++)
        if (ps[c].built)
            write_case(f, &ps[c], c, b);
    fputs("int main(void)\n{\n", f);
    for (int c = 0; c < n; c++)
        if (ps[c].built)
            fprintf(f, "    run%d();\n    printf(\"model %%d: %%ld compared, "
                       "%%ld not finite, %%ld differ\\n\", %d, compared[%d], "
                       "nonfinite[%d], differ[%d]);\n", c, c, c, c, c);
    fputs("    return 0;\n}\n", f);
    fclose(f);
    free(path);
}

/* The dervish command line that builds pair p (number c) in DIR/build.sh:
 * with loops as la<c>, or without as lb<c>; its stderr goes to a file. */
static void write_build(FILE *f, const Pair *p, int c, const Batch *b,
                        int with)
{
    const char *emit = "";
    if (p->all)
        emit = p->noutput ? "--emit value,adjoint,tangent,jacobian"
                          : "--emit value,gradient,tangent,hessvec";
    char side = with ? 'a' : 'b';
    fprintf(f, "\"$dervish\" build --real %s %s %s %s --name l%c%d -o l%c%d.c "
               "m%d.dvs 2>l%c%d.err || echo 'l%c%d failed'\n", b->real, emit,
            p->options, with ? p->loops : "--loop-repeats 0", side, c, side, c,
            c, side, c, side, c);
}

/* Build both sides of every pair in dir with one script; failures go to
 * log. */
static void build_pairs(const char *dir, Pair *ps, int n, const Batch *b,
                        FILE *log)
{
    char *path = tu_format("%s/build.sh", dir);
    FILE *f = fopen(path, "w");
    ck_assert_msg(f != NULL, "cannot write %s", path);
    fprintf(f, "dervish='%s'\n", tu_abs_dervish());
    for (int c = 0; c < n; c++) {
        char *file = tu_format("m%d.dvs", c);
        tu_write_in(dir, file, ps[c].text);
        free(file);
        write_build(f, &ps[c], c, b, 1);
        write_build(f, &ps[c], c, b, 0);
    }
    fclose(f);
    char *cmd = tu_format("cd '%s' && sh build.sh", dir), *out = NULL;
    ck_assert_int_eq(tu_run(cmd, &out, NULL), 0);
    for (int c = 0; c < n; c++) {
        Pair *p = &ps[c];
        char *failed[2] = {tu_format("la%d failed\n", c),
                           tu_format("lb%d failed\n", c)};
        p->built = 1;
        for (int k = 0; k < 2; k++) {
            if (!strstr(out, failed[k]))
                continue;
            char *name = tu_format("l%c%d.err", "ab"[k], c);
            char *err = tu_read_in(dir, name);
            fprintf(log, "%s: dervish build%s failed:\n%s\n", p->label,
                    k ? " --loop-repeats 0" : "", err);
            p->built = 0;
            free(err);
            free(name);
        }
        if (p->built) {
            char *name = tu_format("la%d.c", c);
            char *src = tu_read_in(dir, name);
            p->loops_written = loops_in(src);
            free(src);
            free(name);
        }
        free(failed[0]);
        free(failed[1]);
    }
    free(out);
    free(cmd);
    free(path);
}

/* Build every pair, compile the emitted C and the driver with b->cc (two
 * processes at once) and run it; fill in each pair's counts and assert
 * that nothing failed, differed or came out not finite.  Returns the
 * loops written in all. */
static int run_pairs(Pair *ps, int n, const Batch *b)
{
    char *dir = tu_tmpdir(), *log = NULL;
    size_t loglen = 0;
    FILE *lf = open_memstream(&log, &loglen);
    ck_assert_ptr_nonnull(lf);
    build_pairs(dir, ps, n, b, lf);
    int loops = 0;
    for (int c = 0; c < n; c++)
        loops += ps[c].built ? ps[c].loops_written : 0;
    write_driver(dir, ps, n, b);
    char *out = NULL, *err = NULL;
    char *cmd = tu_format("cd '%s' && ls *.c | xargs -P 2 -n 4 %s " TU_STRICT
                          " %s -c && %s -o driver *.o -lm && ./driver", dir,
                          b->cc, b->cflags, b->cc);
    int rc = tu_run(cmd, &out, &err);
    if (rc != 0 || (err && err[0])) {
        fprintf(lf, "%s: status %d\n%.3000s\n", cmd, rc, err ? err : "");
        for (int c = 0; c < n && err; c++) {   /* the models it names */
            char *a = tu_format("la%d.c:", c), *z = tu_format("lb%d.c:", c);
            if (strstr(err, a) || strstr(err, z))
                fprintf(lf, "l?%d.c is %s (m%d.dvs)\n", c, ps[c].label, c);
            free(a);
            free(z);
        }
    }
    for (int c = 0; c < n && rc == 0; c++) {
        Pair *p = &ps[c];
        if (!p->built)
            continue;
        char *head = tu_format("model %d: ", c);
        const char *line = strstr(out, head);
        long nonfinite = -1, differ = -1;
        p->compared = -1;
        if (line)
            sscanf(line + strlen(head), "%ld compared, %ld not finite, %ld "
                   "differ", &p->compared, &nonfinite, &differ);
        long want = reals_per_point(p) * b->points;
        if (differ != 0 || nonfinite != 0 || p->compared != want)
            fprintf(lf, "%s (model %d, %d loops): %ld of %ld reals differ, "
                    "%ld not finite, want %ld compared\n", p->label, c,
                    p->loops_written, differ, p->compared, nonfinite, want);
        free(head);
    }
    /* the driver's lines that name a differing real */
    char *save = NULL;
    for (char *l = rc == 0 ? strtok_r(out, "\n", &save) : NULL; l;
         l = strtok_r(NULL, "\n", &save))
        if (strstr(l, ", point "))
            fprintf(lf, "%s\n", l);
    fclose(lf);
    ck_assert_msg(loglen == 0, "in %s:\n%.4000s", dir, log);
    tu_rmdir(dir);
    free(dir);
    free(log);
    free(out);
    free(err);
    free(cmd);
    return loops;
}

/* -------------------------------------------------- the benchmark chain */

/* bench/gen_chain.sh 2000 100 with default options: its four forms roll
 * into loops, the C is a fraction of the plain build's and compiles
 * cleanly under gcc and clang, and the value and gradient are the plain
 * build's bit for bit. */
START_TEST(chain_rolled_matches_plain)
{
    char *text = chain_model(2000, 100);
    char *dir = tu_tmpdir();
    tu_write_in(dir, "chain.dvs", text);
    free(dervish_ok(dir, "build chain.dvs"));
    free(dervish_ok(dir, "build --loop-repeats 0 -o plain.c chain.dvs"));
    char *rolled = tu_read_in(dir, "chain.c"), *plain = tu_read_in(dir,
                                                                  "plain.c");
    /* statements 11..2006 are 499 repeats of the four forms; the value,
     * the gradient's forward sweep and its reverse sweep have loops */
    ck_assert_ptr_nonnull(strstr(rolled, "/* chain.dvs:11 to line 2006"));
    ck_assert_ptr_nonnull(strstr(rolled, "499 repeats of one form of 4 "
                                         "statements, as one loop"));
    ck_assert_int_ge(count_of(rolled, "for (int dvs_r = 0; dvs_r < "), 3);
    ck_assert_int_ge(loops_in(rolled), 3);
    ck_assert_int_eq(loops_in(plain), 0);
    ck_assert_ptr_null(strstr(plain, "dvs_r"));
    ck_assert_msg(strlen(plain) > 5 * strlen(rolled), "with loops %zu bytes, "
                  "without %zu", strlen(rolled), strlen(plain));
    compiles_clean(dir, "chain.c", "-O2");
    Pair p = {.label = "chain of 2000", .text = text, .nparam = 100,
              .options = "", .loops = ""};
    Batch b = {"double", compiler("gcc", "clang"), "-O2 -fno-builtin", 4};
    ck_assert_int_ge(run_pairs(&p, 1, &b), 3);
    ck_assert_int_eq(p.compared, 4 * 102);
    tu_rmdir(dir);
    free(dir);
    free(rolled);
    free(plain);
    free(text);
}
END_TEST

/* The chain of bench/gen_chain.sh N NP, evaluated here: s0 = tanh(p0) and,
 * for k = 1 .. N-1, with s the previous value, q = p[k % NP] and
 * c = 0.1 + (k % 7) * 0.05 (the decimal the script prints), statement k
 * by k % 4 is, with its partial derivatives taken by hand:
 *   0: t = tanh(s + c q)           dt/ds = 1 - t^2, dt/dq = c (1 - t^2)
 *   1: t = s exp(-0.01 q^2)        dt/ds = exp(-0.01 q^2),
 *                                  dt/dq = -0.02 q s exp(-0.01 q^2)
 *   2: t = s + 0.01 sin(q s)       dt/ds = 1 + 0.01 q cos(q s),
 *                                  dt/dq = 0.01 s cos(q s)
 *   3: t = sqrt(1 + s^2) - 1 + c q dt/ds = s / sqrt(1 + s^2), dt/dq = c
 * The gradient is the chain rule over these, last statement first.
 * Returns the value; grad gets NP entries. */
static double chain_by_hand(int n, int np, const double *p, double *grad)
{
    double *ds = calloc((size_t)n, sizeof *ds), *dq = calloc((size_t)n,
                                                              sizeof *dq);
    ck_assert(ds && dq);
    double s = tanh(p[0]);
    ds[0] = 1 - s * s;  /* s0 = tanh(p0): its derivative by p0 */
    for (int k = 1; k < n; k++) {
        double q = p[k % np], c = (2 + k % 7) / 20.0, t, e, r;
        switch (k % 4) {
        case 0:
            t = tanh(s + c * q);
            ds[k] = 1 - t * t;
            dq[k] = c * (1 - t * t);
            break;
        case 1:
            e = exp(-0.01 * q * q);
            t = s * e;
            ds[k] = e;
            dq[k] = -0.02 * q * s * e;
            break;
        case 2:
            t = s + 0.01 * sin(q * s);
            ds[k] = 1 + 0.01 * q * cos(q * s);
            dq[k] = 0.01 * s * cos(q * s);
            break;
        default:
            r = sqrt(1 + s * s);
            t = r - 1 + c * q;
            ds[k] = s / r;
            dq[k] = c;
            break;
        }
        s = t;
    }
    for (int j = 0; j < np; j++)
        grad[j] = 0;
    double adj = 1;
    for (int k = n - 1; k >= 1; k--) {
        grad[k % np] += adj * dq[k];
        adj *= ds[k];
    }
    grad[0] += adj * ds[0];
    free(ds);
    free(dq);
    return s;
}

#define HAND_POINTS 2

/* The chain's driver: at each point the value, the gradient's value, the
 * gradient, and central differences of the value function in the first
 * few params, (f(x+h) - f(x-h)) / (2h), whose error is O(h^2) plus
 * rounding of order eps/h. */
static const char hand_driver[] =
    "#include \"chain.h\"\n#include <stdio.h>\n"
    "static const double at[%d][%d] = {%s};\n"
    "int main(void)\n{\n"
    "    for (int k = 0; k < %d; k++) {\n"
    "        chain_param_flat p, g;\n"
    "        for (int i = 0; i < CHAIN_PARAM_COUNT; i++)\n"
    "            p.v[i] = at[k][i];\n"
    "        double v = chain_value(&p.p), r = chain_gradient(&p.p, &g.p);\n"
    "        printf(\"%%.17g %%.17g\", v, r);\n"
    "        for (int i = 0; i < CHAIN_PARAM_COUNT; i++)\n"
    "            printf(\" %%.17g\", g.v[i]);\n"
    "        for (int i = 0; i < %d; i++) {\n"
    "            double x = p.v[i], h = 0x1p-20, up = x + h, down = x - h;\n"
    "            p.v[i] = up;\n"
    "            double fu = chain_value(&p.p);\n"
    "            p.v[i] = down;\n"
    "            double fd = chain_value(&p.p);\n"
    "            p.v[i] = x;\n"
    "            printf(\" %%.17g\", (fu - fd) / (up - down));\n"
    "        }\n"
    "        printf(\"\\n\");\n"
    "    }\n"
    "    return 0;\n}\n";

/* The next real of *s, which must hold one. */
static double next_real(const char **s, const char *all)
{
    char *end;
    double x = strtod(*s, &end);
    ck_assert_msg(end != *s, "too few numbers in:\n%.2000s", all);
    *s = end;
    return x;
}

/* Build the chain of gen_chain.sh N NP with OPTIONS and check the value and
 * gradient, at random points and under every C compiler found (or CC
 * only), against chain_by_hand within a relative TOL, and its first DIFFS
 * entries against central differences within 1e-8.  Returns the emitted
 * C (malloc'd). */
static char *chain_by_hand_agrees(int n, int np, const char *options,
                                  const char *cc, double tol, int diffs)
{
    char *text = chain_model(n, np), *dir = tu_tmpdir();
    tu_write_in(dir, "chain.dvs", text);
    char *args = tu_format("build %s chain.dvs", options);
    free(dervish_ok(dir, args));
    double *at = malloc((size_t)(HAND_POINTS * np) * sizeof *at);
    double *hand = malloc((size_t)np * sizeof *hand);
    ck_assert(at && hand);
    uint64_t rng = 2024;
    char *list = tu_format("%s", "");
    for (int k = 0; k < HAND_POINTS * np; k++) {
        at[k] = rm_unit(&rng) * 3 - 1.5;
        char *longer = tu_format("%s%s%.17g%s", list, k % np ? "" : "{", at[k],
                                 (k + 1) % np ? ", " : "},\n");
        free(list);
        list = longer;
    }
    char *driver = tu_format(hand_driver, HAND_POINTS, np, list, HAND_POINTS,
                             diffs);
    tu_write_in(dir, "driver.c", driver);
    int ran = 0;
    for (size_t c = 0; c < sizeof tu_compilers / sizeof *tu_compilers; c++) {
        const char *name = tu_compilers[c];
        if ((cc && strcmp(cc, name) != 0) || !tu_have(name))
            continue;
        char *out = tu_compile_and_run(dir, "chain", name);
        const char *s = out;
        for (int k = 0; k < HAND_POINTS; k++) {
            double v = chain_by_hand(n, np, at + k * np, hand);
            double got = next_real(&s, out), again = next_real(&s, out);
            ck_assert_msg(fabs(got - v) <= tol * fabs(v), "%s: value %.17g, "
                          "by hand %.17g", name, got, v);
            ck_assert_msg(again == got, "%s: gradient's value %.17g, value "
                          "%.17g", name, again, got);
            double *g = malloc((size_t)np * sizeof *g);
            ck_assert_ptr_nonnull(g);
            for (int i = 0; i < np; i++) {
                g[i] = next_real(&s, out);
                ck_assert_msg(fabs(g[i] - hand[i]) <= tol * fabs(hand[i]) +
                              1e-300, "%s, point %d: d/dp%d %.17g, by hand "
                              "%.17g", name, k, i, g[i], hand[i]);
            }
            for (int i = 0; i < diffs; i++) {
                double fd = next_real(&s, out);
                ck_assert_msg(fabs(g[i] - fd) <= 1e-8, "%s, point %d: d/dp%d "
                              "%.17g, central difference %.17g", name, k, i,
                              g[i], fd);
            }
            free(g);
        }
        free(out);
        ran++;
    }
    ck_assert_msg(ran > 0, "no C compiler found");
    char *src = tu_read_in(dir, "chain.c");
    tu_rmdir(dir);
    free(dir);
    free(driver);
    free(list);
    free(at);
    free(hand);
    free(args);
    free(text);
    return src;
}

/* A short chain rolled into loops (every function of it counts as long
 * with --part-size 1), against its derivative by hand and central
 * differences, outside dervish. */
START_TEST(short_chain_gradient_by_hand)
{
    char *src = chain_by_hand_agrees(41, 10, "--part-size 1 --loop-repeats 2",
                                     NULL, 1e-13, 10);
    ck_assert_int_ge(loops_in(src), 3);
    free(src);
}
END_TEST

/* A chain whose runs are longer than a loop takes (65536 repeats): they
 * are cut into several loops, and value and gradient still agree with
 * the derivative by hand. */
START_TEST(long_chain_gradient_by_hand)
{
    char *src = chain_by_hand_agrees(4 * 65536 + 200, 100, "",
                                     compiler("gcc", "clang"), 1e-11, 4);
    ck_assert_int_eq(count_of(src, "65536 repeats of one form of 4 "
                              "statements"), 2);
    ck_assert_int_ge(loops_in(src), 6);
    free(src);
}
END_TEST

/* ------------------------------------------------------- random models */

#define RANDOM_MODELS 150
#define STRUCT_MODELS 16
#define FLOAT_MODELS 16

/* The part size of a random model: one statement, so that every function
 * of more than four is long, or a sixth of the model, which keeps every
 * function long with fewer parts to compile. */
static int part_size(const LmModel *m, uint64_t seed)
{
    return seed % 6 == 0 || m->nstmt < 12 ? 1 : m->nstmt / 6;
}

static const char *const loop_options[] = {
    "--loop-repeats 2", "--loop-repeats 2", "--loop-repeats 3",
};

/* Models of seeds first .. first + n - 1 of loopmodel.h, each rolled and
 * plain in one driver built by cc at -O0.  Adds the loops written to
 * *loops and the models that got at least one to *rolled. */
static void random_batch(uint64_t first, int n, int several_outputs,
                         const char *real, const char *cc, int *rolled,
                         int *loops)
{
    if (n == 0)
        return;
    Pair *ps = calloc((size_t)n, sizeof *ps);
    LmModel *ms = calloc((size_t)n, sizeof *ms);
    char **labels = calloc((size_t)n, sizeof *labels);
    char **parts = calloc((size_t)n, sizeof *parts);
    ck_assert(ps && ms && labels && parts);
    for (int c = 0; c < n; c++) {
        uint64_t seed = first + (uint64_t)c;
        ms[c] = lm_generate(seed, several_outputs);
        labels[c] = tu_format("seed %llu", (unsigned long long)seed);
        parts[c] = tu_format("--part-size %d", part_size(&ms[c], seed));
        Pair p = {.label = labels[c], .text = ms[c].text,
                  .nparam = ms[c].nparam, .ninput = ms[c].ninput,
                  .noutput = ms[c].noutput, .options = parts[c],
                  .loops = loop_options[seed % 3], .all = 1};
        ps[c] = p;
    }
    Batch b = {real, cc, "-O0", 3};
    *loops += run_pairs(ps, n, &b);
    for (int c = 0; c < n; c++) {
        *rolled += ps[c].loops_written > 0;
        free(labels[c]);
        free(parts[c]);
        free(ms[c].text);
    }
    free(ps);
    free(ms);
    free(labels);
    free(parts);
}

/* n random models from seed first on, rolled and plain.  Most go to clang
 * (three times as quick at -O0), one in fifteen to gcc, which computes math
 * functions of constants while compiling even at -O0: the two builds
 * must leave such calls alike.  Asserts that most models got loops. */
static void random_models(uint64_t first, int n, int several_outputs,
                          const char *real)
{
    int rolled = 0, loops = 0, by_gcc = n / 15;
    random_batch(first, by_gcc, several_outputs, real, compiler("gcc",
                 "clang"), &rolled, &loops);
    random_batch(first + (uint64_t)by_gcc, n - by_gcc, several_outputs, real,
                 compiler("clang", "gcc"), &rolled, &loops);
    printf("%d random models%s%s: %d with loops, %d loops\n", n,
           several_outputs ? " with several outputs" : "",
           strcmp(real, "float") ? "" : " in float", rolled, loops);
    ck_assert_int_ge(rolled, n / 2);
    ck_assert_int_ge(loops, 2 * n);
}

/* Random models of repeated forms, value, gradient, tangent and Hessian
 * times a direction, rolled and plain, bit for bit. */
START_TEST(random_models_match_plain)
{
    random_models(1, RANDOM_MODELS, 0, "double");
}
END_TEST

/* Random models with several outputs in a struct: value, adjoint, tangent
 * and Jacobian, rolled and plain, bit for bit. */
START_TEST(struct_outputs_match_plain)
{
    random_models(1001, STRUCT_MODELS, 1, "double");
}
END_TEST

/* --real float: random models and the benchmark chain, rolled and plain,
 * float results bit for bit. */
START_TEST(float_matches_plain)
{
    random_models(2001, FLOAT_MODELS, 0, "float");
    char *text = chain_model(1000, 30);
    Pair p = {.label = "float chain of 1000", .text = text, .nparam = 30,
              .options = "", .loops = ""};
    Batch b = {"float", compiler("gcc", "clang"), "-O2 -fno-builtin", 3};
    ck_assert_int_ge(run_pairs(&p, 1, &b), 3);
    ck_assert_int_eq(p.compared, 3 * 32);
    free(text);
}
END_TEST

/* ------------------------------------------------------- wide forms */

/* Ten repeats each of forms of 8, 24, 40 and 64 terms over the previous
 * value, params that move with the repeat and constants that differ: the
 * wider two have more distinct nodes than a loop takes in one statement
 * (malloc'd). */
static char *wide_forms_model(void)
{
    static const int widths[] = {8, 24, 40, 64};
    char *text = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&text, &len);
    ck_assert_ptr_nonnull(f);
    fputs("param p0, p1, p2, p3, p4, p5\nv0 = tanh(p0)\n", f);
    int n = 1;
    for (size_t w = 0; w < sizeof widths / sizeof *widths; w++)
        for (int r = 0; r < 10; r++, n++) {
            fprintf(f, "v%d = tanh((", n);
            for (int j = 0; j < widths[w]; j++) {
                char leaf[16], term[128];
                fputs(j ? " + " : "", f);
                if (j % 3 == 2) {   /* constants no other leaf equals */
                    fprintf(f, "%.3f * v%d", 0.111 + 0.013 * r + 0.001 * j,
                            n - 1);
                    continue;
                }
                if (j % 3 == 0)
                    snprintf(leaf, sizeof leaf, "v%d", n - 1);
                else
                    snprintf(leaf, sizeof leaf, "p%d", (r + j) % 6);
                lm_fill(term, sizeof term, lm_wrap[j % LM_WRAPS], leaf, "");
                fputs(term, f);
            }
            fputs(") * 0.1)\n", f);
        }
    fprintf(f, "output v%d\n", n - 1);
    fclose(f);
    return text;
}

/* Wide forms: the narrow ones roll, the ones over a loop's limit
 * (ROLL_NODES_MAX in emit_roll.c) are written out, and all four functions
 * are the plain build's bit for bit. */
START_TEST(wide_forms_match_plain)
{
    char *text = wide_forms_model(), *dir = tu_tmpdir();
    tu_write_in(dir, "wide.dvs", text);
    free(dervish_ok(dir, "build --part-size 1 --loop-repeats 2 wide.dvs"));
    char *src = tu_read_in(dir, "wide.c");
    ck_assert_ptr_nonnull(strstr(src, "/* wide.dvs:3 to line 12,"));
    ck_assert_ptr_nonnull(strstr(src, "/* wide.dvs:13 to line 22,"));
    free(src);
    tu_rmdir(dir);
    free(dir);
    Pair p = {.label = "wide forms", .text = text, .nparam = 6,
              .options = "--part-size 1", .loops = "--loop-repeats 2",
              .all = 1};
    Batch b = {"double", compiler("clang", "gcc"), "-O0", 3};
    ck_assert_int_ge(run_pairs(&p, 1, &b), 2);
    ck_assert_int_eq(p.compared, 3 * (5 + 3 * 6));
    free(text);
}
END_TEST

/* ------------------------------------------------------ parts and frame */

#define TAIL 260

/* The chain of 600 statements followed by TAIL statements of random forms
 * (so they do not roll), each reading one of the chain's first 100 values
 * (so the rest of the chain's reverse sweep still rolls): with
 * --part-size 50 the functions stay long after the chain rolls, so they
 * are written in parts, and later parts read the loop's slot arrays
 * through the frame (malloc'd). */
static char *chain_with_tail(void)
{
    char *chain = chain_model(600, 20);
    char *out = strstr(chain, "output ");
    ck_assert_ptr_nonnull(out);
    *out = '\0';
    char *text = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&text, &len);
    ck_assert_ptr_nonnull(f);
    fprintf(f, "%st0 = s599 * 0.5\n", chain);
    uint64_t rng = 77;
    for (int k = 1; k < TAIL; k++) {
        char prev[16], read[16], a[512], b[512], joined[1024];
        snprintf(prev, sizeof prev, "t%d", k - 1);
        snprintf(read, sizeof read, "s%d", rm_below(&rng, 100));
        lm_fill(a, sizeof a, lm_wrap[rm_below(&rng, LM_WRAPS)], prev, "");
        lm_fill(b, sizeof b, lm_wrap[rm_below(&rng, LM_WRAPS)], read, "");
        lm_fill(joined, sizeof joined, lm_join[rm_below(&rng, LM_JOINS)], a,
                b);
        fprintf(f, "t%d = tanh(%s)\n", k, joined);
    }
    fprintf(f, "output t%d\n", TAIL - 1);
    fclose(f);
    free(chain);
    return text;
}

/* Loops in functions written in parts: a later part reads a loop's arrays
 * from the frame, and the results are still the plain build's bit for
 * bit; with --line-directives the C still compiles warning-free. */
START_TEST(parts_read_loop_arrays)
{
    char *text = chain_with_tail(), *dir = tu_tmpdir();
    tu_write_in(dir, "long.dvs", text);
    free(dervish_ok(dir, "build --part-size 50 long.dvs"));
    char *src = tu_read_in(dir, "long.c");
    ck_assert_int_ge(loops_in(src), 3);
    ck_assert_ptr_nonnull(strstr(src, "static void dvs_gradient_part2("));
    ck_assert_msg(strstr(src, "dvs_f->dvs_v1_") != NULL, "no part reads a "
                  "loop's slot through the frame");
    Pair p = {.label = "chain with a tail", .text = text, .nparam = 20,
              .options = "--part-size 50", .loops = ""};
    Batch b = {"double", compiler("gcc", "clang"), "-O2 -fno-builtin", 3};
    ck_assert_int_ge(run_pairs(&p, 1, &b), 3);
    ck_assert_int_eq(p.compared, 3 * (2 + 20));
    free(dervish_ok(dir, "build --part-size 50 --line-directives -o lines.c "
                         "long.dvs"));
    char *lines = tu_read_in(dir, "lines.c");
    ck_assert_int_ge(loops_in(lines), 3);
    ck_assert_ptr_nonnull(strstr(lines, "#line 11 \"long.dvs\""));
    compiles_clean(dir, "lines.c", "-O0");
    tu_rmdir(dir);
    free(dir);
    free(lines);
    free(src);
    free(text);
}
END_TEST

/* ------------------------------------------------------------ regressions */

/* Two models that once came out wrong, kept as they were reduced:
 * - a run given up for its prologue (a chain starting from a param, after
 *   a loop with a prologue of its own) dropped the earlier loop's
 *   prologue copies, so the a-chain started from the wrong value;
 * - with several outputs, a loop's prologue was written into the next
 *   loop's slot at negative indices (the C did not compile). */
START_TEST(regressions_match_plain)
{
    Buf chains = {0};
    buf_put(&chains, "param p0, p1\nv0 = tanh(p0)\na1 = sin(v0)\n");
    for (int k = 2; k <= 10; k++)
        buf_printf(&chains, "a%d = sin(a%d)\n", k, k - 1);
    buf_put(&chains, "b1 = cos(p1)\n");
    for (int k = 2; k <= 10; k++)
        buf_printf(&chains, "b%d = cos(b%d)\n", k, k - 1);
    buf_put(&chains, "out = a10 + b10\noutput out\n");
    static const char outputs[] =
        "param p0, p1, p2, p3, p4\n"
        "v0 = tanh(p0 + 0.5)\n"
        "v26 = tanh(v0 * p2 + v0)\n"
        "v27 = tanh(v26 * p0 + v0)\n"
        "v28 = tanh(v27 * p1 + v26)\n"
        "v29 = tanh(v28 * p4 + v27)\n"
        "v30 = tanh(v29 * p3 + v28)\n"
        "v32 = tanh(v0 * p4 + v30)\n"
        "v34 = tanh(v0 * p0 + v32)\n"
        "v35 = tanh(v34 * p3 + v0)\n"
        "v36 = tanh(v35 * p1 + v34)\n"
        "v37 = cos(v36) * 0.5\n"
        "v38 = cos(v37) * 0.5\n"
        "output v32, v38\n";
    Pair ps[2] = {
        {.label = "chain from a param after a loop", .text = chains.data,
         .nparam = 2, .options = "--part-size 1", .loops = "--loop-repeats 2",
         .all = 1},
        {.label = "prologue with several outputs", .text = outputs,
         .nparam = 5, .noutput = 2, .options = "--part-size 1",
         .loops = "--loop-repeats 2", .all = 1}};
    Batch b = {"double", compiler("gcc", "clang"), "-O2 -fno-builtin", 3};
    ck_assert_int_ge(run_pairs(ps, 2, &b), 3);
    ck_assert_int_ge(ps[0].loops_written, 2);
    ck_assert_int_ge(ps[1].loops_written, 1);
    buf_free(&chains);
}
END_TEST

/* ------------------------------------------------------------- the CLI */

/* --loop-repeats 1 and x are refused with exit 2 and the message the
 * reference gives, writing nothing. */
START_TEST(cli_refuses_bad_repeats)
{
    static const char *const bad[] = {"1", "x"};
    char *text = chain_model(40, 5), *dir = tu_tmpdir();
    tu_write_in(dir, "chain.dvs", text);
    for (size_t k = 0; k < sizeof bad / sizeof *bad; k++) {
        char *err = NULL;
        int rc = tu_run_dervish(dir, NULL, &err, "build --loop-repeats %s "
                                "chain.dvs", bad[k]);
        ck_assert_int_eq(rc, 2);
        char *want = tu_format("dervish: --loop-repeats takes 0 (no loops) or "
                               "a whole number of repeats, at least 2, not "
                               "'%s'", bad[k]);
        char *first = tu_first_line(err);
        ck_assert_str_eq(first, want);
        free(first);
        free(want);
        free(err);
    }
    tu_expect_listing(dir, "chain.dvs\n");
    tu_rmdir(dir);
    free(dir);
    free(text);
}
END_TEST

/* Which functions get loops: none with --loop-repeats 0; none in a
 * function that is not long (40 statements at the default part size),
 * whatever the threshold, though the same model gets loops when its
 * functions count as long; and a run must reach the threshold. */
START_TEST(cli_when_loops_are_written)
{
    char *dir = tu_tmpdir();
    char *chain = chain_model(2000, 100), *short_chain = chain_model(40, 5);
    tu_write_in(dir, "chain.dvs", chain);
    tu_write_in(dir, "short.dvs", short_chain);
    free(dervish_ok(dir, "build --loop-repeats 0 chain.dvs"));
    char *src = tu_read_in(dir, "chain.c");
    ck_assert_int_eq(loops_in(src), 0);
    ck_assert_ptr_null(strstr(src, "for (int dvs_r"));
    free(src);
    free(dervish_ok(dir, "build --loop-repeats 2 short.dvs"));
    src = tu_read_in(dir, "short.c");
    ck_assert_int_eq(loops_in(src), 0);
    free(src);
    free(dervish_ok(dir, "build --part-size 1 --loop-repeats 2 short.dvs"));
    src = tu_read_in(dir, "short.c");
    ck_assert_int_ge(loops_in(src), 3);
    free(src);
    /* seven repeats of a form of one statement: below the default 8, at
     * --loop-repeats 7 */
    static const char seven[] =
        "param a, b\nu0 = a\n"
        "u1 = tanh(u0 * 0.5 + b)\nu2 = tanh(u1 * 0.6 + b)\n"
        "u3 = tanh(u2 * 0.7 + b)\nu4 = tanh(u3 * 0.8 + b)\n"
        "u5 = tanh(u4 * 0.9 + b)\nu6 = tanh(u5 * 1.1 + b)\n"
        "u7 = tanh(u6 * 1.2 + b)\ny = u7 * b + u3\noutput y\n";
    tu_write_in(dir, "seven.dvs", seven);
    free(dervish_ok(dir, "build --part-size 1 seven.dvs"));
    src = tu_read_in(dir, "seven.c");
    ck_assert_int_eq(loops_in(src), 0);
    free(src);
    free(dervish_ok(dir, "build --part-size 1 --loop-repeats 7 seven.dvs"));
    src = tu_read_in(dir, "seven.c");
    ck_assert_int_ge(count_of(src, "7 repeats of one form of 1 statement"), 2);
    free(src);
    tu_rmdir(dir);
    free(dir);
    free(chain);
    free(short_chain);
}
END_TEST

/* dervish check evaluates the IR, which the loops leave as it is: on the
 * chain that builds with loops, every derivative agrees, the tangent and
 * the Hessian-vector product too. */
START_TEST(check_passes_on_rolled_model)
{
    char *text = chain_model(2000, 100), *dir = tu_tmpdir();
    tu_write_in(dir, "chain.dvs", text);
    free(dervish_ok(dir, "build --emit value,gradient,tangent,hessvec "
                         "chain.dvs"));
    char *src = tu_read_in(dir, "chain.c");
    ck_assert_int_ge(loops_in(src), 4);
    char *out = NULL, *err = NULL;
    int rc = tu_run_dervish(dir, &out, &err, "check --emit value,gradient,"
                            "tangent,hessvec chain.dvs");
    ck_assert_msg(rc == 0, "dervish check: status %d\n%s\n%s", rc, out, err);
    ck_assert_ptr_nonnull(strstr(out, "check: 100 of 100 derivatives agree"));
    ck_assert_ptr_nonnull(strstr(out, "check: the tangent agrees"));
    ck_assert_ptr_nonnull(strstr(out, "check: the Hessian times the direction "
                                      "agrees"));
    tu_rmdir(dir);
    free(dir);
    free(out);
    free(err);
    free(src);
    free(text);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("loops");
    TU_ADD_TESTS(tu_case(s, "chain", 60), chain_rolled_matches_plain,
                 short_chain_gradient_by_hand, long_chain_gradient_by_hand);
    TU_ADD_TESTS(tu_case(s, "random", 120), random_models_match_plain,
                 struct_outputs_match_plain, float_matches_plain);
    TU_ADD_TESTS(tu_case(s, "parts", 60), wide_forms_match_plain,
                 parts_read_loop_arrays, regressions_match_plain);
    TU_ADD_TESTS(tu_case(s, "cli", 30), cli_refuses_bad_repeats,
                 cli_when_loops_are_written, check_passes_on_rolled_model);
    return tu_main(s);
}
