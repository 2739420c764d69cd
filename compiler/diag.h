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

typedef struct Diag {
    const Source *src;
    FILE *out;          /* where messages go; NULL keeps them silent */
    int errors;
    int warnings;
    int max_errors;     /* stop reporting (and compiling) after this many */
} Diag;

void diag_init(Diag *d, const Source *src, FILE *out);
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
void source_line_col(const Source *src, uint32_t off, int *line, int *col);

/* An internal fault: a bug in dervish, not in the model. */
#define DV_UNREACHABLE() dv_internal_fault(__FILE__, __LINE__)
void dv_internal_fault(const char *file, int line);

#endif
