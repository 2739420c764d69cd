/* test_graph.c - `dervish graph`: the DOT it writes for small models (role
 * styles, operand edges, statement frames, the legend, the sweep order),
 * that Graphviz's dot draws every sample without a warning, quoting, and
 * the command's outputs and exit statuses. */
#include "graph.h"
#include "testutil.h"

#include <dirent.h>

/* Attributes of each role's node, as docs/cli.md describes them. */
#define PARAM_LOOK "fillcolor=\"#f4c95d\""
#define INPUT_LOOK "style=\"rounded,dashed\""
#define VALUE_LOOK "fillcolor=\"#d6e6f5\""
#define OUTPUT_LOOK "peripheries=2, fillcolor=\"#9fd8a8\""
#define REDUCE_LOOK "shape=invtrapezium"

/* A model with every role, a reduction, and operands whose order matters. */
static const char *const roles_model =
    "# m.dvs - weighted readings over a scale, less a bias\n"
    "input  x[3], scale\n"
    "param  w[3], bias\n"
    "t[i] = w[i] * x[i]\n"
    "u    = sum(i: t[i]) / scale\n"
    "y    = u - bias\n"
    "output y\n";

/* The DOT for model TEXT read as the file PATH (malloc'd), through the
 * library. */
static char *graph_of_file(const char *path, const char *text, int sweep)
{
    DvCompilation c;
    tu_compile(&c, path, text);
    Buf out = {0};
    GraphOptions o = {path, sweep};
    graph_write(c.ir, &o, &out);
    dv_free(&c);
    return out.data;
}

/* The DOT for model TEXT (malloc'd). */
static char *graph_of(const char *text, int sweep)
{
    return graph_of_file("m.dvs", text, sweep);
}

/* The line declaring the one node labelled exactly LABEL (as written in
 * the DOT text), malloc'd; fails unless there is exactly one. */
static char *node_line(const char *dot, const char *label)
{
    char *key = tu_format(" [label=\"%s\"", label);
    const char *at = strstr(dot, key);
    ck_assert_msg(at != NULL, "no node labelled %s in:\n%s", label, dot);
    ck_assert_msg(strstr(at + 1, key) == NULL, "two nodes labelled %s",
                  label);
    const char *start = at;
    while (start > dot && start[-1] != '\n')
        start--;
    free(key);
    return tu_format("%.*s", (int)strcspn(start, "\n"), start);
}

/* The id of the node labelled LABEL (malloc'd). */
static char *node_id(const char *dot, const char *label)
{
    char *line = node_line(dot, label);
    const char *id = line + strspn(line, " ");
    char *out = tu_format("%.*s", (int)strcspn(id, " "), id);
    free(line);
    return out;
}

/* True when DOT has the edge line "FROM -> TO" followed by REST
 * (";" for a plain edge, " [label=\"1st\"];" for a labelled one). */
static int has_edge(const char *dot, const char *from, const char *to,
                    const char *rest)
{
    char *line = tu_format("\n  %s -> %s%s\n", from, to, rest);
    int found = strstr(dot, line) != NULL;
    free(line);
    return found;
}

static void assert_edge(const char *dot, const char *from_label,
                        const char *to_label, const char *rest)
{
    char *from = node_id(dot, from_label), *to = node_id(dot, to_label);
    ck_assert_msg(has_edge(dot, from, to, rest), "no edge %s -> %s%s in:\n%s",
                  from_label, to_label, rest, dot);
    free(from);
    free(to);
}

/* ------------------------------------------- a DOT graph as plain data */

#define MAX_NODES 4096
#define MAX_EDGES 8192

typedef struct Parsed {
    char *id[MAX_NODES];
    int sweep[MAX_NODES];   /* its "sweep #N", or 0 */
    int is_value[MAX_NODES];
    int n;
    int from[MAX_EDGES], to[MAX_EDGES];
    int nedges;
} Parsed;

static int find_node(Parsed *p, const char *id, size_t len)
{
    for (int i = 0; i < p->n; i++)
        if (strlen(p->id[i]) == len && strncmp(p->id[i], id, len) == 0)
            return i;
    ck_assert_int_lt(p->n, MAX_NODES);
    p->id[p->n] = tu_format("%.*s", (int)len, id);
    p->sweep[p->n] = 0;
    p->is_value[p->n] = id[0] == 'v';
    return p->n++;
}

/* Nodes (v... and o...) and edges of the model part of DOT, leaving out
 * the legend. */
