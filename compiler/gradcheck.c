/* gradcheck.c - `dervish check`: the gradient from the reverse sweep (run
 * by the IR evaluator, eval.c) against numerical derivatives, at a point
 * read from a file or drawn at random.
 *
 * The point.  Every param and input first gets a pseudo-random value from
 * a small seeded generator (splitmix64, so a seed gives the same values on
 * every machine): a multiple of 0.0001 in [0.1, 0.9].  That range keeps
 * log, sqrt, lgamma, asin, acos and atanh in their domains, stays away from
 * the kinks of abs, relu and sign at 0, and gives distinct values, so max
 * and min have no ties.  The values used are printed in the --at format.
 *
 * The --at FILE format: `name = numbers`, one param or input per entry,
 * its elements row-major; numbers are C decimal floats separated by
 * whitespace or commas and may continue over following lines (each number
 * belongs to the last `name =` before it; the `name =` itself stays on one
 * line); `#` starts a comment.  Names the file does not give keep their
 * random values (all are drawn, so they do not depend on which names the
 * file gives).  Errors (an unknown name, a name given twice, a wrong count,
 * a bad number) are reported as FILE:line:col: error: ... and the check
 * does not run.
 *
 * Numerical derivatives, for every param entry x:
 *  - central differences D(h) = (f(x+h) - f(x-h)) / 2h at h = 1e-3 max(1,|x|)
 *    (shrunk where x - h leaves a function's domain) and h/2, combined by
 *    Richardson extrapolation R = (4 D(h/2) - D(h)) / 3, with an error
 *    estimate |D(h/2) - D(h)| / 3 plus the rounding error 8 eps max|f| / h;
 *  - the complex-step derivative Im f(x + i 1e-200) / 1e-200 (Squire and
 *    Trapp 1998, SIAM Review 40(1)), exact to rounding, unless the step
 *    reaches an op with no complex form here (erf, erfc, lgamma, atan2).
 *
 * Agreement.  The error of an entry is |reverse - numerical| / max(1,
 * |numerical|): relative for large derivatives and absolute for small ones,
 * so zero derivatives are judged sensibly.  An entry agrees when that is
 * within the tolerance (plus Richardson's own estimate when Richardson is
 * the reference).  The reference is the complex step when Richardson agrees
 * with it in the same sense, else Richardson.  The two disagree at a kink
 * or jump within h of the point; there the reverse mode follows the
 * language's convention (floor' = 0, relu'(0) = 0), and an entry whose
 * slope central differences see differently is a mismatch, flagged with a
 * star.  Exit status 0 when every entry agrees, else 1. */
#include "gradcheck.h"
#include "eval.h"
#include "fileio.h"

#include <ctype.h>
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#define RANDOM_LO 0.1
#define RANDOM_HI 0.9
#define COMPLEX_STEP 1e-200
#define VALUES_PER_LINE 8

typedef enum Status { ST_OK, ST_MISMATCH, ST_NOT_SMOOTH, ST_UNCHECKED } Status;

typedef struct Entry {
    long k;             /* flat param position */
    double reverse;     /* from the reverse sweep */
    double numeric;     /* the reference numerical derivative */
    const char *method;
    double estimate;    /* Richardson's error estimate, when it is used */
    double abs_err, rel_err;
    Status status;
} Entry;

static void *xmalloc(size_t n)
{
    void *p = calloc(n ? n : 1, 1);
    if (!p) {
        fputs("dervish: out of memory\n", stderr);
        exit(3);
    }
    return p;
}

static int is_point_array(const IrArray *a)
{
    return a->role == ROLE_PARAM || a->role == ROLE_INPUT;
}

/* ------------------------------------------------------ random values */

static uint64_t splitmix64(uint64_t *state)
{
    uint64_t z = (*state += 0x9e3779b97f4a7c15ULL);
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
    return z ^ (z >> 31);
}

/* Every param and input, in declaration order.  k/10000 is the double
 * nearest to the printed "0.kkkk", so the printed values reproduce it. */
