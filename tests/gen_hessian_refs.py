#!/usr/bin/python3
"""Print tests/hessian_refs.h: models with the value, gradient and full
Hessian at a few points each, for tests/test_hessian_refs.c, which checks
the emitted <model>_hessvec (and the evaluator's) against them.

Run with Debian's interpreter, which has python3-mpmath:

    /usr/bin/python3 tests/gen_hessian_refs.py > tests/hessian_refs.h

Every derivative is mpmath's numerical differentiation (mp.diff, which
raises its own working precision) of the model written with mpmath's
functions, at 50 significant digits, checked against the same at 90
digits; where a closed form is known it is checked against that too, so
a slip in a model's transcription here cannot go unnoticed. Values are
then rounded to the nearest double. Points are exact doubles.
"""

import os
import sys

import mpmath as mp

sys.dont_write_bytecode = True     # leave no __pycache__ in tests/
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from gen_runtime_refs import DPS, CHECK_DPS, c_lit, to_double  # noqa: E402

NMAX = 3            # params of the largest model
AGREE = mp.mpf(10) ** -30


def lgamma(x):
    """ln |Gamma(x)|, as C's lgamma (mpmath's loggamma is complex for x < 0)."""
    return mp.log(abs(mp.gamma(x)))


def trigamma(x):
    return mp.psi(1, x)


class Model:
    """A dervish model: its name (also the file stem), its text, the same
    function in mpmath over the flat params, its points, and optionally
    the Hessian in closed form."""

    def __init__(self, name, text, f, points, hessian=None):
        self.name, self.text, self.f = name, text, f
        self.points, self.hessian = points, hessian


def gammaprod_hessian(a, b):
    """d2/da2 = b^2 psi'(ab+2) + psi'(a), d2/dadb = ab psi'(ab+2) + psi(ab+2),
    d2/db2 = a^2 psi'(ab+2)."""
    t = trigamma(a * b + 2)
    return [[b * b * t + trigamma(a), a * b * t + mp.digamma(a * b + 2)],
            [a * b * t + mp.digamma(a * b + 2), a * a * t]]


def dirichlet_hessian(*alpha):
    """The log of the Dirichlet normaliser: delta_ij psi'(alpha_i) -
    psi'(sum alpha)."""
    s = trigamma(mp.fsum(alpha))
    return [[(trigamma(ai) if i == j else 0) - s for j in range(len(alpha))]
            for i, ai in enumerate(alpha)]


def rosenbrock_hessian(x1, x2):
    """Moré, Garbow & Hillstrom 1981, problem 1: f = f1^2 + f2^2 with
    f1 = 10 (x2 - x1^2), f2 = 1 - x1, differentiated twice by hand."""
    return [[1200 * x1 * x1 - 400 * x2 + 2, -400 * x1], [-400 * x1, 200]]


MODELS = [
    Model("gammaprod",
          "# lgamma twice: its Hessian needs trigamma, here also below zero\n"
          "param a, b\n"
          "f = lgamma(a*b + 2) + lgamma(a)\n"
          "output f\n",
          lambda a, b: lgamma(a * b + 2) + lgamma(a),
          [(2.5, 1.5), (0.125, 20.0), (-1.3, 2.9), (0.75, -4.2),
           (12.5, 3.25), (3.0, -0.25)],
          gammaprod_hessian),
    Model("dirichlet",
          "# the log of the normaliser of a Dirichlet density\n"
          "param alpha[3]\n"
          "lognorm = sum(i: lgamma(alpha[i])) - lgamma(sum(i: alpha[i]))\n"
          "output lognorm\n",
          lambda a0, a1, a2: (lgamma(a0) + lgamma(a1) + lgamma(a2)
                              - lgamma(a0 + a1 + a2)),
          [(0.5, 1.5, 2.5), (10.0, 20.0, 30.0), (0.05, 0.2, 3.0),
           (1000.0, 2000.0, 500.0), (-0.5, 2.25, 3.5)],
          dirichlet_hessian),
    Model("rosenbrock",
          "# Rosenbrock's function, problem 1 of the MGH 1981 test set\n"
          "param x1, x2\n"
          "f = (10*(x2 - x1^2))^2 + (1 - x1)^2\n"
          "output f\n",
          lambda x1, x2: (10 * (x2 - x1 ** 2)) ** 2 + (1 - x1) ** 2,
          [(-1.2, 1.0), (1.0, 1.0), (0.5, -0.75), (-2.0, 3.5)],
          rosenbrock_hessian),
    Model("mixed",
          "# one term per builtin family, all coupled\n"
          "param x, y, z\n"
          "f = exp(-0.5*x) * log(1 + y^2) + sin(x*z) * tanh(y) +\n"
          "    pow(z, y) * sqrt(x + 2) + atan2(y, z) + hypot(x, z) +\n"
          "    erf(x*y)\n"
          "output f\n",
          lambda x, y, z: (mp.exp(-0.5 * x) * mp.log(1 + y ** 2)
                           + mp.sin(x * z) * mp.tanh(y)
                           + mp.power(z, y) * mp.sqrt(x + 2)
                           + mp.atan2(y, z) + mp.hypot(x, z) + mp.erf(x * y)),
          [(0.3, 0.7, 1.2), (-1.1, -0.4, 2.5), (1.75, 1.25, 0.6),
           (0.0625, -1.5, 3.0)]),
]