static void parse_graph(const char *dot, Parsed *p)
{
    p->n = p->nedges = 0;
    for (const char *line = dot; *line; line += strcspn(line, "\n") + 1) {
        const char *s = line + strspn(line, " ");
        if (*s != 'v' && *s != 'o')
            continue;
        size_t len = strspn(s, "vo0123456789");
        const char *arrow = s + len;
        if (strncmp(arrow, " -> ", 4) == 0) {
            const char *t = arrow + 4;
            ck_assert_int_lt(p->nedges, MAX_EDGES);
            p->from[p->nedges] = find_node(p, s, len);
            p->to[p->nedges++] = find_node(p, t, strspn(t, "vo0123456789"));
        } else if (strncmp(arrow, " [label=", 8) == 0) {
            int i = find_node(p, s, len);
            const char *num = strstr(s, "\\nsweep #");
            if (num && num < s + strcspn(s, "\n"))
                p->sweep[i] = atoi(num + 9);
        }
        if (!line[strcspn(line, "\n")])
            break;
    }
}

static void free_parsed(Parsed *p)
{
    for (int i = 0; i < p->n; i++)
        free(p->id[i]);
}

/* Kahn's algorithm: true when the edges leave no cycle. */
static int acyclic(const Parsed *p)
{
    static int indeg[MAX_NODES], queue[MAX_NODES];
    memset(indeg, 0, sizeof indeg);
    for (int e = 0; e < p->nedges; e++)
        indeg[p->to[e]]++;
    int head = 0, tail = 0;
    for (int i = 0; i < p->n; i++)
        if (!indeg[i])
            queue[tail++] = i;
    while (head < tail) {
        int i = queue[head++];
        for (int e = 0; e < p->nedges; e++)
            if (p->from[e] == i && --indeg[p->to[e]] == 0)
                queue[tail++] = p->to[e];
    }
    return tail == p->n;
}

/* The reverse sweep completes a value's adjoint only after the adjoints of
 * all the values computed from it (Griewank and Walther, Evaluating
 * Derivatives, 2nd ed., SIAM 2008, section 3.2, recalled from memory): so
 * along every path of operations from numbered value a to numbered value
 * b, b's number is the smaller.  Checks that from value node i. */
static void assert_sweep_follows_flow(const Parsed *p, int from, int i,
                                      const char *name)
{
    for (int e = 0; e < p->nedges; e++) {
        if (p->from[e] != i)
            continue;
        int j = p->to[e];
        if (!p->is_value[j]) {
            assert_sweep_follows_flow(p, from, j, name);
        } else if (p->sweep[j] && p->sweep[from]) {
            ck_assert_msg(p->sweep[j] < p->sweep[from],
                          "%s: %s (sweep #%d) feeds %s (sweep #%d)", name,
                          p->id[from], p->sweep[from], p->id[j], p->sweep[j]);
        }
    }
}

/* ---------------------------------------------------- the DOT, as text */

START_TEST(values_are_styled_by_role)
{
    char *dot = graph_of(roles_model, 0);
    static const struct {
        const char *label, *look;
    } want[] = {
        {"x[3]\\ninput", INPUT_LOOK},  {"scale\\ninput", INPUT_LOOK},
        {"w[3]\\nparam", PARAM_LOOK},  {"bias\\nparam", PARAM_LOOK},
        {"t[3]", VALUE_LOOK},          {"u", VALUE_LOOK},
        {"y\\noutput", OUTPUT_LOOK},
    };
    for (size_t k = 0; k < sizeof want / sizeof want[0]; k++) {
        char *line = node_line(dot, want[k].label);
        ck_assert_msg(strstr(line, want[k].look), "%s lacks %s: %s",
                      want[k].label, want[k].look, line);
        free(line);
    }
    /* the reduction is one funnel; its accumulator is not a value */
    char *funnel = node_line(dot, "sum over i");
    ck_assert_ptr_nonnull(strstr(funnel, REDUCE_LOOK));
    ck_assert_ptr_null(strstr(dot, "label=\"dvs_"));
    free(funnel);
    free(dot);
}
END_TEST

