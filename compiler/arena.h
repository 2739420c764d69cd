/* arena.h - one memory region per compilation, freed at once.
 *
 * Every phase allocates its nodes, strings and tables here, so a failed
 * compilation leaks nothing.  Large arrays and tables may also be resized
 * in place or given back early, so memory follows what is live. */
#ifndef DERVISH_ARENA_H
#define DERVISH_ARENA_H

#include <stddef.h>

typedef struct ArenaBlock ArenaBlock;
typedef struct ArenaLarge ArenaLarge;

typedef struct Arena {
    ArenaBlock *head;   /* newest block; older ones chained behind it */
    size_t used;        /* bytes taken from head */
    ArenaLarge *large;  /* large allocations, each its own heap chunk */
    ArenaLarge *retired;    /* replaced large ones still readable */
    size_t held;        /* bytes taken from the system, headers aside */
} Arena;

/* Allocations of at least this many bytes get a heap chunk of their own,
 * so growing one reallocates it and releasing one frees it at once: big
 * arrays and hash tables leave no abandoned copies behind. */
#define ARENA_LARGE ((size_t)16 * 1024)

void arena_init(Arena *a);
void arena_free(Arena *a);
/* Free everything allocated so far, but keep one block for reuse. */
void arena_clear(Arena *a);
void *arena_alloc(Arena *a, size_t size);            /* zeroed, aligned */
/* Resize an allocation of old_size bytes (the size it was allocated or
 * last grown with) to new_size; the bytes past old_size are not zeroed. */
void *arena_grow(Arena *a, void *old, size_t old_size, size_t new_size);
/* Give back an allocation of size bytes no longer used: a large one is
 * freed now, a small one stays until arena_free. */
void arena_release(Arena *a, void *p, size_t size);
/* For an allocation replaced by a copy that older pointers may still read:
 * it stays readable until arena_release_retired (or arena_free). */
void arena_retire(Arena *a, void *p, size_t size);
void arena_release_retired(Arena *a);
char *arena_strndup(Arena *a, const char *s, size_t n);
char *arena_printf(Arena *a, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 2, 3)))
#endif
    ;

/* A growable array of T in the arena: VEC(T) v = {0}; VEC_PUSH(arena, v, x).
 * A push may move the items: pointers into them do not survive it. */
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
