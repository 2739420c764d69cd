/* main.c - the dervish command line (LANGUAGE.md section 7).
 *
 * Exit status: 0 success, 1 the model has errors (or check found a
 * mismatch), 2 bad command line, 3 an I/O failure. */
#include "dervish.h"
#include "emit_c.h"
#include "fileio.h"
#include "gradcheck.h"
#include "graph.h"
#include "names.h"

#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#ifndef DERVISH_VERSION
#define DERVISH_VERSION "unknown"
#endif

enum { EXIT_MODEL = 1, EXIT_USAGE = 2, EXIT_IO = 3 };

static const char usage[] =
    "usage: dervish build [options] MODEL.dvs    write the C source and header\n"
    "         -o FILE          C source path (default: MODEL's stem + .c here)\n"
    "         --header FILE    header path (default: the C path with .h)\n"
    "         --name NAME      symbol prefix (overrides the model statement)\n"
    "         -I DIR           look in DIR for files 'use' names that are not\n"
    "                          beside the file using them (repeatable, in order)\n"
    "         --fail-on-warning  treat warnings as errors (exit 1, write nothing)\n"
    "         --stack-limit N  most doubles in one local array (default 4096);\n"
    "                          larger arrays live in the caller's work buffer\n"
    "         --part-size N    write functions of over 4N statements as parts\n"
    "                          of about N statements each (default 100)\n"
    "         --loop-repeats N  in such functions, write N or more repeats of\n"
    "                          one form of statements as a loop (default 8;\n"
    "                          0: never)\n"
    "         --real TYPE      the emitted code's real type: double or float\n"
    "                          (default double)\n"
    "         --emit LIST      the functions to write, of value, gradient,\n"
    "                          tangent, hessvec and hessian (one scalar\n"
    "                          output), or value, adjoint, tangent and\n"
    "                          jacobian (outputs in a struct); default\n"
    "                          value,gradient or value,adjoint,jacobian\n"
    "         --explain        say how the gradient uses memory, and why\n"
    "         --line-directives  point the C compiler and debugger at the\n"
    "                          model's lines (#line)\n"
    "         --deps FILE      also write a make rule naming the outputs and\n"
    "                          every model file read (for make, ninja, cmake)\n"
    "         --always-write   replace outputs that already hold the same bytes\n"
    "       dervish check [options] MODEL.dvs    compare the gradient with\n"
    "                                            numerical derivatives\n"
    "         --at FILE        values of params and inputs (name = numbers...)\n"
    "         --seed N         seed for the random values of whatever --at\n"
    "                          does not give\n"
    "         --tolerance X    largest accepted relative error (default 1e-6)\n"
    "         --size NAME=N    a runtime size (else taken from the values given)\n"
    "         --name NAME      symbol prefix\n"
    "         -I DIR           look in DIR for used files, as for build\n"
    "         --emit LIST      also check these functions' derivatives\n"
    "                          (tangent, hessvec, jacobian)\n"
    "         --fail-on-warning  treat warnings as errors\n"
    "       dervish graph [options] MODEL.dvs    write the computation graph\n"
    "                                            in Graphviz DOT\n"
    "         -o FILE          DOT file (default, or when FILE is -:\n"
    "                          standard output)\n"
    "         --sweep          number the values in adjoint sweep order\n"
    "         --name NAME      symbol prefix (the graph's title)\n"
    "         -I DIR           look in DIR for used files, as for build\n"
    "         --fail-on-warning  treat warnings as errors\n"
    "       dervish --help | --version\n"
    "exit status: 0 success, 1 model errors or a derivative mismatch,\n"
    "             2 bad command line, 3 input/output failure\n";

static int usage_error(const char *fmt, const char *arg)
{
    fputs("dervish: ", stderr);
    fprintf(stderr, fmt, arg);
    fputs("\n(run 'dervish --help' for the options)\n", stderr);
    return EXIT_USAGE;
}

