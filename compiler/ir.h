/* ir.h - the intermediate representation every pass reads and writes.
 *
 * A program is an ordered list of statements over named arrays (a scalar is
 * an array of rank 0):   target[I] (= | += | max= | ...) expr   over domain D.
 * Expressions are DAG nodes in one growable array addressed by integer ids
 * and hash-consed, so structurally equal subexpressions are one node.  The
 * reverse pass (reverse.c) appends adjoint arrays and a second statement
 * list, so its output is ordinary IR too. */
#ifndef DERVISH_IR_H
#define DERVISH_IR_H

#include "arena.h"
#include "diag.h"

#include <stdint.h>
#include <string.h>

/* Dimensions of declared arrays (the language's limit) and of any IR array
 * (a reduction's accumulator may also carry enclosing reduction indices). */
#define LANG_MAX_RANK 4
#define IR_MAX_RANK 8

typedef enum IrOp {
#define OP(id, name, arity, kind, c) IR_##id,
#include "ops.def"
#undef OP
    IR_OP_COUNT
} IrOp;

typedef enum IrOpKind {
    OPK_LEAF,       /* CONST, READ, INDEX */
    OPK_PREFIX,     /* -a */
    OPK_INFIX,      /* a + b */
    OPK_CALL,       /* a <math.h> function */
    OPK_HELPER,     /* a runtime helper, dvs_<stem>(...) */
    OPK_COMPARE,    /* yields a condition */
    OPK_LOGIC,      /* condition && condition, !condition */
    OPK_SELECT      /* condition ? a : b */
} IrOpKind;

typedef struct IrOpInfo {
    const char *model_name;
    int arity;
    IrOpKind kind;
    const char *c_spelling;
} IrOpInfo;

extern const IrOpInfo ir_ops[IR_OP_COUNT];

/* The builtin called NAME in model files with its op, or -1. */
int ir_builtin(const char *name);

typedef int32_t NodeId;
#define NO_NODE ((NodeId)-1)

typedef VEC(NodeId) NodeList;

/* An extent (of an array dimension or an index var) is a positive count,
 * or a size known only when the emitted code runs, encoded as a negative
 * number: -(size id + 1). */
#define IR_EXTENT_OF_SIZE(id) (-(id) - 1)
#define IR_EXTENT_IS_SIZE(e) ((e) < 0)
#define IR_EXTENT_SIZE(e) (-(e) - 1)

typedef struct IrSize {
    const char *name;   /* the model's name; a long member of m_input */
    Span span;
} IrSize;

/* An op and its nargs arguments; the unused ones are NO_NODE.  A leaf
 * (no arguments) keeps its own operands in arg instead, read through the
 * accessors below, so a node takes 16 bytes: millions of them are made
 * and hash-consed, and half the size is half the cache misses. */
typedef struct IrNode {
    uint8_t op;         /* IrOp */
    uint8_t nargs;
    NodeId arg[3];
} IrNode;

/* READ: the array read, and its subscripts (a tuple of index vars). */
static inline int32_t ir_read_array(const IrNode *n) { return n->arg[0]; }
static inline int32_t ir_read_tuple(const IrNode *n) { return n->arg[1]; }
/* INDEX: the index var; SIZE: the size. */
static inline int32_t ir_leaf_var(const IrNode *n) { return n->arg[0]; }
/* CONST: the number, whose bits fill arg[0] and arg[1]. */
static inline double ir_const_num(const IrNode *n)
{
    double num;
    memcpy(&num, n->arg, sizeof num);
    return num;
}

typedef enum IrRole {
    ROLE_PARAM,         /* differentiated; lives in *p, gradient in *grad */
    ROLE_INPUT,         /* data; lives in *in */
    ROLE_VALUE,         /* a value the model defines */
    ROLE_TEMP,          /* a compiler temporary (reduction accumulator) */
    ROLE_ARGPOS,        /* position of a max/min reduction's winner (long) */
    ROLE_ADJOINT,       /* the adjoint of another array */
    ROLE_TANGENT,       /* the tangent (directional derivative) of another
                           array; of a param, the direction */
    ROLE_SEED           /* the caller's weight on an output (primal) for
                           the adjoint sweep of a model whose outputs are
                           not one scalar */
} IrRole;

