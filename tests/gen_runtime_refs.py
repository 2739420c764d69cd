#!/usr/bin/python3
"""Print tests/runtime_refs.h: reference values for the runtime helpers.

Run with Debian's interpreter, which has python3-mpmath:

    /usr/bin/python3 tests/gen_runtime_refs.py > tests/runtime_refs.h

Every reference is computed by mpmath at 50 significant digits, checked
against a second evaluation at 90 digits, and then rounded to the nearest
double. Arguments are Python floats, i.e. exact doubles, and are printed so
that a C compiler reads back the same double.

    /usr/bin/python3 tests/gen_runtime_refs.py --digamma-poly

prints instead the constants used by runtime/digamma.c near the positive
root of digamma (the root split into two doubles and a Chebyshev fit).
"""

import math
import sys

import mpmath as mp

DPS = 50
CHECK_DPS = 90
mp.mp.dps = DPS


def to_double(v):
    """The double nearest to the mpmath value v (correct for subnormals)."""
    if mp.isinf(v):
        return math.inf if v > 0 else -math.inf
    return float(mp.nstr(v, 40))


def c_lit(x):
    """A C literal that reads back as exactly the double x."""
    if math.isinf(x):
        return "HUGE_VAL" if x > 0 else "-HUGE_VAL"
    s = repr(x)
    assert float(s) == x
    return s


def evaluate(f, *args):
    """f(*args) at DPS digits, after checking it against CHECK_DPS digits."""
    with mp.workdps(CHECK_DPS):
        hi = f(*[mp.mpf(a) for a in args])
    with mp.workdps(DPS):
        v = f(*[mp.mpf(a) for a in args])
        # 30 digits agreeing is far more than a double needs (about 17);
        # near a root of digamma mpmath's error is absolute, not relative.
        if not mp.isinf(v) and v != 0:
            assert abs((v - hi) / hi) < mp.mpf(10) ** -30, (f, args)
        return v


def sigmoid(x):
    return 1 / (1 + mp.exp(-x))


def softplus(x):
    return mp.log1p(mp.exp(x))


def hypot_slope(a, b):
    return a / mp.sqrt(a * a + b * b)


def digamma_scale(x):
    """For x < 0: |psi(1-x)| + |pi cot(pi x)|, the size of the two terms
    whose difference is psi(x); 0 for x > 0 (plain relative tolerance)."""
    if x > 0:
        return mp.mpf(0)
    return abs(mp.digamma(1 - x)) + abs(mp.pi * mp.cot(mp.pi * x))


def trigamma(x):
    """psi'(x). mpmath's psi for x < 0 recurs up to x > 0 one step at a
    time (seconds at x = -1e6, unbounded at -1e15), so far below zero the
    reflection psi'(x) = pi^2 / sin^2(pi x) - psi'(1 - x) (A&S 6.4.7) is
    used instead; sin(pi x) is exact to the working precision there, x
    being an exact double."""
    if x > -1000:
        return mp.psi(1, x)
    return (mp.pi / mp.sin(mp.pi * x)) ** 2 - mp.psi(1, 1 - x)


def comment(v):
    if mp.isinf(v):
        return ""
    if v != 0 and abs(v) < mp.mpf("1e-400"):
        return "  /* about 10^%s */" % mp.nstr(mp.log10(abs(v)), 10)
    return "  /* %s */" % mp.nstr(v, 25)


def mirrored(xs):
    return [s * x for x in xs for s in (1.0, -1.0)]


SIGMOID_X = mirrored([5e-324, 1e-300, 1e-16, 1e-8, 0.5, 1.0, 2.5, 10.0, 30.0, 36.7,
                      100.0, 700.0, 740.0, 745.1, 800.0, 1e300])

SOFTPLUS_X = [0.0] + mirrored([5e-324, 1e-300, 1e-16, 1e-8, 0.5, 1.0, 2.5, 10.0,
                               18.0, 30.0, 36.7, 37.0, 50.0, 700.0, 740.0,
                               800.0, 1e10, 1e300])

HYPOT_SLOPE_AB = [
    (3.0, 4.0), (-3.0, 4.0), (4.0, -3.0), (1.0, 1.0), (1.0, 0.0), (-1.0, 0.0),
    (0.0, 2.0), (1e-8, 1.0), (1.0, 1e-8), (1e300, 1e300), (1e300, -1e-300),
    (1.7976931348623157e308, 1.7976931348623157e308), (2.5, -7.25),
    (-1e-300, 1e-300), (1e-310, 3e-310), (5e-324, 5e-324),
    (-5e-324, 1e-323), (2.2250738585072014e-308, 1e-320), (1e-200, 1e-200),
    (1.5 * 2.0 ** -500, 2.0 ** -501), (123.456, 0.001), (-0.75, -0.5),
    (6.02e23, 1.0), (1e-160, 1e-160),
]


