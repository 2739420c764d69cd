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
 * The --at FILE format: `name = numbers`, one param, input or size per
 * entry, an array's elements row-major; numbers are C decimal floats
 * separated by whitespace or commas and may continue over following lines
 * (each number belongs to the last `name =` before it; the `name =` itself
 * stays on one line); `#` starts a comment.  Names the file does not give
 * keep their random values (all are drawn, so they do not depend on which
 * names the file gives).  Errors (an unknown name, a name given twice, a
 * wrong count, a bad number) are reported as FILE:line:col: error: ... and
 * the check does not run.
 *
 * Runtime sizes.  A size's value comes from --size NAME=N, else from its
 * own line `NAME = N` in the --at file, else from the count of numbers the
 * file gives for an input it shapes (12 numbers for X[n,3] give n = 4;
 * the first such input in the file decides and every other must agree),
 * else it is DEFAULT_SIZE, which the report says.  The printed values
 * include the sizes the file does not set, so they reproduce the point.
 * A malformed --size, or one naming no size of the model, is reported as
 * `dervish: --size ...` with status 2; counts that fit no size, or
 * disagree, are errors in the file.
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
#include <limits.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#define RANDOM_LO 0.1
#define RANDOM_HI 0.9
#define COMPLEX_STEP 1e-200
#define VALUES_PER_LINE 8
#define DEFAULT_SIZE 3
#define MAX_SIZE EVAL_MAX_ELEMENTS

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

typedef enum SizeFrom {
    FROM_NONE,          /* not known yet */
    FROM_OPTION,        /* --size NAME=N */
    FROM_FILE,          /* its own line in the --at file */
    FROM_COUNT,         /* the count of an input's numbers in the file */
    FROM_DEFAULT
} SizeFrom;

typedef struct SizeValue {
    SizeFrom from;
    const char *option; /* FROM_OPTION: the option as given */
    int line;           /* FROM_FILE, FROM_COUNT: the line that set it */
    int32_t array;      /* FROM_COUNT: the input whose count set it */
} SizeValue;

/* What the --at file gives for one param, input or size.  These "entries"
 * are numbered arrays first, then sizes: entry arrays.len + s is size s. */
typedef struct Given {
    int line;           /* line of its `name =`, 0 when not given */
    Span name;
    double *v;          /* its numbers (malloc'd) */
    long count, cap;
    int failed;         /* its count was reported as wrong */
} Given;

/* The point to check, before the evaluator exists: the sizes and the
 * numbers of the --at file. */
typedef struct Point {
    const Ir *ir;
    long *sizes;        /* per runtime size: its value, once known */
    SizeValue *size;    /* per runtime size: where the value came from */
    Given *given;       /* per entry */
    int32_t *order;     /* the arrays the file gives, in file order */
    int norder;
} Point;

static void out_of_memory(void)
{
    fputs("dervish: out of memory\n", stderr);
    exit(3);
}

static void *xmalloc(size_t n)
{
    void *p = calloc(n ? n : 1, 1);
    if (!p)
        out_of_memory();
    return p;
}

static int is_point_array(const IrArray *a)
{
    return a->role == ROLE_PARAM || a->role == ROLE_INPUT;
}

static void point_init(Point *pt, const Ir *ir)
{
    int nsizes = ir->sizes.len, nentries = ir->arrays.len + nsizes;
    pt->ir = ir;
    pt->sizes = xmalloc((size_t)nsizes * sizeof *pt->sizes);
    pt->size = xmalloc((size_t)nsizes * sizeof *pt->size);
    pt->given = xmalloc((size_t)nentries * sizeof *pt->given);
    pt->order = xmalloc((size_t)ir->arrays.len * sizeof *pt->order);
    pt->norder = 0;
}

static void point_free(Point *pt)
{
    for (int e = 0; e < pt->ir->arrays.len + pt->ir->sizes.len; e++)
        free(pt->given[e].v);
    free(pt->sizes);
    free(pt->size);
    free(pt->given);
    free(pt->order);
}

