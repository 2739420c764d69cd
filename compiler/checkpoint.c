/* checkpoint.c - the point `dervish check` evaluates at; see
 * checkpoint.h.
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
 * disagree, are errors in the file. */
#include "checkpoint.h"
#include "fileio.h"
#include "splitmix.h"

#include <ctype.h>
#include <limits.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#define RANDOM_LO 0.1
#define RANDOM_HI 0.9
#define VALUES_PER_LINE 8
#define DEFAULT_SIZE 3
#define MAX_SIZE EVAL_MAX_ELEMENTS

static void out_of_memory(void)
{
    fputs("dervish: out of memory\n", stderr);
    exit(3);
}

void *check_alloc(size_t n)
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
    pt->sizes = check_alloc((size_t)nsizes * sizeof *pt->sizes);
    pt->size = check_alloc((size_t)nsizes * sizeof *pt->size);
    pt->given = check_alloc((size_t)nentries * sizeof *pt->given);
    pt->order = check_alloc((size_t)ir->arrays.len * sizeof *pt->order);
    pt->norder = 0;
}

void point_free(Point *pt)
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
            const char **names = check_alloc((size_t)ir->sizes.len * sizeof *names);
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

int point_read(Point *pt, const Ir *ir, const CheckOptions *opt)
{
    point_init(pt, ir);
    int status = sizes_from_options(pt, opt);
    if (!status && opt->at_path)
        status = read_at_file(pt, opt->at_path);
    if (!status)
        status = finish_sizes(pt);
    if (status)
        point_free(pt);
    return status;
}

void point_apply(Evaluation *ev, const Point *pt, unsigned long seed)
{
    set_random(ev, pt, seed);
    set_given(ev, pt);
}

void point_print(FILE *out, const DvCompilation *c, const CheckOptions *opt,
                 Evaluation *ev, const Point *pt)
{
    print_header(out, c, opt, pt);
    print_values(out, ev, pt);
}

char *check_entry_name(const Ir *ir, long k, int outputs)
{
    int count = outputs ? ir->outputs.len : ir->arrays.len;
    for (int i = 0; i < count; i++) {
        const IrArray *a =
            &ir->arrays.items[outputs ? ir->outputs.items[i] : i];
        if (!outputs && a->role != ROLE_PARAM)
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
