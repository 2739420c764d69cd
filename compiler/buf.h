/* buf.h - a growable text buffer on the heap, for emitted files. */
#ifndef DERVISH_BUF_H
#define DERVISH_BUF_H

#include <stddef.h>

typedef struct Buf {
    char *data;         /* NUL-terminated once anything is written */
    size_t len, cap;
} Buf;

void buf_put(Buf *b, const char *s);
void buf_putn(Buf *b, const char *s, size_t n);
void buf_printf(Buf *b, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 2, 3)))
#endif
    ;
void buf_free(Buf *b);

#endif
