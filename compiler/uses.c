/* uses.c - 'use' statements: find the file beside the using file or
 * along the -I directories, know it by device and inode so each is read
 * once and cycles are caught, and resolve its statements in place. */
#include "resolve_internal.h"
#include "fileio.h"

#include <string.h>
#include <sys/stat.h>

/* Deepest nesting of used files. */
#define MAX_USE_DEPTH 100

/* PATH's identity, if it names an existing file. */
FileId rs_file_id(const char *path, Span used_at)
{
    FileId f;
    struct stat st;
    memset(&f, 0, sizeof f);
    if (stat(path, &st) == 0) {
        f.dev = st.st_dev;
        f.ino = st.st_ino;
        f.known = 1;
    }
    f.path = path;
    f.used_at = used_at;
    return f;
}

static int same_file(const FileId *a, const FileId *b)
{
    return a->known && b->known && a->dev == b->dev && a->ino == b->ino;
}

/* NAME in the directory the first N bytes of DIR name ("" is the current
 * directory). */
static const char *join_path(Resolver *r, const char *dir, size_t n,
                             const char *name)
{
    return arena_printf(r->arena, "%.*s%s%s", (int)n, dir,
                        n > 0 && dir[n - 1] != '/' ? "/" : "", name);
}

/* Where a file named NAME used by the file FROM may be, in the order they
 * are tried: beside FROM, then in each -I directory (an absolute NAME is
 * only itself).  *n gets the count. */
static const char **search_paths(Resolver *r, const char *from,
                                 const char *name, int *n)
{
    const SourceSet *set = r->diag->files;
    const char **list = arena_alloc(r->arena, (size_t)(set->ndirs + 1) *
                                                  sizeof *list);
    *n = 0;
    if (name[0] == '/') {
        list[(*n)++] = name;
        return list;
    }
    const char *slash = strrchr(from, '/');
    list[(*n)++] = join_path(r, from, slash ? (size_t)(slash - from) + 1 : 0,
                             name);
    for (int i = 0; i < set->ndirs; i++)
        list[(*n)++] = join_path(r, set->dirs[i], strlen(set->dirs[i]), name);
    return list;
}

/* use "FILE": find the file and read its statements here, unless it was
 * read already (each file is read once) or is being read (a cycle).
 * Returns 0 after reporting why it cannot be read. */
static int use_file(Resolver *r, const AstStmt *s)
{
    if (!r->diag->files)
        DV_UNREACHABLE();   /* resolve.h: the caller gives the file set */
    const FileId *from = &r->reading.items[r->reading.len - 1];
    if (!s->path[0]) {
        diag_error(r->diag, s->path_span,
                   "'use' needs a file name between the quotes");
        return 0;
    }
    int n, k = 0;
    const char **paths = search_paths(r, from->path, s->path, &n);
    struct stat st;
    while (k < n && stat(paths[k], &st) != 0)
        k++;
    if (k == n) {
        char *tried = arena_printf(r->arena, "%s", paths[0]);
        for (int i = 1; i < n; i++)
            tried = arena_printf(r->arena, "%s, %s", tried, paths[i]);
        diag_error(r->diag, s->path_span, "cannot find '%s' (tried %s)",
                   s->path, tried);
        return 0;
    }
    if (!S_ISREG(st.st_mode) && !S_ISDIR(st.st_mode)) {
        /* a device or a pipe may never end (a directory fails to read) */
        diag_error(r->diag, s->path_span,
                   "'%s' is not a regular file, so it cannot be used",
                   paths[k]);
        return 0;
    }
    FileId id = rs_file_id(paths[k], s->path_span);
    for (int i = 0; i < r->reading.len; i++)
        if (same_file(&r->reading.items[i], &id)) {
            char *chain = arena_printf(r->arena, "%s",
                                       r->reading.items[i].path);
            for (int j = i + 1; j < r->reading.len; j++)
                chain = arena_printf(r->arena, "%s uses %s", chain,
                                     r->reading.items[j].path);
            diag_error(r->diag, s->path_span,
                       "the files use each other in a cycle: %s uses %s",
                       chain, r->reading.items[i].path);
            return 0;
        }
    for (int i = 0; i < r->read.len; i++)
        if (same_file(&r->read.items[i], &id))
            return 1;
    if (r->reading.len > MAX_USE_DEPTH) {
        diag_error(r->diag, s->path_span,
                   "used files nest more than %d deep", MAX_USE_DEPTH);
        return 0;
    }
    size_t len;
    char *text = fileio_read(id.path, &len);
    if (!text) {
        diag_error(r->diag, s->path_span,
                   "cannot read '%s', the file used here", id.path);
        return 0;
    }
    SourceFile *f = source_set_add(r->diag->files, id.path, text, len);
    if (!f) {
        diag_error(r->diag, s->path_span,
                   "the model and the files it uses come to more than "
                   "4 GiB of text");
        return 0;
    }
    VEC_PUSH(r->arena, r->read, id);
    VEC_PUSH(r->arena, r->reading, id);
    rs_read_twice(r, &f->src, rs_visit_names, NULL, NULL);
    r->reading.len--;
    return 1;
}

/* A file that cannot be read may define names used later: their uses
 * stay quiet. */
void resolve_use_stmt(Resolver *r, const AstStmt *s)
{
    if (!use_file(r, s))
        r->lost_file = 1;
}

/* A statement other than const, def and use in a used file: refused, and
 * the names it defines stay quiet. */
void rs_refuse_in_used(Resolver *r, const AstStmt *s)
{
    static const char *const kinds[] = {
        [STMT_MODEL] = "'model'", [STMT_INPUT] = "'input'",
        [STMT_PARAM] = "'param'", [STMT_SIZE] = "'size'",
        [STMT_DEFINE] = "a definition", [STMT_OUTPUT] = "'output'",
    };
    const FileId *f = &r->reading.items[r->reading.len - 1];
    diag_error(r->diag, s->span,
               "a used file may hold only const, def and use statements, "
               "not %s", kinds[s->kind]);
    diag_note(r->diag, f->used_at, "'%s' is used here", f->path);
    if (s->kind == STMT_DEFINE)
        rs_insert_failed(r, s->name, s->name_span);
    for (int k = 0; k < s->ndecls; k++)
        rs_insert_failed(r, s->decls[k].name, s->decls[k].span);
    for (int k = 0; s->kind == STMT_SIZE && k < s->nnames; k++)
        rs_insert_failed(r, s->names[k]->name, s->names[k]->span);
}