typedef struct IrArray {
    const char *name;   /* the C name: the model's, or with the reserved prefix */
    const int *dim;     /* rank extents (see IR_EXTENT_OF_SIZE), in the
                           arena; NULL for a scalar */
    Span span;          /* where it was declared or defined */
    IrRole role;
    int rank;
    int32_t adjoint;    /* its adjoint array, or -1 */
    int32_t tangent;    /* its tangent array, or -1 */
    int32_t primal;     /* ROLE_ADJOINT, ROLE_TANGENT: the array it is the
                           adjoint or tangent of */
    uint8_t used;       /* some kept statement or the output reads it */
    uint8_t varied;     /* depends on a param (activity analysis) */
    uint8_t useful;     /* an output depends on it (activity analysis) */
    uint8_t no_adjoint; /* the output does not depend on it, though it is
                           computed from params (a logsumexp shift) */
    uint8_t row_local;  /* row by row: only the current row of it (its
                           first dimension) exists at a time */
    uint8_t is_output;  /* named by 'output' (or the copy of a param or
                           input so named, see Ir.outputs) */
} IrArray;

typedef struct IrIndexVar {
    const char *name;   /* the model's index name, or a reserved one */
    int extent;         /* see IR_EXTENT_OF_SIZE */
} IrIndexVar;

typedef enum IrStmtKind {
    SK_SET,             /* t[I] = e */
    SK_ADD,             /* t[I] += e           (sum reductions, adjoints) */
    SK_MAX,             /* if (e > t[I]) { t[I] = e; argpos[I] = point },
                           argpos being optional */
    SK_MIN              /* if (e < t[I]) { t[I] = e; argpos[I] = point } */
} IrStmtKind;

typedef struct IrStmt {
    const char *note;   /* a comment to show instead of the model text */
    Span origin;        /* the model statement this came from */
    IrStmtKind kind;
    int32_t target;     /* array written */
    int32_t tuple;      /* target's subscripts */
    int32_t domain;     /* loop vars, outermost first; a superset of tuple */
    int32_t reduced;    /* SK_MAX/SK_MIN: the reduced vars (a tuple) */
    int32_t argpos;     /* SK_MAX/SK_MIN: the ROLE_ARGPOS array, else -1 */
    NodeId expr;
    int32_t row_var;    /* row by row: the domain var that is the row, or -1 */
} IrStmt;

typedef VEC(IrStmt) IrStmtList;

/* One hash-consing table (see Ir). */
typedef struct IrNodeTable {
    uint64_t *slot;
    int cap, len;
} IrNodeTable;
typedef VEC(IrNodeTable) IrNodeTables;
#define IR_NODE_GROUP 2048

typedef struct Ir {
    Arena *arena;
    const Source *src;
    const char *model;          /* symbol prefix */
    VEC(IrNode) nodes;
    VEC(IrArray) arrays;
    VEC(IrIndexVar) vars;
    VEC(IrSize) sizes;
    VEC(int32_t) tuple_data;    /* tuples: [len, v0, v1, ...] at tuple id */
    IrStmtList forward;         /* the model's statements in order */
    IrStmtList reverse;         /* adjoint statements, in sweep order */
    IrStmtList tangent;         /* the forward statements, each followed by
                                   its tangent statements (tangent.c); empty
                                   unless asked for */
    IrStmtList hv_forward;      /* for a Hessian times a direction: the
                                   forward statements with the tangents the
                                   reverse sweep's tangents read, */
    IrStmtList hv_reverse;      /* and the reverse statements, each followed
                                   by its tangent (empty unless asked for) */
    int32_t output;             /* the output array: the only one when
                                   struct_output is 0, else the first */
    VEC(int32_t) outputs;       /* every output array, in 'output' order;
                                   with struct_output, a param or input
                                   named as an output is copied into a
                                   value array of its name */
    int struct_output;          /* the outputs are not one scalar: the
                                   emitted functions fill an output struct */
    int32_t row_size;           /* row by row over this size, or -1 */
    const char *row_plan;       /* why row by row was or was not chosen */
    Span output_span;           /* the output's name in its statement */
    Span output_stmt;           /* the whole output statement */
    /* hash-consing: open-addressing tables, sized powers of two, of
     * entries that hold id + 1 (0: empty) in their low half and the
     * node's hash in their high half, so a probe reads a node only when
     * the hashes agree.  A node with arguments is in by_arg[newest
     * argument / IR_NODE_GROUP], a read in by_array[array /
     * IR_NODE_GROUP], any other leaf in leaves.  The tables hold the first
     * nodes_tabled nodes; they may be dropped (ir_drop_node_tables), and
     * the nodes are entered again when a node is next made */
    IrNodeTables by_arg;
    IrNodeTables by_array;
    IrNodeTable leaves;
    int nodes_tabled;
    int32_t *tuple_hash;
    int tuple_hash_cap;
} Ir;

Ir *ir_new(Arena *arena, const Source *src);

