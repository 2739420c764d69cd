/* diag.c - formatting of errors, warnings and notes, and the set of files
 * a compilation reads that their spans point into; see diag.h. */
#include "diag.h"

#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

void diag_init(Diag *d, const Source *src, FILE *out)
{
    d->src = src;
    d->out = out;
    d->errors = 0;
    d->warnings = 0;
    d->max_errors = 20;
    d->max_warnings = 100;
    d->shown = 1;
    d->files = NULL;
}

static void out_of_memory(void)
{
    fputs("dervish: out of memory\n", stderr);
    exit(3);
}

void source_set_init(SourceSet *set, const Source *model,
                     const char *const *dirs, int ndirs)
{
    memset(set, 0, sizeof *set);
    set->dirs = dirs;
    set->ndirs = ndirs;
    /* one offset past the model's end, so an error at its very end still
     * belongs to it */
    set->end = model->len < UINT32_MAX ? (uint32_t)model->len + 1
                                        : UINT32_MAX;
}

SourceFile *source_set_add(SourceSet *set, const char *path, char *text,
                           size_t len)
{
    if (len >= UINT32_MAX - set->end) {
        free(text);
        return NULL;
    }
    SourceFile *f = calloc(1, sizeof *f);
    char *copy = malloc(strlen(path) + 1);
    if (!f || !copy)
        out_of_memory();
    strcpy(copy, path);
    f->src.path = copy;
    f->src.text = text;
    f->src.len = len;
    source_index_lines(&f->src);
    f->base = set->end;
    set->end += (uint32_t)len + 1;
    if (set->last)
        set->last->next = f;
    else
        set->first = f;
    set->last = f;
    return f;
}

void source_set_free(SourceSet *set)
{
    SourceFile *next;
    for (SourceFile *f = set->first; f; f = next) {
        next = f->next;
        source_free_lines(&f->src);
        free((void *)f->src.path);
        free((void *)f->src.text);
        free(f);
    }
    set->first = set->last = NULL;
}

const Source *diag_source(const Diag *d, uint32_t off, uint32_t *base)
{
    *base = 0;
    if (off <= d->src->len || !d->files)
        return d->src;
    for (const SourceFile *f = d->files->first; f; f = f->next)
        if (off >= f->base && off - f->base <= f->src.len) {
            *base = f->base;
            return &f->src;
        }
    return d->src;
}

uint32_t diag_base(const Diag *d, const Source *src)
{
    if (src != d->src && d->files)
        for (const SourceFile *f = d->files->first; f; f = f->next)
            if (&f->src == src)
                return f->base;
    return 0;
}

void source_index_lines(Source *src)
{
    int n = 1;
    for (size_t i = 0; i < src->len; i++)
        n += src->text[i] == '\n';
    uint32_t *starts = malloc((size_t)n * sizeof *starts);
    if (!starts)
        out_of_memory();
    int k = 0;
    starts[k++] = 0;
    for (size_t i = 0; i < src->len; i++)
        if (src->text[i] == '\n')
            starts[k++] = (uint32_t)i + 1;
    src->line_start = starts;
    src->nlines = n;
}

void source_free_lines(Source *src)
{
    free((void *)src->line_start);
    src->line_start = NULL;
    src->nlines = 0;
}

void source_line_col(const Source *src, uint32_t off, int *line, int *col)
{
    if (off > src->len)
        off = (uint32_t)src->len;
    if (src->line_start) {
        int lo = 0, hi = src->nlines - 1;   /* last start <= off */
        while (lo < hi) {
            int mid = (lo + hi + 1) / 2;
            if (src->line_start[mid] <= off)
                lo = mid;
            else
                hi = mid - 1;
        }
        *line = lo + 1;
        *col = (int)(off - src->line_start[lo]) + 1;
        return;
    }
    int l = 1;
    uint32_t start = 0;
    if (off > src->len)
        off = (uint32_t)src->len;
    for (uint32_t i = 0; i < off; i++)
        if (src->text[i] == '\n') {
            l++;
            start = i + 1;
        }
    *line = l;
    *col = (int)(off - start) + 1;
}

int source_line_near(const Source *src, uint32_t off, int hint)
{
    if (off > src->len)
        off = (uint32_t)src->len;
    for (int l = hint - 1; src->line_start && l <= hint + 1; l++)
        if (l >= 1 && l <= src->nlines && src->line_start[l - 1] <= off &&
            (l == src->nlines || off < src->line_start[l]))
            return l;
    int line, col;
    source_line_col(src, off, &line, &col);
    return line;
}

