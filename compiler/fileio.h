/* fileio.h - reading a model and writing outputs so that nothing is lost:
 * an output is written to a temporary file beside its target and renamed
 * into place only when complete (or dropped when the target already holds
 * its bytes).  Also the make rule that a dependency file holds. */
#ifndef DERVISH_FILEIO_H
#define DERVISH_FILEIO_H

#include "buf.h"
#include "writer.h"

#include <stddef.h>

/* Read a whole file into a malloc'd, NUL-terminated buffer.  On failure
 * prints "dervish: cannot read PATH: reason" and returns NULL. */
char *fileio_read(const char *path, size_t *len);

/* An output written while it is produced.  Set path and keep_same, call
 * fileio_open_outputs, write the contents into text, then call
 * fileio_commit_outputs.  A regular file's text streams into a temporary
 * file beside it as it grows; a special file's (a device, a pipe, say
 * /dev/stdout) is held whole and written in place at the commit. */
typedef struct StreamedOutput {
    const char *path;   /* as given; messages name it */
    int keep_same;      /* leave a target that already holds exactly these
                           bytes untouched, mtime and all (special files
                           are written all the same) */
    Buf text;           /* the contents, written between open and commit */
    char *target;       /* where the bytes go: through a symbolic link */
    char *temp;         /* the temporary, or NULL for a special file */
    int fd;             /* the temporary, open */
    Writer *writer;     /* writes the temporary's text, once it has some */
} StreamedOutput;

/* Check the targets and create the temporaries, in order.  Returns 0, or
 * -1 after printing why, with no temporary left. */
int fileio_open_outputs(StreamedOutput *files, int n);

/* Only when every temporary is complete (and any special file written)
 * are they renamed over their targets, in order; a temporary equal to a
 * target kept by keep_same is removed instead.  On a failure, now or
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

/* Write complete contents with the same guarantee (open, copy, commit),
 * replacing every target.  Returns 0, or -1 after printing why. */
int fileio_write_all(const OutputFile *files, int n);

/* True when a and b name the same file (existing or not). */
int fileio_same_file(const char *a, const char *b);

/* What in PATH a make rule cannot express, whatever the escaping (a line
 * break, a tab, ';', '=', '|' or a backslash at its end, as "a tab" or
 * "';'"), or NULL when a rule can name it. */
const char *fileio_rule_refuses(const char *path);

/* Append a make rule to out: "TARGETS: INPUTS", then an empty rule for
 * each input after the first (the model named on the command line), so
 * that make carries on when one of them is deleted.  Spaces, '#', ':' and
 * '$' (and '%' in a target) are escaped as make reads them; each
 * path must have passed fileio_rule_refuses. */
void fileio_make_rule(Buf *out, const char *const *targets, int ntargets,
                      const char *const *inputs, int ninputs);

#endif
