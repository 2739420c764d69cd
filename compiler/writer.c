/* writer.c - see writer.h.  Two buffers take turns: the thread writes one
 * while the caller fills the other, so at most one piece waits. */
#include "writer.h"

#include <errno.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

struct Writer {
    int fd;
    const char *path;
    int threaded;           /* else writer_put writes itself */
    pthread_t thread;
    pthread_mutex_t lock;   /* guards the fields below */
    pthread_cond_t changed; /* pending taken or filled, or done set */
    char *pending;          /* handed over, not yet taken by the thread */
    size_t len, cap;
    int done;               /* nothing more will be handed over */
    int failed;             /* a write failed: the rest is dropped */
};

static void out_of_memory(void)
{
    fputs("dervish: out of memory\n", stderr);
    exit(3);
}

int writer_write_fd(int fd, const char *path, const char *data, size_t len)
{
    size_t done = 0;
    while (done < len) {
        ssize_t w = write(fd, data + done, len - done);
        if (w < 0 && errno == EINTR)
            continue;
        if (w <= 0) {
            fprintf(stderr, "dervish: cannot write %s: %s\n", path,
                    strerror(w < 0 ? errno : ENOSPC));
            return -1;
        }
        done += (size_t)w;
    }
    return 0;
}

static void *run(void *arg)
{
    Writer *w = arg;
    char *mine = NULL;      /* the buffer being written */
    size_t cap = 0;
    pthread_mutex_lock(&w->lock);
    for (;;) {
        while (w->len == 0 && !w->done)
            pthread_cond_wait(&w->changed, &w->lock);
        if (w->len == 0)
            break;
        /* take the pending text, leaving the written buffer in its place */
        char *text = w->pending;
        size_t len = w->len, text_cap = w->cap;
        w->pending = mine;
        w->cap = cap;
        w->len = 0;
        mine = text;
        cap = text_cap;
        int failed = w->failed;
        pthread_cond_broadcast(&w->changed);
        pthread_mutex_unlock(&w->lock);
        if (!failed)
            failed = writer_write_fd(w->fd, w->path, mine, len) != 0;
        pthread_mutex_lock(&w->lock);
        w->failed |= failed;
    }
    pthread_mutex_unlock(&w->lock);
    free(mine);
    return NULL;
}

Writer *writer_start(int fd, const char *path)
{
    Writer *w = calloc(1, sizeof *w);
    if (!w)
        out_of_memory();
    w->fd = fd;
    w->path = path;
    pthread_mutex_init(&w->lock, NULL);
    pthread_cond_init(&w->changed, NULL);
    w->threaded = pthread_create(&w->thread, NULL, run, w) == 0;
    return w;
}

int writer_put(Writer *w, const char *data, size_t len)
{
    if (!w->threaded) {
        if (!w->failed && writer_write_fd(w->fd, w->path, data, len) != 0)
            w->failed = 1;
        return w->failed ? -1 : 0;
    }
    pthread_mutex_lock(&w->lock);
    while (w->len > 0)
        pthread_cond_wait(&w->changed, &w->lock);
    if (!w->failed && len > 0) {
        if (w->cap < len) {
            char *p = realloc(w->pending, len);
            if (!p)
                out_of_memory();
            w->pending = p;
            w->cap = len;
        }
        memcpy(w->pending, data, len);
        w->len = len;
        pthread_cond_broadcast(&w->changed);
    }
    int failed = w->failed;
    pthread_mutex_unlock(&w->lock);
    return failed ? -1 : 0;
}

int writer_finish(Writer *w)
{
    if (w->threaded) {
        pthread_mutex_lock(&w->lock);
        w->done = 1;
        pthread_cond_broadcast(&w->changed);
        pthread_mutex_unlock(&w->lock);
        pthread_join(w->thread, NULL);
    }
    pthread_cond_destroy(&w->changed);
    pthread_mutex_destroy(&w->lock);
    int failed = w->failed;
    free(w->pending);
    free(w);
    return failed ? -1 : 0;
}
