/* writer.h - a thread that writes an output file's text while the emitter
 * goes on producing the next piece: on a big model the kernel's copying
 * of hundreds of megabytes then overlaps the emitter's own work. */
#ifndef DERVISH_WRITER_H
#define DERVISH_WRITER_H

#include <stddef.h>

typedef struct Writer Writer;

/* Write to fd, naming path in messages.  Without a thread (one could not
 * be started) the writes happen in writer_put itself. */
Writer *writer_start(int fd, const char *path);

/* Hand over len bytes (copied, so data may be reused at once); they are
 * written in order.  Returns -1 once a write has failed (reported as
 * "dervish: cannot write PATH: reason"), else 0. */
int writer_put(Writer *w, const char *data, size_t len);

/* Write all len bytes to fd now, retrying after signals; on failure
 * reports as writer_put does and returns -1. */
int writer_write_fd(int fd, const char *path, const char *data, size_t len);

/* Wait until everything handed over is written, then end the thread and
 * free the writer.  Returns -1 if a write failed, else 0. */
int writer_finish(Writer *w);

#endif