static void set_random(Evaluation *ev, const Ir *ir, unsigned long seed)
{
    uint64_t state = seed;
    long steps = (long)((RANDOM_HI - RANDOM_LO) * 10000 + 0.5) + 1;
    for (int i = 0; i < ir->arrays.len; i++) {
        const IrArray *a = &ir->arrays.items[i];
        if (!is_point_array(a))
            continue;
        double *v = eval_slot(ev, a->name);
        for (long e = 0; e < ir_array_size(a); e++)
            v[e] = (double)(lround(RANDOM_LO * 10000) +
                            (long)(splitmix64(&state) % (uint64_t)steps)) /
                   10000.0;
    }
}

/* ------------------------------------------------------- the --at file */

typedef struct AtReader {
    Evaluation *ev;
    const Ir *ir;
    Diag diag;
    const char *text;
    size_t len, pos;
    int32_t *given_line;    /* per array: line of its `name =`, 0 if none */
    int32_t cur;            /* array being filled, -1 none, -2 skip numbers */
    long count;             /* numbers given for it */
    Span cur_span;
} AtReader;

static const char *shape(const Ir *ir, const IrArray *a)
{
    if (a->rank == 0)
        return "a scalar";
    char *s = arena_printf(ir->arena, "%s[", a->name);
    for (int k = 0; k < a->rank; k++)
        s = arena_printf(ir->arena, "%s%s%d", s, k ? "," : "", a->dim[k]);
    return arena_printf(ir->arena, "%s]", s);
}

/* Check the count of the array being filled, then stop filling it. */
static void finish_entry(AtReader *r)
{
    if (r->cur >= 0) {
        const IrArray *a = &r->ir->arrays.items[r->cur];
        long need = ir_array_size(a);
        if (r->count < need)
            diag_error(&r->diag, r->cur_span,
                       "'%s' needs %ld number%s (%s) but has %ld", a->name,
                       need, need == 1 ? "" : "s", shape(r->ir, a), r->count);
    }
    r->cur = -1;
}

static void start_entry(AtReader *r, Span at)
{
    finish_entry(r);
    const char *name = arena_strndup(r->ir->arena, r->text + at.off, at.len);
    r->cur = -2;
    for (int i = 0; i < r->ir->arrays.len; i++) {
        const IrArray *a = &r->ir->arrays.items[i];
        if (strcmp(a->name, name) != 0 || a->role == ROLE_ADJOINT)
            continue;
        if (!is_point_array(a)) {
            diag_error(&r->diag, at, "'%s' is a value the model computes; "
                       "only params and inputs are given values", name);
            return;
        }
        if (r->given_line[i]) {
            diag_error(&r->diag, at, "'%s' is given twice (first on line %d)",
                       name, r->given_line[i]);
            return;
        }
        int line, col;
        source_line_col(r->diag.src, at.off, &line, &col);
        r->given_line[i] = line;
        r->cur = i;
        r->count = 0;
        r->cur_span = at;
        return;
    }
    diag_error(&r->diag, at,
               "unknown name '%s': the model has no param or input called that",
               name);
}

static void take_number(AtReader *r, Span at)
{
    const char *word = arena_strndup(r->ir->arena, r->text + at.off, at.len);
    char *end;
    double v = strtod(word, &end);
    if (end == word || *end != '\0' || strlen(word) != at.len) {
        if (isalpha((unsigned char)word[0]) || word[0] == '_') {
            /* a name without '=': its numbers must not go to the last one */
            finish_entry(r);
            diag_error(&r->diag, at, "expected '=' after '%s'", word);
            r->cur = -2;
        } else {
            diag_error(&r->diag, at, "'%s' is not a number", word);
            r->cur = -2;    /* its count is moot now */
        }
        return;
    }
    if (!isfinite(v)) {
        diag_error(&r->diag, at, "'%s' is not a finite number", word);
        r->cur = -2;
        return;
    }
    if (r->cur == -1) {
        diag_error(&r->diag, at, "a number before any 'name =': say which "
                   "param or input the numbers are for");
        r->cur = -2;
        return;
    }
    if (r->cur < 0)
        return;     /* the name was wrong and has been reported */
    const IrArray *a = &r->ir->arrays.items[r->cur];
    long need = ir_array_size(a);
    if (r->count == need) {
        diag_error(&r->diag, at, "too many numbers for '%s': it needs %ld (%s)",
                   a->name, need, shape(r->ir, a));
        r->cur = -2;
        return;
    }
    eval_slot(r->ev, a->name)[r->count++] = v;
}

