/* diag.h - source text, spans and the diagnostics printed from them.
 *
 * Messages follow the GNU form editors parse: file:line:col: error: text,
 * then the source line and a caret (with a ~ underline when the cause spans
 * several characters).  Columns count bytes from 1; a tab in the source line
 * is copied into the caret line so the caret stays aligned. */
#ifndef DERVISH_DIAG_H
#define DERVISH_DIAG_H

#include <stdio.h>
#include <stdint.h>

typedef struct Source {
    const char *path;   /* as given on the command line */
    const char *text;   /* NUL-terminated copy of the file */
    size_t len;         /* bytes in text, not counting the NUL */
    const uint32_t *line_start; /* offsets where lines start, or NULL */
    int nlines;
} Source;

/* A byte range [off, off+len) of the source. */
typedef struct Span {
    uint32_t off, len;
} Span;

/* A file of a compilation other than the model: one a 'use' statement
 * named.  The spans of all the files of a compilation are offsets in one
 * range: the model's start at 0, and each further file's at its base,
 * past the end of every file added before it. */
typedef struct SourceFile {
    Source src;         /* owns its path, text and line index */
    uint32_t base;
    struct SourceFile *next;    /* the file added after this one */
} SourceFile;

/* The files a compilation reads besides the model, and where 'use'
 * statements look for them. */
typedef struct SourceSet {
    const char *const *dirs;    /* -I directories, in search order */
    int ndirs;
    SourceFile *first, *last;   /* in the order they were added */
    uint32_t end;       /* base of the next file */
} SourceSet;

/* An empty set for the model MODEL; the set keeps pointers to dirs. */
void source_set_init(SourceSet *set, const Source *model,
                     const char *const *dirs, int ndirs);
/* Add the file PATH whose contents are TEXT (len bytes, NUL-terminated,
 * malloc'd: the set takes it over).  Returns NULL, freeing TEXT, when the
 * offsets of all the files would no longer fit 32 bits. */
SourceFile *source_set_add(SourceSet *set, const char *path, char *text,
                           size_t len);
void source_set_free(SourceSet *set);

typedef struct Diag {
    const Source *src;  /* the model (or the one file messages are about) */
    FILE *out;          /* where messages go; NULL keeps them silent */
    int errors;
    int warnings;
    int max_errors;     /* stop reporting (and compiling) after this many */
    int max_warnings;   /* count but do not show warnings after this many */
    int shown;          /* the last error or warning was shown, so its
                           notes are too */
    SourceSet *files;   /* the other files spans may point into (and
                           where used files are added); NULL: none */
} Diag;

void diag_init(Diag *d, const Source *src, FILE *out);

/* The file holding span offset OFF, and in *base where its spans start. */
const Source *diag_source(const Diag *d, uint32_t off, uint32_t *base);
/* Where the spans of SRC (the model or a file of d->files) start. */
uint32_t diag_base(const Diag *d, const Source *src);
void diag_error(Diag *d, Span at, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 3, 4)))
#endif
    ;
void diag_warning(Diag *d, Span at, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 3, 4)))
#endif
    ;
void diag_note(Diag *d, Span at, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 3, 4)))
#endif
    ;

Span span_join(Span a, Span b);            /* smallest span covering both */

/* Index the starts of the source's lines (malloc'd; free with
 * source_free_lines), so line numbers are found by binary search rather
 * than by scanning from the start of the file each time. */
void source_index_lines(Source *src);
void source_free_lines(Source *src);
/* Line and column of byte OFF of src->text (an offset within the file,
 * not a span offset of a used file: subtract its base first). */
void source_line_col(const Source *src, uint32_t off, int *line, int *col);
/* The line of off, tried first at the line hint (one found before) and
 * its neighbours, as a sweep over the statements in order or in reverse
 * moves a line at a time; any other hint works too, only slower. */
int source_line_near(const Source *src, uint32_t off, int hint);

/* An internal fault: a bug in dervish, not in the model. */
#define DV_UNREACHABLE() dv_internal_fault(__FILE__, __LINE__)
void dv_internal_fault(const char *file, int line);

#endif
