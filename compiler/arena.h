/* arena.h - one memory region per compilation, freed at once.
 *
 * Every phase allocates its nodes, strings and tables here, so a
 * compilation never frees piecemeal and a failed one leaks nothing. */
#ifndef DERVISH_ARENA_H
#define DERVISH_ARENA_H

#include <stddef.h>

typedef struct ArenaBlock ArenaBlock;

typedef struct Arena {
    ArenaBlock *head;   /* newest block; older ones chained behind it */
    size_t used;        /* bytes taken from head */
} Arena;

void arena_init(Arena *a);
void arena_free(Arena *a);
void *arena_alloc(Arena *a, size_t size);            /* zeroed, aligned */
void *arena_grow(Arena *a, void *old, size_t old_size, size_t new_size);
char *arena_strndup(Arena *a, const char *s, size_t n);
char *arena_printf(Arena *a, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 2, 3)))
#endif
    ;

/* A growable array of T in the arena: VEC(T) v = {0}; VEC_PUSH(arena, v, x). */
#define VEC(T) struct { T *items; int len, cap; }
#define VEC_PUSH(arena, v, x)                                                  \
    do {                                                                       \
        if ((v).len == (v).cap) {                                              \
            int vec_newcap_ = (v).cap ? 2 * (v).cap : 8;                       \
            (v).items = arena_grow((arena), (v).items,                         \
                                   (size_t)(v).cap * sizeof *(v).items,        \
                                   (size_t)vec_newcap_ * sizeof *(v).items);   \
            (v).cap = vec_newcap_;                                             \
        }                                                                      \
        (v).items[(v).len++] = (x);                                            \
    } while (0)

#endif