START_TEST(operands_lead_to_operations_and_results_to_values)
{
    char *dot = graph_of(roles_model, 0);
    static const char result[] = " [color=\"#4a6f96\", penwidth=1.6];";
    assert_edge(dot, "w[3]\\nparam", "*", ";");
    assert_edge(dot, "x[3]\\ninput", "*", ";");
    assert_edge(dot, "*", "t[3]", result);
    assert_edge(dot, "t[3]", "sum over i", ";");
    assert_edge(dot, "sum over i", "/", " [label=\"1st\"];");
    assert_edge(dot, "scale\\ninput", "/", " [label=\"2nd\"];");
    assert_edge(dot, "/", "u", result);
    assert_edge(dot, "u", "-", " [label=\"1st\"];");
    assert_edge(dot, "bias\\nparam", "-", " [label=\"2nd\"];");
    assert_edge(dot, "-", "y\\noutput", result);
    /* those are all the edges outside the legend */
    Parsed *p = calloc(1, sizeof *p);
    parse_graph(dot, p);
    ck_assert_int_eq(p->nedges, 10);
    ck_assert(acyclic(p));
    free_parsed(p);
    free(p);
    free(dot);
}
END_TEST

START_TEST(choice_operands_are_named)
{
    char *dot = graph_of("param a, b\ninput x\n"
                         "y = x > a ? a * x : b\noutput y\n", 0);
    assert_edge(dot, ">", "?:", " [label=\"if\"];");
    assert_edge(dot, "*", "?:", " [label=\"then\"];");
    assert_edge(dot, "b\\nparam", "?:", " [label=\"else\"];");
    assert_edge(dot, "x\\ninput", ">", " [label=\"1st\"];");
    assert_edge(dot, "a\\nparam", ">", " [label=\"2nd\"];");
    free(dot);
}
END_TEST

START_TEST(each_statement_is_framed_with_its_line)
{
    char *dot = graph_of(roles_model, 0);
    static const char *const frames[] = {
        "label=\"line 4: t[i] = w[i] * x[i]\"",
        "label=\"line 5: u = sum(i: t[i]) / scale\"",
        "label=\"line 6: y = u - bias\"",
    };
    int count = 0;
    for (const char *at = strstr(dot, "subgraph cluster_line"); at;
         at = strstr(at + 1, "subgraph cluster_line"))
        count++;
    ck_assert_int_eq(count, 3);
    for (int k = 0; k < 3; k++)
        ck_assert_msg(strstr(dot, frames[k]), "no frame %s", frames[k]);
    /* the funnel and the division are inside the frame of line 5 */
    const char *frame = strstr(dot, frames[1]);
    const char *end = strstr(frame, "\n  }\n");
    char *inside = tu_format("%.*s", (int)(end - frame), frame);
    ck_assert_ptr_nonnull(strstr(inside, "[label=\"sum over i\""));
    ck_assert_ptr_nonnull(strstr(inside, "[label=\"/\""));
    ck_assert_ptr_nonnull(strstr(inside, "[label=\"u\""));
    ck_assert_ptr_null(strstr(inside, "[label=\"-\""));
    free(inside);
    free(dot);
}
END_TEST

START_TEST(legend_shows_each_style)
{
    char *plain = graph_of(roles_model, 0);
    char *swept = graph_of(roles_model, 1);
    ck_assert_ptr_nonnull(strstr(plain, "subgraph cluster_legend {"));
    /* each legend node looks exactly like the nodes it explains */
    static const struct {
        const char *legend, *node;
    } pair[] = {
        {"legend_param", "w[3]\\nparam"}, {"legend_input", "x[3]\\ninput"},
        {"legend_value", "t[3]"},          {"legend_output", "y\\noutput"},
        {"legend_op", "*"},                {"legend_reduce", "sum over i"},
    };
    for (size_t k = 0; k < sizeof pair / sizeof pair[0]; k++) {
        char *line = node_line(plain, pair[k].node);
        const char *look = strstr(line, "\", ") + 3;
        char *key = tu_format("    %s [label=", pair[k].legend);
        const char *legend = strstr(plain, key);
        ck_assert_msg(legend != NULL, "no %s", pair[k].legend);
        const char *eol = strchr(legend, '\n');
        ck_assert_msg(strncmp(eol - strlen(look), look, strlen(look)) == 0,
                      "%s does not look like %s", pair[k].legend,
                      pair[k].node);
        free(key);
        free(line);
    }
    ck_assert_ptr_nonnull(strstr(plain, "legend_leaf [label=\"constant\""));
    ck_assert_ptr_null(strstr(plain, "legend_sweep"));
    ck_assert_ptr_null(strstr(plain, "sweep #"));
    ck_assert_ptr_nonnull(strstr(swept, "legend_sweep [label=\"sweep #N"));
    free(plain);
    free(swept);
}
END_TEST

