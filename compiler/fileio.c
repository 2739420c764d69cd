/* fileio.c - see fileio.h.  POSIX calls (open, rename, stat) give the
 * atomic replacement that C's stdio alone cannot. */
/* realpath() is an X/Open function */
#define _XOPEN_SOURCE 700

#include "fileio.h"

#include <errno.h>
#include <fcntl.h>
#include <signal.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

char *fileio_read(const char *path, size_t *len)
{
    struct stat st;
    FILE *f = fopen(path, "rb");
    if (!f) {
        fprintf(stderr, "dervish: cannot read %s: %s\n", path,
                strerror(errno));
        return NULL;
    }
    int known = fstat(fileno(f), &st) == 0;
    if (known && S_ISDIR(st.st_mode)) {
        fprintf(stderr, "dervish: cannot read %s: it is a directory\n", path);
        fclose(f);
        return NULL;
    }
    /* a regular file's size is known: room for it and the end-of-file
     * read in one block, not a doubling buffer copied as it grows */
    size_t cap = 65536, n = 0;
    if (known && S_ISREG(st.st_mode) && (uintmax_t)st.st_size < SIZE_MAX / 2)
        cap = (size_t)st.st_size + 2;
    char *buf = malloc(cap);
    for (;;) {
        if (!buf) {
            fputs("dervish: out of memory\n", stderr);
            exit(3);
        }
        n += fread(buf + n, 1, cap - n - 1, f);
        if (ferror(f)) {
            fprintf(stderr, "dervish: cannot read %s: %s\n", path,
                    strerror(errno));
            free(buf);
            fclose(f);
            return NULL;
        }
        if (feof(f))
            break;
        if (n + 1 >= cap) {
            cap *= 2;
            char *more = realloc(buf, cap);
            if (!more)
                free(buf);
            buf = more;
        }
    }
    fclose(f);
    buf[n] = '\0';
    *len = n;
    return buf;
}

/* Temporary files in existence, so an exit on the way (out of memory) or
 * a signal that ends dervish (Ctrl-C, a build tool's kill) can remove
 * them: the one piece of process-wide state, and only the command line's
 * file writing uses it. */
#define MAX_TEMPS 8
static char *volatile live_temps[MAX_TEMPS];

static void remove_live_temps(void)
{
    for (int i = 0; i < MAX_TEMPS; i++)
        if (live_temps[i])
            unlink(live_temps[i]);          /* async-signal-safe */
}

static void remove_temps_and_die(int sig)
{
    remove_live_temps();
    signal(sig, SIG_DFL);
    raise(sig);
}

static void track_temp(int slot, char *temp)
{
    static int handlers_set;
    if (!handlers_set) {
        static const int sigs[] = {SIGINT, SIGTERM, SIGHUP, SIGPIPE};
        for (size_t i = 0; i < sizeof sigs / sizeof sigs[0]; i++)
            signal(sigs[i], remove_temps_and_die);
        atexit(remove_live_temps);
        handlers_set = 1;
    }
    if (slot < MAX_TEMPS)
        live_temps[slot] = temp;
}

/* The Buf sink of a temporary: its text goes to a writer thread, started
 * with the first piece. */
static int write_temp(void *target, const char *data, size_t len)
{
    StreamedOutput *f = target;
    if (!f->writer)
        f->writer = writer_start(f->fd, f->target);
    return writer_put(f->writer, data, len);
}

/* Wait for a temporary's writer, if it has one; returns -1 if a write
 * failed (reported by the writer), else 0. */
static int finish_writer(StreamedOutput *f)
{
    int rc = f->writer ? writer_finish(f->writer) : 0;
    f->writer = NULL;
    return rc;
}

/* Create a temporary beside f->target, open in f->fd, tracked in SLOT for
 * removal on a signal; returns 0, or -1 after printing why. */
static int open_temp(int slot, StreamedOutput *f)
{
    const char *path = f->target;
    char *temp = malloc(strlen(path) + 32);
    if (!temp) {
        fputs("dervish: out of memory\n", stderr);
        exit(3);
    }
    /* same directory as the target, so rename() cannot cross devices */
    const char *slash = strrchr(path, '/');
    int dirlen = slash ? (int)(slash - path) + 1 : 0;
    sprintf(temp, "%.*s.%s.XXXXXX", dirlen, path, slash ? slash + 1 : path);
    track_temp(slot, temp);
    int fd = mkstemp(temp);
    if (fd < 0) {
        fprintf(stderr, "dervish: cannot write %s: %s\n", path,
                strerror(errno));
        track_temp(slot, NULL);
        free(temp);
        return -1;
    }
    /* mkstemp makes the file 0600; outputs get the usual 0666 & ~umask */
    mode_t mask = umask(0);
    umask(mask);
    fchmod(fd, 0666 & ~mask);
    f->temp = temp;
    f->fd = fd;
    f->text.sink = write_temp;
    f->text.target = f;
    return 0;
}

