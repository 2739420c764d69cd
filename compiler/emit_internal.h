/* emit_internal.h - what the C emitter's files share: the emitter's state
 * and the functions one file of it calls in another (emit_c.c writes the
 * statements and functions, emit_header.c the header and banner words,
 * emit_parts.c long functions as parts). */
#ifndef DERVISH_EMIT_INTERNAL_H
#define DERVISH_EMIT_INTERNAL_H

#include "emit_c.h"
#include "emit_layout.h"

/* The emitted functions; each one's --emit bit is 1 << its number. */
typedef enum Function {
    FN_VALUE, FN_GRADIENT, FN_TANGENT, FN_HESSVEC, FN_HESSIAN, FN_ADJOINT,
    FN_JACOBIAN, FN_COUNT
} Function;

/* The most struct pointers a function takes (p, in, and three more). */
#define EMIT_MAX_ARGS 5

/* A constant's C literal as last written (finding the shortest form
 * takes several printf and strtod calls, and models repeat constants). */
typedef struct NumberText {
    uint64_t bits;      /* the double's bit pattern */
    char text[40];      /* its literal; empty: the slot is unused */
} NumberText;
#define NUMBER_SLOT_BITS 8
#define NUMBER_SLOTS (1 << NUMBER_SLOT_BITS)

/* What the emitter notes of one node, together so that a visit touches
 * one place in memory. */
typedef struct NodeMarks {
    int seen;           /* the statement count when last seen */
    int uses;           /* parent edges within the statement */
    int temp;           /* its temporary's number, or 0 */
    int visit;          /* visit_stamp when last visited */
} NodeMarks;

/* Repeat loops (emit_roll.c): how a run of statements that repeat one
 * form is written as one loop. */
typedef enum RollColKind {
    COL_AS_IS,      /* the same constant or array in every repeat */
    COL_TABLE,      /* a constant that differs: dvs_kL[dvs_r][column] */
    COL_FLAT,       /* a member of p, grad, dir or hv that differs:
                       dvs_HOME_flat[dvs_xL[dvs_r][column]] */
    COL_OWN,        /* the target, a value first defined here: its slot */
    COL_SLOT        /* a value a slot holds, at step * dvs_r + off */
} RollColKind;

/* A leaf (constant or read) or the target of one statement of a run's
 * form, in the order the statement's expression first visits them. */
typedef struct RollCol {
    int32_t key;        /* the first repeat's array, or constant's node */
    uint8_t is_const, is_target;
    uint8_t kind;       /* RollColKind */
    uint8_t home;       /* COL_FLAT: the struct (IrHome) */
    int column;         /* COL_TABLE, COL_FLAT: the table's column */
    int slot;           /* COL_OWN, COL_SLOT */
    int step;           /* COL_OWN, COL_SLOT: the index is step * dvs_r */
    long off;           /* + off */
} RollCol;

/* Where a run keeps the values one statement of its form defines:
 * dvs_vL_Q, an array of len, or a scalar when only the latest value is
 * ever read (carried from repeat to repeat). */
typedef struct RollSlot {
    int run, q;
    long base;          /* entries before the first repeat's: values from
                           before the loop that reads d repeats back see */
    long len;           /* base + repeats */
    int carried;
} RollSlot;

/* A value from before a loop copied into a slot's entry for repeat
 * `repeat` (< 0) before the loop starts. */
typedef struct RollCopy {
    int q, repeat;
    int32_t array;
} RollCopy;

typedef struct RollRun {
    const IrStmtList *list;
    int from, period, repeats;  /* list[from .. from + period * repeats) */
    int *col_at;        /* per position of the form, its first column (the
                           target); [period]: the number of columns */
    int col_from;       /* the columns, in RollPlan.cols */
    int nconst, nflat;  /* the tables' widths */
    double *consts;     /* the tables' entries, per repeat: constants */
    int32_t *positions; /* and params' flat positions */
    int slot_from;      /* slot of position q: slot_from + q */
    int prologue_from, prologue_to;
} RollRun;