/* In a chain each value is computed from the one before it, so the
 * reverse sweep must complete the adjoints in exactly the opposite order:
 * the output first, the param last (Griewank and Walther 2008, section
 * 3.2, recalled from memory).  Inputs have no adjoint. */
START_TEST(sweep_numbers_reverse_a_chain)
{
    char *dot = graph_of("input x\nparam a\n"
                         "u = a * x\nv = sin(u)\nw = exp(v)\ny = w * w\n"
                         "output y\n", 1);
    static const char *const labels[] = {
        "y\\noutput\\nsweep #1", "w\\nsweep #2", "v\\nsweep #3",
        "u\\nsweep #4", "a\\nparam\\nsweep #5", "x\\ninput",
    };
    for (size_t k = 0; k < sizeof labels / sizeof labels[0]; k++)
        free(node_line(dot, labels[k]));
    ck_assert_ptr_nonnull(strstr(dot, "numbered in adjoint sweep order"));
    free(dot);
}
END_TEST

/* A definition no output needs is left out, as it is of the emitted code;
 * a param it alone used stays, unconnected, and its gradient (always 0)
 * is set last (reverse.h: "param adjoints that receive nothing are set to
 * zero at the end"). */
START_TEST(unused_definitions_are_left_out)
{
    char *dot = graph_of("input x\nparam a, b\nspare = b + 1\n"
                         "y = a * x\noutput y\n", 1);
    ck_assert_ptr_null(strstr(dot, "spare"));
    char *b = node_id(dot, "b\\nparam\\nsweep #3");
    char *from_b = tu_format("\n  %s -> ", b);
    ck_assert_ptr_null(strstr(dot, from_b));
    free(node_line(dot, "a\\nparam\\nsweep #2"));
    free(node_line(dot, "y\\noutput\\nsweep #1"));
    free(from_b);
    free(b);
    free(dot);
}
END_TEST

/* ------------------------------------------------------- every sample */

/* The sample models, samples/NAME/NAME.dvs, as paths (NULL-terminated). */
static char **sample_models(void)
{
    DIR *d = opendir("samples");
    ck_assert_msg(d != NULL, "tests run from the repository root");
    char **list = calloc(64, sizeof *list);
    int n = 0;
    struct dirent *e;
    while ((e = readdir(d)) && n < 63) {
        char *path = tu_format("samples/%s/%s.dvs", e->d_name, e->d_name);
        if (e->d_name[0] != '.' && tu_exists(path))
            list[n++] = path;
        else
            free(path);
    }
    closedir(d);
    ck_assert_int_ge(n, 6);
    return list;
}

static void free_list(char **list)
{
    for (int i = 0; list[i]; i++)
        free(list[i]);
    free(list);
}

START_TEST(samples_are_acyclic_and_swept_against_the_flow)
{
    char **models = sample_models();
    Parsed *p = calloc(1, sizeof *p);
    for (int m = 0; models[m]; m++) {
        /* read as that file, so the files it uses are found beside it */
        char *text = tu_read(models[m]);
        char *dot = graph_of_file(models[m], text, 1);
        parse_graph(dot, p);
        ck_assert_msg(acyclic(p), "%s: the graph has a cycle", models[m]);
        int numbered = 0;
        for (int i = 0; i < p->n; i++) {
            numbered += p->sweep[i] > 0;
            if (p->is_value[i])
                assert_sweep_follows_flow(p, i, i, models[m]);
        }
        ck_assert_msg(numbered >= 3, "%s: %d numbered values", models[m],
                      numbered);
        free_parsed(p);
        free(dot);
        free(text);
    }
    free(p);
    free_list(models);
}
END_TEST