/* Whether path is the regular file our standard output is (`-o
 * /dev/stdout > log`, or `>> log`): that file is written through the open
 * descriptor, where the shell put its offset, so appending appends. */
static int is_stdout_file(const char *path)
{
    struct stat st, out;
    return stat(path, &st) == 0 && S_ISREG(st.st_mode) &&
           fstat(STDOUT_FILENO, &out) == 0 && out.st_dev == st.st_dev &&
           out.st_ino == st.st_ino;
}

/* Write into an existing special file (a device, a pipe, or the file of
 * our standard output) in place. */
static int write_special(const StreamedOutput *f)
{
    if (is_stdout_file(f->target)) {
        fflush(stdout);
        return writer_write_fd(STDOUT_FILENO, f->target, f->text.data,
                               f->text.len);
    }
    int fd = open(f->target, O_WRONLY | O_TRUNC);
    if (fd < 0) {
        fprintf(stderr, "dervish: cannot write %s: %s\n", f->target,
                strerror(errno));
        return -1;
    }
    int failed = writer_write_fd(fd, f->target, f->text.data, f->text.len);
    if (close(fd) != 0 && !failed) {
        fprintf(stderr, "dervish: cannot write %s: %s\n", f->target,
                strerror(errno));
        failed = 1;
    }
    return failed ? -1 : 0;
}

/* Where the bytes for path really go: through a symbolic link (so the link
 * stays a link, and /dev/stdout reaches the file or pipe behind it), else
 * path itself.  malloc'd. */
static char *resolve_target(const char *path)
{
    struct stat st;
    char *real = NULL;
    if (lstat(path, &st) == 0 && S_ISLNK(st.st_mode))
        real = realpath(path, NULL);
    if (!real)
        real = strdup(path);
    if (!real) {
        fputs("dervish: out of memory\n", stderr);
        exit(3);
    }
    return real;
}

/* Close a temporary still open; returns 0, or -1 after printing why. */
static int close_temp(StreamedOutput *f)
{
    if (f->fd < 0)
        return 0;
    if (finish_writer(f) != 0) {
        close(f->fd);
        f->fd = -1;
        return -1;
    }
    int rc = close(f->fd);
    f->fd = -1;
    if (rc != 0)
        fprintf(stderr, "dervish: cannot write %s: %s\n", f->target,
                strerror(errno));
    return rc != 0 ? -1 : 0;
}

/* Remove what is left of the outputs (temporaries not renamed) and free
 * them. */
static void discard(StreamedOutput *files, int n)
{
    for (int i = 0; i < n; i++) {
        StreamedOutput *f = &files[i];
        finish_writer(f);
        if (f->fd >= 0)
            close(f->fd);
        f->fd = -1;
        if (f->temp) {
            remove(f->temp);
            track_temp(i, NULL);
            free(f->temp);
            f->temp = NULL;
        }
        free(f->target);
        f->target = NULL;
        buf_free(&f->text);
    }
}

int fileio_open_outputs(StreamedOutput *files, int n)
{
    for (int i = 0; i < n; i++) {
        Buf empty = {0};
        files[i].text = empty;
        files[i].target = NULL;
        files[i].temp = NULL;
        files[i].fd = -1;
        files[i].writer = NULL;
    }
    for (int i = 0; i < n; i++) {
        StreamedOutput *f = &files[i];
        struct stat st;
        f->target = resolve_target(f->path);
        if (stat(f->target, &st) == 0 && S_ISDIR(st.st_mode)) {
            fprintf(stderr, "dervish: cannot write %s: it is a directory\n",
                    f->path);
        } else if (stat(f->target, &st) == 0 &&
                   (!S_ISREG(st.st_mode) || is_stdout_file(f->target))) {
            continue;           /* special: written in place at the commit */
        } else if (open_temp(i, f) == 0) {
            continue;
        }
        discard(files, n);
        return -1;
    }
    return 0;
}

/* PATH opened for reading when it is a regular file, with its size in
 * *size; else NULL. */
static FILE *open_regular(const char *path, off_t *size)
{
    /* O_NONBLOCK: a target that has become a FIFO must not block dervish */
    int fd = open(path, O_RDONLY | O_NONBLOCK);
    struct stat st;
    FILE *f = NULL;
    if (fd >= 0 && fstat(fd, &st) == 0 && S_ISREG(st.st_mode))
        f = fdopen(fd, "rb");
    if (f)
        *size = st.st_size;
    else if (fd >= 0)
        close(fd);
    return f;
}

/* Whether the files at a and b hold the same bytes; one that cannot be
 * read counts as different, so that a target is then replaced. */
static int same_bytes(const char *a, const char *b)
{
    off_t na = 0, nb = 0;
    FILE *fa = open_regular(a, &na), *fb = open_regular(b, &nb);
    int same = fa && fb && na == nb;
    char ca[16384], cb[16384];
    while (same) {
        size_t ga = fread(ca, 1, sizeof ca, fa);
        size_t gb = fread(cb, 1, sizeof cb, fb);
        same = ga == gb && memcmp(ca, cb, ga) == 0 && !ferror(fa) &&
               !ferror(fb);
        if (ga < sizeof ca)
            break;
    }
    if (fa)
        fclose(fa);
    if (fb)
        fclose(fb);
    return same;
}

