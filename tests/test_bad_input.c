/* test_bad_input.c - runs every malformed model in tests/bad through
 * `dervish build` and checks the exit status, the exact diagnostics, and
 * that a failed build neither writes nor touches any output file.
 *
 * Each tests/bad/NAME.dvs opens with comment lines that state what the
 * compiler must do with it.  Only the leading run of lines starting with
 * '#' is read; these are recognised there:
 *
 *   # expect-status: N      exit status of `dervish build` (required)
 *   # expect: L:C: KIND: MESSAGE
 *                           one or more; the k-th is the k-th message line
 *                           dervish prints, without the "NAME.dvs:" prefix
 *                           (so the first is the first line of stderr).
 *                           Messages after the listed ones are not compared.
 *   # expect-errors: N      how many "error:" messages are printed in all
 *                           (required); with status 1 the closing line
 *                           must read "NAME.dvs: N error(s); nothing written".
 *   # expect-caret: ^~~     optional: the marker under the first message's
 *                           source line, without the indentation before it.
 *
 * Other comment lines are free text; "# fixed:" lines record how dervish
 * once fell short of the expectation, so the case guards against a
 * regression.  Line numbers count the header lines, as dervish does.
 *
 * For every message line the test also checks the form
 * "NAME.dvs:L:C: error|warning|note: ...", followed by the source line L
 * (as dervish shows it: control bytes other than tab become spaces) and a
 * caret line with '^' under column C and only '~' after it. */
#include "testutil.h"

#include <dirent.h>

#define BAD_DIR "tests/bad"
#define MIN_CASES 40
#define MAX_EXPECT 8

/* Bytes a failed build must leave in place. */
static const char sentinel_c[] = "/* out.c from an earlier build */\n";
static const char sentinel_h[] = "/* out.h from an earlier build */\n";

static char **case_names;   /* sorted file names in BAD_DIR */
static int ncases;
/* Made by main, which removes it after the run: a failed check ends its
 * test at once, so the tests cannot be trusted to clean up themselves. */
static char work_root[4096];

typedef struct Expect {
    int status;             /* -1 when missing */
    int errors;             /* -1 when missing */
    const char *msg[MAX_EXPECT];
    int nmsg;
    const char *caret;      /* NULL when not given */
} Expect;

/* ---------------------------------------------------------------- files */

/* The whole file (NUL-terminated, may hold NUL bytes); *len gets its size. */
static char *read_bytes(const char *path, size_t *len)
{
    FILE *f = fopen(path, "rb");
    ck_assert_msg(f != NULL, "cannot read %s", path);
    size_t cap = 1 << 16, n = 0, got;
    char *s = malloc(cap);
    while ((got = fread(s + n, 1, cap - n - 1, f)) > 0) {
        n += got;
        if (n + 1 >= cap)
            s = realloc(s, cap *= 2);
    }
    fclose(f);
    s[n] = '\0';
    *len = n;
    return s;
}

static void write_bytes(const char *path, const char *data, size_t len)
{
    FILE *f = fopen(path, "wb");
    ck_assert_msg(f != NULL, "cannot write %s", path);
    ck_assert_uint_eq(fwrite(data, 1, len, f), len);
    fclose(f);
}

static int by_name(const void *a, const void *b)
{
    return strcmp(*(char *const *)a, *(char *const *)b);
}

/* The sorted names in DIR (without . and ..), or NULL if it cannot be read;
 * *n gets the count.  SUFFIX, if not NULL, keeps only names ending in it. */
static char **list_dir(const char *dir, const char *suffix, int *n)
{
    DIR *d = opendir(dir);
    *n = 0;
    if (!d)
        return NULL;
    int cap = 16;
    char **names = malloc((size_t)cap * sizeof *names);
    struct dirent *e;
    while ((e = readdir(d)) != NULL) {
        size_t len = strlen(e->d_name), slen = suffix ? strlen(suffix) : 0;
        if (strcmp(e->d_name, ".") == 0 || strcmp(e->d_name, "..") == 0)
            continue;
        if (suffix && (len <= slen ||
                       strcmp(e->d_name + len - slen, suffix) != 0))
            continue;
        if (*n == cap)
            names = realloc(names, (size_t)(cap *= 2) * sizeof *names);
        names[(*n)++] = strdup(e->d_name);  /* no ck_assert: main calls this */
    }
    closedir(d);
    qsort(names, (size_t)*n, sizeof *names, by_name);
    return names;
}