START_TEST(dot_draws_every_sample_without_warnings)
{
    if (!tu_have("dot")) {
        printf("test_graph: no dot (Debian package graphviz): "
               "drawing not tested\n");
        return;
    }
    char **models = sample_models();
    char *dir = tu_tmpdir();
    for (int m = 0; models[m]; m++) {
        for (int sweep = 0; sweep < 2; sweep++) {
            char *err = NULL;
            char *cmd = tu_format("'%s' graph %s '%s' >'%s/g.dot'",
                                  tu_abs_dervish(), sweep ? "--sweep" : "",
                                  models[m], dir);
            ck_assert_int_eq(tu_run(cmd, NULL, &err), 0);
            ck_assert_msg(err[0] == '\0', "%s: %s", models[m], err);
            free(err);
            free(cmd);
            cmd = tu_format("dot -Tsvg -o '%s/g.svg' '%s/g.dot'", dir, dir);
            int rc = tu_run(cmd, NULL, &err);
            ck_assert_msg(rc == 0 && err[0] == '\0',
                          "dot on the graph of %s: status %d\n%s", models[m],
                          rc, err);
            char *svg = tu_read_in(dir, "g.svg");
            ck_assert_ptr_nonnull(strstr(svg, "<svg"));
            ck_assert_ptr_nonnull(strstr(svg, ">legend</text>"));
            free(svg);
            free(err);
            free(cmd);
        }
    }
    tu_rmdir(dir);
    free(dir);
    free_list(models);
}
END_TEST

/* The picture docs/cli.md shows (the lead links it from the README). */
START_TEST(readme_picture_is_the_kiln_graph)
{
    char *svg = tu_read("docs/graph-kiln.svg");
    ck_assert_msg(svg != NULL, "docs/graph-kiln.svg is missing");
    ck_assert_ptr_nonnull(strstr(svg, "<svg"));
    ck_assert_ptr_nonnull(strstr(svg, "model kiln (kiln.dvs)"));
    ck_assert_ptr_nonnull(strstr(svg, ">sweep #8</text>"));
    free(svg);
}
END_TEST

/* ------------------------------------------------------- the command */

/* Model and file names DOT would misread unquoted: DOT's keywords as
 * names, a quote and a backslash in the file name. */
START_TEST(names_are_quoted_for_dot)
{
    char *dir = tu_tmpdir();
    tu_write_in(dir, "we\"ird\\ name.dvs",
                "model graph\ninput node, edge\nparam strict, digraph\n"
                "subgraph = strict * node + digraph * edge\n"
                "output subgraph\n");
    char *out = NULL, *err = NULL;
    ck_assert_int_eq(tu_run_dervish(dir, &out, &err,
                                    "graph 'we\"ird\\ name.dvs' >g.dot"), 0);
    ck_assert_str_eq(err, "");
    char *dot = tu_read_in(dir, "g.dot");
    ck_assert_ptr_nonnull(strstr(dot, "\ndigraph \"graph\" {\n"));
    ck_assert_ptr_nonnull(
        strstr(dot, "label=\"model graph (we\\\"ird\\\\ name.dvs)\""));
    free(node_line(dot, "node\\ninput"));
    free(node_line(dot, "subgraph\\noutput"));
    if (tu_have("dot")) {
        char *cmd = tu_format("cd '%s' && dot -Tsvg g.dot", dir);
        char *svg = NULL, *derr = NULL;
        ck_assert_int_eq(tu_run(cmd, &svg, &derr), 0);
        ck_assert_str_eq(derr, "");
        ck_assert_ptr_nonnull(
            strstr(svg, ">model graph (we&quot;ird\\ name.dvs)</text>"));
        ck_assert_ptr_nonnull(strstr(svg, ">strict</text>"));
        free(cmd);
        free(svg);
        free(derr);
    }
    tu_rmdir(dir);
    free(dir);
    free(dot);
    free(out);
    free(err);
}
END_TEST

START_TEST(graph_goes_to_a_file_or_standard_output)
{
    char *dir = tu_tmpdir();
    tu_write_in(dir, "m.dvs", roles_model);
    char *out = NULL, *again = NULL, *dash = NULL, *err = NULL;
    ck_assert_int_eq(tu_run_dervish(dir, &out, NULL, "graph m.dvs"), 0);
    ck_assert_ptr_nonnull(strstr(out, "digraph \"m\" {"));
    ck_assert_int_eq(tu_run_dervish(dir, &dash, NULL, "graph -o - m.dvs"), 0);
    ck_assert_str_eq(dash, out);
    ck_assert_int_eq(tu_run_dervish(dir, &again, NULL, "graph -o g.dot m.dvs"),
                     0);
    ck_assert_str_eq(again, "");
    char *file = tu_read_in(dir, "g.dot");
    ck_assert_str_eq(file, out);
    /* a write to standard output that fails is an I/O failure */
    ck_assert_int_eq(tu_run_dervish(dir, NULL, &err, "graph m.dvs >/dev/full"),
                     3);
    ck_assert_str_eq(err, "dervish: cannot write standard output: "
                          "No space left on device\n");
    free(err);
    /* never over the model */
    ck_assert_int_eq(tu_run_dervish(dir, NULL, &err, "graph -o ./m.dvs m.dvs"),
                     2);
    ck_assert_ptr_nonnull(strstr(err, "refusing to overwrite the model file"));
    char *model = tu_read_in(dir, "m.dvs");
    ck_assert_str_eq(model, roles_model);
    tu_rmdir(dir);
    free(dir);
    free(out);
    free(again);
    free(dash);
    free(err);
    free(file);
    free(model);
}
END_TEST