/* Blanks separate numbers; a word also ends at '#' or '='. */
static int is_blank(char c)
{
    return c == ' ' || c == '\t' || c == '\r' || c == '\n' || c == ',' ||
           c == '\f' || c == '\v';
}

/* The next word or '=' from pos, skipping blanks and comments; a span of
 * length 0 at the end. */
static Span next_token(AtReader *r)
{
    const char *t = r->text;
    for (;;) {
        while (r->pos < r->len && is_blank(t[r->pos]))
            r->pos++;
        if (r->pos >= r->len || t[r->pos] != '#')
            break;
        while (r->pos < r->len && t[r->pos] != '\n')
            r->pos++;
    }
    Span s = {(uint32_t)r->pos, 0};
    if (r->pos < r->len && t[r->pos] == '=') {
        s.len = 1;
    } else {
        while (r->pos + s.len < r->len && !is_blank(t[r->pos + s.len]) &&
               t[r->pos + s.len] != '#' && t[r->pos + s.len] != '=')
            s.len++;
    }
    r->pos += s.len;
    return s;
}

/* Read the --at file into the evaluation; given_line[i] becomes non-zero
 * for each array it sets.  Returns 0, 1 after reporting errors, or 3 when
 * the file cannot be read. */
static int read_at_file(Evaluation *ev, const Ir *ir, const char *path,
                        int32_t *given_line)
{
    size_t len;
    char *text = fileio_read(path, &len);
    if (!text)
        return 3;
    Source src = {path, text, len};
    AtReader r;
    memset(&r, 0, sizeof r);
    r.ev = ev;
    r.ir = ir;
    r.text = text;
    r.len = len;
    r.given_line = given_line;
    r.cur = -1;
    diag_init(&r.diag, &src, stderr);
    Span tok = next_token(&r);
    while (tok.len > 0) {
        Span after = next_token(&r);
        /* `name =` must be on one line */
        uint32_t gap = tok.off + tok.len;
        int is_eq = after.len == 1 && text[after.off] == '=' &&
                    !memchr(text + gap, '\n', after.off - gap);
        if (text[tok.off] == '=') {
            diag_error(&r.diag, tok, "'=' without a name before it");
            finish_entry(&r);
            r.cur = -2;
        } else if (is_eq) {
            start_entry(&r, tok);
            after = next_token(&r);
        } else {
            take_number(&r, tok);
        }
        tok = after;
    }
    finish_entry(&r);
    free(text);
    return r.diag.errors ? 1 : 0;
}

/* -------------------------------------------------- numerical slopes */

/* (f(x+h) - f(x-h)) / (the step actually taken), with x at *p; *fbig
 * grows to the largest |f| seen. */
static double central(Evaluation *ev, double *p, double h, double *fbig)
{
    double x = *p;
    *p = x + h;
    double up = eval_value(ev), step = *p - x;
    *p = x - h;
    double down = eval_value(ev);
    step += x - *p;
    *p = x;
    *fbig = fmax(*fbig, fmax(fabs(up), fabs(down)));
    return (up - down) / step;
}

/* Richardson's value and its error estimate.  Near the edge of a
 * function's domain (log(x) at x = 1e-4) x - h may fall outside it; h then
 * shrinks tenfold, a few times at most, until both differences are finite. */