typedef struct RollHome {
    int32_t slot;       /* the slot holding the array, or -1 */
    int32_t index;
} RollHome;

#define ROLL_VEC(T) struct { T *items; int len, cap; }
#define ROLL_PUSH(v, x)                                                        \
    do {                                                                       \
        if ((v).len == (v).cap) {                                              \
            (v).cap = (v).cap ? 2 * (v).cap : 16;                              \
            (v).items = realloc((v).items, (size_t)(v).cap * sizeof *(v).items); \
            if (!(v).items)                                                    \
                exit(3);                                                       \
        }                                                                      \
        (v).items[(v).len++] = (x);                                            \
    } while (0)

typedef struct RollPlan {
    ROLL_VEC(RollRun) runs;
    ROLL_VEC(RollSlot) slots;
    ROLL_VEC(RollCol) cols;
    ROLL_VEC(RollCopy) prologue;
    RollHome *home;     /* per array */
    int list_runs[3];   /* the runs of the function's forward list, then
                           of its reverse list: [list_runs[l],
                           list_runs[l + 1]), in order */
    long saved;         /* statements the loops leave out */
} RollPlan;

typedef struct Emitter {
    const Ir *ir;
    const EmitOptions *opt;
    Buf *out;
    Function fn;
    char *declared;     /* per array: declared in the current function */
    char *argpos_read[FN_COUNT];    /* per function, per array: a statement
                                       of that function reads it (the winner
                                       of a max or min is found only when
                                       it is read) */
    const IrStmtList *fwd;  /* the function's forward statements */
    const IrStmtList *rev;  /* and its reverse sweep, or NULL */
    const IrStmtList *lists[FN_COUNT][2];   /* fwd and rev of each */
    char *skip;         /* per statement of fwd: not written (see
                           skip_unread_tangents), or NULL */
    unsigned used_homes;    /* bit per IrHome: the code written so far
                               (since the function or part began) refers
                               to the caller's struct of that home */
    int uses_frame;
    uint32_t last_origin;
    int last_line;      /* its line, where the next look-up starts */
    Storage storage;    /* which arrays live in work */
    /* shared subexpressions of the statement being emitted */
    NodeMarks *node;    /* per node */
    int stamp;          /* statements emitted so far */
    int visit_stamp;
    int ntemps;         /* temporaries named so far in the function */
    /* row by row: inside a row block, the row var of the statement being
     * emitted is the block's loop counter */
    int base;           /* indentation of statements: 1, or 2 in a block */
    int32_t row_var;    /* the current statement's row var, or -1 */
    const char *row_name;   /* the block's loop counter */
    /* a long function is written as parts (see emit_parts.c) */
    int parted;         /* this function is written in parts */
    int dry;            /* the run that only finds what the parts share */
    int part;           /* the part being written, from 1 */
    int part_stmts;     /* statements in it so far */
    int *ref_part;      /* per array: the part that last referred to it */
    char *framed;       /* per array: lives in the frame the parts share */
    Buf *text;          /* the function's own text (its parts go here
                           too, ahead of it) */
    Buf part_body;      /* the current part's statements */
    Buf *back;          /* with #line: where the last return to the C file */
    size_t back_at;     /* was written, and the length after it */
    NumberText numbers[NUMBER_SLOTS];  /* recent constants, by bit pattern */
    /* repeat loops (emit_roll.c) */
    RollPlan *roll;     /* the current function's, or NULL */
    const RollRun *roll_run;    /* the loop whose body is being written */
    int roll_q;         /* and the position in its form */
} Emitter;

/* emit_c.c */
const char *emit_real_type(const EmitOptions *opt);
const char *emit_real_suffix(const EmitOptions *opt);  /* of literals */
/* What a function does when the sizes are invalid: return NaN, or set
 * every output to NaN and return. */
