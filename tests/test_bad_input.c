/* test_bad_input.c - runs every model in tests/bad through `dervish build`
 * and checks the exit status, the exact diagnostics, which files a build
 * leaves behind, and that tests/bad/INDEX maps every message dervish can
 * print to a case that makes it print.
 *
 * Each tests/bad/NAME.dvs opens with comment lines that state what the
 * compiler must do with it.  Only the leading run of lines starting with
 * '#' is read; these are recognised there:
 *
 *   # expect-status: N      exit status of `dervish build` (required):
 *                           1 for models with errors, 0 for models with
 *                           warnings only
 *   # expect: L:C: KIND: MESSAGE
 *                           one or more; the k-th is the k-th message line
 *                           dervish prints, without the "NAME.dvs:" prefix
 *                           (so the first is the first line of stderr).
 *                           Messages after the listed ones are not compared.
 *   # expect-errors: N      how many "error:" messages are printed in all
 *                           (required; 0 with status 0)
 *   # expect-summary: TEXT  optional: the closing line with status 1 reads
 *                           "NAME.dvs: TEXT"; by default "N error(s);
 *                           nothing written" with N from expect-errors.
 *   # expect-caret: ^~~     optional: the marker under the first message's
 *                           source line, without the indentation before it.
 *
 * With status 1 nothing may be written and existing outputs keep their
 * bytes.  With status 0 (warnings only) both outputs are written and
 * replace older ones; the same model built with --fail-on-warning must
 * then print the same messages, close with "NAME.dvs: N warning(s),
 * treated as errors (--fail-on-warning); nothing written", exit 1 and
 * write nothing.  No run may leave a temporary file.  dervish shows at
 * most 20 errors: when it finds a 21st, it must say "NAME.dvs: too many
 * errors (limit is 20); stopping" right after the 20th, and such a case
 * gives "expect-summary: more than 20 errors; nothing written".
 *
 * A model may use the files in tests/bad/used (each run gets a copy of
 * that directory beside the model, as used/), as in `use "used/x.dvs"`.
 * An expect line for a message about one of them names it first:
 * "# expect: used/x.dvs:L:C: KIND: MESSAGE"; its line numbers are the
 * file's own.
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

#include <ctype.h>
#include <dirent.h>

#define BAD_DIR "tests/bad"
#define INDEX_PATH BAD_DIR "/INDEX"
#define USED "used/"        /* the files models may use, in BAD_DIR */
#define MIN_CASES 80
#define MAX_EXPECT 8
#define ERROR_LIMIT 20      /* dervish shows at most this many errors */

/* Bytes a build must leave in place when it fails. */
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
    const char *summary;    /* NULL: the default closing line */
    const char *caret;      /* NULL when not given */
} Expect;

/* How dervish's stderr must end after the message lines. */
typedef enum Closing {
    CLOSE_NOTHING,          /* a successful build: messages only */
    CLOSE_ERRORS,           /* "N errors; nothing written" or the summary */
    CLOSE_WARNINGS          /* --fail-on-warning refused the warnings */
} Closing;

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
                      "outputs; found '%s'", file,
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
    Expect x = {-1, -1, {NULL}, 0, NULL, NULL};
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
        } else if ((v = after(line, "# expect-summary: ")) != NULL) {
            x.summary = v;
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
    ck_assert_msg((x.status == 0 || x.status == 1) && x.errors >= 0 &&
                      x.nmsg > 0,
                  "%s: the header needs expect-status (0 or 1), expect-errors "
                  "and at least one expect line", file);
    ck_assert_msg(x.status == 1 || (x.errors == 0 && !x.summary),
                  "%s: a model that builds has no errors and no summary",
                  file);
    return x;
}

/* "N errors" with the plural as dervish writes it (malloc'd). */
static char *count_of(int n, const char *what)
{
    return tu_format("%d %s%s", n, what, n == 1 ? "" : "s");
}

