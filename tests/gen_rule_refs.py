#!/usr/bin/python3
"""Print tests/rule_refs.h: the value and every local partial derivative of
each builtin, operator and reduction of the language, for the tests in
tests/test_rule_refs.c (one table per function) and tests/test_stability.c
(cases where a naive formula overflows or cancels).

Run with Debian's interpreter, which has python3-mpmath:

    /usr/bin/python3 tests/gen_rule_refs.py > tests/rule_refs.h

Each value and partial is computed by mpmath at 50 significant digits,
checked against a second evaluation at 90 digits (gen_runtime_refs.py's
evaluate), and rounded to the nearest double. Each partial written in
closed form below is also checked against a central difference of the
function at 80 or more digits, so a slip in a formula here cannot go
unnoticed.
Arguments are Python floats, i.e. exact doubles.
"""

import math
import os
import sys

import mpmath as mp

sys.dont_write_bytecode = True     # leave no __pycache__ in tests/
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from gen_runtime_refs import DPS, c_lit, evaluate, to_double  # noqa: E402

NARGS_MAX = 3          # clamp has three arguments; reductions take 3 values
MIN_POINTS = 20        # per function of rule_refs
TWO_OVER_SQRT_PI = 2 / mp.sqrt(mp.pi)
NEXT_BELOW_1 = math.nextafter(1.0, 0.0)      # 1 - 2^-53
NEXT_ABOVE_1 = math.nextafter(1.0, 2.0)      # 1 + 2^-52
DIGAMMA_ROOT = 1.4616321449683622            # psi's positive root, rounded


def mirrored(xs):
    return [s * x for x in xs for s in (1.0, -1.0)]


def sign(x):
    return (x > 0) - (x < 0)


def heaviside(c):
    return mp.mpf(1) if c else mp.mpf(0)


def cbrt(x):
    """The real cube root (mpmath's cbrt is complex for x < 0)."""
    return sign(x) * mp.cbrt(abs(x))


def round_half_away(x):
    """C99 round(): halves go away from zero (mpmath's nint goes to even)."""
    return sign(x) * mp.floor(abs(x) + mp.mpf(1) / 2)


def sigmoid(x):
    return 1 / (1 + mp.exp(-x))


def lse(*xs):
    return mp.log(mp.fsum(mp.exp(x) for x in xs))


def first_winner(xs, better):
    """1 at the first position of the best x, 0 elsewhere (max and min
    reductions send the adjoint to the first arg-max or arg-min)."""
    best = 0
    for i, x in enumerate(xs):
        if better(x, xs[best]):
            best = i
    return [heaviside(i == best) for i in range(len(xs))]


class Fn:
    """One function: its tag (a C identifier), its dervish expression with
    @0, @1, @2 for the arguments, the mpmath value and partials, and the
    points. reduce: the arguments are one row reduced over index j.
    smooth: the partials are derivatives in the usual sense at every point
    (not a convention at a kink or step), so they are cross-checked
    numerically."""

    def __init__(self, tag, expr, value, partials, points, smooth=True,
                 reduce=False):
        self.tag, self.expr, self.value = tag, expr, value
        self.partials, self.smooth, self.reduce = partials, smooth, reduce
        self.points = [p if isinstance(p, tuple) else (p,) for p in points]
        self.nargs = len(self.points[0])
        assert all(len(p) == self.nargs for p in self.points), tag
        assert len(partials) == self.nargs, tag


def unary(tag, expr, value, slope, points, smooth=True):
    return Fn(tag, expr or "%s(@0)" % tag, value, [slope], points, smooth)


# ------------------------------------------------------------------ points
# At least 20 per function: ordinary, tiny, huge, negative and
# near-boundary arguments, and the special points of each function.

TINY = [5e-324, 1e-300, 1e-100, 1e-16, 1e-8]
SIGMOID_X = [0.0] + mirrored([1e-300, 1e-8, 0.5, 1.0, 2.5, 5.0, 20.0, 30.0,
                              36.7, 100.0, 700.0, 745.0, 800.0])
