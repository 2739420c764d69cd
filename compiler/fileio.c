/* fileio.c - see fileio.h.  POSIX calls (open, rename, stat) give the
 * atomic replacement that C's stdio alone cannot. */
#include "fileio.h"

#include <errno.h>
#include <fcntl.h>
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
    if (fstat(fileno(f), &st) == 0 && S_ISDIR(st.st_mode)) {
        fprintf(stderr, "dervish: cannot read %s: it is a directory\n", path);
        fclose(f);
        return NULL;
    }
    size_t cap = 65536, n = 0;
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

int fileio_prepare(PendingFile *f, const char *path, const char *data,
                   size_t len)
{
    f->path = path;
    f->temp = malloc(strlen(path) + 32);
    if (!f->temp) {
        fputs("dervish: out of memory\n", stderr);
        exit(3);
    }
    /* same directory as the target, so rename() cannot cross devices */
    const char *slash = strrchr(path, '/');
    int dirlen = slash ? (int)(slash - path) + 1 : 0;
    sprintf(f->temp, "%.*s.%s.XXXXXX", dirlen, path,
            slash ? slash + 1 : path);
    int fd = mkstemp(f->temp);
    if (fd < 0) {
        fprintf(stderr, "dervish: cannot write %s: %s\n", path,
                strerror(errno));
        free(f->temp);
        f->temp = NULL;
        return -1;
    }
    /* mkstemp makes the file 0600; outputs get the usual 0666 & ~umask */
    mode_t mask = umask(0);
    umask(mask);
    fchmod(fd, 0666 & ~mask);
    size_t done = 0;
    while (done < len) {
        ssize_t w = write(fd, data + done, len - done);
        if (w < 0 && errno == EINTR)
            continue;
        if (w <= 0) {
            fprintf(stderr, "dervish: cannot write %s: %s\n", path,
                    strerror(w < 0 ? errno : ENOSPC));
            close(fd);
            fileio_abandon(f);
            return -1;
        }
        done += (size_t)w;
    }
    if (close(fd) != 0) {
        fprintf(stderr, "dervish: cannot write %s: %s\n", path,
                strerror(errno));
        fileio_abandon(f);
        return -1;
    }
    return 0;
}

int fileio_commit(PendingFile *f)
{
    if (rename(f->temp, f->path) != 0) {
        fprintf(stderr, "dervish: cannot write %s: %s\n", f->path,
                strerror(errno));
        fileio_abandon(f);
        return -1;
    }
    free(f->temp);
    f->temp = NULL;
    return 0;
}

int fileio_check_target(const char *path)
{
    struct stat st;
    if (stat(path, &st) == 0 && S_ISDIR(st.st_mode)) {
        fprintf(stderr, "dervish: cannot write %s: it is a directory\n", path);
        return -1;
    }
    return 0;
}

void fileio_abandon(PendingFile *f)
{
    if (f->temp) {
        remove(f->temp);
        free(f->temp);
        f->temp = NULL;
    }
}

int fileio_same_file(const char *a, const char *b)
{
    struct stat sa, sb;
    if (stat(a, &sa) != 0 || stat(b, &sb) != 0)
        return 0;
    return sa.st_dev == sb.st_dev && sa.st_ino == sb.st_ino;
}