typedef struct Args {
    const char *model;
    const char *c_path;
    const char *h_path;
    const char *name;
    const char *at;
    const char *seed;
    const char *tolerance;
    int fail_on_warning;
    int explain;
    int line_directives;
    const char *deps_path;  /* build --deps */
    int always_write;       /* build --always-write */
    const char *stack_limit;
    const char *part_size;
    const char *loop_repeats;
    const char *real;       /* build --real: "double" or "float" */
    const char *emit_list;  /* --emit */
    int emit;               /* its DV_EMIT_* bits, 0 for the default */
    const char *sizes[16];  /* --size NAME=N */
    int nsizes;
    const char *include[64];    /* -I DIR, in order */
    int ninclude;
    const char *dot_path;   /* graph -o: NULL or "-" for standard output */
    int sweep;              /* graph --sweep */
} Args;

/* Whether s is a whole number from 1 to LONG_MAX, in plain digits. */
static int is_count(const char *s)
{
    char *end;
    errno = 0;
    long n = strtol(s, &end, 10);
    return *s >= '0' && *s <= '9' && !*end && n >= 1 && errno != ERANGE;
}

/* The DV_EMIT_* bits of an --emit list such as "value,tangent", or 0 when
 * the list names something else or nothing. */
static int emit_bits(const char *list)
{
    int bits = 0;
    for (const char *p = list;; p++) {
        size_t n = strcspn(p, ",");
        int k = 0;
        while (k < EMIT_KINDS && !(strlen(emit_kind_name(k)) == n &&
                                   strncmp(p, emit_kind_name(k), n) == 0))
            k++;
        if (k == EMIT_KINDS)
            return 0;
        bits |= 1 << k;
        p += n;
        if (!*p)
            return bits;
    }
}

