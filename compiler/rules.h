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

/* Scratch reused across rules_derivative calls, so each call costs the
 * size of its expression, not of the whole IR.  Start zeroed; free with
 * rules_memo_free. */
typedef struct DeriveMemo {
    NodeId *result;
    int *stamp;         /* result[n] is valid when stamp[n] == now */
    int cap;
    int now;
} DeriveMemo;

/* Set *reads to the distinct reads below ROOT of arrays that depend on a
 * param and that the output depends on (activity analysis), the leaves a
 * derivative of ROOT needs; *seen is scratch.  Both lists are emptied
 * first and grow in the IR's arena. */
void rules_active_reads(Ir *ir, NodeId root, NodeList *seen, NodeList *reads);

/* d ROOT / d LEAF.  ROOT_VALUE stands for ROOT's value in the rules (the
 * statement's target when ROOT is a whole right side). */
NodeId rules_derivative(Ir *ir, DeriveMemo *memo, NodeId root, NodeId leaf,
                        NodeId root_value);
void rules_memo_free(DeriveMemo *memo);

#endif
