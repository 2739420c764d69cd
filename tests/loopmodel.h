/* loopmodel.h - random models made of repeated statement forms, for the
 * repeat-loop tests (test_loops.c): blocks in which a form of 1 to 5 (now
 * and then up to 17) scalar statements repeats 2 to 40 times, each leaf of
 * a form reading something that stays fixed, steps or jumps from repeat to
 * repeat, with irregular statements between.  Header-only; the random
 * numbers are randmodel.h's. */
#ifndef DERVISH_LOOPMODEL_H
#define DERVISH_LOOPMODEL_H

#include "randmodel.h"

/* What one leaf of a form reads, in each repeat. */
typedef enum LmLeafKind {
    LM_PREV,        /* the value just defined */
    LM_BACK,        /* the value arg statements back */
    LM_PARAM,       /* param arg in every repeat */
    LM_PARAM_STEP,  /* a param that moves arg places each repeat */
    LM_PARAM_RAND,  /* a param drawn afresh each repeat */
    LM_CONST,       /* the constant c in every repeat */
    LM_CONST_STEP,  /* a constant that cycles with the repeat */
    LM_EARLY,       /* the early value number arg */
    LM_INPUT,       /* input arg in every repeat */
    LM_INPUT_STEP,  /* an input that moves with the repeat */
    LM_OTHER_LOOP,  /* the previous block's value at the same repeat */
    LM_KINDS
} LmLeafKind;

#define LM_MAX_LEAVES 4
#define LM_MAX_FORM 17      /* one more than a loop's longest form */
#define LM_MAX_OUTPUTS 5
#define LM_MAX_REPEATED 40  /* statements in the repeats of all blocks */

typedef struct LmLeaf {
    LmLeafKind kind;
    int arg;    /* which value, param or input; a param's step */
    double c;   /* the constant; where a stepping param starts */
    int wrap;   /* the function around the leaf: an index into lm_wrap */
} LmLeaf;

typedef struct LmStmt {
    int nleaf;
    LmLeaf leaf[LM_MAX_LEAVES];
    int join[LM_MAX_LEAVES];    /* how leaf k joins the ones before it */
} LmStmt;

/* A generated model: its text and what a driver needs to call it. */
typedef struct LmModel {
    char *text;     /* malloc'd */
    int nparam;     /* reals in the param struct */
    int ninput;     /* scalar inputs x0, x1, ... (0: no input struct) */
    int noutput;    /* 0: one scalar output, else that many scalar outputs */
    int nstmt;      /* statements defining values */
} LmModel;

/* The generator's state while it writes one model. */
typedef struct LmGen {
    uint64_t rng;
    FILE *f;
    int np;             /* scalar params p0 ... */
    int nin;
    int nval;           /* values v0 ... defined so far */
    int other_start;    /* the previous block: its first value, */
    int other_len;      /* its form's length (0: no previous block) */
    int other_repeats;  /* and its repeats */
} LmGen;

/* Functions put around a leaf's text (each @); each keeps the value
 * finite and the derivatives defined at the values the leaves take. */
static const char *const lm_wrap[] = {
    "tanh(@)", "sin(@)", "cos(@)", "atan(@)", "sqrt(1 + (@)^2)",
    "exp(-0.1 * (@)^2)", "(@)^2", "max(@, 0.1)", "abs(@)",
    "(@ > 0 ? @ : 0.5 * @)", "log(1 + (@)^2)", "sigmoid(@)",
    "hypot(@, 0.5)", "(@)^3", "softplus(@)", "min(@, 0.3)", "@",
};
#define LM_WRAPS ((int)(sizeof lm_wrap / sizeof lm_wrap[0]))

static inline void lm_leaf_text(LmGen *g, const LmLeaf *l, int r, char *out,
                                size_t cap)
{
    int n = g->nval;
    switch (l->kind) {
    case LM_PREV:
        snprintf(out, cap, "v%d", n - 1);
        break;
    case LM_BACK:
        snprintf(out, cap, "v%d", n >= l->arg ? n - l->arg : 0);
        break;
    case LM_PARAM:
        snprintf(out, cap, "p%d", l->arg % g->np);
        break;
    case LM_PARAM_STEP:
        snprintf(out, cap, "p%d", (r * l->arg + (int)l->c) % g->np);
        break;
    case LM_PARAM_RAND:
        snprintf(out, cap, "p%d", rm_below(&g->rng, g->np));
        break;
    case LM_CONST:
        snprintf(out, cap, "%.3g", l->c);
        break;
    case LM_CONST_STEP:
        snprintf(out, cap, "%.3g", l->c + (r % 5) * 0.07);
        break;
    case LM_EARLY:
        snprintf(out, cap, "v%d", l->arg < n ? l->arg : 0);
        break;
    case LM_INPUT:
        snprintf(out, cap, "x%d", l->arg % g->nin);
        break;
    case LM_INPUT_STEP:
        snprintf(out, cap, "x%d", (r + l->arg) % g->nin);
        break;
    case LM_OTHER_LOOP:
        snprintf(out, cap, "v%d", g->other_start +
                 (r % g->other_repeats) * g->other_len +
                 l->arg % g->other_len);
        break;
    case LM_KINDS:
        ck_abort_msg("no leaf kind %d", (int)l->kind);
    }
}

