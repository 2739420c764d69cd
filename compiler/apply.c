/* apply.c - IR operations on doubles; see apply.h.  The runtime helpers are
 * included from runtime/ so that folding and evaluation share the exact
 * code that is copied into emitted files. */
#include "apply.h"

#include <math.h>

#include "clamp.c"
#include "digamma.c"
#include "hypot_slope.c"
#include "max2.c"
#include "min2.c"
#include "relu.c"
#include "sigmoid.c"
#include "sign.c"
#include "softplus.c"
#include "trigamma.c"

double apply_op(IrOp op, const double *v)
{
    double a = v[0], b = v[1], c = v[2];
    switch (op) {
    case IR_NEG: return -a;
    case IR_ADD: return a + b;
    case IR_SUB: return a - b;
    case IR_MUL: return a * b;
    case IR_DIV: return a / b;
    case IR_POW: return pow(a, b);
    case IR_LT: return a < b;
    case IR_LE: return a <= b;
    case IR_GT: return a > b;
    case IR_GE: return a >= b;
    case IR_EQ: return a == b;
    case IR_NE: return a != b;
    case IR_AND: return a != 0 && b != 0;
    case IR_OR: return a != 0 || b != 0;
    case IR_NOT: return a == 0;
    case IR_SELECT: return a != 0 ? b : c;
    case IR_ABS: return fabs(a);
    case IR_SQRT: return sqrt(a);
    case IR_CBRT: return cbrt(a);
    case IR_EXP: return exp(a);
    case IR_EXPM1: return expm1(a);
    case IR_LOG: return log(a);
    case IR_LOG1P: return log1p(a);
    case IR_LOG2: return log2(a);
    case IR_LOG10: return log10(a);
    case IR_SIN: return sin(a);
    case IR_COS: return cos(a);
    case IR_TAN: return tan(a);
    case IR_ASIN: return asin(a);
    case IR_ACOS: return acos(a);
    case IR_ATAN: return atan(a);
    case IR_SINH: return sinh(a);
    case IR_COSH: return cosh(a);
    case IR_TANH: return tanh(a);
    case IR_ASINH: return asinh(a);
    case IR_ACOSH: return acosh(a);
    case IR_ATANH: return atanh(a);
    case IR_ATAN2: return atan2(a, b);
    case IR_HYPOT: return hypot(a, b);
    case IR_ERF: return erf(a);
    case IR_ERFC: return erfc(a);
    case IR_LGAMMA: return lgamma(a);
    case IR_FLOOR: return floor(a);
    case IR_CEIL: return ceil(a);
    case IR_ROUND: return round(a);
    case IR_TRUNC: return trunc(a);
    case IR_MIN: return dvs_min2(a, b);
    case IR_MAX: return dvs_max2(a, b);
    case IR_CLAMP: return dvs_clamp(a, b, c);
    case IR_SIGMOID: return dvs_sigmoid(a);
    case IR_SOFTPLUS: return dvs_softplus(a);
    case IR_RELU: return dvs_relu(a);
    case IR_SIGN: return dvs_sign(a);
    case IR_DIGAMMA: return dvs_digamma(a);
    case IR_TRIGAMMA: return dvs_trigamma(a);
    case IR_HYPOTSLOPE: return dvs_hypot_slope(a, b);
    case IR_CONST:
    case IR_READ:
    case IR_INDEX:
    case IR_SIZE:
    case IR_OP_COUNT:
        break;
    }
    DV_UNREACHABLE();
    return 0;
}
