/* buf.c - growable text buffer; see buf.h. */
#include "buf.h"

#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static void reserve(Buf *b, size_t extra)
{
    if (b->len + extra + 1 <= b->cap)
        return;
    size_t cap = b->cap ? b->cap : 4096;
    while (cap < b->len + extra + 1)
        cap *= 2;
    char *p = realloc(b->data, cap);
    if (!p) {
        fputs("dervish: out of memory\n", stderr);
        exit(3);
    }
    b->data = p;
    b->cap = cap;
}

/* Hand len bytes at s to the sink unless it has already failed. */
static void pass_on(Buf *b, const char *s, size_t len)
{
    if (!b->failed && len > 0 && b->sink(b->target, s, len) != 0)
        b->failed = 1;
}

static size_t count_lines(const char *s, size_t n)
{
    size_t lines = 0;
    for (const char *p = s, *end = s + n;
         (p = memchr(p, '\n', (size_t)(end - p))) != NULL; p++)
        lines++;
    return lines;
}

size_t buf_lines(Buf *b)
{
    b->lines += count_lines(b->data + b->counted, b->len - b->counted);
    b->counted = b->len;
    return b->lines;
}

void buf_unput(Buf *b, size_t n)
{
    size_t len = b->len - n;
    if (b->counted > len) {
        b->lines -= count_lines(b->data + len, b->counted - len);
        b->counted = len;
    }
    b->len = len;
    b->data[len] = '\0';
}

int buf_flush(Buf *b)
{
    if (b->sink && b->len > 0) {
        buf_lines(b);
        pass_on(b, b->data, b->len);
        b->len = b->counted = 0;
        b->data[0] = '\0';
    }
    return b->failed ? -1 : 0;
}

void buf_putn_grow(Buf *b, const char *s, size_t n)
{
    if (b->sink && b->len + n > BUF_FLUSH_AT) {
        buf_flush(b);
        if (n > BUF_FLUSH_AT) {
            b->lines += count_lines(s, n);
            pass_on(b, s, n);       /* too long to be worth a copy */
            return;
        }
    }
    reserve(b, n);
    memcpy(b->data + b->len, s, n);
    b->len += n;
    b->data[b->len] = '\0';
}

void buf_put_long(Buf *b, long v)
{
    char digits[24];
    size_t at = sizeof digits;
    unsigned long u = v < 0 ? 0UL - (unsigned long)v : (unsigned long)v;
    do
        digits[--at] = (char)('0' + u % 10);
    while ((u /= 10) != 0);
    if (v < 0)
        digits[--at] = '-';
    buf_putn(b, digits + at, sizeof digits - at);
}

void buf_printf(Buf *b, const char *fmt, ...)
{
    /* format in place when the text fits the room left, else again once
     * there is room */
    size_t room = b->cap - b->len;
    va_list ap;
    va_start(ap, fmt);
    int n = vsnprintf(b->data ? b->data + b->len : NULL, room, fmt, ap);
    va_end(ap);
    if (n <= 0)
        return;
    if ((size_t)n >= room) {
        reserve(b, (size_t)n);
        va_start(ap, fmt);
        vsnprintf(b->data + b->len, (size_t)n + 1, fmt, ap);
        va_end(ap);
    }
    b->len += (size_t)n;
    if (b->sink && b->len > BUF_FLUSH_AT)
        buf_flush(b);
}

void buf_free(Buf *b)
{
    free(b->data);
    b->data = NULL;
    b->len = b->cap = b->lines = b->counted = 0;
}