/* Widest part of a source line shown; longer lines are cut around the
 * cause, with "..." where text is left out. */
#define SHOW_WIDTH 120

/* Print the line of SRC holding `at` (offsets within the file) with a
 * caret under its first byte and tildes under the rest of the span
 * (clipped to what is shown). */
static void show_line(const Diag *d, const Source *src, Span at)
{
    const char *text = src->text;
    size_t len = src->len;
    uint32_t off = at.off > len ? (uint32_t)len : at.off;
    uint32_t start = off, end = off;
    while (start > 0 && text[start - 1] != '\n')
        start--;
    while (end < len && text[end] != '\n' && text[end] != '\r')
        end++;
    int cut_left = 0, cut_right = 0;
    if (end - start > SHOW_WIDTH && off - start > SHOW_WIDTH / 2) {
        start = off - SHOW_WIDTH / 2;
        cut_left = 1;
    }
    if (end - start > SHOW_WIDTH) {
        end = start + SHOW_WIDTH;
        cut_right = 1;
    }
    fputs(cut_left ? "    ..." : "    ", d->out);
    for (uint32_t i = start; i < end; i++) {
        unsigned char c = (unsigned char)text[i];
        /* Control bytes would garble the terminal; show them as spaces. */
        fputc(c == '\t' || c >= 0x20 ? c : ' ', d->out);
    }
    fputs(cut_right ? "...\n" : "\n", d->out);
    fputs(cut_left ? "       " : "    ", d->out);
    for (uint32_t i = start; i < off; i++)
        fputc(text[i] == '\t' ? '\t' : ' ', d->out);
    fputc('^', d->out);
    uint32_t stop = at.off + at.len;
    for (uint32_t i = off + 1; i < stop && i < end; i++)
        fputc('~', d->out);
    fputc('\n', d->out);
}

static void report(Diag *d, const char *kind, Span at, const char *fmt,
                   va_list ap)
{
    if (!d->out)
        return;
    int line, col;
    uint32_t base;
    const Source *src = diag_source(d, at.off, &base);
    at.off -= base;
    source_line_col(src, at.off, &line, &col);
    fprintf(d->out, "%s:%d:%d: %s: ", src->path, line, col, kind);
    vfprintf(d->out, fmt, ap);
    fputc('\n', d->out);
    show_line(d, src, at);
}

void diag_error(Diag *d, Span at, const char *fmt, ...)
{
    d->errors++;
    d->shown = d->errors <= d->max_errors;
    if (!d->shown) {
        if (d->errors == d->max_errors + 1 && d->out)
            fprintf(d->out, "%s: too many errors (limit is %d); stopping\n",
                    d->src->path, d->max_errors);
        return;
    }
    va_list ap;
    va_start(ap, fmt);
    report(d, "error", at, fmt, ap);
    va_end(ap);
}

void diag_warning(Diag *d, Span at, const char *fmt, ...)
{
    d->warnings++;
    /* a model of a million unused values would bury the rest */
    d->shown = d->warnings <= d->max_warnings && d->errors <= d->max_errors;
    if (!d->shown) {
        if (d->warnings == d->max_warnings + 1 && d->out)
            fprintf(d->out, "%s: more than %d warnings; the rest are counted "
                    "but not shown\n", d->src->path, d->max_warnings);
        return;
    }
    va_list ap;
    va_start(ap, fmt);
    report(d, "warning", at, fmt, ap);
    va_end(ap);
}

void diag_note(Diag *d, Span at, const char *fmt, ...)
{
    if (!d->shown)
        return;
    va_list ap;
    va_start(ap, fmt);
    report(d, "note", at, fmt, ap);
    va_end(ap);
}

Span span_join(Span a, Span b)
{
    uint32_t lo = a.off < b.off ? a.off : b.off;
    uint32_t ha = a.off + a.len, hb = b.off + b.len;
    uint32_t hi = ha > hb ? ha : hb;
    Span s = {lo, hi - lo};
    return s;
}

void dv_internal_fault(const char *file, int line)
{
    fprintf(stderr, "dervish: internal fault at %s:%d; please report it\n",
            file, line);
    abort();
}