def digamma_points():
    with mp.workdps(DPS):
        root = to_double(mp.findroot(mp.digamma, mp.mpf("1.46")))
        neg_roots = [to_double(mp.findroot(mp.digamma, mp.mpf(g)))
                     for g in ("-0.504", "-1.573", "-2.61")]
    edges = [root - 0.25, root + 0.25]  # where digamma.c changes method
    near = []
    for e in edges + [root]:
        near += [math.nextafter(e, -math.inf), e, math.nextafter(e, math.inf)]
    positive = [5e-324, 1e-308, 1e-300, 1e-8, 1e-3, 0.25, 0.5, 1.0, 1.2, 1.4, 1.46, 1.47,
                1.5, 1.75, 1.8, 2.0, 2.5, 3.0, 5.5, 9.999, 10.0, 10.5, 30.0,
                100.25, 1e6, 1e15, 1e300, 1.7976931348623157e308]
    negative = [-5e-324, -1e-308, -1e-300, -1e-8, -1e-3, -0.25, -0.46, -0.5, -0.75, -0.9999,
                -1.0001, -1.5, -2.0001, -2.9999, -3.5, -10.3, -123.25,
                -100000.3, -1e15 + 0.5, -4503599627370495.5,
                -30126450.942112051] + neg_roots
    return positive + near + negative


def trigamma_points():
    below_10 = math.nextafter(10.0, 0.0)    # where trigamma.c stops lifting
    positive = [5e-324, 1e-300, 1.3e-154, 1.5e-154, 1e-100, 1e-8, 1e-3, 0.1,
                0.5, 1.0, 1.46, 2.0, 2.5, 3.75, 7.0, 9.5, below_10, 10.0,
                10.5, 12.25, 30.0, 100.25, 1e6, 1e15, 1e150, 1e300,
                1.7976931348623157e308]
    near_poles = [-2.0 ** -40, -1e-8, 1e-8 - 1.0, -1.0 - 1e-8,
                  -1.0 - 2.0 ** -30, -3.0 + 1e-6, -3.0 - 1e-6, -17.0 + 0.001,
                  -17.0 - 0.001, -1e-154, -1e-300, -5e-324]
    negative = [-0.25, -0.5, -0.75, -0.9999, -1.5, -2.25, -3.5, -5.125,
                -9.75, -10.5, -123.25, -1000.3, -100000.3, -30126450.942112051,
                -1e15 + 0.5, -4503599627370495.5]
    return positive + near_poles + negative


def print_refs():
    out = []
    w = out.append
    w("/* Generated by: /usr/bin/python3 tests/gen_runtime_refs.py"
      " > tests/runtime_refs.h")
    w(" * Do not edit; rerun the command above instead.")
    w(" * Source of every value: mpmath %s at %d significant digits"
      % (mp.__version__, DPS))
    w(" * (cross-checked at %d), rounded to the nearest double; the comment"
      % CHECK_DPS)
    w(" * beside an entry shows the mpmath value to 25 digits. Include after")
    w(" * <math.h> (HUGE_VAL). */")
    w("#ifndef DVS_TEST_RUNTIME_REFS_H")
    w("#define DVS_TEST_RUNTIME_REFS_H")
    w("")
    w("struct ref1 { double x, want; };")
    w("struct ref2 { double a, b, want; };")
    w("/* scale: see tests/gen_runtime_refs.py digamma_scale() */")
    w("struct refd { double x, want, scale; };")

    def table1(name, f, xs):
        w("")
        w("static const struct ref1 %s[] = {" % name)
        for x in xs:
            v = evaluate(f, x)
            w("    {%s, %s},%s" % (c_lit(x), c_lit(to_double(v)), comment(v)))
        w("};")

    table1("sigmoid_refs", sigmoid, SIGMOID_X)
    table1("softplus_refs", softplus, SOFTPLUS_X)

    w("")
    w("static const struct ref2 hypot_slope_refs[] = {")
    for a, b in HYPOT_SLOPE_AB:
        v = evaluate(hypot_slope, a, b)
        w("    {%s, %s, %s},%s" % (c_lit(a), c_lit(b), c_lit(to_double(v)),
                                  comment(v)))
    w("};")

    w("")
    w("static const struct refd digamma_refs[] = {")
    for x in digamma_points():
        v = evaluate(mp.digamma, x)
        with mp.workdps(DPS):
            s = digamma_scale(mp.mpf(x))
        w("    {%s, %s, %s},%s" % (c_lit(x), c_lit(to_double(v)),
                                  c_lit(float(mp.nstr(s, 17))), comment(v)))
    w("};")

    table1("trigamma_refs", trigamma, trigamma_points())
    w("")
    w("#endif")
    print("\n".join(out))


def print_digamma_poly():
    mp.mp.dps = 60
    root = mp.findroot(mp.digamma, mp.mpf("1.46"))
    r_hi = to_double(root)
    r_lo = to_double(root - mp.mpf(r_hi))
    d1 = mp.psi(1, root)

    def g(h):
        return d1 if h == 0 else mp.digamma(root + h) / h

    poly, err = mp.chebyfit(g, [-0.25, 0.25], 17, error=True)
    print("root %s = %r + %r" % (mp.nstr(root, 40), r_hi, r_lo))
    print("fit error %s; coefficients, highest degree first:"
          % mp.nstr(err, 3))
    for c in poly:
        print(repr(to_double(c)))


if __name__ == "__main__":
    if sys.argv[1:] == ["--digamma-poly"]:
        print_digamma_poly()
    elif sys.argv[1:]:
        sys.exit("usage: gen_runtime_refs.py [--digamma-poly]")
    else:
        print_refs()