TRIG_X = [0.0, 1e-300, 1e-8, 0.5, 1.0, -1.0, 1.5707963267948966, -2.5,
          3.141592653589793, 3.0, 6.283185307179586, 10.0, 22.0, 100.0,
          355.0, -1000.5, 1e5, -1e5, 123456.789, 1e5 + 0.25]
POSITIVE_X = [5e-324, 1e-300, 1e-100, 1e-10, 0.1, 0.5, NEXT_BELOW_1, 1.0,
              NEXT_ABOVE_1, 1.0 + 1e-10, 2.0, 2.718281828459045, 3.0, 8.0,
              10.0, 1000.0, 1e10, 1e100, 1e300, 1.7976931348623157e308]
INSIDE_1 = [0.0] + mirrored([1e-300, 1e-100, 1e-8, 0.25, 0.5, 0.9, 0.99999,
                             1 - 1e-10, NEXT_BELOW_1, 0.7071067811865476])
STEPS_X = [0.0] + mirrored([0.5, 1.5, 2.5, 0.49999999999999994, 1e-300,
                            3.7, 1.0, 4503599627370495.5, 1e300,
                            0.7500000000000001])
# lgamma: psi's roots (the positive one, the first two negative ones) and
# poles, and lgamma's own roots (1, 2 and the first two below 0)
LGAMMA_X = [DIGAMMA_ROOT, 1.46, 1.47, -0.5040830082644554,
            -1.5734984731623904, 1e-300, 1e-8, 0.1, 0.5, NEXT_BELOW_1, 1.0,
            NEXT_ABOVE_1, 2.0 - 2.0 ** -51, 2.0, 2.5, 3.0, 10.0, 100.5, 1e5,
            1e15, 1e300, -1e-300, -1e-8, -0.5, -1.0 + 1e-8, -1.0 - 1e-8,
            -1.5, -2.0 + 1e-6, -2.0 - 1e-6, -2.4570247382208006,
            -2.7476826467274127, -3.7, -10.3, -100.25]


# ------------------------------------------------------------- functions