static void set_size(Point *pt, int s, long value, SizeFrom from, int line,
                     int32_t array)
{
    SizeValue v = {from, NULL, line, array};
    pt->sizes[s] = value;
    pt->size[s] = v;
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
static void set_random(Evaluation *ev, const Point *pt, unsigned long seed)
{
    const Ir *ir = pt->ir;
    uint64_t state = seed;
    long steps = (long)((RANDOM_HI - RANDOM_LO) * 10000 + 0.5) + 1;
    for (int i = 0; i < ir->arrays.len; i++) {
        const IrArray *a = &ir->arrays.items[i];
        if (!is_point_array(a))
            continue;
        double *v = eval_slot(ev, a->name);
        long n = eval_elements(a, pt->sizes);
        for (long e = 0; e < n; e++)
            v[e] = (double)(lround(RANDOM_LO * 10000) +
                            (long)(splitmix64(&state) % (uint64_t)steps)) /
                   10000.0;
    }
}

/* ------------------------------------------------------ --size options */

/* A whole number from 0 to MAX_SIZE in plain decimal digits, or -1. */
static long parse_size(const char *s)
{
    long n = 0;
    if (!*s)
        return -1;
    for (; *s; s++) {
        if (!isdigit((unsigned char)*s))
            return -1;
        n = n * 10 + (*s - '0');
        if (n > MAX_SIZE)
            return -1;
    }
    return n;
}

static int find_size(const Ir *ir, const char *name, size_t len)
{
    for (int s = 0; s < ir->sizes.len; s++)
        if (strlen(ir->sizes.items[s].name) == len &&
            strncmp(ir->sizes.items[s].name, name, len) == 0)
            return s;
    return -1;
}

/* Names joined as "n", "n and m", "n, m and k". */
static const char *join_names(Arena *arena, const char *const *names, int n)
{
    const char *s = "";
    for (int i = 0; i < n; i++)
        s = arena_printf(arena, "%s%s%s", s,
                         i == 0 ? "" : i == n - 1 ? " and " : ", ", names[i]);
    return s;
}

/* The sizes --size gives; returns 0, or 2 after reporting a bad option. */
static int sizes_from_options(Point *pt, const CheckOptions *opt)
{
    const Ir *ir = pt->ir;
    for (int i = 0; i < opt->nsizes; i++) {
        const char *o = opt->sizes[i], *eq = strchr(o, '=');
        if (!eq || eq == o) {
            fprintf(stderr, "dervish: --size %s: expected NAME=N, as in "
                    "--size n=100\n", o);
            return 2;
        }
        long n = parse_size(eq + 1);
        if (n < 0) {
            fprintf(stderr, "dervish: --size %s: N must be a whole number "
                    "from 0 to %ld\n", o, MAX_SIZE);
            return 2;
        }
        int s = find_size(ir, o, (size_t)(eq - o));
        if (s < 0) {
            const char **names = xmalloc((size_t)ir->sizes.len * sizeof *names);
            for (int k = 0; k < ir->sizes.len; k++)
                names[k] = ir->sizes.items[k].name;
            fprintf(stderr, "dervish: --size %s: the model has no size called "
                    "'%.*s' (%s%s)\n", o, (int)(eq - o), o,
                    ir->sizes.len == 0 ? "it declares none"
                    : ir->sizes.len == 1 ? "its size is " : "its sizes are ",
                    join_names(ir->arena, names, ir->sizes.len));
            free(names);
            return 2;
        }
        if (pt->size[s].from == FROM_OPTION) {
            fprintf(stderr, "dervish: --size %s: %s is already set by "
                    "--size %s\n", o, ir->sizes.items[s].name,
                    pt->size[s].option);
            return 2;
        }
        set_size(pt, s, n, FROM_OPTION, 0, -1);
        pt->size[s].option = o;
    }
    return 0;
}

/* ------------------------------------------------------- the --at file */

typedef struct AtReader {
    Point *pt;
    const Ir *ir;
    Diag diag;
    const char *text;
    size_t len, pos;
    int32_t cur;            /* entry being filled, -1 none, -2 skip numbers */
} AtReader;

static int is_size_entry(const Ir *ir, int32_t e)
{
    return e >= ir->arrays.len;
}

static const char *entry_label(const Ir *ir, int32_t e)
{
    return is_size_entry(ir, e) ? ir->sizes.items[e - ir->arrays.len].name
                                : ir->arrays.items[e].name;
}

/* An array's shape as messages show it: X[n,3], or "a scalar". */
static const char *shape(const Ir *ir, const IrArray *a)
{
    if (a->rank == 0)
        return "a scalar";
    char *s = arena_printf(ir->arena, "%s[", a->name);
    for (int k = 0; k < a->rank; k++) {
        int d = a->dim[k];
        s = IR_EXTENT_IS_SIZE(d)
                ? arena_printf(ir->arena, "%s%s%s", s, k ? "," : "",
                               ir->sizes.items[IR_EXTENT_SIZE(d)].name)
                : arena_printf(ir->arena, "%s%s%d", s, k ? "," : "", d);
    }
    return arena_printf(ir->arena, "%s]", s);
}

static void push_number(Given *g, double v)
{
    if (g->count == g->cap) {
        g->cap = g->cap ? 2 * g->cap : 16;
        double *more = realloc(g->v, (size_t)g->cap * sizeof *more);
        if (!more)
            out_of_memory();
        g->v = more;
    }
    g->v[g->count++] = v;
}

/* Check the count of the entry being filled, then stop filling it.  The
 * counts of arrays with runtime sizes are checked once the sizes are
 * known (settle_sizes). */
static void finish_entry(AtReader *r)
{
    if (r->cur >= 0) {
        const Given *g = &r->pt->given[r->cur];
        if (is_size_entry(r->ir, r->cur)) {
            if (g->count == 0)
                diag_error(&r->diag, g->name, "'%s' is a size and needs a "
                           "whole number", entry_label(r->ir, r->cur));
        } else {
            const IrArray *a = &r->ir->arrays.items[r->cur];
            long need = ir_array_fixed(a) ? ir_array_size(a) : 0;
            if (g->count < need)
                diag_error(&r->diag, g->name,
                           "'%s' needs %ld number%s (%s) but has %ld",
                           a->name, need, need == 1 ? "" : "s",
                           shape(r->ir, a), g->count);
        }
    }
    r->cur = -1;
}

/* Fill entry e next, unless the file gave it already. */
static void claim_entry(AtReader *r, int32_t e, Span at)
{
    Given *g = &r->pt->given[e];
    if (g->line) {
        diag_error(&r->diag, at, "'%s' is given twice (first on line %d)",
                   entry_label(r->ir, e), g->line);
        return;
    }
    int col;
    source_line_col(r->diag.src, at.off, &g->line, &col);
    g->name = at;
    r->cur = e;
    if (!is_size_entry(r->ir, e))
        r->pt->order[r->pt->norder++] = e;
}

static void start_entry(AtReader *r, Span at)
{
    const Ir *ir = r->ir;
    finish_entry(r);
    const char *name = arena_strndup(ir->arena, r->text + at.off, at.len);
    r->cur = -2;
    for (int i = 0; i < ir->arrays.len; i++) {
        const IrArray *a = &ir->arrays.items[i];
        if (strcmp(a->name, name) != 0 || a->role == ROLE_ADJOINT)
            continue;
        if (!is_point_array(a)) {
            diag_error(&r->diag, at, "'%s' is a value the model computes; "
                       "only params and inputs are given values", name);
            return;
        }
        claim_entry(r, i, at);
        return;
    }
    int s = find_size(ir, name, strlen(name));
    if (s >= 0) {
        claim_entry(r, ir->arrays.len + s, at);
        return;
    }
    diag_error(&r->diag, at,
               "unknown name '%s': the model has no param%s called that",
               name, ir->sizes.len ? ", input or size" : " or input");
}

static void take_number(AtReader *r, Span at)
{
    const Ir *ir = r->ir;
    const char *word = arena_strndup(ir->arena, r->text + at.off, at.len);
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
    Given *g = &r->pt->given[r->cur];
    const char *name = entry_label(ir, r->cur);
    if (is_size_entry(ir, r->cur)) {
        if (g->count == 1) {
            diag_error(&r->diag, at, "too many numbers for '%s': a size "
                       "takes one", name);
            r->cur = -2;
            return;
        }
        if (!(v >= 0 && v <= MAX_SIZE && v == floor(v))) {
            diag_error(&r->diag, at, "the size '%s' must be a whole number "
                       "from 0 to %ld, not %s", name, MAX_SIZE, word);
            r->cur = -2;
            return;
        }
    } else if (ir_array_fixed(&ir->arrays.items[r->cur])) {
        const IrArray *a = &ir->arrays.items[r->cur];
        long need = ir_array_size(a);
        if (g->count == need) {
            diag_error(&r->diag, at, "too many numbers for '%s': it needs "
                       "%ld (%s)", name, need, shape(ir, a));
            r->cur = -2;
            return;
        }
    }
    push_number(g, v);
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

/* ------------------------------------------------ sizes from the file */

/* The whole n >= 0 with n^p = q, or -1. */
static long whole_root(long q, int p)
{
    long guess = lround(pow((double)q, 1.0 / p));
    for (long n = guess > 0 ? guess - 1 : 0; n <= guess + 1; n++) {
        long power = 1;
        for (int k = 0; k < p; k++)
            power = n && power > LONG_MAX / n ? LONG_MAX : power * n;
        if (power == q)
            return n;
    }
    return -1;
}

/* Where size s got its value, as messages say it. */
static const char *size_origin(const Point *pt, int s)
{
    const SizeValue *v = &pt->size[s];
    Arena *arena = pt->ir->arena;
    switch (v->from) {
    case FROM_OPTION:
        return arena_printf(arena, "from --size %s", v->option);
    case FROM_FILE:
        return arena_printf(arena, "from line %d", v->line);
    case FROM_COUNT:
        return arena_printf(arena, "from the %ld numbers of '%s' on line %d",
                            pt->given[v->array].count,
                            pt->ir->arrays.items[v->array].name, v->line);
    case FROM_DEFAULT:
    case FROM_NONE:
        break;
    }
    return "by default";
}

/* The distinct sizes that shape array a, in order of first use, into
 * ids[]; returns how many. */
static int sizes_of(const IrArray *a, int *ids)
{
    int n = 0;
    for (int k = 0; k < a->rank; k++) {
        if (!IR_EXTENT_IS_SIZE(a->dim[k]))
            continue;
        int s = IR_EXTENT_SIZE(a->dim[k]), seen = 0;
        for (int j = 0; j < n; j++)
            seen |= ids[j] == s;
        if (!seen)
            ids[n++] = s;
    }
    return n;
}

/* The known sizes among ids[n] as messages list them: " with n = 4
 * (from --size n=4), m = 2 (from line 3)", or "" when none is known. */
static const char *known_sizes(const Point *pt, const int *ids, int n)
{
    const char *s = "";
    for (int k = 0; k < n; k++)
        if (pt->size[ids[k]].from != FROM_NONE)
            s = arena_printf(pt->ir->arena, "%s%s%s = %ld (%s)", s,
                             *s ? ", " : " with ",
                             pt->ir->sizes.items[ids[k]].name,
                             pt->sizes[ids[k]], size_origin(pt, ids[k]));
    return s;
}

/* When exactly one size of input i is still open, set it from the count
 * of the numbers the file gives for i.  Returns 1 when it set one. */
static int size_from_count(AtReader *r, int32_t i)
{
    Point *pt = r->pt;
    const IrArray *a = &r->ir->arrays.items[i];
    Given *g = &pt->given[i];
    long known = 1;         /* product of the known extents, saturated */
    int open = -1, times = 0;
    for (int k = 0; k < a->rank; k++) {
        int d = a->dim[k];
        long e = d;
        if (IR_EXTENT_IS_SIZE(d)) {
            int s = IR_EXTENT_SIZE(d);
            if (pt->size[s].from == FROM_NONE) {
                if (open >= 0 && open != s)
                    return 0;   /* several open: not from this input */
                open = s;
                times++;
                continue;
            }
            e = pt->sizes[s];
        }
        known = e && known > LONG_MAX / e ? LONG_MAX : known * e;
    }
    if (open < 0 || g->failed || (known == 0 && g->count == 0))
        return 0;
    long n = known && g->count % known == 0 ? whole_root(g->count / known,
                                                         times)
                                            : -1;
    if (n < 0 || n > MAX_SIZE) {
        int ids[IR_MAX_RANK], nids = sizes_of(a, ids);
        diag_error(&r->diag, g->name, "'%s' has %ld number%s, but no whole "
                   "%s gives %s that many%s", a->name, g->count,
                   g->count == 1 ? "" : "s", r->ir->sizes.items[open].name,
                   shape(r->ir, a), known_sizes(pt, ids, nids));
        g->failed = 1;
        return 0;
    }
    set_size(pt, open, n, FROM_COUNT, g->line, i);
    return 1;
}

/* Settle the sizes the file tells: its size lines (unless --size set
 * them), then counts, the inputs in file order, repeated while that
 * settles more; then check every input with sizes has the right count. */
static void settle_sizes(AtReader *r)
{
    Point *pt = r->pt;
    const Ir *ir = r->ir;
    for (int s = 0; s < ir->sizes.len; s++) {
        const Given *g = &pt->given[ir->arrays.len + s];
        if (g->count == 1 && pt->size[s].from == FROM_NONE)
            set_size(pt, s, (long)g->v[0], FROM_FILE, g->line, -1);
    }
    for (int more = 1; more;) {
        more = 0;
        for (int j = 0; j < pt->norder; j++)
            more |= size_from_count(r, pt->order[j]);
    }
    for (int j = 0; j < pt->norder; j++) {
        int32_t i = pt->order[j];
        const IrArray *a = &ir->arrays.items[i];
        Given *g = &pt->given[i];
        int ids[IR_MAX_RANK], n = sizes_of(a, ids), nopen = 0;
        const char *open[IR_MAX_RANK];
        if (g->failed || n == 0)
            continue;
        for (int k = 0; k < n; k++)
            if (pt->size[ids[k]].from == FROM_NONE)
                open[nopen++] = ir->sizes.items[ids[k]].name;
        if (nopen) {
            diag_error(&r->diag, g->name, "cannot tell %s from the %ld "
                       "number%s of '%s': give %s with --size or in this "
                       "file", join_names(ir->arena, open, nopen), g->count,
                       g->count == 1 ? "" : "s", a->name,
                       nopen > 1 ? "all but one of them" : "it");
            continue;
        }
        long need = eval_elements(a, pt->sizes);
        if (g->count != need)
            diag_error(&r->diag, g->name, "'%s' has %ld number%s, but %s "
                       "needs %s%s", a->name, g->count,
                       g->count == 1 ? "" : "s", shape(ir, a),
                       need < 0 ? arena_printf(ir->arena, "more than %ld",
                                               EVAL_MAX_ELEMENTS)
                                : arena_printf(ir->arena, "%ld", need),
                       known_sizes(pt, ids, n));
    }
}

/* Read the --at file into the point, sizes and all.  Returns 0, 1 after
 * reporting errors, or 3 when the file cannot be read. */
static int read_at_file(Point *pt, const char *path)
{
    size_t len;
    char *text = fileio_read(path, &len);
    if (!text)
        return 3;
    Source src = {path, text, len, NULL, 0};
    AtReader r;
    memset(&r, 0, sizeof r);
    r.pt = pt;
    r.ir = pt->ir;
    r.text = text;
    r.len = len;
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
    if (!r.diag.errors)
        settle_sizes(&r);
    free(text);
    return r.diag.errors ? 1 : 0;
}

/* Give the sizes still open their default, then make sure no array is too
 * large at these sizes.  Returns 0, or 1 after reporting. */
static int finish_sizes(Point *pt)
{
    const Ir *ir = pt->ir;
    const char *all = "";
    for (int s = 0; s < ir->sizes.len; s++) {
        if (pt->size[s].from == FROM_NONE)
            set_size(pt, s, DEFAULT_SIZE, FROM_DEFAULT, 0, -1);
        all = arena_printf(ir->arena, "%s%s%s = %ld", all, s ? ", " : "",
                           ir->sizes.items[s].name, pt->sizes[s]);
    }
    for (int i = 0; i < ir->arrays.len; i++)
        if (eval_elements(&ir->arrays.items[i], pt->sizes) < 0) {
            fprintf(stderr, "dervish: with %s, '%s' would have more than "
                    "%ld elements\n", all, ir->arrays.items[i].name,
                    EVAL_MAX_ELEMENTS);
            return 1;
        }
    return 0;
}

/* The file's numbers into the evaluation. */
static void set_given(Evaluation *ev, const Point *pt)
{
    for (int j = 0; j < pt->norder; j++) {
        const Given *g = &pt->given[pt->order[j]];
        if (g->count > 0)
            memcpy(eval_slot(ev, pt->ir->arrays.items[pt->order[j]].name),
                   g->v, (size_t)g->count * sizeof *g->v);
    }
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

/* How many params and inputs the --at file does not give. */
static int count_random(const Point *pt)
{
    int n = 0;
    for (int i = 0; i < pt->ir->arrays.len; i++)
        n += is_point_array(&pt->ir->arrays.items[i]) && !pt->given[i].line;
    return n;
}

/* The random values in the --at format, after the sizes the file does not
 * set, so that the lines reproduce the point. */
static void print_values(FILE *out, Evaluation *ev, const Point *pt)
{
    const Ir *ir = pt->ir;
    if (!count_random(pt))
        return;
    for (int s = 0; s < ir->sizes.len; s++)
        if (pt->size[s].from == FROM_OPTION || pt->size[s].from == FROM_DEFAULT)
            fprintf(out, "%s = %ld\n", ir->sizes.items[s].name, pt->sizes[s]);
    for (int i = 0; i < ir->arrays.len; i++) {
        const IrArray *a = &ir->arrays.items[i];
        if (!is_point_array(a) || pt->given[i].line)
            continue;
        const double *v = eval_slot(ev, a->name);
        int indent = (int)strlen(a->name) + 3;
        /* one row of the last dimension per line (wrapped when long), so a
         * matrix reads as a matrix */
        long row = a->rank > 0 ? eval_extent(a->dim[a->rank - 1], pt->sizes)
                               : 1;
        long n = eval_elements(a, pt->sizes);
        fprintf(out, "%s =", a->name);
        for (long e = 0; e < n; e++) {
            if (e > 0 && (e % row == 0 || e % row % VALUES_PER_LINE == 0))
                fprintf(out, "\n%*s", indent - 1, "");
            fprintf(out, " %.4f", v[e]);
        }
        fputc('\n', out);
    }
}

static void print_header(FILE *out, const DvCompilation *c,
                         const CheckOptions *opt, const Point *pt)
{
    const Ir *ir = c->ir;
    int randoms = count_random(pt);
    fprintf(out, "check: model %s (%s) at ", ir->model, c->src.path);
    if (!opt->at_path)
        fprintf(out, "random values, seed %lu\n", opt->seed);
    else if (randoms)
        fprintf(out, "the values in %s, the rest random with seed %lu\n",
                opt->at_path, opt->seed);
    else
        fprintf(out, "the values in %s\n", opt->at_path);
    for (int s = 0; s < ir->sizes.len; s++) {
        const char *name = ir->sizes.items[s].name;
        fprintf(out, "size %s = %ld ", name, pt->sizes[s]);
        switch (pt->size[s].from) {
        case FROM_FILE:
        case FROM_COUNT:
            fprintf(out, "%s of %s\n", size_origin(pt, s), opt->at_path);
            break;
        case FROM_OPTION:
            fprintf(out, "%s\n", size_origin(pt, s));
            break;
        case FROM_DEFAULT:
        case FROM_NONE:
            fprintf(out, "by default (set it with --size %s=N or in the --at "
                    "file)\n", name);
            break;
        }
    }
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
    Point pt;
    point_init(&pt, ir);
    int status = sizes_from_options(&pt, opt);
    if (!status && opt->at_path)
        status = read_at_file(&pt, opt->at_path);
    if (!status)
        status = finish_sizes(&pt);
    if (status) {
        point_free(&pt);
        return status;
    }
    Evaluation *ev = eval_new_sized(ir, pt.sizes);
    set_random(ev, &pt, opt->seed);
    set_given(ev, &pt);
    print_header(out, c, opt, &pt);
    print_values(out, ev, &pt);
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
    point_free(&pt);
    eval_free(ev);
    return status;
}
