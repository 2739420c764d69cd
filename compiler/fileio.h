/* fileio.h - reading a model and writing outputs so that nothing is lost:
 * an output is written to a temporary file beside its target and renamed
 * into place only when complete. */
#ifndef DERVISH_FILEIO_H
#define DERVISH_FILEIO_H

#include <stddef.h>

/* Read a whole file into a malloc'd, NUL-terminated buffer.  On failure
 * prints "dervish: cannot read PATH: reason" and returns NULL. */
char *fileio_read(const char *path, size_t *len);

/* An output in preparation: written to a temporary file, then committed
 * (renamed over path) or abandoned (removed). */
typedef struct PendingFile {
    const char *path;
    char *temp;         /* malloc'd temporary path, NULL once settled */
} PendingFile;

/* Write data to a temporary file beside path.  Returns 0, or -1 after
 * printing why. */
int fileio_prepare(PendingFile *f, const char *path, const char *data,
                   size_t len);
int fileio_commit(PendingFile *f);      /* 0, or -1 after printing why */

/* 0 when a file may be renamed onto path (it is absent or not a
 * directory), else -1 after printing why; checked for every output before
 * any is replaced, so a failure replaces none. */
int fileio_check_target(const char *path);
void fileio_abandon(PendingFile *f);

/* True when a and b name the same existing file. */
int fileio_same_file(const char *a, const char *b);

#endif