/* Parse the options after the command word; returns 0 or an exit status. */
static int parse_args(int argc, char **argv, int is_build, Args *a)
{
    memset(a, 0, sizeof *a);
    int is_graph = strcmp(argv[1], "graph") == 0;
    int is_check = !is_build && !is_graph;
    for (int i = 2; i < argc; i++) {
        const char *opt = argv[i];
        const char **slot = NULL;
        if (strcmp(opt, "--name") == 0)
            slot = &a->name;
        else if (is_build && strcmp(opt, "-o") == 0)
            slot = &a->c_path;
        else if (is_build && strcmp(opt, "--header") == 0)
            slot = &a->h_path;
        else if (is_build && strcmp(opt, "--stack-limit") == 0)
            slot = &a->stack_limit;
        else if (is_build && strcmp(opt, "--part-size") == 0)
            slot = &a->part_size;
        else if (is_build && strcmp(opt, "--loop-repeats") == 0)
            slot = &a->loop_repeats;
        else if (is_build && strcmp(opt, "--real") == 0)
            slot = &a->real;
        else if (is_build && strcmp(opt, "--deps") == 0)
            slot = &a->deps_path;
        else if (is_check && strcmp(opt, "--at") == 0)
            slot = &a->at;
        else if (is_check && strcmp(opt, "--seed") == 0)
            slot = &a->seed;
        else if (is_check && strcmp(opt, "--tolerance") == 0)
            slot = &a->tolerance;
        else if (is_graph && strcmp(opt, "-o") == 0)
            slot = &a->dot_path;
        else if (!is_graph && strcmp(opt, "--emit") == 0)
            slot = &a->emit_list;
        if (strcmp(opt, "--fail-on-warning") == 0) {
            a->fail_on_warning = 1;
            continue;
        }
        if (is_build && strcmp(opt, "--explain") == 0) {
            a->explain = 1;
            continue;
        }
        if (is_build && strcmp(opt, "--line-directives") == 0) {
            a->line_directives = 1;
            continue;
        }
        if (is_build && strcmp(opt, "--always-write") == 0) {
            a->always_write = 1;
            continue;
        }
        if (is_graph && strcmp(opt, "--sweep") == 0) {
            a->sweep = 1;
            continue;
        }
        if (strncmp(opt, "-I", 2) == 0) {
            /* -I DIR or -IDIR */
            if (!opt[2] && i + 1 >= argc)
                return usage_error("option %s needs a value", opt);
            if (a->ninclude == 64)
                return usage_error("%s", "at most 64 -I options");
            a->include[a->ninclude++] = opt[2] ? opt + 2 : argv[++i];
            continue;
        }
        if (is_check && strcmp(opt, "--size") == 0) {
            if (i + 1 >= argc)
                return usage_error("option %s needs a value", opt);
            if (a->nsizes == 16)
                return usage_error("%s", "at most 16 --size options");
            a->sizes[a->nsizes++] = argv[++i];
            continue;
        }
        if (slot) {
            if (i + 1 >= argc)
                return usage_error("option %s needs a value", opt);
            *slot = argv[++i];
        } else if (opt[0] == '-' && opt[1] != '\0') {
            return usage_error("unknown option '%s'", opt);
        } else if (a->model) {
            return usage_error("more than one model file given ('%s')", opt);
        } else {
            a->model = opt;
        }
    }
    if (!a->model)
        return usage_error("%s", "no model file given");
    if (a->stack_limit && !is_count(a->stack_limit))
        return usage_error("--stack-limit takes a whole number of "
                           "doubles, at least 1, not '%s'", a->stack_limit);
    if (a->emit_list && !(a->emit = emit_bits(a->emit_list)))
        return usage_error("--emit takes a comma-separated list of value, "
                           "gradient, adjoint, tangent, hessvec, hessian and "
                           "jacobian, not '%s'", a->emit_list);
    if (a->part_size && !is_count(a->part_size))
        return usage_error("--part-size takes a whole number of "
                           "statements, at least 1, not '%s'", a->part_size);
    if (a->loop_repeats && strcmp(a->loop_repeats, "0") != 0 &&
        (!is_count(a->loop_repeats) || strcmp(a->loop_repeats, "1") == 0))
        return usage_error("--loop-repeats takes 0 (no loops) or a whole "
                           "number of repeats, at least 2, not '%s'",
                           a->loop_repeats);
    if (a->real && strcmp(a->real, "double") != 0 &&
        strcmp(a->real, "float") != 0)
        return usage_error("--real takes double or float, not '%s'", a->real);
    if (a->name && !names_is_identifier(a->name))
        return usage_error("--name '%s' is not a C identifier", a->name);
    if (a->name && names_reserved(a->name, NULL)) {
        fprintf(stderr, "dervish: --name '%s' %s\n", a->name,
                names_reserved(a->name, NULL));
        return EXIT_USAGE;
    }
    return 0;
}

/* Read and compile the model; returns 0 or an exit status.  what_failed
 * ends the summary line printed when the model has errors. */
static int compile_file(const Args *a, DvCompilation *c,
                        const char *what_failed)
{
    size_t len;
    char *text = fileio_read(a->model, &len);
    if (!text)
        return EXIT_IO;
    DvOptions o;
    memset(&o, 0, sizeof o);
    o.name = a->name;
    o.diag_out = stderr;
    o.stack_limit = a->stack_limit ? strtol(a->stack_limit, NULL, 10) : 0;
    o.part_size = a->part_size ? strtol(a->part_size, NULL, 10) : 0;
    o.loop_repeats = !a->loop_repeats ? 0
                     : strcmp(a->loop_repeats, "0") == 0
                         ? -1 : strtol(a->loop_repeats, NULL, 10);
    o.loop_repeats = !a->loop_repeats ? 0
                     : strcmp(a->loop_repeats, "0") == 0
                         ? -1 : strtol(a->loop_repeats, NULL, 10);
    o.emit = a->emit;
    o.line_directives = a->line_directives;
    o.real_float = a->real && strcmp(a->real, "float") == 0;
    o.include_dirs = a->include;
    o.ninclude = a->ninclude;
    int failed = dv_compile(c, a->model, text, len, &o);
    free(text);
    if (failed) {
        if (c->diag.errors > c->diag.max_errors)
            fprintf(stderr, "%s: more than %d errors%s\n", a->model,
                    c->diag.max_errors, what_failed);
        else
            fprintf(stderr, "%s: %d error%s%s\n", a->model, c->diag.errors,
                    c->diag.errors == 1 ? "" : "s", what_failed);
        return EXIT_MODEL;
    }
    if (a->fail_on_warning && c->diag.warnings > 0) {
        fprintf(stderr, "%s: %d warning%s, treated as errors "
                "(--fail-on-warning)%s\n", a->model, c->diag.warnings,
                c->diag.warnings == 1 ? "" : "s", what_failed);
        return EXIT_MODEL;
    }
    return 0;
}

