/* checkpoint.h - the point `dervish check` evaluates at: random values,
 * the --size options, the --at file and the runtime sizes (checkpoint.c);
 * gradcheck.c compares the derivatives there. */
#ifndef DERVISH_CHECKPOINT_H
#define DERVISH_CHECKPOINT_H

#include "eval.h"
#include "gradcheck.h"

#include <stdio.h>

typedef enum SizeFrom {
    FROM_NONE,          /* not known yet */
    FROM_OPTION,        /* --size NAME=N */
    FROM_FILE,          /* its own line in the --at file */
    FROM_COUNT,         /* the count of an input's numbers in the file */
    FROM_DEFAULT
} SizeFrom;

typedef struct SizeValue {
    SizeFrom from;
    const char *option; /* FROM_OPTION: the option as given */
    int line;           /* FROM_FILE, FROM_COUNT: the line that set it */
    int32_t array;      /* FROM_COUNT: the input whose count set it */
} SizeValue;

/* What the --at file gives for one param, input or size.  These "entries"
 * are numbered arrays first, then sizes: entry arrays.len + s is size s. */
typedef struct Given {
    int line;           /* line of its `name =`, 0 when not given */
    Span name;
    double *v;          /* its numbers (malloc'd) */
    long count, cap;
    int failed;         /* its count was reported as wrong */
} Given;

/* The point to check, before the evaluator exists: the sizes and the
 * numbers of the --at file. */
typedef struct Point {
    const Ir *ir;
    long *sizes;        /* per runtime size: its value, once known */
    SizeValue *size;    /* per runtime size: where the value came from */
    Given *given;       /* per entry */
    int32_t *order;     /* the arrays the file gives, in file order */
    int norder;
} Point;

/* Zeroed memory; exits with status 3 when there is none. */
void *check_alloc(size_t n);

/* Find the point for OPT: the sizes from --size, the --at file, then the
 * sizes still unknown.  Returns 0, or the exit status after reporting why
 * (then *pt is already freed). */
int point_read(Point *pt, const Ir *ir, const CheckOptions *opt);

/* Give the evaluator the point: every param and input drawn from SEED,
 * then the values of the --at file. */
void point_apply(Evaluation *ev, const Point *pt, unsigned long seed);

/* The report's opening: where the point comes from, the sizes, and the
 * random values in the --at format (so they can be reused). */
void point_print(FILE *out, const DvCompilation *c, const CheckOptions *opt,
                 Evaluation *ev, const Point *pt);

void point_free(Point *pt);

/* The model's name for flat entry k of the params (outputs: of the
 * outputs), e.g. W[1][2], in the IR's arena. */
char *check_entry_name(const Ir *ir, long k, int outputs);

#endif