/* A random leaf; the first of a statement reads a recent value, so most
 * statements feed the output and none is left out as dead. */
static inline LmLeaf lm_leaf(LmGen *g, int first, int form_len)
{
    LmLeaf l = {LM_PREV, 0, 0.0, rm_below(&g->rng, LM_WRAPS)};
    if (first) {
        if (rm_chance(&g->rng, 0.25)) {
            l.kind = LM_BACK;
            l.arg = 1 + rm_below(&g->rng, 2 * form_len + 2);
        }
        return l;
    }
    l.kind = (LmLeafKind)rm_below(&g->rng, LM_KINDS);
    if ((l.kind == LM_INPUT || l.kind == LM_INPUT_STEP) && g->nin == 0)
        l.kind = LM_PARAM;
    if (l.kind == LM_OTHER_LOOP && g->other_len == 0)
        l.kind = LM_PARAM_STEP;
    switch (l.kind) {
    case LM_BACK:   /* now and then farther back than a loop may read */
        l.arg = 1 + rm_below(&g->rng, rm_chance(&g->rng, 0.2)
                                          ? 12 * form_len : 2 * form_len + 2);
        break;
    case LM_PARAM:
    case LM_INPUT:
    case LM_EARLY:
    case LM_OTHER_LOOP:
        l.arg = rm_below(&g->rng, 8);
        break;
    case LM_PARAM_STEP: {   /* forwards by 1 or 2, or backwards by 1 */
        static const int strides[] = {1, 1, 2, -1};
        l.arg = (strides[rm_below(&g->rng, 4)] + g->np) % g->np;
        l.c = rm_below(&g->rng, g->np);
        break;
    }
    case LM_CONST:
        l.c = round((rm_unit(&g->rng) * 4 - 2) * 1000) / 1000;
        break;
    case LM_CONST_STEP:
        l.c = 0.1 + rm_below(&g->rng, 3) * 0.2;
        break;
    default:
        break;
    }
    return l;
}

/* Joins of a wrapped leaf (#) onto the expression built so far (@). */
static const char *const lm_join[] = {
    "(@ + #)", "(@ - #)", "(@ * #)", "tanh(@) * #", "@ / (1 + (#)^2)",
    "max(@, #)",
};
#define LM_JOINS ((int)(sizeof lm_join / sizeof lm_join[0]))

static inline LmStmt lm_stmt(LmGen *g, int form_len)
{
    LmStmt s;
    s.nleaf = 1 + rm_below(&g->rng, LM_MAX_LEAVES);
    for (int k = 0; k < s.nleaf; k++) {
        s.leaf[k] = lm_leaf(g, k == 0, form_len);
        s.join[k] = rm_below(&g->rng, LM_JOINS);
    }
    return s;
}

/* Write "vN = TEXT" for the next value. */
static inline void lm_define(LmGen *g, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    fprintf(g->f, "v%d = ", g->nval++);
    vfprintf(g->f, fmt, ap);
    fputc('\n', g->f);
    va_end(ap);
}

/* TEMPLATE with each @ replaced by a and each # by b, into out. */
static inline void lm_fill(char *out, size_t cap, const char *template,
                           const char *a, const char *b)
{
    size_t n = 0;
    for (const char *t = template; *t; t++) {
        const char *put = *t == '@' ? a : *t == '#' ? b : NULL;
        size_t len = put ? strlen(put) : 1;
        ck_assert_msg(n + len < cap, "statement text too long");
        memcpy(out + n, put ? put : t, len);
        n += len;
    }
    out[n] = '\0';
}

/* The statement s as written in repeat r. */
static inline void lm_write_stmt(LmGen *g, const LmStmt *s, int r)
{
    char acc[4096], leaf[64], wrapped[512], next[4096];
    for (int k = 0; k < s->nleaf; k++) {
        lm_leaf_text(g, &s->leaf[k], r, leaf, sizeof leaf);
        lm_fill(wrapped, sizeof wrapped, lm_wrap[s->leaf[k].wrap], leaf, "");
        if (k == 0) {
            memcpy(acc, wrapped, sizeof wrapped);
            continue;
        }
        lm_fill(next, sizeof next, lm_join[s->join[k]], acc, wrapped);
        memcpy(acc, next, sizeof acc);
    }
    lm_define(g, "tanh(%s)", acc);
}

/* Now and then a statement that breaks a run: of another form, of
 * constants only, or a reduction over the array param w[warr]. */