int fileio_commit_outputs(StreamedOutput *files, int n)
{
    /* a failure while streaming has been reported already */
    int failed = 0;
    for (int i = 0; i < n; i++)
        failed |= files[i].text.failed;
    for (int i = 0; i < n && !failed; i++)
        if (files[i].temp &&
            (buf_flush(&files[i].text) != 0 || close_temp(&files[i]) != 0))
            failed = 1;
    for (int i = 0; i < n && !failed; i++)
        if (!files[i].temp && write_special(&files[i]) != 0)
            failed = 1;
    for (int i = 0; i < n && !failed; i++) {
        StreamedOutput *f = &files[i];
        if (!f->temp || (f->keep_same && same_bytes(f->temp, f->target)))
            continue;       /* an unneeded temporary goes in discard() */
        if (rename(f->temp, f->target) != 0) {
            fprintf(stderr, "dervish: cannot write %s: %s\n", f->path,
                    strerror(errno));
            failed = 1;
        } else {
            track_temp(i, NULL);
            free(f->temp);
            f->temp = NULL;
        }
    }
    discard(files, n);
    return failed ? -1 : 0;
}

int fileio_write_all(const OutputFile *files, int n)
{
    StreamedOutput *out = calloc((size_t)n + 1, sizeof *out);
    if (!out) {
        fputs("dervish: out of memory\n", stderr);
        exit(3);
    }
    for (int i = 0; i < n; i++)
        out[i].path = files[i].path;
    int failed = fileio_open_outputs(out, n) != 0;
    for (int i = 0; i < n && !failed; i++)
        buf_putn(&out[i].text, files[i].data, files[i].len);
    if (!failed)
        failed = fileio_commit_outputs(out, n) != 0;
    free(out);
    return failed ? -1 : 0;
}

/* The absolute, link-free form of path, also when it does not exist yet
 * (then its directory's); malloc'd, or NULL when even that is unknown. */
static char *canonical(const char *path)
{
    char *real = realpath(path, NULL);
    if (real)
        return real;
    const char *slash = strrchr(path, '/');
    char *dir = slash ? strndup(path, (size_t)(slash - path + 1)) : strdup(".");
    char *rdir = dir ? realpath(dir, NULL) : NULL;
    free(dir);
    if (!rdir)
        return NULL;
    const char *base = slash ? slash + 1 : path;
    char *full = malloc(strlen(rdir) + strlen(base) + 2);
    if (full)
        sprintf(full, "%s/%s", rdir, base);
    free(rdir);
    return full;
}

int fileio_same_file(const char *a, const char *b)
{
    struct stat sa, sb;
    if (stat(a, &sa) == 0 && stat(b, &sb) == 0)
        return sa.st_dev == sb.st_dev && sa.st_ino == sb.st_ino;
    char *ca = canonical(a), *cb = canonical(b);
    int same = ca && cb && strcmp(ca, cb) == 0;
    free(ca);
    free(cb);
    return same;
}

const char *fileio_rule_refuses(const char *path)
{
    if (strpbrk(path, "\n\r"))
        return "a line break";
    if (strchr(path, '\t'))
        return "a tab";
    if (strchr(path, ';'))
        return "';'";
    if (strchr(path, '='))
        return "'='";
    if (strchr(path, '|'))
        return "'|'";
    if (*path && path[strlen(path) - 1] == '\\')
        return "a backslash at its end";
    return NULL;
}

/* Append PATH as make reads a word: a space, '#' or ':' (and '%' in a
 * target) gets a backslash, and the backslashes just before it are
 * doubled; '$' is written "$$". */
static void put_make_word(Buf *out, const char *path, int is_target)
{
    size_t slashes = 0;         /* backslashes just written */
    for (const char *p = path; *p; p++) {
        if (strchr(" #:", *p) || (is_target && *p == '%'))
            for (size_t k = 0; k <= slashes; k++)
                buf_putn(out, "\\", 1);
        if (*p == '$')
            buf_putn(out, "$", 1);
        buf_putn(out, p, 1);
        slashes = *p == '\\' ? slashes + 1 : 0;
    }
}

void fileio_make_rule(Buf *out, const char *const *targets, int ntargets,
                      const char *const *inputs, int ninputs)
{
    for (int i = 0; i < ntargets; i++) {
        if (i > 0)
            buf_put(out, " ");
        put_make_word(out, targets[i], 1);
    }
    buf_put(out, ":");
    for (int i = 0; i < ninputs; i++) {
        buf_put(out, " ");
        put_make_word(out, inputs[i], 0);
    }
    buf_put(out, "\n");
    for (int i = 1; i < ninputs; i++) {
        put_make_word(out, inputs[i], 1);
        buf_put(out, ":\n");
    }
}