static double richardson(Evaluation *ev, long k, double *estimate)
{
    double *p = eval_param(ev, k);
    double h = 1e-3 * fmax(1.0, fabs(*p)), d1 = NAN, d2 = NAN, fm = 0;
    for (int tries = 0; tries < 4; tries++, h *= 0.1) {
        fm = 0;
        d1 = central(ev, p, h, &fm);
        d2 = central(ev, p, 0.5 * h, &fm);
        if (isfinite(d1) && isfinite(d2))
            break;
    }
    *estimate = fabs(d2 - d1) / 3 + 8 * DBL_EPSILON * fm / h;
    return (4 * d2 - d1) / 3;
}

static int within(double a, double n, double tol, double slack)
{
    return fabs(a - n) <= tol * fmax(1.0, fabs(n)) + slack;
}

static Entry check_entry(Evaluation *ev, long k, double reverse, double f0,
                         double tol, char *blocked_ops)
{
    Entry e;
    memset(&e, 0, sizeof e);
    e.k = k;
    e.reverse = reverse;
    double est;
    double r = richardson(ev, k, &est);
    EvalStep cs = eval_complex_step(ev, k, COMPLEX_STEP);
    if (cs.blocked >= 0)
        blocked_ops[cs.blocked] = 1;
    /* the complex run must reproduce the real value to be trusted */
    int c_ok = cs.blocked < 0 && isfinite(cs.slope) &&
               fabs(cs.value - f0) <= 1e-8 * fmax(1.0, fabs(f0));
    int r_ok = isfinite(r) && isfinite(est);
    if (c_ok && (!r_ok || within(r, cs.slope, tol, est))) {
        e.numeric = cs.slope;
        e.method = "complex step";
        e.status = within(reverse, e.numeric, tol, 0) ? ST_OK : ST_MISMATCH;
    } else if (r_ok) {
        e.numeric = r;
        e.method = "richardson";
        e.estimate = est;
        if (within(reverse, r, tol, est))
            e.status = ST_OK;
        else if (c_ok && within(reverse, cs.slope, tol, 0))
            e.status = ST_NOT_SMOOTH;
        else
            e.status = ST_MISMATCH;
    } else {
        e.numeric = NAN;
        e.method = "none";
        e.status = ST_UNCHECKED;
    }
    e.abs_err = fabs(reverse - e.numeric);
    e.rel_err = e.abs_err / fmax(1.0, fabs(e.numeric));
    if (isnan(e.rel_err))
        e.rel_err = e.abs_err = HUGE_VAL;
    return e;
}

/* Worst first: disagreements, then larger errors, then flat order. */
static int cmp_entry(const void *pa, const void *pb)
{
    const Entry *a = pa, *b = pb;
    int bad_a = a->status != ST_OK, bad_b = b->status != ST_OK;
    if (bad_a != bad_b)
        return bad_b - bad_a;
    if (a->rel_err != b->rel_err)
        return a->rel_err < b->rel_err ? 1 : -1;
    return (a->k > b->k) - (a->k < b->k);
}

/* ------------------------------------------------------------ report */

/* The model's name for flat param entry k, e.g. W[1][2]. */
static char *entry_name(const Ir *ir, long k)
{
    for (int i = 0; i < ir->arrays.len; i++) {
        const IrArray *a = &ir->arrays.items[i];
        if (a->role != ROLE_PARAM)
            continue;
        long n = ir_array_size(a);
        if (k >= n) {
            k -= n;
            continue;
        }
        long at[IR_MAX_RANK];
        for (int d = a->rank - 1; d >= 0; d--) {
            at[d] = k % a->dim[d];
            k /= a->dim[d];
        }
        char *s = arena_printf(ir->arena, "%s", a->name);
        for (int d = 0; d < a->rank; d++)
            s = arena_printf(ir->arena, "%s[%ld]", s, at[d]);
        return s;
    }
    DV_UNREACHABLE();
    return NULL;
}

