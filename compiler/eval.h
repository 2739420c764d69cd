/* eval.h - an interpreter for the IR, behind `dervish check` and the tests.
 *
 * It runs the forward statements (the model's value) and the reverse
 * statements (its gradient) on doubles exactly as the emitted C does, and
 * the forward statements once more in complex arithmetic for complex-step
 * derivatives.  No C compiler is involved. */
#ifndef DERVISH_EVAL_H
#define DERVISH_EVAL_H

#include "ir.h"

typedef struct Evaluation Evaluation;

/* The most elements one array may have in an evaluation: the limit the
 * resolver sets for fixed extents (INT_MAX). */
#define EVAL_MAX_ELEMENTS 2147483647L

/* The count an extent (IrArray.dim, IrIndexVar.extent) stands for when
 * the runtime sizes take the values SIZES. */
long eval_extent(int extent, const long *sizes);

/* The number of elements of array A when the model's runtime sizes take
 * the values SIZES (one per ir->sizes entry, each >= 0; may be NULL when A
 * has fixed extents only); -1 when that exceeds EVAL_MAX_ELEMENTS. */
long eval_elements(const IrArray *a, const long *sizes);

/* Storage for every array of IR (which must outlive the evaluation), all
 * zero, with the runtime sizes at SIZES (copied; as for eval_elements, and
 * no array may exceed EVAL_MAX_ELEMENTS).  eval_new is the same for a
 * model without sizes.  Exits with status 3 when memory runs out. */
Evaluation *eval_new_sized(const Ir *ir, const long *sizes);
Evaluation *eval_new(const Ir *ir);
void eval_free(Evaluation *ev);

/* The values of the param or input called NAME: eval_elements() doubles,
 * row-major, to read or set.  NULL when no param or input has that name. */
double *eval_slot(Evaluation *ev, const char *name);

/* The params as one flat vector: params in declaration order, row-major
 * within each (the order of the emitted <model>_param struct).  Params have
 * fixed extents, so the sizes do not change it. */
long eval_param_count(const Evaluation *ev);
double *eval_param(Evaluation *ev, long k);    /* entry k, 0 <= k < count */

/* Models whose outputs fill a struct: their count of output elements,
 * the seed the adjoint sweep starts from (seed[count], flat in output
 * order; all zero until set), and after eval_value or eval_tangent the
 * outputs and after eval_tangent their tangents, flat, into out[count]
 * or dout[count].  For one scalar output the count is 1 and the seed is
 * always 1. */
long eval_output_count(const Evaluation *ev);
void eval_set_seed(Evaluation *ev, const double *seed);
void eval_outputs(const Evaluation *ev, double *out);
void eval_output_tangents(const Evaluation *ev, double *dout);

/* The output for the current params and inputs (the forward statements);
 * for outputs in a struct, the sum of each output element times its
 * seed, a scalar whose gradient the reverse sweep gives: so every
 * function below sees the seeded sum as the output. */
double eval_value(Evaluation *ev);

/* The output, and its gradient in flat param order in grad[count]
 * (forward statements, then the reverse sweep). */
double eval_gradient(Evaluation *ev, double *grad);

/* The output, and in *dvalue its derivative along dir[count] (flat param
 * order): the tangent statements, which must have been made
 * (tangent_pass). */
double eval_tangent(Evaluation *ev, const double *dir, double *dvalue);

/* The output, its gradient in grad[count] and the Hessian times dir[count]
 * in hv[count] (flat param order): the Hessian-vector lists, which must
 * have been made (tangent_pass). */
double eval_hessvec(Evaluation *ev, const double *dir, double *grad,
                    double *hv);

/* A complex-step evaluation: the forward statements in complex arithmetic
 * with param entry k moved by i*h. */
typedef struct EvalStep {
    double value;       /* real part of the output */
    double slope;       /* imaginary part over h: d output / d param k */
    int blocked;        /* -1, or an IrOp with no complex form here (erf,
                           erfc, lgamma, atan2, digamma, trigamma) that the
                           perturbation reached: slope is then meaningless */
} EvalStep;
EvalStep eval_complex_step(Evaluation *ev, long k, double h);

#endif