const char *emit_size_failure(const Ir *ir, const EmitOptions *opt);
char *emit_upper(const char *s);     /* a malloc'd copy in capitals */
int emit_is_external(const IrArray *a, const Ir *ir);
const char *emit_c_type(const Emitter *e, const IrArray *a);
void emit_put_code(const Emitter *e, Buf *to, const char *text, size_t len);
void emit_sweeps(Emitter *e);
const char *emit_number(Emitter *e, double v);
void emit_access(Emitter *e, int32_t array, int32_t tuple);
void emit_stmt(Emitter *e, const IrStmt *s, const char *origin_label);
/* Call on_read for each array expression id reads, once each (a walk
 * stamped with e->visit_stamp, which the caller bumps first). */
void emit_each_read(Emitter *e, NodeId id,
                    void (*on_read)(Emitter *e, void *ctx, int32_t array),
                    void *ctx);
/* In the dry run of a function in parts: storage id (an array, or past
 * the arrays a loop's slot) is referred to in the current part. */
void emit_note_storage(Emitter *e, int id);

#define EMIT_USE(e, home) ((e)->used_homes |= 1u << (home))

/* emit_header.c */
const char *emit_fn_name(Function fn);
extern const Function emit_order[FN_COUNT];
/* The caller's structs FN takes, in argument order, into homes; returns
 * how many.  The argument of home h is called DV_PREFIX + emit_home_name(h).
 * Called once per part, so it reads st->has_input rather than scanning the
 * arrays. */
int emit_args(const Ir *ir, const Storage *st, Function fn,
              IrHome homes[EMIT_MAX_ARGS]);
const char *emit_home_name(IrHome home);
void emit_arg_type(Buf *b, const Ir *ir, IrHome home);
/* (void) for each struct argument of FN the code did not refer to. */
void emit_unused_args(Buf *b, const Emitter *e, Function fn);
void emit_signature(Buf *b, const Ir *ir, const Storage *st, Function fn,
               const char *prefix, const char *real);
const char *emit_what_is_emitted(const Ir *ir, int emit);
void emit_header(const Ir *ir, const EmitOptions *opt, const Storage *st,
                 Buf *h);
void emit_helpers(const Ir *ir, const char *reached, const Storage *st,
                  int real_float, Buf *c);

/* emit_wrappers.c */
void emit_hessian(Emitter *e, Function fn, Buf *c);
void emit_jacobian(Emitter *e, Function fn, Buf *c);

/* emit_roll.c */
/* The repeat loops of the function being written (e->fwd, e->rev), or
 * NULL when it has none. */
RollPlan *roll_plan(Emitter *e);
void roll_free(RollPlan *plan);
/* The run of list l (0: forward, 1: reverse) that starts at statement i,
 * or -1. */
int roll_run_at(const RollPlan *plan, int l, int i);
/* Storage ids: the arrays, then the slots. */
int roll_storage_count(const Emitter *e);
/* Where array lives: its own id, a slot's, or -1 (a caller's struct). */
int roll_storage(const Emitter *e, int32_t array);
/* Write an access to array or constant id where a loop changes it;
 * return 0 (writing nothing) where it does not. */
int roll_access(Emitter *e, int32_t array);  /* with e->roll set */
/* Declare slot (a local, or a member of the frame) to b. */
void roll_declare_slot(const Emitter *e, Buf *b, int slot);
int roll_const(Emitter *e, NodeId id);
/* Write run run_index of e->roll: its slots, prologue, tables and loop. */
void roll_emit(Emitter *e, int run_index, const char *label);

/* emit_parts.c */
void emit_close_part(Emitter *e);
void emit_part_break(Emitter *e, int n);
void emit_sweep_heading(Emitter *e, const char *text);
void emit_plan_frame(Emitter *e, Function fn);
void emit_frame(Emitter *e, Function fn);
void emit_part_calls(Emitter *e, Function fn, Buf *body);

#endif