static void print_values(FILE *out, const Ir *ir, Evaluation *ev,
                         const int32_t *given_line)
{
    for (int i = 0; i < ir->arrays.len; i++) {
        const IrArray *a = &ir->arrays.items[i];
        if (!is_point_array(a) || given_line[i])
            continue;
        const double *v = eval_slot(ev, a->name);
        int indent = (int)strlen(a->name) + 3;
        /* one row of the last dimension per line (wrapped when long), so a
         * matrix reads as a matrix */
        long row = a->rank > 0 ? a->dim[a->rank - 1] : 1;
        fprintf(out, "%s =", a->name);
        for (long e = 0; e < ir_array_size(a); e++) {
            if (e > 0 && (e % row == 0 || e % row % VALUES_PER_LINE == 0))
                fprintf(out, "\n%*s", indent - 1, "");
            fprintf(out, " %.4f", v[e]);
        }
        fputc('\n', out);
    }
}

static void print_header(FILE *out, const DvCompilation *c,
                         const CheckOptions *opt, const int32_t *given_line)
{
    const Ir *ir = c->ir;
    int randoms = 0;
    for (int i = 0; i < ir->arrays.len; i++)
        randoms += is_point_array(&ir->arrays.items[i]) && !given_line[i];
    fprintf(out, "check: model %s (%s) at ", ir->model, c->src.path);
    if (!opt->at_path)
        fprintf(out, "random values, seed %lu\n", opt->seed);
    else if (randoms)
        fprintf(out, "the values in %s, the rest random with seed %lu\n",
                opt->at_path, opt->seed);
    else
        fprintf(out, "the values in %s\n", opt->at_path);
    if (randoms)
        fprintf(out, "random values, uniform in [%g, %g] (in --at format, to "
                "reuse or edit):\n", RANDOM_LO, RANDOM_HI);
}

/* Where a number's decimal point (or exponent, or end) falls. */
static int integer_digits(const char *s)
{
    return (int)strcspn(s, ".e");
}

/* The table, one row per entry.  Values line up on their decimal points;
 * names and methods read left to right. */
static void print_table(FILE *out, const Ir *ir, const Entry *es, long n)
{
    static const char *const head[] = {"entry", "reverse mode", "numerical",
                                       "method", "abs error", "rel error"};
    static const char *const status[] = {"ok", "MISMATCH", "MISMATCH*",
                                         "unchecked"};
    enum { NCOL = 6 };
    const char **cell = xmalloc((size_t)n * NCOL * sizeof *cell);
    int width[NCOL], left[NCOL] = {0}, right[NCOL] = {0};
    for (long i = 0; i < n; i++) {
        const char **row = cell + i * NCOL;
        row[0] = entry_name(ir, es[i].k);
        row[1] = arena_printf(ir->arena, "%.15g", es[i].reverse);
        int none = es[i].status == ST_UNCHECKED;
        row[2] = none ? "-" : arena_printf(ir->arena, "%.15g", es[i].numeric);
        row[3] = es[i].estimate > 0 ? arena_printf(ir->arena, "%s +-%.0e",
                                                   es[i].method, es[i].estimate)
                                    : es[i].method;
        row[4] = none ? "-" : arena_printf(ir->arena, "%.1e", es[i].abs_err);
        row[5] = none ? "-" : arena_printf(ir->arena, "%.1e", es[i].rel_err);
        for (int j = 0; j < NCOL; j++) {
            int l = j == 1 || j == 2 ? integer_digits(row[j]) : 0;
            left[j] = l > left[j] ? l : left[j];
            int r = (int)strlen(row[j]) - l;
            right[j] = r > right[j] ? r : right[j];
        }
    }
    for (int j = 0; j < NCOL; j++) {
        int h = (int)strlen(head[j]);
        width[j] = left[j] + right[j] > h ? left[j] + right[j] : h;
    }
    fprintf(out, "%-*s  %*s  %*s  %-*s  %*s  %*s\n", width[0], head[0],
            width[1], head[1], width[2], head[2], width[3], head[3],
            width[4], head[4], width[5], head[5]);
    for (long i = 0; i < n; i++) {
        const char **row = cell + i * NCOL;
        fprintf(out, "%-*s", width[0], row[0]);
        for (int j = 1; j <= 2; j++) {
            int l = integer_digits(row[j]);
            int r = (int)strlen(row[j]) - l;
            fprintf(out, "  %*s%s%*s", width[j] - right[j] - l, "", row[j],
                    right[j] - r, "");
        }
        fprintf(out, "  %-*s  %*s  %*s  %s\n", width[3], row[3], width[4],
                row[4], width[5], row[5], status[es[i].status]);
    }
    free(cell);
}