/* The closing line CLOSING asks for, given the counts printed (malloc'd). */
static char *closing_line(Closing closing, const Expect *x, int nerr,
                          int nwarn, const char *file)
{
    char *count = count_of(closing == CLOSE_WARNINGS ? nwarn : nerr,
                           closing == CLOSE_WARNINGS ? "warning" : "error");
    char *line;
    if (closing == CLOSE_WARNINGS)
        line = tu_format("%s: %s, treated as errors (--fail-on-warning); "
                         "nothing written", file, count);
    else if (x->summary)
        line = tu_format("%s: %s", file, x->summary);
    else
        line = tu_format("%s: %s; nothing written", file, count);
    free(count);
    return line;
}

/* Whether the case has more errors than dervish shows, as its summary
 * "more than 20 errors; ..." says. */
static int past_limit(const Expect *x)
{
    char *more = tu_format("more than %d errors", ERROR_LIMIT);
    int past = x->summary && strncmp(x->summary, more, strlen(more)) == 0;
    free(more);
    return past;
}

/* ---------------------------------------------------------- diagnostics */

/* The file a message line "FILE:L:C: ..." is about, when it is the
 * case's model FILE or a file in used/, or NULL (malloc'd). */
static char *message_file(const char *line, const char *file)
{
    size_t n = strcspn(line, ":");
    if ((n == strlen(file) && strncmp(line, file, n) == 0) ||
        (after(line, USED) && line[n] == ':'))
        return tu_format("%.*s", (int)n, line);
    return NULL;
}

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

/* Check dervish's stderr ERR against the expectation X for model SRC:
 * the messages, then the line CLOSING asks for and nothing after it. */
static void check_diagnostics(char *err, const Expect *x, const char *src,
                              size_t len, const char *file, Closing closing)
{
    enum { MAX_LINES = 512 };
    char *lines[MAX_LINES];
    int n = 0;
    for (char *p = err; *p; ) {
        ck_assert_msg(n < MAX_LINES, "%s: too much output", file);
        char *nl = strchr(p, '\n');
        ck_assert_msg(nl != NULL, "%s: the last line '%s' has no newline",
                      file, p);
        lines[n++] = p;
        *nl = '\0';
        p = nl + 1;
    }
    ck_assert_msg(n > 0, "%s: dervish printed nothing", file);
    char *stopping = tu_format("%s: too many errors (limit is %d); stopping",
                               file, ERROR_LIMIT);
    int nmsg = 0, nerr = 0, nwarn = 0, stopped = 0, i = 0;
    for (; i < n; i++) {
        int l, c;
        const char *kind;
        char *about = message_file(lines[i], file);
        if (!about || !message_parts(lines[i], about, &l, &c, &kind)) {
            free(about);
            break;
        }
        if (nmsg < x->nmsg) {
            char *want = after(x->msg[nmsg], USED)
                             ? tu_format("%s", x->msg[nmsg])
                             : tu_format("%s:%s", file, x->msg[nmsg]);
            ck_assert_msg(strcmp(lines[i], want) == 0,
                          "%s: message %d: expected\n%s\nfound\n%s", file,
                          nmsg + 1, want, lines[i]);
            free(want);
        }
        /* a message about a used file shows that file's line */
        size_t used_len = 0;
        char *used_path = tu_format("%s/%s", BAD_DIR, about);
        char *used_src = strcmp(about, file) != 0
                             ? read_bytes(used_path, &used_len) : NULL;
        check_excerpt(used_src ? used_src : src, used_src ? used_len : len,
                      l, c, i + 1 < n ? lines[i + 1] : NULL,
                      i + 2 < n ? lines[i + 2] : NULL,
                      nmsg == 0 ? x->caret : NULL, about);
        free(used_src);
        free(used_path);
        free(about);
        nerr += strcmp(kind, "error: ") == 0;
        nwarn += strcmp(kind, "warning: ") == 0;
        nmsg++;
        i += 2;
        if (nerr == ERROR_LIMIT && !stopped && i + 1 < n &&
            strcmp(lines[i + 1], stopping) == 0) {
            stopped = 1;
            i++;
        }
    }
    ck_assert_msg(stopped == past_limit(x), "%s: %s '%s' after error %d",
                  file, stopped ? "did not expect" : "expected", stopping,
                  ERROR_LIMIT);
    ck_assert_msg(nmsg >= x->nmsg, "%s: expected at least %d messages, found "
                  "%d; the first unexpected line is '%s'", file, x->nmsg,
                  nmsg, i < n ? lines[i] : "(end)");
    ck_assert_msg(nerr == x->errors, "%s: expected %d error%s, found %d",
                  file, x->errors, x->errors == 1 ? "" : "s", nerr);
    if (closing == CLOSE_NOTHING) {
        ck_assert_msg(i == n, "%s: expected nothing after the messages, "
                      "found '%s'", file, i < n ? lines[i] : "");
    } else {
        char *close = closing_line(closing, x, nerr, nwarn, file);
        ck_assert_msg(i == n - 1 && strcmp(lines[i], close) == 0,
                      "%s: expected the closing line '%s', found '%s'", file,
                      close, i < n ? lines[i] : "(end)");
        free(close);
    }
    free(stopping);
}