def functions():
    ln2, ln10 = mp.log(2), mp.log(10)
    fs = [
        unary("abs", None, abs, lambda x: sign(x),
              [0.0] + mirrored(TINY + [0.5, 1.0, 2.5, 1e10, 1e300]), False),
        unary("sqrt", None, mp.sqrt, lambda x: 1 / (2 * mp.sqrt(x)),
              [0.0] + POSITIVE_X),
        unary("cbrt", None, cbrt, lambda x: 1 / (3 * cbrt(x) ** 2),
              [0.0] + mirrored([5e-324, 1e-300, 1e-10, 0.001, 0.5, 8.0,
                                27.5, 1e10, 1e300,
                                1.7976931348623157e308])),
        unary("exp", None, mp.exp, mp.exp,
              [0.0] + mirrored([1e-300, 1e-10, 0.5, 1.0, 2.5, 20.0, 100.0,
                                700.0]) + [-745.0, 709.75, -1e-16, 1e-16]),
        unary("expm1", None, mp.expm1, mp.exp,
              [0.0, 1e-300, -1e-300, 1e-10, -1e-10, 1e-12, -1e-12, 1e-5,
               -1e-5, 0.5, -0.5, 1.0, -1.0, 20.0, -20.0, -40.0, -700.0,
               100.0, 700.0, 709.75]),
        unary("log", None, mp.log, lambda x: 1 / x, POSITIVE_X),
        unary("log1p", None, mp.log1p, lambda x: 1 / (1 + x),
              [0.0, -0.5, -0.9, -1 + 2.0 ** -52, -1e-300, -1e-10, -1e-12,
               5e-324, 1e-300, 1e-16, 1e-12, 1e-10, 1e-5, 0.5, 1.0,
               math.e - 1, 10.0, 1e10, 1e100, 1e300]),
        unary("log2", None, lambda x: mp.log(x) / ln2,
              lambda x: 1 / (x * ln2), POSITIVE_X + [0.125, 1024.0]),
        unary("log10", None, mp.log10, lambda x: 1 / (x * ln10),
              POSITIVE_X + [0.001, 1e22]),
        unary("sin", None, mp.sin, mp.cos, TRIG_X),
        unary("cos", None, mp.cos, lambda x: -mp.sin(x), TRIG_X),
        unary("tan", None, mp.tan, lambda x: mp.sec(x) ** 2,
              [x for x in TRIG_X if x != 1.5707963267948966]
              + [1.5707963267948966, 1.57, -1.5707963267948966]),
        unary("asin", None, mp.asin, lambda x: 1 / mp.sqrt(1 - x * x),
              INSIDE_1),
        unary("acos", None, mp.acos, lambda x: -1 / mp.sqrt(1 - x * x),
              INSIDE_1),
        unary("atan", None, mp.atan, lambda x: 1 / (1 + x * x),
              [0.0] + mirrored([1e-300, 1e-8, 0.5, 1.0, 2.5, 1e5, 1e10,
                                1e100, 1e150, 1e300])),
        unary("sinh", None, mp.sinh, mp.cosh,
              [0.0] + mirrored([1e-300, 1e-8, 0.5, 1.0, 2.5, 5.0, 20.0, 100.0,
                                700.0, 710.0])),
        unary("cosh", None, mp.cosh, mp.sinh,
              [0.0] + mirrored([1e-300, 1e-8, 0.5, 1.0, 2.5, 5.0, 20.0, 100.0,
                                700.0, 710.0])),
        unary("tanh", None, mp.tanh, lambda x: mp.sech(x) ** 2,
              [0.0] + mirrored([1e-300, 1e-8, 0.5, 1.0, 2.5, 3.0, 5.0,
                                20.0, 30.0, 700.0])),
        unary("asinh", None, mp.asinh, lambda x: 1 / mp.sqrt(x * x + 1),
              [0.0] + mirrored([1e-300, 1e-100, 1e-8, 0.5, 1.0, 2.5, 1e5,
                                1e10, 1e200, 1e300])),
        unary("acosh", None, mp.acosh, lambda x: 1 / mp.sqrt(x * x - 1),
              [1.0, NEXT_ABOVE_1, 1 + 1e-10, 1 + 1e-5, 1.001, 1.5, 2.0,
               2.5, 10.0, 100.0, 1e5, 1e10, 1e100, 1e200, 1e300,
               1.7976931348623157e308, 1.25, 3.0, 20.0, 700.0]),
        unary("atanh", None, mp.atanh, lambda x: 1 / (1 - x * x),
              INSIDE_1),
        unary("erf", None, mp.erf,
              lambda x: TWO_OVER_SQRT_PI * mp.exp(-x * x),
              [0.0] + mirrored([1e-300, 1e-8, 0.5, 1.0, 2.5, 3.0, 5.0, 6.0,
                                20.0, 26.0])),
        unary("erfc", None, mp.erfc,
              lambda x: -TWO_OVER_SQRT_PI * mp.exp(-x * x),
              [0.0] + mirrored([1e-300, 1e-8, 0.5, 1.0, 2.5, 5.0, 10.0,
                                20.0, 26.0, 30.0, 700.0]) + [26.5, 27.0]),
        unary("lgamma", None, lambda x: mp.re(mp.loggamma(x)), mp.digamma,
              LGAMMA_X),
        unary("sigmoid", None, sigmoid,
              lambda x: mp.exp(-x) / (1 + mp.exp(-x)) ** 2, SIGMOID_X),
        unary("softplus", None, lambda x: mp.log1p(mp.exp(x)), sigmoid,
              SIGMOID_X),
        unary("relu", None, lambda x: max(x, 0), lambda x: heaviside(x > 0),
              [0.0] + mirrored(TINY + [0.5, 1.0, 2.5, 1e10, 1e300]), False),
        unary("floor", None, mp.floor, lambda x: 0, STEPS_X, False),
        unary("ceil", None, mp.ceil, lambda x: 0, STEPS_X, False),
        unary("round", None, round_half_away, lambda x: 0, STEPS_X, False),
        unary("trunc", None, lambda x: sign(x) * mp.floor(abs(x)),
              lambda x: 0, STEPS_X, False),
        unary("sign", None, sign, lambda x: 0, STEPS_X, False),
        unary("neg", "-@0", lambda x: -x, lambda x: -1,
              [0.0] + mirrored(TINY + [0.5, 1.0, 2.5, 1e10, 1e300])),
    ]

    # x^n: the power rule n x^(n-1), negative x included
    int_x = mirrored([1e-100, 1e-8, 0.5, 1.0, 1.5, 2.0, 3.0, 10.0, 1e5,
                      1e50])
    for n, name in ((2, "2"), (3, "3"), (-1, "m1"), (-2, "m2"), (5, "5")):
        fs.append(Fn("pow_int%s" % name, "@0^%d" % n,
                     lambda x, n=n: x ** n,
                     [lambda x, n=n: n * x ** (n - 1)], int_x))
    # x^c, c not an integer: x > 0
    frac_x = [1e-300, 1e-100, 1e-8, 0.001, 0.1, 0.5, NEXT_BELOW_1, 1.0,
              NEXT_ABOVE_1, 1.5, 2.0, 3.0, 10.0, 100.0, 1e5, 1e10, 1e50,
              1e100, 1e150, 1e200]
    for c, name in ((0.5, "half"), (2.5, "2_5"), (-1.5, "m1_5"),
                    (1.0 / 3, "third")):
        fs.append(Fn("pow_frac_%s" % name, "@0^%s" % repr(c),
                     lambda x, c=c: x ** mp.mpf(c),
                     [lambda x, c=c: c * x ** (mp.mpf(c) - 1)], frac_x))
    # a^b with both varying: a > 0
    pow_ab = [(2.0, 3.0), (2.0, 0.5), (0.5, -2.0), (10.0, -3.0), (1.0, 7.5),
              (3.0, 0.0), (1e-10, 2.0), (1e10, 30.0), (1e300, 0.5),
              (1e-300, 0.25), (0.999, 1e5), (1.001, -1e4), (7.0, 1e-10),
              (NEXT_ABOVE_1, 1e15), (2.0, -1000.0), (2.0, 1000.0),
              (100.0, 1.0), (0.1, 0.1), (5.5, -0.75), (1e5, 1.5),
              (2.718281828459045, 2.0), (1.5, 100.0)]
    dpow = [lambda a, b: b * mp.power(a, b - 1),
            lambda a, b: mp.power(a, b) * mp.log(a)]
    fs.append(Fn("pow_var", "@0^@1", mp.power, dpow, pow_ab))
    fs.append(Fn("pow_call", "pow(@0, @1)", mp.power, dpow, pow_ab))

    # atan2(y, x): all four quadrants, the axes, huge and tiny arguments
    atan2_yx = [(1.0, 1.0), (1.0, -1.0), (-1.0, -1.0), (-1.0, 1.0),
                (0.0, 1.0), (1e-300, -1.0), (-1e-300, -1.0), (1.0, 0.0),
                (-1.0, 0.0),
                (3.0, 4.0), (1e200, 1e200), (1e-200, 1e-200),
                (1e-300, 1.0), (1.0, 1e-300), (1e300, -1e300),
                (-1e5, 0.5), (0.5, 1e5), (1e-8, -1.0), (-2.5, 7.0),
                (1e150, 1e-150), (6.0, -0.001)]
    fs.append(Fn("atan2", "atan2(@0, @1)", mp.atan2,
                 [lambda y, x: x / (x * x + y * y),
                  lambda y, x: -y / (x * x + y * y)], atan2_yx))
    hypot_xy = [(3.0, 4.0), (1e200, 1e200), (1e-200, 1e-200),
                (1e200, 1e-200), (1e-200, 1e200), (1e308, 1e308),
                (5e-324, 5e-324), (-3.0, 4.0), (3.0, -4.0), (-1e300, 1e300),
                (1.0, 1e-10), (1e-10, 1.0), (1.0, 1.0), (0.0, 2.0),
                (2.0, 0.0), (1e5, 1e-5), (-0.5, -0.25), (1e150, 1e150),
                (1e-150, 1e-150), (7.0, 24.0)]
    fs.append(Fn("hypot", "hypot(@0, @1)", mp.hypot,
                 [lambda x, y: x / mp.hypot(x, y),
                  lambda x, y: y / mp.hypot(x, y)], hypot_xy))

    # min, max: ties go to the first argument
    pairs = [(1.0, 2.0), (2.0, 1.0), (1.0, 1.0), (-1.0, 1.0), (0.0, 0.0),
             (-3.5, -3.5), (1e300, -1e300), (-1e300, 1e300), (1e-300, 0.0),
             (0.0, 1e-300), (5e-324, -5e-324), (-5e-324, 5e-324),
             (2.5, 2.5000000000000004), (2.5000000000000004, 2.5),
             (-7.0, -8.0), (-8.0, -7.0), (1e10, 1e10), (0.5, -0.5),
             (-0.5, 0.5), (123.0, 122.0)]
    fs.append(Fn("min2", "min(@0, @1)", min,
                 [lambda a, b: heaviside(a <= b),
                  lambda a, b: heaviside(not a <= b)], pairs, False))
    fs.append(Fn("max2", "max(@0, @1)", max,
                 [lambda a, b: heaviside(a >= b),
                  lambda a, b: heaviside(not a >= b)], pairs, False))
    # clamp(x, lo, hi): 1 for x inside [lo, hi] (ends included), else the
    # bound that was crossed
    clamp_x = [(0.5, 0.0, 1.0), (-0.5, 0.0, 1.0), (1.5, 0.0, 1.0),
               (0.0, 0.0, 1.0), (1.0, 0.0, 1.0), (2.0, 2.0, 2.0),
               (-1e300, -1.0, 1.0), (1e300, -1.0, 1.0), (1e-300, 0.0, 1.0),
               (-1e-300, 0.0, 1.0), (3.0, -5.0, 5.0), (-6.0, -5.0, 5.0),
               (6.0, -5.0, 5.0), (-5.0, -5.0, 5.0), (5.0, -5.0, 5.0),
               (0.25, 0.25, 0.75), (0.75, 0.25, 0.75), (0.7, 0.25, 0.75),
               (100.0, 1e-10, 1e10), (-100.0, -1e10, -1e-10)]

    def clamp(x, lo, hi):
        return lo if x < lo else hi if x > hi else x
    fs.append(Fn("clamp", "clamp(@0, @1, @2)", clamp,
                 [lambda x, lo, hi: heaviside(lo <= x <= hi),
                  lambda x, lo, hi: heaviside(x < lo),
                  lambda x, lo, hi: heaviside(x > hi)], clamp_x, False))

    # the arithmetic operators
    arith = [(1.0, 2.0), (-1.0, 2.0), (0.5, -0.25), (3.0, 7.0),
             (1e300, 1e-300), (1e-300, 1e300), (-1e200, 1e100),
             (1e-200, -1e-100), (0.1, 0.2), (1e10, 1e-10),
             (2.5, 2.5), (-2.5, 2.5), (0.0, 3.0), (123.456, -0.001),
             (1e150, 1e150), (5e-324, 1.0), (1.0, 5e-324 * 2 ** 60),
             (-7.0, -0.5), (1e5, 1e-5), (0.3, 0.7)]
    fs.append(Fn("add", "@0 + @1", lambda a, b: a + b,
                 [lambda a, b: 1, lambda a, b: 1], arith))
    fs.append(Fn("sub", "@0 - @1", lambda a, b: a - b,
                 [lambda a, b: 1, lambda a, b: -1], arith))
    fs.append(Fn("mul", "@0 * @1", lambda a, b: a * b,
                 [lambda a, b: b, lambda a, b: a], arith))
    fs.append(Fn("div", "@0 / @1", lambda a, b: a / b,
                 [lambda a, b: 1 / b, lambda a, b: -a / (b * b)],
                 [(a, b) for a, b in arith if b != 1e-300
                  and b != 5e-324 * 2 ** 60]
                 + [(1.0, 3.0), (-1e100, 1e-100)]))

    # reductions over rows of three values
    rows = [(0.0, 0.0, 0.0), (1.0, 2.0, 3.0), (3.0, 2.0, 1.0),
            (1000.0, 1000.5, 999.0), (-1000.0, -1001.0, -999.5),
            (800.0, -800.0, 0.0), (1e-10, 0.0, -1e-10),
            (-745.0, -745.0, -745.0),
            (700.0, 700.0, 700.0), (1e5, 100001.0, 99999.0),
            (-30.0, 0.0, 30.0), (2.0, 2.0, 1.0), (1.0, 2.0, 2.0),
            (-1e300, 0.0, 1e300), (0.5, -0.25, 0.125), (40.0, 0.0, -40.0),
            (-2.0, -2.0, -2.0), (1e-300, -1e-300, 0.0), (10.0, 10.5, 11.0),
            (-5.0, 5.0, -5.0), (709.0, 0.0, 709.0), (-1e5, -1e5, -1e5)]

    def softmax(i):
        return lambda *xs: mp.exp(xs[i] - lse(*xs))
    fs.append(Fn("logsumexp", "logsumexp(j: @0)", lse,
                 [softmax(i) for i in range(3)], rows, reduce=True))
    fs.append(Fn("max_reduce", "max(j: @0)", max,
                 [lambda *xs, i=i: first_winner(xs, lambda a, b: a > b)[i]
                  for i in range(3)], rows, False, True))
    fs.append(Fn("min_reduce", "min(j: @0)", min,
                 [lambda *xs, i=i: first_winner(xs, lambda a, b: a < b)[i]
                  for i in range(3)], rows, False, True))
    return fs


