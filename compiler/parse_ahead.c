/* parse_ahead.c - see parse_ahead.h.  The reading thread fills batches of
 * statements, each with the arena of their trees, and queues them; at most
 * AHEAD_QUEUED wait, so the trees held stay a few megabytes.  Each batch
 * is freed once its statements are visited. */
#include "parse_ahead.h"

#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>

#define AHEAD_BATCH 512     /* statements per batch */
#define AHEAD_QUEUED 8      /* batches read but not yet taken */

typedef struct Batch {
    struct Batch *next;
    Arena trees;
    VEC(const AstStmt *) stmts;     /* in trees */
    int last;                       /* the last batch of a reading */
} Batch;

struct ParseAhead {
    const Source *src;
    Diag *diag;             /* the first reading's */
    Diag quiet;             /* the second's */
    Arena keep;             /* the readings' own lists and failed names */
    const char **failed;    /* the first reading's failed names */
    int nfailed;
    Batch *filling;         /* the reading thread's */
    pthread_t thread;
    pthread_mutex_t lock;   /* guards the fields below */
    pthread_cond_t changed;
    Batch *first, *last;    /* queued, oldest first */
    int queued;
};

static Batch *new_batch(void)
{
    Batch *b = calloc(1, sizeof *b);
    if (!b) {
        fputs("dervish: out of memory\n", stderr);
        exit(3);
    }
    arena_init(&b->trees);
    return b;
}

/* Queue the batch being filled (waiting while the queue is full) and
 * start another. */
static void hand_over(ParseAhead *pa, int last)
{
    Batch *b = pa->filling;
    b->last = last;
    pthread_mutex_lock(&pa->lock);
    while (pa->queued >= AHEAD_QUEUED)
        pthread_cond_wait(&pa->changed, &pa->lock);
    if (pa->last)
        pa->last->next = b;
    else
        pa->first = b;
    pa->last = b;
    pa->queued++;
    pthread_cond_broadcast(&pa->changed);
    pthread_mutex_unlock(&pa->lock);
    pa->filling = new_batch();
}

static void collect(void *ctx, const AstStmt *s)
{
    ParseAhead *pa = ctx;
    VEC_PUSH(&pa->filling->trees, pa->filling->stmts, s);
}

/* At a statement boundary: a full batch goes to the queue. */
static Arena *next_trees(void *ctx)
{
    ParseAhead *pa = ctx;
    if (pa->filling->stmts.len >= AHEAD_BATCH)
        hand_over(pa, 0);
    return &pa->filling->trees;
}

static void *read_twice(void *arg)
{
    ParseAhead *pa = arg;
    ParseVisitor first = {collect, pa, NULL, 0, 1, next_trees};
    parse_each(&pa->keep, pa->diag, pa->src, &first);
    pa->failed = first.failed;
    pa->nfailed = first.nfailed;
    hand_over(pa, 1);
    ParseVisitor second = {collect, pa, NULL, 0, 0, next_trees};
    parse_each(&pa->keep, &pa->quiet, pa->src, &second);
    hand_over(pa, 1);
    return NULL;
}

ParseAhead *parse_ahead_start(Diag *diag, const Source *src)
{
    ParseAhead *pa = calloc(1, sizeof *pa);
    if (!pa)
        return NULL;
    pa->src = src;
    pa->diag = diag;
    diag_init(&pa->quiet, diag->src, NULL);
    pa->quiet.files = diag->files;
    pa->quiet.max_errors = diag->max_errors;
    arena_init(&pa->keep);
    pa->filling = new_batch();
    pthread_mutex_init(&pa->lock, NULL);
    pthread_cond_init(&pa->changed, NULL);
    if (pthread_create(&pa->thread, NULL, read_twice, pa) != 0) {
        pthread_cond_destroy(&pa->changed);
        pthread_mutex_destroy(&pa->lock);
        arena_free(&pa->filling->trees);
        free(pa->filling);
        free(pa);
        return NULL;
    }
    return pa;
}

/* Visit the batches of one reading as they come. */
static void take(ParseAhead *pa, void (*visit)(void *, const AstStmt *),
                 void *ctx)
{
    int last = 0;
    while (!last) {
        pthread_mutex_lock(&pa->lock);
        while (!pa->first)
            pthread_cond_wait(&pa->changed, &pa->lock);
        Batch *b = pa->first;
        pa->first = b->next;
        if (!pa->first)
            pa->last = NULL;
        pa->queued--;
        pthread_cond_broadcast(&pa->changed);
        pthread_mutex_unlock(&pa->lock);
        for (int i = 0; i < b->stmts.len; i++)
            visit(ctx, b->stmts.items[i]);
        last = b->last;
        arena_free(&b->trees);
        free(b);
    }
}

void parse_ahead_first(ParseAhead *pa, void (*visit)(void *, const AstStmt *),
                       void *ctx, const char ***failed, int *nfailed)
{
    take(pa, visit, ctx);
    *failed = pa->failed;
    *nfailed = pa->nfailed;
}

void parse_ahead_finish(ParseAhead *pa, void (*visit)(void *, const AstStmt *),
                        void *ctx)
{
    take(pa, visit, ctx);
    pthread_join(pa->thread, NULL);
    pthread_cond_destroy(&pa->changed);
    pthread_mutex_destroy(&pa->lock);
    arena_free(&pa->filling->trees);
    free(pa->filling);
    arena_free(&pa->keep);
    free(pa);
}