static void print_notes(FILE *out, const Entry *es, long n,
                        const char *blocked_ops)
{
    int not_smooth = 0, unchecked = 0;
    for (long i = 0; i < n; i++) {
        not_smooth |= es[i].status == ST_NOT_SMOOTH;
        unchecked |= es[i].status == ST_UNCHECKED;
    }
    if (not_smooth)
        fputs("* the complex step agrees with the reverse mode but central "
              "differences do not:\n  the model has a kink or a jump within "
              "h of this point\n", out);
    if (unchecked)
        fputs("unchecked: no finite numerical derivative here: f(x +- h) is "
              "not finite\n  and the complex step is not available\n", out);
    int count = 0;
    for (int op = 0; op < IR_OP_COUNT; op++)
        if (blocked_ops[op]) {
            fprintf(out, "%s%s", count ? ", " : "note: no complex step "
                    "through ", ir_ops[op].model_name ? ir_ops[op].model_name
                                                      : "digamma");
            count++;
        }
    if (count)
        fprintf(out, ": the entries that reach %s\n  are checked by "
                "Richardson extrapolation alone\n", count > 1 ? "them" : "it");
}

int check_run(const DvCompilation *c, const CheckOptions *opt)
{
    const Ir *ir = c->ir;
    FILE *out = opt->out;
    Evaluation *ev = eval_new(ir);
    int32_t *given_line = xmalloc((size_t)ir->arrays.len * sizeof *given_line);
    set_random(ev, ir, opt->seed);
    int status = opt->at_path ? read_at_file(ev, ir, opt->at_path, given_line)
                              : 0;
    if (status) {
        free(given_line);
        eval_free(ev);
        return status;
    }
    print_header(out, c, opt, given_line);
    print_values(out, ir, ev, given_line);
    fputc('\n', out);

    long n = eval_param_count(ev);
    double *grad = xmalloc((size_t)n * sizeof *grad);
    double f0 = eval_gradient(ev, grad);
    const char *output = ir->arrays.items[ir->output].name;
    fprintf(out, "value: %s = %.15g\n\n", output, f0);
    if (!isfinite(f0)) {
        fprintf(out, "check: %s is not finite at this point, so no derivative "
                "can be compared;\n  choose other values with --at\n", output);
        status = 1;
    } else {
        char blocked_ops[IR_OP_COUNT] = {0};
        Entry *es = xmalloc((size_t)n * sizeof *es);
        long agree = 0;
        for (long k = 0; k < n; k++) {
            es[k] = check_entry(ev, k, grad[k], f0, opt->tolerance,
                                blocked_ops);
            agree += es[k].status == ST_OK;
        }
        qsort(es, (size_t)n, sizeof *es, cmp_entry);
        print_table(out, ir, es, n);
        print_notes(out, es, n, blocked_ops);
        fputc('\n', out);
        fprintf(out, "check: %ld of %ld derivatives agree within tolerance "
                "%g\n", agree, n, opt->tolerance);
        if (agree < n)
            fprintf(out, "check: %ld derivative%s\n", n - agree,
                    n - agree == 1 ? " disagrees" : "s disagree");
        status = agree < n;
        free(es);
    }
    free(grad);
    free(given_line);
    eval_free(ev);
    return status;
}
