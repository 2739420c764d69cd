/* arena.c - bump allocator in chained blocks; see arena.h. */
#include "arena.h"

#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define ARENA_BLOCK_MIN ((size_t)64 * 1024)
#define ARENA_ALIGN ((size_t)16)

struct ArenaBlock {
    ArenaBlock *next;
    size_t size;                 /* bytes usable after the header */
};

/* The usable bytes start after the header, rounded up to ARENA_ALIGN
 * (malloc's own alignment covers the block start). */
#define ARENA_HEADER ((sizeof(ArenaBlock) + ARENA_ALIGN - 1) & ~(ARENA_ALIGN - 1))
#define BLOCK_DATA(b) ((unsigned char *)(b) + ARENA_HEADER)

void arena_init(Arena *a)
{
    a->head = NULL;
    a->used = 0;
}

void arena_free(Arena *a)
{
    ArenaBlock *b = a->head;
    while (b) {
        ArenaBlock *next = b->next;
        free(b);
        b = next;
    }
    arena_init(a);
}

static void out_of_memory(void)
{
    fputs("dervish: out of memory\n", stderr);
    exit(3);
}

void *arena_alloc(Arena *a, size_t size)
{
    size = (size + ARENA_ALIGN - 1) & ~(ARENA_ALIGN - 1);
    if (!a->head || a->head->size - a->used < size) {
        size_t bsize = size > ARENA_BLOCK_MIN ? size : ARENA_BLOCK_MIN;
        ArenaBlock *b = malloc(ARENA_HEADER + bsize);
        if (!b)
            out_of_memory();
        b->next = a->head;
        b->size = bsize;
        a->head = b;
        a->used = 0;
    }
    void *p = BLOCK_DATA(a->head) + a->used;
    a->used += size;
    memset(p, 0, size);
    return p;
}

void *arena_grow(Arena *a, void *old, size_t old_size, size_t new_size)
{
    void *p = arena_alloc(a, new_size);
    if (old && old_size)
        memcpy(p, old, old_size < new_size ? old_size : new_size);
    return p;
}

char *arena_strndup(Arena *a, const char *s, size_t n)
{
    char *p = arena_alloc(a, n + 1);
    memcpy(p, s, n);
    p[n] = '\0';
    return p;
}

char *arena_printf(Arena *a, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    int n = vsnprintf(NULL, 0, fmt, ap);
    va_end(ap);
    if (n < 0)
        n = 0;
    char *p = arena_alloc(a, (size_t)n + 1);
    va_start(ap, fmt);
    vsnprintf(p, (size_t)n + 1, fmt, ap);
    va_end(ap);
    return p;
}
