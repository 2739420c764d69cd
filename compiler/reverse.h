/* reverse.h - the reverse (adjoint) pass.
 *
 * Needs: ir->forward with the output set (after resolve).  Leaves: an
 * adjoint array for every active array (on a path from a param to the
 * output) and ir->reverse, the adjoint statements in sweep order: each
 * adjoint zeroed (or set) where it is first written, then accumulated;
 * param adjoints that receive nothing are set to zero at the end. */
#ifndef DERVISH_REVERSE_H
#define DERVISH_REVERSE_H

#include "ir.h"

void reverse_pass(Ir *ir);

#endif