# ---------------------------------------------------- stability cases
# tests/test_stability.c: where a naive formula overflows, underflows or
# cancels, the value and the gradient must stay finite and correct. Most
# cases are functions above at other points.

def stability_cases(fns):
    by_tag = {fn.tag: fn for fn in fns}

    def case(tag, points, new_tag=None, expr=None):
        fn = by_tag[tag]
        nargs = len(points[0]) if isinstance(points[0], tuple) else 1
        return Fn(new_tag or tag, expr or fn.expr, fn.value,
                  fn.partials[:nargs], points, fn.smooth, fn.reduce)

    pm800 = [800.0, -800.0]
    negative = [-3.0, -1e-5, -1e100]
    return [
        case("sigmoid", pm800 + [40.0, -40.0, 1000.0]),
        case("softplus", pm800 + [40.0, -40.0, 1000.0]),
        # binary cross-entropy of a logit z for label 1, written stably as
        # softplus(-z); naive -log(sigmoid(z)) is inf at z = -800
        unary("bce_logit", "softplus(-@0)", lambda x: mp.log1p(mp.exp(-x)),
              lambda x: -sigmoid(-x), pm800),
        case("logsumexp", [(1000.0, 1000.5, 999.0), (800.0, -800.0, 0.0),
                           (-800.0, -800.0, -800.0)], "lse3"),
        case("logsumexp", [(-1000.0, -1001.0), (1000.0, 1000.0)], "lse2"),
        case("log1p", [1e-10, -1e-12, 1e-300]),
        case("expm1", [1e-10, -1e-12, 1e-300]),
        case("pow_int2", negative, "square"),
        case("pow_int3", negative, "cube"),
        case("pow_int3", negative, "cube_call", "pow(@0, 3)"),
        case("hypot", [(1e200, 1e200), (1e-200, 1e-200), (1e200, 1e-200),
                       (1e-200, 1e200)]),
        case("asinh", [1e200, -1e200]),
        case("atanh", [1 - 1e-10, -(1 - 1e-10), NEXT_BELOW_1,
                       -NEXT_BELOW_1]),
    ]