/* The directory holds exactly the files named in WANT (sorted, n of them). */
static void assert_dir_holds(const char *dir, const char *const *want, int n,
                             const char *file)
{
    int got;
    char **names = list_dir(dir, NULL, &got);
    ck_assert_ptr_nonnull(names);
    for (int i = 0; i < got || i < n; i++)
        ck_assert_msg(i < got && i < n && strcmp(names[i], want[i]) == 0,
                      "%s: the directory should hold only the model and the "
                      "files made before the build; found '%s'", file,
                      i < got ? names[i] : "(nothing)");
    for (int i = 0; i < got; i++)
        free(names[i]);
    free(names);
}

/* ---------------------------------------------------------- expectation */

static const char *after(const char *line, const char *prefix)
{
    size_t n = strlen(prefix);
    return strncmp(line, prefix, n) == 0 ? line + n : NULL;
}

/* Read the header of TEXT (modified in place: its lines are cut out). */
static Expect read_expect(char *text, const char *file)
{
    Expect x = {-1, -1, {NULL}, 0, NULL};
    char *line = text;
    while (*line == '#') {
        char *nl = strchr(line, '\n');
        if (nl)
            *nl = '\0';
        const char *v;
        if ((v = after(line, "# expect-status: ")) != NULL) {
            x.status = atoi(v);
        } else if ((v = after(line, "# expect-errors: ")) != NULL) {
            x.errors = atoi(v);
        } else if ((v = after(line, "# expect-caret: ")) != NULL) {
            x.caret = v;
        } else if ((v = after(line, "# expect: ")) != NULL) {
            ck_assert_msg(x.nmsg < MAX_EXPECT, "%s: too many expect lines",
                          file);
            x.msg[x.nmsg++] = v;
        } else {
            ck_assert_msg(after(line, "# expect") == NULL,
                          "%s: unknown header line '%s'", file, line);
        }
        if (!nl)
            break;
        line = nl + 1;
    }
    ck_assert_msg(x.status >= 0 && x.errors >= 0 && x.nmsg > 0,
                  "%s: the header needs expect-status, expect-errors and at "
                  "least one expect line", file);
    return x;
}

/* ---------------------------------------------------------- diagnostics */

/* The parts of a message line "FILE:L:C: KIND: text"; 0 if it is not one. */
static int message_parts(const char *line, const char *file, int *l, int *c,
                         const char **kind)
{
    const char *p = after(line, file);
    int used = 0;
    if (!p || sscanf(p, ":%d:%d: %n", l, c, &used) != 2 || used == 0)
        return 0;
    p += used;
    static const char *const kinds[] = {"error: ", "warning: ", "note: "};
    for (size_t i = 0; i < sizeof kinds / sizeof kinds[0]; i++)
        if (after(p, kinds[i])) {
            *kind = kinds[i];
            return *l >= 1 && *c >= 1;
        }
    return 0;
}

/* Check the source and caret lines dervish prints under a message at L:C
 * of the model SRC (LEN bytes). */
