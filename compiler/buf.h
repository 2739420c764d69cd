/* buf.h - a growable text buffer on the heap, for emitted files.  A Buf
 * may pass its text on to a sink (an open output file) as it grows, so a
 * file of any length is written through a bounded buffer. */
#ifndef DERVISH_BUF_H
#define DERVISH_BUF_H

#include <stddef.h>
#include <string.h>

/* Takes len bytes of text; returns 0, or -1 after reporting why. */
typedef int (*BufSink)(void *target, const char *data, size_t len);

typedef struct Buf {
    char *data;         /* NUL-terminated once anything is written; with a
                           sink, only the text not yet passed on */
    size_t len, cap;
    size_t lines;       /* newlines in the text before data + counted
                           (passed on or held); see buf_lines */
    size_t counted;
    BufSink sink;       /* NULL: the Buf keeps all its text */
    void *target;       /* the sink's first argument */
    int failed;         /* the sink failed: further text is dropped */
} Buf;

/* Text held beyond this many bytes goes to the sink. */
#define BUF_FLUSH_AT ((size_t)1 << 20)

/* buf_putn when the text does not fit the room held or is due for the
 * sink. */
void buf_putn_grow(Buf *b, const char *s, size_t n);
/* Inline: most pieces of text are a few bytes, written millions of times
 * for a big model, and the length of a literal is known when compiling. */
static inline void buf_putn(Buf *b, const char *s, size_t n)
{
    if (b->len + n + 1 > b->cap || (b->sink && b->len + n > BUF_FLUSH_AT)) {
        buf_putn_grow(b, s, n);
        return;
    }
    memcpy(b->data + b->len, s, n);
    b->len += n;
    b->data[b->len] = '\0';
}
static inline void buf_put(Buf *b, const char *s)
{
    buf_putn(b, s, strlen(s));
}
/* v in decimal, as "%ld" writes it (but without printf's cost). */
void buf_put_long(Buf *b, long v);
void buf_printf(Buf *b, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 2, 3)))
#endif
    ;
/* The newlines written so far, passed on or held (counted only when
 * asked for or passed on, so writing text does not scan it). */
size_t buf_lines(Buf *b);
/* Drop the last n bytes of the held text. */
void buf_unput(Buf *b, size_t n);
/* Pass all held text to the sink (if any); returns -1 if the sink has
 * failed, now or before, else 0. */
int buf_flush(Buf *b);
void buf_free(Buf *b);

#endif
