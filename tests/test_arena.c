/* test_arena.c - the two structures the compiler's memory use rests on:
 * the arena (large allocations grow in place and can be given back, so a
 * growing array holds about its own size, not the sum of its old copies)
 * and the text buffer that passes a file on to its sink as it grows. */
#include "testutil.h"

#include <stdint.h>

/* Bytes one large chunk may add beyond what it holds (rounding). */
#define SLACK 64

START_TEST(alloc_is_zeroed_and_aligned)
{
    Arena a;
    arena_init(&a);
    /* small ones from a block, large ones in chunks of their own */
    static const size_t sizes[] = {1, 24, 1000, ARENA_LARGE - 1, ARENA_LARGE,
                                   ARENA_LARGE * 5 + 3};
    for (size_t i = 0; i < sizeof sizes / sizeof sizes[0]; i++) {
        unsigned char *p = arena_alloc(&a, sizes[i]);
        ck_assert_uint_eq((uintptr_t)p % 16, 0);
        for (size_t k = 0; k < sizes[i]; k++)
            ck_assert_uint_eq(p[k], 0);
        memset(p, 0xab, sizes[i]);  /* the next ones must still be zero */
    }
    arena_free(&a);
    ck_assert_uint_eq(a.held, 0);
}
END_TEST

/* A million pushes: every value kept, and the arena holds one array (at
 * most twice the values, as capacity doubles) plus its small early
 * copies, not every copy it outgrew (which would be twice as much). */
START_TEST(vec_growth_keeps_no_old_copies)
{
    Arena a;
    arena_init(&a);
    VEC(int32_t) v = {0};
    const int n = 1000000;
    for (int i = 0; i < n; i++)
        VEC_PUSH(&a, v, i * 7);
    for (int i = 0; i < n; i++)
        ck_assert_int_eq(v.items[i], i * 7);
    size_t array = (size_t)v.cap * sizeof *v.items;
    ck_assert_uint_ge(array, (size_t)n * sizeof *v.items);
    /* one 64 KiB block holds the copies below ARENA_LARGE */
    ck_assert_uint_le(a.held, array + 64 * 1024 + SLACK);
    arena_free(&a);
}
END_TEST

START_TEST(release_gives_large_chunks_back)
{
    Arena a;
    arena_init(&a);
    char *keep = arena_alloc(&a, 100 * 1024);
    size_t before = a.held;
    char *gone = arena_alloc(&a, 300 * 1024);
    ck_assert_uint_ge(a.held, before + 300 * 1024);
    arena_release(&a, gone, 300 * 1024);
    ck_assert_uint_eq(a.held, before);
    /* a small allocation stays until the arena is freed */
    char *small = arena_alloc(&a, 100);
    size_t with_small = a.held;
    arena_release(&a, small, 100);
    ck_assert_uint_eq(a.held, with_small);
    /* the survivor is intact and still linked: growing it works */
    memset(keep, 'k', 100 * 1024);
    keep = arena_grow(&a, keep, 100 * 1024, 200 * 1024);
    for (int i = 0; i < 100 * 1024; i++)
        ck_assert_int_eq(keep[i], 'k');
    ck_assert_uint_le(a.held, with_small - 100 * 1024 + 200 * 1024 + SLACK);
    arena_free(&a);
    ck_assert_uint_eq(a.held, 0);
}
END_TEST

/* A retired copy stays readable until the retired ones are released. */
START_TEST(retired_copy_readable_until_released)
{
    Arena a;
    arena_init(&a);
    int32_t *old = arena_alloc(&a, 50000 * sizeof *old);
    for (int i = 0; i < 50000; i++)
        old[i] = i;
    int32_t *copy = arena_alloc(&a, 100000 * sizeof *copy);
    memcpy(copy, old, 50000 * sizeof *old);
    size_t both = a.held;
    arena_retire(&a, old, 50000 * sizeof *old);
    ck_assert_uint_eq(a.held, both);
    for (int i = 0; i < 50000; i++)
        ck_assert_int_eq(old[i], i);
    arena_release_retired(&a);
    ck_assert_uint_le(a.held, both - 50000 * sizeof *old);
    for (int i = 0; i < 50000; i++)
        ck_assert_int_eq(copy[i], i);
    arena_free(&a);
    ck_assert_uint_eq(a.held, 0);
}
END_TEST

START_TEST(clear_keeps_one_block)
{
    Arena a;
    arena_init(&a);
    for (int round = 0; round < 3; round++) {
        for (int i = 0; i < 1000; i++) {
            char *p = arena_alloc(&a, 200);     /* several blocks' worth */
            ck_assert_int_eq(p[0], 0);
            p[0] = 'x';
        }
        arena_alloc(&a, 100 * 1024);
        arena_clear(&a);
        ck_assert_uint_eq(a.held, 64 * 1024);
    }
    arena_free(&a);
    ck_assert_uint_eq(a.held, 0);
}
END_TEST

