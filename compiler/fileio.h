/* fileio.h - reading a model and writing outputs so that nothing is lost:
 * an output is written to a temporary file beside its target and renamed
 * into place only when complete. */
#ifndef DERVISH_FILEIO_H
#define DERVISH_FILEIO_H

#include "buf.h"

#include <stddef.h>

/* Read a whole file into a malloc'd, NUL-terminated buffer.  On failure
 * prints "dervish: cannot read PATH: reason" and returns NULL. */
char *fileio_read(const char *path, size_t *len);

/* An output written while it is produced.  Set path, call
 * fileio_open_outputs, write the contents into text, then call
 * fileio_commit_outputs.  A regular file's text streams into a temporary
 * file beside it as it grows; a special file's (a device, a pipe, say
 * /dev/stdout) is held whole and written in place at the commit. */
typedef struct StreamedOutput {
    const char *path;   /* as given; messages name it */
    Buf text;           /* the contents, written between open and commit */
    char *target;       /* where the bytes go: through a symbolic link */
    char *temp;         /* the temporary, or NULL for a special file */
    int fd;             /* the temporary, open */
} StreamedOutput;

/* Check the targets and create the temporaries, in order.  Returns 0, or
 * -1 after printing why, with no temporary left. */
int fileio_open_outputs(StreamedOutput *files, int n);

/* Only when every temporary is complete (and any special file written)
 * are they renamed over their targets, in order.  On a failure, now or
 * while streaming, no target is replaced and no temporary is left; the
 * temporaries are also removed if dervish exits or is ended by a signal
 * (SIGINT, SIGTERM, SIGHUP, SIGPIPE) first.  Frees what open made.
 * Returns 0, or -1 after printing why. */
int fileio_commit_outputs(StreamedOutput *files, int n);

/* One file to write whole: its path and its complete contents. */
typedef struct OutputFile {
    const char *path;
    const char *data;
    size_t len;
} OutputFile;

/* Write complete contents with the same guarantee (open, copy, commit).
 * Returns 0, or -1 after printing why. */
int fileio_write_all(const OutputFile *files, int n);

/* True when a and b name the same file (existing or not). */
int fileio_same_file(const char *a, const char *b);

#endif
