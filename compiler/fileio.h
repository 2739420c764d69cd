/* fileio.h - reading a model and writing outputs so that nothing is lost:
 * an output is written to a temporary file beside its target and renamed
 * into place only when complete. */
#ifndef DERVISH_FILEIO_H
#define DERVISH_FILEIO_H

#include <stddef.h>

/* Read a whole file into a malloc'd, NUL-terminated buffer.  On failure
 * prints "dervish: cannot read PATH: reason" and returns NULL. */
char *fileio_read(const char *path, size_t *len);

/* One file to write: its path and its complete contents. */
typedef struct OutputFile {
    const char *path;
    const char *data;
    size_t len;
} OutputFile;

/* Write every output so that nothing is lost: each regular file is first
 * written whole to a temporary file beside it; only when all of them are
 * complete (and any special file such as /dev/stdout, which is written in
 * place, has been written) are the temporaries renamed over their targets.
 * On a failure no target is replaced and no temporary is left behind.
 * Returns 0, or -1 after printing why. */
int fileio_write_all(const OutputFile *files, int n);

/* True when a and b name the same file (existing or not). */
int fileio_same_file(const char *a, const char *b);

#endif
