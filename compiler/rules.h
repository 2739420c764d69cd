/* rules.h - the derivative rules: for each IR op, the local partial
 * derivative with respect to each operand, as IR; and symbolic
 * differentiation of an expression with respect to one of its reads.
 *
 * A derivative that is identically zero (the expression does not depend on
 * the read, or the rule is 0 everywhere) is NO_NODE, a structural zero, so
 * no code is emitted for it. */
#ifndef DERVISH_RULES_H
#define DERVISH_RULES_H

#include "ir.h"

/* Simplifying constructors: they drop structural zeros (NO_NODE) and
 * multiplications by one; they never fold x*0 or x-x, which IEEE
 * arithmetic does not allow. */
NodeId rules_add(Ir *ir, NodeId a, NodeId b);
NodeId rules_mul(Ir *ir, NodeId a, NodeId b);

/* The partial derivative of node N with respect to operand ARG.  VALUE is
 * an expression for N's own value (a read of a stored result where there
 * is one, else N itself); rules reuse it (tanh' = 1 - value^2). */
NodeId rules_partial(Ir *ir, NodeId n, int arg, NodeId value);

/* d ROOT / d LEAF.  ROOT_VALUE stands for ROOT's value in the rules (the
 * statement's target when ROOT is a whole right side). */
NodeId rules_derivative(Ir *ir, NodeId root, NodeId leaf, NodeId root_value);

#endif