/* Strings are packed without padding; what follows is aligned again. */
START_TEST(strings_are_packed)
{
    Arena a;
    arena_init(&a);
    (void)arena_alloc(&a, 8);
    char *s1 = arena_strndup(&a, "abcdef", 3);
    char *s2 = arena_printf(&a, "s%d", 42);
    ck_assert_str_eq(s1, "abc");
    ck_assert_str_eq(s2, "s42");
    ck_assert_ptr_eq(s2, s1 + 4);
    double *d = arena_alloc(&a, sizeof *d);
    ck_assert_uint_eq((uintptr_t)d % 16, 0);
    arena_free(&a);
}
END_TEST

/* ------------------------------------------------------- buffers */

/* A sink collecting what it is given; it fails once past fail_after
 * bytes (0: never). */
typedef struct Collector {
    Buf got;
    int calls;
    size_t fail_after;
} Collector;

static int collect(void *target, const char *data, size_t len)
{
    Collector *c = target;
    c->calls++;
    if (c->fail_after && c->got.len + len > c->fail_after)
        return -1;
    buf_putn(&c->got, data, len);
    return 0;
}

/* What the tests write, about 4 MB: short pieces, formatted ones and one
 * piece longer than BUF_FLUSH_AT. */
static void write_text(Buf *b, Buf *expected)
{
    static char big[3 * 1024 * 1024];
    for (size_t i = 0; i < sizeof big; i++)
        big[i] = (char)('a' + i % 26);
    for (int i = 0; i < 60000; i++) {
        buf_printf(b, "line %d\n", i);
        buf_printf(expected, "line %d\n", i);
        if (i == 30000) {
            buf_putn(b, big, sizeof big);
            buf_putn(expected, big, sizeof big);
        }
        buf_put(b, "x");
        buf_put(expected, "x");
    }
}

START_TEST(sink_takes_the_text_in_bounded_pieces)
{
    Collector c = {{0}, 0, 0};
    Buf b = {0}, expected = {0};
    b.sink = collect;
    b.target = &c;
    write_text(&b, &expected);
    ck_assert_int_eq(buf_flush(&b), 0);
    ck_assert_uint_eq(b.len, 0);
    ck_assert_uint_eq(c.got.len, expected.len);
    ck_assert_int_eq(memcmp(c.got.data, expected.data, expected.len), 0);
    /* the buffer never held much more than BUF_FLUSH_AT */
    ck_assert_uint_le(b.cap, 2 * BUF_FLUSH_AT + 4096);
    ck_assert_int_ge(c.calls, (int)(expected.len / BUF_FLUSH_AT));
    buf_free(&b);
    buf_free(&expected);
    buf_free(&c.got);
}
END_TEST

START_TEST(failed_sink_drops_the_rest)
{
    Collector c = {{0}, 0, 2 * BUF_FLUSH_AT};
    Buf b = {0}, expected = {0};
    b.sink = collect;
    b.target = &c;
    write_text(&b, &expected);
    ck_assert_int_eq(buf_flush(&b), -1);
    ck_assert_int_eq(b.failed, 1);
    /* after the first refusal the sink is not asked again */
    int calls = c.calls;
    buf_put(&b, "more");
    ck_assert_int_eq(buf_flush(&b), -1);
    ck_assert_int_eq(c.calls, calls);
    ck_assert_uint_le(c.got.len, 2 * BUF_FLUSH_AT);
    ck_assert_int_eq(memcmp(c.got.data, expected.data, c.got.len), 0);
    buf_free(&b);
    buf_free(&expected);
    buf_free(&c.got);
}
END_TEST

/* Without a sink a Buf keeps everything, NUL-terminated. */
START_TEST(plain_buffer_keeps_everything)
{
    Buf b = {0};
    for (int i = 0; i < 200000; i++)
        buf_printf(&b, "%d,", i % 10);
    ck_assert_uint_eq(b.len, 400000);
    ck_assert_int_eq(b.data[b.len], '\0');
    ck_assert_int_eq(strncmp(b.data, "0,1,2,", 6), 0);
    ck_assert_int_eq(buf_flush(&b), 0);
    ck_assert_uint_eq(b.len, 400000);
    buf_free(&b);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("arena");
    TU_ADD_TESTS(tu_case(s, "arena", 30), alloc_is_zeroed_and_aligned,
                 vec_growth_keeps_no_old_copies,
                 release_gives_large_chunks_back,
                 retired_copy_readable_until_released, clear_keeps_one_block,
                 strings_are_packed);
    TU_ADD_TESTS(tu_case(s, "buffers", 30),
                 sink_takes_the_text_in_bounded_pieces,
                 failed_sink_drops_the_rest, plain_buffer_keeps_everything);
    return tu_main(s);
}