/* Node constructors; each returns the id of an existing equal node if one
 * exists.  ir_node checks arity. */
NodeId ir_const(Ir *ir, double num);
NodeId ir_read(Ir *ir, int32_t array, int32_t tuple);
NodeId ir_index(Ir *ir, int32_t var);
NodeId ir_size(Ir *ir, int32_t size);
NodeId ir_node(Ir *ir, IrOp op, NodeId a, NodeId b, NodeId c);

/* Give back the hash-consing tables (once the passes that make nodes are
 * done); a node made later enters every node again. */
void ir_drop_node_tables(Ir *ir);

/* The row-major position of the current point among the REDUCED vars (a
 * tuple), as a max or min statement stores its winner's in its argpos
 * array. */
NodeId ir_flat_point(Ir *ir, int32_t reduced);

int32_t ir_tuple(Ir *ir, const int32_t *vars, int n);
int ir_tuple_len(const Ir *ir, int32_t tuple);
const int32_t *ir_tuple_vars(const Ir *ir, int32_t tuple);

int32_t ir_add_array(Ir *ir, const char *name, IrRole role, int rank,
                     const int *dim, Span span);
int32_t ir_add_var(Ir *ir, const char *name, int extent);

/* A tuple of fresh vars (dvs_i0, dvs_i1, ...) covering every element of
 * ARRAY, for statements over all of it. */
int32_t ir_whole_tuple(Ir *ir, int32_t array);

/* The caller's struct an array lives in: a param (in *p), an input (*in),
 * a param's adjoint (the gradient, *grad), its tangent (the direction,
 * *dir), or the tangent of its adjoint (a Hessian times the direction,
 * *hv); with struct_output, an output (*out), the seed of its adjoint
 * (*seed) and its tangent (*dout); else a local. */
typedef enum IrHome {
    HOME_LOCAL, HOME_P, HOME_IN, HOME_GRAD, HOME_DIR, HOME_HV, HOME_OUT,
    HOME_SEED, HOME_DOUT, HOME_COUNT
} IrHome;
IrHome ir_home(const Ir *ir, const IrArray *a);

/* A new array of ROLE (ROLE_ADJOINT, ROLE_TANGENT) derived from ARRAY, of
 * its shape, row-local as it is: named as the param when it lives in a
 * caller's struct, else "dvs_KIND_name" (a temporary's name loses its own
 * reserved prefix first). */
int32_t ir_add_derived(Ir *ir, int32_t array, IrRole role, const char *kind);
/* Append s to list.  A statement boundary: the node array may move here,
 * so no IrNode pointer may be held across this call. */
void ir_add_stmt(Ir *ir, IrStmtList *list, IrStmt s);

/* A statement target[tuple] KIND expr over domain, with no reduced vars,
 * no argpos array and no note. */
IrStmt ir_stmt(Ir *ir, IrStmtKind kind, int32_t target, int32_t tuple,
               int32_t domain, NodeId expr, Span origin);

static inline const IrNode *ir_at(const Ir *ir, NodeId id)
{
    return &ir->nodes.items[id];
}

/* Number of elements of an array whose extents are all fixed (product of
 * its dims; 1 for a scalar). */
long ir_array_size(const IrArray *a);

/* Elements of all params, and of all outputs (both have fixed extents):
 * the reals of the emitted param and output structs. */
long ir_param_count(const Ir *ir);
long ir_output_count(const Ir *ir);

/* True when no extent of the array is a runtime size. */
int ir_array_fixed(const IrArray *a);

/* True when the node is a condition (a comparison or logic op). */
int ir_is_condition(const Ir *ir, NodeId id);

/* True when expression id reads an array marked in marked[] (one flag per
 * array). */
int ir_reads_marked(const Ir *ir, NodeId id, const char *marked);

/* Set used[id] for every node the statements of LIST reach (used has one
 * flag per node). */
void ir_mark_reached(const Ir *ir, const IrStmtList *list, char *used);

/* An estimate of the work of running LIST once: per statement, the
 * operations of its expression (distinct nodes that are not leaves) plus
 * one for the store, times the points of its domain, a runtime size
 * counted as 100 points. */
long ir_work(const Ir *ir, const IrStmtList *list);

/* Check the IR's invariants; reports a fault and aborts when one fails. */
void ir_verify(const Ir *ir);
/* The same for the lists the passes after resolve make, all but the
 * forward statements (which those passes only reorder). */
void ir_verify_derived(const Ir *ir);

/* Print the IR in a readable text form (for --dump and tests). */
void ir_print(const Ir *ir, FILE *out);

#endif