static void check_excerpt(const char *src, size_t len, int l, int c,
                          const char *shown, const char *caret,
                          const char *want_marker, const char *file)
{
    size_t start = 0;
    for (int k = 1; k < l; k++) {
        const char *nl = memchr(src + start, '\n', len - start);
        ck_assert_msg(nl != NULL, "%s: line %d is past the end", file, l);
        start = (size_t)(nl - src) + 1;
    }
    size_t at = start + (size_t)c - 1, end = at;
    ck_assert_msg(at <= len, "%s:%d:%d: column past the end", file, l, c);
    for (size_t i = start; i < at; i++)
        ck_assert_msg(src[i] != '\n', "%s:%d:%d: column past the line", file,
                      l, c);
    while (end < len && src[end] != '\n' && src[end] != '\r')
        end++;
    /* dervish shows at most SHOW_WIDTH bytes of a line, cut around the
     * cause with "..." where text is left out */
    enum { SHOW_WIDTH = 120 };
    const char *lead = "    ", *caret_lead = "    ";
    int cut_right = 0;
    if (at - start > SHOW_WIDTH / 2) {
        start = at - SHOW_WIDTH / 2;
        lead = "    ...";
        caret_lead = "       ";
    }
    if (end - start > SHOW_WIDTH) {
        end = start + SHOW_WIDTH;
        cut_right = 1;
    }
    size_t pad = strlen(caret_lead);
    char *want = malloc(end - start + 16), *w = want;
    w += sprintf(w, "%s", lead);
    for (size_t i = start; i < end; i++) {
        unsigned char b = (unsigned char)src[i];
        *w++ = b == '\t' || b >= 0x20 ? (char)b : ' ';
    }
    w += sprintf(w, "%s", cut_right ? "..." : "");
    *w = '\0';
    ck_assert_msg(shown && strcmp(shown, want) == 0,
                  "%s:%d:%d: expected the source line\n%s\nfound\n%s", file, l,
                  c, want, shown ? shown : "(nothing)");
    ck_assert_msg(caret && strncmp(caret, caret_lead, pad) == 0 &&
                      strlen(caret) > pad + (at - start),
                  "%s:%d:%d: no caret line under the source line", file, l, c);
    for (size_t i = start; i < at; i++)
        ck_assert_msg(caret[pad + i - start] == (src[i] == '\t' ? '\t' : ' '),
                      "%s:%d:%d: caret line '%s' is not aligned", file, l, c,
                      caret);
    const char *marker = caret + pad + (at - start);
    ck_assert_msg(marker[0] == '^' && strspn(marker + 1, "~") ==
                                          strlen(marker + 1),
                  "%s:%d:%d: caret line '%s' has no '^' under column %d", file,
                  l, c, caret, c);
    if (want_marker)
        ck_assert_msg(strcmp(marker, want_marker) == 0,
                      "%s:%d:%d: expected the marker '%s', found '%s'", file,
                      l, c, want_marker, marker);
    free(want);
}

/* Check dervish's stderr ERR against the expectation X for model SRC. */
static void check_diagnostics(char *err, const Expect *x, const char *src,
                              size_t len, const char *file)
{
    enum { MAX_LINES = 512 };
    char *lines[MAX_LINES];
    int n = 0;
    for (char *p = err; *p; ) {
        ck_assert_msg(n < MAX_LINES, "%s: too much output", file);
        char *nl = strchr(p, '\n');
        lines[n++] = p;
        if (!nl)
            break;
        *nl = '\0';
        p = nl + 1;
    }
    ck_assert_msg(n > 0, "%s: dervish printed nothing", file);
    int nmsg = 0, nerr = 0, i = 0;
    for (; i < n; i++) {
        int l, c;
        const char *kind;
        if (!message_parts(lines[i], file, &l, &c, &kind))
            break;
        if (nmsg < x->nmsg) {
            char *want = tu_format("%s:%s", file, x->msg[nmsg]);
            ck_assert_msg(strcmp(lines[i], want) == 0,
                          "%s: message %d: expected\n%s\nfound\n%s", file,
                          nmsg + 1, want, lines[i]);
            free(want);
        }
        check_excerpt(src, len, l, c, i + 1 < n ? lines[i + 1] : NULL,
                      i + 2 < n ? lines[i + 2] : NULL,
                      nmsg == 0 ? x->caret : NULL, file);
        nerr += strcmp(kind, "error: ") == 0;
        nmsg++;
        i += 2;
    }
    ck_assert_msg(nmsg >= x->nmsg, "%s: expected at least %d messages, found "
                  "%d; the first unexpected line is '%s'", file, x->nmsg,
                  nmsg, i < n ? lines[i] : "(end)");
    ck_assert_msg(nerr == x->errors, "%s: expected %d error%s, found %d",
                  file, x->errors, x->errors == 1 ? "" : "s", nerr);
    if (x->status == 1) {
        char *close = tu_format("%s: %d error%s; nothing written", file, nerr,
                                nerr == 1 ? "" : "s");
        ck_assert_msg(i == n - 1 && strcmp(lines[i], close) == 0,
                      "%s: expected the closing line '%s', found '%s'", file,
                      close, i < n ? lines[i] : "(end)");
        free(close);
    }
}

/* ----------------------------------------------------------------- runs */

