/* arena.c - bump allocator in chained blocks, plus large allocations in
 * heap chunks of their own; see arena.h. */
#include "arena.h"

#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define ARENA_BLOCK_MIN ((size_t)64 * 1024)
#define ARENA_ALIGN ((size_t)16)

struct ArenaBlock {
    ArenaBlock *next;
};

/* A large allocation: doubly linked, so it can be moved by realloc or
 * freed alone in O(1). */
struct ArenaLarge {
    ArenaLarge *prev, *next;
    size_t size;                /* bytes usable after the header */
};

/* The usable bytes start after the header, rounded up to ARENA_ALIGN
 * (malloc's own alignment covers the chunk start). */
#define HEADER(T) ((sizeof(T) + ARENA_ALIGN - 1) & ~(ARENA_ALIGN - 1))
#define BLOCK_DATA(b) ((unsigned char *)(b) + HEADER(ArenaBlock))
#define LARGE_DATA(l) ((unsigned char *)(l) + HEADER(ArenaLarge))
#define LARGE_OF(p) ((ArenaLarge *)((unsigned char *)(p) - HEADER(ArenaLarge)))

void arena_init(Arena *a)
{
    a->head = NULL;
    a->used = 0;
    a->large = NULL;
    a->retired = NULL;
    a->held = 0;
}

static void out_of_memory(void)
{
    fputs("dervish: out of memory\n", stderr);
    exit(3);
}

static size_t rounded(size_t size)
{
    return (size + ARENA_ALIGN - 1) & ~(ARENA_ALIGN - 1);
}

static void free_chain(Arena *a, ArenaLarge *l)
{
    while (l) {
        ArenaLarge *next = l->next;
        a->held -= l->size;
        free(l);
        l = next;
    }
}

/* Free the blocks from b on. */
static void free_blocks(Arena *a, ArenaBlock *b)
{
    while (b) {
        ArenaBlock *next = b->next;
        a->held -= ARENA_BLOCK_MIN;
        free(b);
        b = next;
    }
}

void arena_free(Arena *a)
{
    free_blocks(a, a->head);
    free_chain(a, a->large);
    free_chain(a, a->retired);
    arena_init(a);
}

void arena_clear(Arena *a)
{
    if (a->head) {
        free_blocks(a, a->head->next);
        a->head->next = NULL;
    }
    free_chain(a, a->large);
    free_chain(a, a->retired);
    a->large = a->retired = NULL;
    a->used = 0;
}

/* Put chunk l (just allocated or moved) at the front of the large list. */
static void link_large(Arena *a, ArenaLarge *l)
{
    l->prev = NULL;
    l->next = a->large;
    if (a->large)
        a->large->prev = l;
    a->large = l;
}

static void unlink_large(Arena *a, ArenaLarge *l)
{
    if (l->prev)
        l->prev->next = l->next;
    else
        a->large = l->next;
    if (l->next)
        l->next->prev = l->prev;
}

/* size bytes from the newest block at the given alignment (a power of
 * two, at most ARENA_ALIGN), in a new block when they do not fit. */
static void *bump(Arena *a, size_t size, size_t align)
{
    size_t at = (a->used + align - 1) & ~(align - 1);
    if (!a->head || at > ARENA_BLOCK_MIN || ARENA_BLOCK_MIN - at < size) {
        ArenaBlock *b = malloc(HEADER(ArenaBlock) + ARENA_BLOCK_MIN);
        if (!b)
            out_of_memory();
        b->next = a->head;
        a->head = b;
        a->held += ARENA_BLOCK_MIN;
        at = 0;
    }
    a->used = at + size;
    return BLOCK_DATA(a->head) + at;
}

void *arena_alloc(Arena *a, size_t size)
{
    if (rounded(size) >= ARENA_LARGE) {
        /* calloc: fresh pages from the system are zero without touching */
        ArenaLarge *l = calloc(1, HEADER(ArenaLarge) + rounded(size));
        if (!l)
            out_of_memory();
        l->size = rounded(size);
        a->held += l->size;
        link_large(a, l);
        return LARGE_DATA(l);
    }
    void *p = bump(a, size, ARENA_ALIGN);
    memset(p, 0, size);
    return p;
}

void *arena_grow(Arena *a, void *old, size_t old_size, size_t new_size)
{
    if (old && rounded(old_size) >= ARENA_LARGE &&
        rounded(new_size) >= ARENA_LARGE) {
        ArenaLarge *l = LARGE_OF(old);
        unlink_large(a, l);
        a->held -= l->size;
        ArenaLarge *moved = realloc(l, HEADER(ArenaLarge) + rounded(new_size));
        if (!moved)
            out_of_memory();
        moved->size = rounded(new_size);
        a->held += moved->size;
        link_large(a, moved);
        return LARGE_DATA(moved);
    }
    void *p = arena_alloc(a, new_size);
    if (old && old_size) {
        memcpy(p, old, old_size < new_size ? old_size : new_size);
        arena_release(a, old, old_size);
    }
    return p;
}

void arena_release(Arena *a, void *p, size_t size)
{
    if (!p || rounded(size) < ARENA_LARGE)
        return;
    ArenaLarge *l = LARGE_OF(p);
    unlink_large(a, l);
    a->held -= l->size;
    free(l);
}

void arena_retire(Arena *a, void *p, size_t size)
{
    if (!p || rounded(size) < ARENA_LARGE)
        return;
    ArenaLarge *l = LARGE_OF(p);
    unlink_large(a, l);
    l->prev = NULL;
    l->next = a->retired;
    a->retired = l;
}

void arena_release_retired(Arena *a)
{
    free_chain(a, a->retired);
    a->retired = NULL;
}

/* Room for a string of n bytes: strings need no alignment. */
static char *string_room(Arena *a, size_t n)
{
    return rounded(n) >= ARENA_LARGE ? arena_alloc(a, n) : bump(a, n, 1);
}

char *arena_strndup(Arena *a, const char *s, size_t n)
{
    char *p = string_room(a, n + 1);
    memcpy(p, s, n);
    p[n] = '\0';
    return p;
}

char *arena_printf(Arena *a, const char *fmt, ...)
{
    /* most texts are short: format once into the stack, copy that */
    char small[256];
    va_list ap;
    va_start(ap, fmt);
    int n = vsnprintf(small, sizeof small, fmt, ap);
    va_end(ap);
    if (n < 0)
        n = 0;
    if ((size_t)n < sizeof small)
        return arena_strndup(a, small, (size_t)n);
    char *p = string_room(a, (size_t)n + 1);
    va_start(ap, fmt);
    vsnprintf(p, (size_t)n + 1, fmt, ap);
    va_end(ap);
    return p;
}