START_TEST(bad_model_writes_nothing)
{
    static const char old[] = "digraph earlier {}\n";
    char *dir = tu_tmpdir();
    tu_write_in(dir, "m.dvs", "param a\ny = a * q\noutput y\n");
    tu_write_in(dir, "w.dvs", "param a, b\ny = a * 2\noutput y\n");
    tu_write_in(dir, "g.dot", old);
    char *out = NULL, *err = NULL;
    ck_assert_int_eq(tu_run_dervish(dir, &out, &err, "graph -o g.dot m.dvs"),
                     1);
    ck_assert_ptr_nonnull(strstr(err, "m.dvs:2:9: error: unknown name 'q'"));
    ck_assert_ptr_nonnull(strstr(err, "\nm.dvs: 1 error; nothing written\n"));
    ck_assert_str_eq(out, "");
    free(out);
    free(err);
    ck_assert_int_eq(tu_run_dervish(dir, &out, &err, "graph --sweep m.dvs"), 1);
    ck_assert_str_eq(out, "");
    free(out);
    free(err);
    /* warnings alone fail with --fail-on-warning, and write nothing too */
    ck_assert_int_eq(tu_run_dervish(dir, &out, &err,
                                    "graph --fail-on-warning -o g.dot w.dvs"),
                     1);
    ck_assert_ptr_nonnull(strstr(err, "w.dvs: 1 warning, treated as errors "
                                      "(--fail-on-warning); nothing written"));
    char *kept = tu_read_in(dir, "g.dot");
    ck_assert_str_eq(kept, old);
    /* and no temporary file was left beside it */
    char *listing = NULL;
    char *cmd = tu_format("ls -A '%s'", dir);
    ck_assert_int_eq(tu_run(cmd, &listing, NULL), 0);
    ck_assert_str_eq(listing, "g.dot\nm.dvs\nw.dvs\n");
    tu_rmdir(dir);
    free(dir);
    free(out);
    free(err);
    free(kept);
    free(cmd);
    free(listing);
}
END_TEST

START_TEST(options_belong_to_their_command)
{
    char *out = NULL, *err = NULL;
    ck_assert_int_eq(tu_run_dervish(NULL, &out, NULL, "--help"), 0);
    ck_assert_ptr_nonnull(strstr(out, "dervish graph [options] MODEL.dvs"));
    ck_assert_ptr_nonnull(strstr(out, "--sweep"));
    free(out);
    ck_assert_int_eq(tu_run_dervish(NULL, NULL, &err,
                                    "graph --at x samples/kiln/kiln.dvs"), 2);
    ck_assert_ptr_nonnull(strstr(err, "unknown option '--at'"));
    free(err);
    ck_assert_int_eq(tu_run_dervish(NULL, NULL, &err,
                                    "build --sweep samples/kiln/kiln.dvs"), 2);
    ck_assert_ptr_nonnull(strstr(err, "unknown option '--sweep'"));
    free(err);
    ck_assert_int_eq(tu_run_dervish(NULL, NULL, &err, "graph -o"), 2);
    ck_assert_ptr_nonnull(strstr(err, "option -o needs a value"));
    free(err);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("graph");
    TU_ADD_TESTS(tu_case(s, "dot text", 30),
                 values_are_styled_by_role,
                 operands_lead_to_operations_and_results_to_values,
                 choice_operands_are_named,
                 each_statement_is_framed_with_its_line,
                 legend_shows_each_style, sweep_numbers_reverse_a_chain,
                 unused_definitions_are_left_out,
                 samples_are_acyclic_and_swept_against_the_flow);
    TU_ADD_TESTS(tu_case(s, "command", 60),
                 dot_draws_every_sample_without_warnings,
                 readme_picture_is_the_kiln_graph, names_are_quoted_for_dot,
                 graph_goes_to_a_file_or_standard_output,
                 bad_model_writes_nothing, options_belong_to_their_command);
    return tu_main(s);
}