# ------------------------------------------------------------ evaluation

def as_mpf(f):
    """f with its result made an mpf: a lambda returning an int (a
    convention, e.g. a step function's 0) works with evaluate()."""
    return lambda *a: mp.mpf(f(*a))


def central_difference(f, point, i, dps):
    """d f / d arg i by a central difference at dps digits, with a step of
    1e-40 relative to the argument (absolute at 0)."""
    with mp.workdps(dps):
        a = [mp.mpf(x) for x in point]
        h = mp.mpf(10) ** -40 * (abs(a[i]) if a[i] != 0 else 1)
        up, down = list(a), list(a)
        up[i] += h
        down[i] -= h
        return (f(*up) - f(*down)) / (2 * h)


def check_partial(fn, point, i, d):
    """Assert that the closed-form partial d agrees with a difference to 30
    digits. The difference loses the digits by which f's change over the
    step is smaller than f (sigmoid(800) = 1 - e^-800 needs 350 more); a
    partial below 10^-2000 of that scale is not checked (it is 0 as a
    double, e.g. a softmax weight e^-2e300)."""
    if not fn.smooth or mp.isinf(d) or d == 0:
        return
    with mp.workdps(DPS):
        f = abs(fn.value(*[mp.mpf(x) for x in point]))
        x = abs(mp.mpf(point[i])) or 1
        lost = max(0, int(mp.ceil(mp.log10(f / (abs(d) * x))))) if f else 0
    if lost > 2000:
        return
    fd = central_difference(fn.value, point, i, 80 + lost)
    assert abs(fd - d) <= abs(d) * mp.mpf(10) ** -30, (fn.tag, point, i,
                                                       d, fd)