static char *with_extension(const char *path, const char *ext, int here)
{
    const char *base = here ? dv_basename(path) : path;
    const char *dot = strrchr(base, '.');
    const char *slash = strrchr(base, '/');
    size_t n = dot && (!slash || dot > slash) && dot != base &&
                       dot[-1] != '/' ? (size_t)(dot - base) : strlen(base);
    char *out = malloc(n + strlen(ext) + 1);
    if (!out)
        exit(EXIT_IO);
    memcpy(out, base, n);
    strcpy(out + n, ext);
    return out;
}

/* Whether two output paths name one file, by spelling or on disk. */
static int same_output(const char *x, const char *y)
{
    return strcmp(x, y) == 0 || fileio_same_file(x, y);
}

/* 0 when a make rule can name each of the n paths, else EXIT_IO after
 * saying why the dependency file DP cannot be written. */
static int check_rule_paths(const char *dp, const char *const *paths, int n)
{
    for (int i = 0; i < n; i++) {
        const char *why = fileio_rule_refuses(paths[i]);
        if (why) {
            fprintf(stderr, "dervish: cannot write %s: a make rule cannot "
                    "name '%s', which holds %s\n", dp, paths[i], why);
            return EXIT_IO;
        }
    }
    return 0;
}

static int build(const Args *a)
{
    char *c_path = a->c_path ? NULL : with_extension(a->model, ".c", 1);
    const char *cp = a->c_path ? a->c_path : c_path;
    char *h_path = a->h_path ? NULL : with_extension(cp, ".h", 0);
    const char *hp = a->h_path ? a->h_path : h_path;
    const char *dp = a->deps_path;
    int status = 0;
    if (same_output(cp, hp)) {
        status = usage_error("the C source and the header are both '%s'", cp);
    } else if (dp && (same_output(dp, cp) || same_output(dp, hp))) {
        status = usage_error("the dependency file '%s' is also the C source "
                             "or the header", dp);
    } else if (fileio_same_file(a->model, cp) ||
               fileio_same_file(a->model, hp) ||
               (dp && fileio_same_file(a->model, dp))) {
        status = usage_error("refusing to overwrite the model file '%s'",
                             a->model);
    }
    DvCompilation c;
    memset(&c, 0, sizeof c);
    if (!status)
        status = compile_file(a, &c, "; nothing written");
    if (!status && a->explain)
        dv_explain(&c, stdout);
    /* the dependency file's rule: the outputs, and every model file read
     * (the one named first) */
    const char *const targets[] = {cp, hp};
    const char *const inputs[] = {a->model};
    int ninputs = 1;
    if (!status && dp)
        status = check_rule_paths(dp, targets, 2);
    if (!status && dp)
        status = check_rule_paths(dp, inputs, ninputs);
    if (!status) {
        /* the header first: a source is never newer than its header; the
         * dependency file last, after the files it names; the text streams
         * to the files as it is emitted */
        StreamedOutput out[3];
        int nout = dp ? 3 : 2;
        out[0].path = hp;
        out[1].path = cp;
        out[2].path = dp;
        for (int i = 0; i < 3; i++)
            out[i].keep_same = !a->always_write;
        if (fileio_open_outputs(out, nout) != 0) {
            status = EXIT_IO;
        } else {
            dv_emit(&c, dv_basename(cp), dv_basename(hp), &out[1].text,
                    &out[0].text);
            if (dp)
                fileio_make_rule(&out[2].text, targets, 2, inputs, ninputs);
            if (fileio_commit_outputs(out, nout) != 0)
                status = EXIT_IO;
        }
    }
    dv_free(&c);
    free(c_path);
    free(h_path);
    return status;
}