/* ----------------------------------------------------------------- runs */

/* Run `dervish build -o out.c OPTIONS FILE` in DIR; stderr goes to *err. */
static int build_in(const char *dir, const char *file, const char *options,
                    char **err)
{
    char *out = NULL;
    char *cmd = tu_format("cd '%s' && timeout 20 '%s' build -o out.c %s '%s'",
                          dir, tu_abs_dervish(), options, file);
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

/* Whether DIR/NAME holds exactly TEXT. */
static int holds(const char *dir, const char *name, const char *text)
{
    char *got = tu_read_in(dir, name);
    int same = got && strcmp(got, text) == 0;
    free(got);
    return same;
}

/* A copy of BAD_DIR/used in DIR, for the models that use its files. */
static void copy_used(const char *dir)
{
    int n;
    char **names = list_dir(BAD_DIR "/" USED, NULL, &n);
    ck_assert_msg(names != NULL, "%s/%s is missing", BAD_DIR, USED);
    char *to = tu_format("%s/%s", dir, USED);
    ck_assert_int_eq(mkdir(to, 0700), 0);
    for (int i = 0; i < n; i++) {
        size_t len;
        char *from = tu_format("%s/%s%s", BAD_DIR, USED, names[i]);
        char *text = read_bytes(from, &len);
        char *copy = tu_format("%s%s", to, names[i]);
        write_bytes(copy, text, len);
        free(copy);
        free(text);
        free(from);
        free(names[i]);
    }
    free(names);
    free(to);
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
    int builds = x.status == 0;
    Closing closing = builds ? CLOSE_NOTHING : CLOSE_ERRORS;

    ck_assert_msg(work_root[0] != '\0', "no temporary directory");
    char *dir = tu_format("%s/%d", work_root, _i);
    ck_assert_int_eq(mkdir(dir, 0700), 0);
    char *copy = tu_format("%s/%s", dir, file);
    write_bytes(copy, src, len);
    copy_used(dir);
    const char *only_model[] = {file, "used"};
    const char *with_outputs[] = {file, "out.c", "out.h", "used"};
    qsort(only_model, 2, sizeof only_model[0], by_name);
    qsort(with_outputs, 4, sizeof with_outputs[0], by_name);

    /* First run: outputs appear only when the model builds. */
    char *err = NULL;
    int rc = build_in(dir, file, "", &err);
    ck_assert_msg(rc == x.status, "%s: expected exit status %d, found %d",
                  file, x.status, rc);
    char *first = tu_format("%s", err);
    check_diagnostics(err, &x, src, len, file, closing);
    if (builds) {
        assert_dir_holds(dir, with_outputs, 4, file);
        char *c_text = tu_read_in(dir, "out.c");
        ck_assert_msg(c_text && strstr(c_text, "#include \"out.h\""),
                      "%s: out.c is not the emitted source", file);
        free(c_text);
    } else {
        assert_dir_holds(dir, only_model, 2, file);
    }

    /* Second run over older outputs: replaced when the model builds, kept
     * byte for byte when it does not; no temporaries stay either way. */
    tu_write_in(dir, "out.c", sentinel_c);
    tu_write_in(dir, "out.h", sentinel_h);
    char *err2 = NULL;
    ck_assert_int_eq(build_in(dir, file, "", &err2), rc);
    ck_assert_msg(strcmp(err2, first) == 0,
                  "%s: the second run printed different diagnostics", file);
    ck_assert_msg(holds(dir, "out.c", sentinel_c) == !builds,
                  "%s: out.c was %s", file,
                  builds ? "not replaced" : "changed by a failed build");
    ck_assert_msg(holds(dir, "out.h", sentinel_h) == !builds,
                  "%s: out.h was %s", file,
                  builds ? "not replaced" : "changed by a failed build");
    assert_dir_holds(dir, with_outputs, 4, file);

    /* Warnings refused by --fail-on-warning: the same messages, status 1,
     * and nothing written. */
    char *err3 = NULL;
    if (builds) {
        tu_write_in(dir, "out.c", sentinel_c);
        tu_write_in(dir, "out.h", sentinel_h);
        ck_assert_int_eq(build_in(dir, file, "--fail-on-warning", &err3), 1);
        ck_assert_msg(strncmp(err3, first, strlen(first)) == 0,
                      "%s: --fail-on-warning changed the messages", file);
        check_diagnostics(err3, &x, src, len, file, CLOSE_WARNINGS);
        ck_assert_msg(holds(dir, "out.c", sentinel_c) &&
                          holds(dir, "out.h", sentinel_h),
                      "%s: --fail-on-warning wrote an output", file);
        assert_dir_holds(dir, with_outputs, 4, file);
    }

    free(err);
    free(err2);
    free(err3);
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

/* ---------------------------------------------------------------- INDEX */

/* Whether TEXT matches the message template T, in which each printf
 * conversion (%s, %d, %ld, %c, %02X, ...) stands for any run of text. */
static int matches(const char *t, const char *text)
{
    for (; *t; t++, text++) {
        if (t[0] == '%' && t[1] != '%') {
            t += 1 + strspn(t + 1, "-0123456789.*l");
            for (const char *rest = text;; rest++) {
                if (matches(t + 1, rest))
                    return 1;
                if (!*rest)
                    return 0;
            }
        }
        if (t[0] == '%')
            t++;
        if (*t != *text)
            return 0;
    }
    return *text == '\0';
}

/* The lines a case asserts dervish prints (without "L:C: " before a
 * message), for matching against INDEX rows; *n gets the count. */
static char **asserted_lines(const char *file, int *n)
{
    char *path = tu_format("%s/%s", BAD_DIR, file);
    size_t len;
    char *text = read_bytes(path, &len);
    Expect x = read_expect(text, file);
    char **lines = malloc((MAX_EXPECT + 2) * sizeof *lines);
    *n = 0;
    int nwarn = 0;
    for (int k = 0; k < x.nmsg; k++) {
        const char *m = x.msg[k];
        if (after(m, USED))
            m = strchr(m, ':');     /* the file's name */
        m += strspn(m, "0123456789:");
        lines[(*n)++] = tu_format("%s", m + strspn(m, " "));
        nwarn += after(lines[*n - 1], "warning: ") != NULL;
    }
    lines[(*n)++] = closing_line(x.status ? CLOSE_ERRORS : CLOSE_WARNINGS, &x,
                                 x.errors, nwarn, file);
    if (past_limit(&x))
        lines[(*n)++] = tu_format("%s: too many errors (limit is %d); "
                                  "stopping", file, ERROR_LIMIT);
    free(text);
    free(path);
    return lines;
}

/* Every row of INDEX, "MESSAGE => WHERE...", names cases that exist and
 * print the message (models here) or tests that exist (tests/FILE.c:NAME,
 * or "none (why)"); every model here is named by some row. */
START_TEST(index_maps_every_message)
{
    size_t len;
    char *text = read_bytes(INDEX_PATH, &len);
    char *listed = calloc((size_t)ncases + 1, 1);
    int rows = 0;
    for (char *line = strtok(text, "\n"); line; line = strtok(NULL, "\n")) {
        if (line[0] == '#')
            continue;
        char *arrow = strstr(line, " => ");
        ck_assert_msg(arrow != NULL, "INDEX: no ' => ' in '%s'", line);
        *arrow = '\0';
        const char *msg = line;
        char *where = arrow + 4, *save = NULL;
        rows++;
        if (after(where, "none (")) {
            ck_assert_msg(where[strlen(where) - 1] == ')',
                          "INDEX: '%s': say why in parentheses", msg);
            continue;
        }
        for (char *w = strtok_r(where, " ", &save); w;
             w = strtok_r(NULL, " ", &save)) {
            char *colon = strchr(w, ':');
            if (colon) {
                *colon = '\0';
                char *src = tu_read(w);
                char *test = tu_format("START_TEST(%s)", colon + 1);
                ck_assert_msg(src && strstr(src, test),
                              "INDEX: '%s': no %s in %s", msg, test, w);
                free(src);
                free(test);
                continue;
            }
            char **found = bsearch(&w, case_names, (size_t)ncases,
                                   sizeof *case_names, by_name);
            ck_assert_msg(found != NULL, "INDEX: '%s': no case %s", msg, w);
            listed[found - case_names] = 1;
            int n, hit = 0;
            char **lines = asserted_lines(w, &n);
            for (int k = 0; k < n; k++) {
                hit |= matches(msg, lines[k]);
                free(lines[k]);
            }
            free(lines);
            ck_assert_msg(hit, "INDEX: %s asserts no line like '%s'", w, msg);
        }
    }
    ck_assert_int_ge(rows, 100);
    for (int i = 0; i < ncases; i++)
        ck_assert_msg(listed[i], "INDEX names no message for %s",
                      case_names[i]);
    free(listed);
    free(text);
}
END_TEST

/* The C string literal run (adjacent literals joined) at *p, unescaped,
 * with a trailing newline dropped (malloc'd); *p moves past it. */
static char *read_literals(const char **p)
{
    size_t cap = 64, n = 0;
    char *s = malloc(cap);
    const char *q = *p;
    while (*q == '"') {
        for (q++; *q && *q != '"'; q++) {
            if (n + 3 >= cap)
                s = realloc(s, cap *= 2);
            if (*q == '\\' && q[1]) {
                q++;
                if (!strchr("n\\\"'", *q))
                    s[n++] = '\\';        /* keep other escapes whole */
                s[n++] = *q == 'n' ? '\n' : *q;
            } else {
                s[n++] = *q;
            }
        }
        if (*q)
            q++;
        const char *next = q + strspn(q, " \t\n");
        if (*next != '"')
            break;
        q = next;
    }
    if (n > 0 && s[n - 1] == '\n')
        n--;
    s[n] = '\0';
    *p = q;
    return s;
}

/* Append to *list the format of every message the source TEXT prints: the
 * first string argument of diag_error, diag_warning, diag_note, lex_error
 * and usage_error (the next one when that is "%s"), and of fprintf and
 * fputs when it begins "dervish: " or "%s: ". */
static void message_formats(const char *text, char ***list, int *n)
{
    static const char *const calls[] = {
        "diag_error(", "diag_warning(", "diag_note(", "lex_error(",
        "usage_error(", "fprintf(", "fputs(",
    };
    for (size_t k = 0; k < sizeof calls / sizeof calls[0]; k++) {
        for (const char *at = strstr(text, calls[k]); at;
             at = strstr(at + 1, calls[k])) {
            if (at > text && (isalnum((unsigned char)at[-1]) ||
                              at[-1] == '_'))
                continue;
            const char *args = at + strlen(calls[k]);
            const char *quote = strchr(args, '"');
            size_t before = quote ? (size_t)(quote - args) : 0;
            /* definitions and prototypes reach '{' or ';' first */
            if (!quote || memchr(args, '{', before) ||
                memchr(args, ';', before))
                continue;
            const char *p = quote;
            char *fmt = read_literals(&p);
            if (strcmp(fmt, "%s") == 0) {
                free(fmt);
                p += strspn(p, " \t\n,");
                if (*p != '"')
                    continue;       /* a message made elsewhere */
                fmt = read_literals(&p);
            }
            int is_print = k >= 5;
            if (is_print && ((!after(fmt, "dervish: ") && !after(fmt, "%s: "))
                             || strcmp(fmt, "dervish: ") == 0)) {
                free(fmt);
                continue;
            }
            *list = realloc(*list, (size_t)(*n + 1) * sizeof **list);
            (*list)[(*n)++] = fmt;
        }
    }
}

/* Every message format in the compiler's sources appears in a row of
 * INDEX, so a new message cannot go without a case. */
START_TEST(index_lists_every_source_message)
{
    size_t len;
    char *index = read_bytes(INDEX_PATH, &len);
    char **formats = NULL;
    int nformats = 0, nfiles;
    char **files = list_dir("compiler", ".c", &nfiles);
    ck_assert_msg(files && nfiles > 0, "compiler/*.c not found (run from "
                  "the project root)");
    for (int i = 0; i <= nfiles; i++) {
        char *path = i < nfiles ? tu_format("compiler/%s", files[i])
                                : tu_format("grammar/lexer.re");
        char *text = read_bytes(path, &len);
        message_formats(text, &formats, &nformats);
        free(text);
        free(path);
        if (i < nfiles)
            free(files[i]);
    }
    free(files);
    ck_assert_int_ge(nformats, 100);
    int missing = 0;
    for (int i = 0; i < nformats; i++) {
        int found = 0;
        for (char *row = index; *row && !found; ) {
            char *nl = strchr(row, '\n');
            size_t n = nl ? (size_t)(nl - row) : strlen(row);
            char *arrow = strstr(row, " => ");
            if (row[0] != '#' && arrow && (size_t)(arrow - row) < n) {
                char *msg = tu_format("%.*s", (int)(arrow - row), row);
                found = strstr(msg, formats[i]) != NULL;
                free(msg);
            }
            row += n + (nl != NULL);
        }
        if (!found) {
            fprintf(stderr, "INDEX has no row for the message '%s'\n",
                    formats[i]);
            missing++;
        }
        free(formats[i]);
    }
    free(formats);
    free(index);
    ck_assert_msg(missing == 0, "%d messages of the sources are missing "
                  "from %s (listed above)", missing, INDEX_PATH);
}
END_TEST

START_TEST(template_matching)
{
    /* the matcher the INDEX check relies on */
    ck_assert(matches("error: '%s' takes %d argument%s", "error: 'exp' "
                      "takes 1 argument"));
    ck_assert(matches("unexpected control byte 0x%02X",
                      "unexpected control byte 0x1B"));
    ck_assert(matches("100%% of %s", "100% of it"));
    ck_assert(!matches("error: '%s' takes %d argument%s",
                       "error: 'exp' takes one"));
    ck_assert(!matches("%s: %d errors", "m.dvs: 2 errors; nothing written"));
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
    TCase *tc = tu_case(s, "corpus", 60);
    TU_ADD_TESTS(tc, corpus_is_large_enough, template_matching,
                 index_maps_every_message, index_lists_every_source_message);
    tcase_add_loop_test(tc, bad_model, 0, ncases);
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