def derivatives(model, point, dps):
    """Value, gradient and Hessian of model at point, at dps digits."""
    with mp.workdps(dps):
        x = [mp.mpf(v) for v in point]
        n = len(x)

        def order(*ks):
            return tuple(sum(1 for k in ks if k == i) for i in range(n))

        value = model.f(*x)
        grad = [mp.diff(model.f, x, order(i)) for i in range(n)]
        hess = [[mp.diff(model.f, x, order(i, j)) for j in range(n)]
                for i in range(n)]
        closed = model.hessian(*x) if model.hessian else None
        return value, grad, hess, closed


def agree(a, b, scale):
    return abs(a - b) <= AGREE * scale


def resolved(v, scale):
    """v, or 0 where it is below what the differentiation resolves (the
    gradient at a minimum comes out as 1e-106 instead of 0)."""
    return v if abs(v) > AGREE * scale else mp.mpf(0)


def checked(model, point):
    """derivatives() at DPS, after checking it against CHECK_DPS and against
    the closed form. Entries are compared relative to the largest entry of
    their kind, or absolutely where that is below 1."""
    lo = derivatives(model, point, DPS)
    hi = derivatives(model, point, CHECK_DPS)
    value, grad, hess, closed = lo
    n = len(grad)
    with mp.workdps(DPS):
        gscale = max([abs(g) for g in grad] + [1])
        hscale = max([abs(h) for row in hess for h in row] + [1])
        where = (model.name, point)
        assert agree(value, hi[0], max(abs(value), 1)), where
        assert all(agree(a, b, gscale) for a, b in zip(grad, hi[1])), where
        pairs = [(hess[i][j], hi[2][i][j]) for i in range(n)
                 for j in range(n)]
        if closed:
            pairs += [(hess[i][j], closed[i][j]) for i in range(n)
                      for j in range(n)]
        assert all(agree(a, b, hscale) for a, b in pairs), where
        grad = [resolved(g, gscale) for g in grad]
        hess = [[resolved(h, hscale) for h in row] for row in hess]
    return value, grad, hess


def c_string(text):
    lines = text.split("\n")[:-1]
    return "\n".join('     "%s\\n"' % line.replace('"', '\\"')
                     for line in lines)


def padded(values, fill):
    return ", ".join(values + [fill] * (NMAX - len(values)))


def print_refs():
    out = []
    w = out.append
    w("/* Generated by: /usr/bin/python3 tests/gen_hessian_refs.py"
      " > tests/hessian_refs.h")
    w(" * Do not edit; rerun the command above instead.")
    w(" * Source of every value: mpmath %s, numerical differentiation"
      % mp.__version__)
    w(" * (mp.diff) at %d significant digits, cross-checked at %d and against"
      % (DPS, CHECK_DPS))
    w(" * the closed forms in the generator, rounded to the nearest double."
      " */")
    w("#ifndef DVS_TEST_HESSIAN_REFS_H")
    w("#define DVS_TEST_HESSIAN_REFS_H")
    w("")
    w("#define HR_NMAX %d    /* params of the largest model */" % NMAX)
    w("")
    w("/* One point: the flat params, the value, the gradient and the")
    w(" * Hessian (row i, column j: d2 f / dx_i dx_j); unused entries 0. */")
    w("struct hr_point {")
    w("    double x[HR_NMAX], value, grad[HR_NMAX], hess[HR_NMAX][HR_NMAX];")
    w("};")
    w("")
    w("struct hr_model {")
    w("    const char *name;     /* also the file stem and symbol prefix */")
    w("    const char *text;")
    w("    int n;                /* doubles in <name>_param */")
    w("    int npoints;")
    w("    const struct hr_point *points;")
    w("};")
    for m in MODELS:
        n = len(m.points[0])
        w("")
        w("static const struct hr_point %s_points[] = {" % m.name)
        for p in m.points:
            value, grad, hess = checked(m, p)
            w("    {{%s}," % padded([c_lit(v) for v in p], "0"))
            w("     %s," % c_lit(to_double(value)))
            w("     {%s}," % padded([c_lit(to_double(g)) for g in grad], "0"))
            rows = ["{%s}" % padded([c_lit(to_double(h)) for h in row], "0")
                    for row in hess]
            rows += ["{0}"] * (NMAX - n)
            w("     {%s}}," % ",\n      ".join(rows))
        w("};")
    w("")
    w("static const struct hr_model hessian_models[] = {")
    for m in MODELS:
        w('    {"%s",' % m.name)
        w(c_string(m.text) + ",")
        w("     %d, %d, %s_points}," % (len(m.points[0]), len(m.points),
                                       m.name))
    w("};")
    w("")
    w("#endif")
    print("\n".join(out))


if __name__ == "__main__":
    if sys.argv[1:]:
        sys.exit("usage: gen_hessian_refs.py")
    print_refs()