def partial_at(fn, point, i):
    """Partial i at the point; an infinite slope (sqrt, cbrt at 0, acosh
    at 1: IEEE 1/0) is returned as +inf."""
    try:
        d = evaluate(as_mpf(fn.partials[i]), *point)
    except ZeroDivisionError:
        return mp.inf
    check_partial(fn, point, i, d)
    return d


def row(fn, point):
    v = evaluate(as_mpf(fn.value), *point)
    ds = [partial_at(fn, point, i) for i in range(fn.nargs)]
    pad = [0.0] * (NARGS_MAX - fn.nargs)
    args = ", ".join(c_lit(x) for x in list(point) + pad)
    parts = ", ".join(c_lit(to_double(d)) for d in ds)
    parts += "".join(", 0.0" for _ in pad)
    return "    {{%s}, %s, {%s}},  /* %s */" % (args, c_lit(to_double(v)),
                                              parts, mp.nstr(v, 20))


def table(out, name, fns):
    for fn in fns:
        out.append("")
        out.append("static const struct rr_point %s_%s[] = {" % (name, fn.tag))
        out.extend(row(fn, p) for p in fn.points)
        out.append("};")
    out.append("")
    out.append("static const struct rr_function %s[] = {" % name)
    for fn in fns:
        out.append('    {"%s", "%s", %d, %d, %d, %s_%s},'
                   % (fn.tag, fn.expr, fn.nargs, int(fn.reduce),
                      len(fn.points), name, fn.tag))
    out.append("};")