static int check(const Args *a)
{
    CheckOptions o = {a->at, 1, 1e-6, stdout, a->sizes, a->nsizes};
    if (a->seed) {
        char *end;
        errno = 0;
        o.seed = strtoul(a->seed, &end, 10);
        if (*end || !(a->seed[0] >= '0' && a->seed[0] <= '9') ||
            errno == ERANGE)
            return usage_error("--seed takes a whole number that fits an "
                               "unsigned long, not '%s'",
                               a->seed);
    }
    if (a->tolerance) {
        char *end;
        o.tolerance = strtod(a->tolerance, &end);
        if (*end || !*a->tolerance || !(o.tolerance > 0) ||
            !(o.tolerance < HUGE_VAL))
            return usage_error("--tolerance takes a positive, finite number, "
                               "not '%s'",
                               a->tolerance);
    }
    DvCompilation c;
    memset(&c, 0, sizeof c);
    int status = compile_file(a, &c, "");
    if (!status)
        status = check_run(&c, &o);
    dv_free(&c);
    return status;
}

/* Write the graph to -o FILE, whole or not at all, or to standard output. */
static int graph(const Args *a)
{
    int to_stdout = !a->dot_path || strcmp(a->dot_path, "-") == 0;
    if (!to_stdout && fileio_same_file(a->model, a->dot_path))
        return usage_error("refusing to overwrite the model file '%s'",
                           a->model);
    DvCompilation c;
    memset(&c, 0, sizeof c);
    int status = compile_file(a, &c, "; nothing written");
    if (!status) {
        Buf dot = {0};
        GraphOptions o = {dv_basename(a->model), a->sweep};
        graph_write(c.ir, &o, &dot);
        if (to_stdout) {
            if (fwrite(dot.data, 1, dot.len, stdout) != dot.len ||
                fflush(stdout) != 0) {
                fprintf(stderr, "dervish: cannot write %s: %s\n",
                        "standard output", strerror(errno));
                status = EXIT_IO;
            }
        } else {
            OutputFile out = {a->dot_path, dot.data, dot.len};
            if (fileio_write_all(&out, 1) != 0)
                status = EXIT_IO;
        }
        buf_free(&dot);
    }
    dv_free(&c);
    return status;
}

int main(int argc, char **argv)
{
    if (argc < 2)
        return usage_error("%s", "no command given: use build, check or graph");
    const char *cmd = argv[1];
    if (strcmp(cmd, "--help") == 0 || strcmp(cmd, "-h") == 0) {
        fputs(usage, stdout);
        return 0;
    }
    if (strcmp(cmd, "--version") == 0) {
        printf("dervish %s\n", DERVISH_VERSION);
        return 0;
    }
    int is_build = strcmp(cmd, "build") == 0;
    int is_graph = strcmp(cmd, "graph") == 0;
    if (!is_build && !is_graph && strcmp(cmd, "check") != 0)
        return usage_error("unknown command '%s': use build, check or graph", cmd);
    Args a;
    int status = parse_args(argc, argv, is_build, &a);
    if (status)
        return status;
    if (is_graph)
        return graph(&a);
    return is_build ? build(&a) : check(&a);
}