/* Run `dervish build -o out.c FILE` in DIR; stderr goes to *err. */
static int build_in(const char *dir, const char *file, char **err)
{
    char *out = NULL;
    char *cmd = tu_format("cd '%s' && timeout 20 '%s' build -o out.c '%s'",
                          dir, tu_abs_dervish(), file);
    int rc = tu_run(cmd, &out, err);
    ck_assert_ptr_nonnull(*err);
    ck_assert_msg(rc != 124, "%s: dervish did not finish in 20 s", file);
    ck_assert_msg(rc >= 0 && rc < 128, "%s: dervish crashed (status %d):\n%s",
                  file, rc, *err ? *err : "");
    ck_assert_msg(out && out[0] == '\0', "%s: dervish wrote to stdout: %s",
                  file, out ? out : "");
    free(out);
    free(cmd);
    return rc;
}

START_TEST(bad_model)
{
    const char *file = case_names[_i];
    char *path = tu_format("%s/%s", BAD_DIR, file);
    size_t len;
    char *src = read_bytes(path, &len);
    char *header = malloc(len + 1);
    memcpy(header, src, len + 1);
    Expect x = read_expect(header, file);

    ck_assert_msg(work_root[0] != '\0', "no temporary directory");
    char *dir = tu_format("%s/%d", work_root, _i);
    ck_assert_int_eq(mkdir(dir, 0700), 0);
    char *copy = tu_format("%s/%s", dir, file);
    write_bytes(copy, src, len);

    /* First run: nothing may be created. */
    char *err = NULL;
    int rc = build_in(dir, file, &err);
    ck_assert_msg(rc == x.status, "%s: expected exit status %d, found %d",
                  file, x.status, rc);
    char *first = tu_format("%s", err);
    check_diagnostics(err, &x, src, len, file);
    const char *only_model[] = {file};
    assert_dir_holds(dir, only_model, 1, file);

    /* Second run: existing outputs keep their bytes; no temporaries stay. */
    char *c_path = tu_format("%s/out.c", dir);
    char *h_path = tu_format("%s/out.h", dir);
    tu_write(c_path, sentinel_c);
    tu_write(h_path, sentinel_h);
    char *err2 = NULL;
    ck_assert_int_eq(build_in(dir, file, &err2), rc);
    ck_assert_msg(strcmp(err2, first) == 0,
                  "%s: the second run printed different diagnostics", file);
    char *c_text = tu_read(c_path), *h_text = tu_read(h_path);
    ck_assert_msg(c_text && strcmp(c_text, sentinel_c) == 0,
                  "%s: out.c was changed by a failed build", file);
    ck_assert_msg(h_text && strcmp(h_text, sentinel_h) == 0,
                  "%s: out.h was changed by a failed build", file);
    const char *with_outputs[] = {file, "out.c", "out.h"};
    qsort(with_outputs, 3, sizeof with_outputs[0], by_name);
    assert_dir_holds(dir, with_outputs, 3, file);

    free(c_text);
    free(h_text);
    free(c_path);
    free(h_path);
    free(err);
    free(err2);
    free(first);
    free(copy);
    free(dir);
    free(header);
    free(src);
    free(path);
}
END_TEST

START_TEST(corpus_is_large_enough)
{
    ck_assert_msg(ncases >= MIN_CASES,
                  "%s holds %d models; at least %d are wanted (run from the "
                  "project root)", BAD_DIR, ncases, MIN_CASES);
}
END_TEST

int main(void)
{
    case_names = list_dir(BAD_DIR, ".dvs", &ncases);
    const char *tmp = getenv("TMPDIR");
    snprintf(work_root, sizeof work_root, "%s/dervish-bad-XXXXXX",
             tmp && *tmp ? tmp : "/tmp");
    if (!mkdtemp(work_root))
        work_root[0] = '\0';
    Suite *s = suite_create("bad input");
    TCase *tc = tcase_create("corpus");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, corpus_is_large_enough);
    tcase_add_loop_test(tc, bad_model, 0, ncases);
    suite_add_tcase(s, tc);
    int rc = tu_main(s);
    if (work_root[0]) {
        char cmd[4200];
        snprintf(cmd, sizeof cmd, "rm -rf '%s'", work_root);
        if (system(cmd) != 0)
            fprintf(stderr, "cannot remove %s\n", work_root);
    }
    for (int i = 0; i < ncases; i++)
        free(case_names[i]);
    free(case_names);
    return rc;
}