def main():
    out = [
        "/* Generated by: /usr/bin/python3 tests/gen_rule_refs.py"
        " > tests/rule_refs.h",
        " * Do not edit; rerun the command above instead.",
        " * Source of every value and partial: mpmath %s at %d significant"
        % (mp.__version__, DPS),
        " * digits (cross-checked at 90, partials also against a central",
        " * difference at 80+ digits), rounded to the nearest double; the",
        " * comment beside a point shows the value to 20 digits. Include",
        " * after <math.h> (HUGE_VAL). */",
        "#ifndef DVS_TEST_RULE_REFS_H",
        "#define DVS_TEST_RULE_REFS_H",
        "",
        "#define RR_NARGS_MAX %d" % NARGS_MAX,
        "",
        "/* One point: the arguments, the value there, and the partial",
        " * derivative with respect to each argument (unused slots 0). */",
        "struct rr_point {",
        "    double arg[RR_NARGS_MAX];",
        "    double value;",
        "    double partial[RR_NARGS_MAX];",
        "};",
        "",
        "/* One function: expr is its dervish expression, @0 @1 @2 standing",
        " * for the arguments; with reduce set, @0 is one row of nargs values",
        " * and the reduction runs over index j. */",
        "struct rr_function {",
        "    const char *tag;",
        "    const char *expr;",
        "    int nargs;",
        "    int reduce;",
        "    int npoints;",
        "    const struct rr_point *points;",
        "};",
    ]
    fns = functions()
    for fn in fns:
        assert len(fn.points) >= MIN_POINTS, fn.tag
    table(out, "rule_refs", fns)
    table(out, "stability_refs", stability_cases(fns))
    out += ["", "#endif"]
    print("\n".join(out))


if __name__ == "__main__":
    main()