static inline void lm_irregular(LmGen *g, int warr)
{
    double u = rm_unit(&g->rng);
    if (u < 0.02)
        lm_define(g, "sin(v%d) + 0.25", g->nval - 1);
    else if (u < 0.03)
        lm_define(g, "atan(%.2f)", 0.1 + 0.01 * rm_below(&g->rng, 90));
    else if (u < 0.045 && warr)
        lm_define(g, "tanh(sum(i: w[i] * v%d))", g->nval - 1);
}

/* The model of SEED; with several_outputs its output statement names
 * more than one value (an output struct), now and then a param too, else
 * one sum is the output. */
static inline LmModel lm_generate(uint64_t seed, int several_outputs)
{
    LmGen g;
    memset(&g, 0, sizeof g);
    g.rng = seed * 0x2545f4914f6cdd1dULL + 99;
    char *text = NULL;
    size_t len = 0;
    g.f = open_memstream(&text, &len);
    ck_assert_ptr_nonnull(g.f);
    g.np = 1 + rm_below(&g.rng, 12);
    g.nin = rm_chance(&g.rng, 0.4) ? 1 + rm_below(&g.rng, 3) : 0;
    /* an array param somewhere among the scalars shifts their flat
     * positions away from their numbers */
    int warr = rm_chance(&g.rng, 0.4) ? 2 + rm_below(&g.rng, 3) : 0;
    int wat = rm_below(&g.rng, g.np + 1);
    fprintf(g.f, "model lm\nparam ");
    for (int k = 0; k <= g.np; k++) {
        if (k == wat && warr)
            fprintf(g.f, "%sw[%d]", k ? ", " : "", warr);
        if (k < g.np)
            fprintf(g.f, "%sp%d", k || (wat == 0 && warr) ? ", " : "", k);
    }
    fputc('\n', g.f);
    for (int k = 0; k < g.nin; k++)
        fprintf(g.f, "%sx%d", k ? ", " : "input ", k);
    if (g.nin)
        fputc('\n', g.f);
    lm_define(&g, "tanh(p0 + 0.5)");
    int blocks = 1 + rm_below(&g.rng, 3), left = LM_MAX_REPEATED;
    for (int b = 0; b < blocks; b++) {
        LmStmt form[LM_MAX_FORM];
        int P = rm_chance(&g.rng, 0.08) ? 6 + rm_below(&g.rng, LM_MAX_FORM - 5)
                                        : 1 + rm_below(&g.rng, 5);
        int R = 2 + rm_below(&g.rng, 39);
        if (P * R > left)   /* a long form repeats less often */
            R = left / P;
        if (R < 2)
            break;
        left -= P * R;
        for (int q = 0; q < P; q++)
            form[q] = lm_stmt(&g, P);
        int start = g.nval;
        for (int r = 0; r < R; r++)
            for (int q = 0; q < P; q++) {
                lm_irregular(&g, warr);
                lm_write_stmt(&g, &form[q], r);
            }
        g.other_start = start;
        g.other_len = P;
        g.other_repeats = R;
        if (warr && rm_chance(&g.rng, 0.5))
            lm_define(&g, "tanh(v%d + sum(i: w[i] * v%d))", g.nval - 1,
                      g.nval - 1);
        for (int k = rm_below(&g.rng, 4); k > 0; k--)
            lm_define(&g, "cos(v%d) * 0.5", g.nval - 1);
    }
    LmModel m = {NULL, g.np + warr, g.nin, 0, 0};
    int picks = 1 + rm_below(&g.rng, LM_MAX_OUTPUTS - 1);
    if (several_outputs) {
        /* distinct values from anywhere, the last one defined among them */
        int chosen[LM_MAX_OUTPUTS], n = 0;
        for (int k = 0; k < picks; k++) {
            int v = rm_below(&g.rng, g.nval - 1);
            int seen = 0;
            for (int j = 0; j < n; j++)
                seen |= chosen[j] == v;
            if (!seen)
                chosen[n++] = v;
        }
        chosen[n++] = g.nval - 1;
        for (int k = 0; k < n; k++)
            fprintf(g.f, "%sv%d", k ? ", " : "output ", chosen[k]);
        m.noutput = n;
        if (rm_chance(&g.rng, 0.3)) {
            fprintf(g.f, ", p%d", rm_below(&g.rng, g.np));
            m.noutput++;
        }
    } else {
        fprintf(g.f, "v%d = v%d", g.nval, g.nval - 1);
        for (int k = 0; k < picks; k++)
            fprintf(g.f, " + v%d", rm_below(&g.rng, g.nval));
        fprintf(g.f, "\noutput v%d", g.nval++);
    }
    fputc('\n', g.f);
    fclose(g.f);
    m.text = text;
    m.nstmt = g.nval;
    return m;
}

#endif
