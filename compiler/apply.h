/* apply.h - one IR operation on doubles, exactly as the emitted C computes
 * it (same <math.h> calls, same runtime helpers).  Used to fold constants
 * and by the evaluator behind `dervish check`. */
#ifndef DERVISH_APPLY_H
#define DERVISH_APPLY_H

#include "ir.h"

/* v holds the operands; conditions yield 1.0 (true) or 0.0 (false).
 * Leaves (CONST, READ, INDEX) are not operations and are not accepted. */
double apply_op(IrOp op, const double *v);

#endif
