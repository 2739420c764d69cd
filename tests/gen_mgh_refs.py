#!/usr/bin/python3
"""Print tests/e2e/mgh_refs.h: f and its gradient at the standard starting
points of the Moré, Garbow & Hillstrom (1981) test functions used by
tests/test_published.c, and a minimiser x* for those whose published
minimum f* comes without an exact x*.

Run with Debian's interpreter, which has python3-mpmath:

    /usr/bin/python3 tests/gen_mgh_refs.py > tests/e2e/mgh_refs.h

Every function is written here from its definition in the paper (ACM TOMS
7(1):17-41) as the residuals f_i of f = sum f_i^2, with the data tables as
printed there (the same numbers as the MINPACK test program by the same
authors, Netlib minpack/ex/file17, shipped in Debian's minpack-dev as
examples/file17.gz). Values use the same double-precision arguments and
data as the C test, at 40 significant digits; gradients come from
mpmath.diff (high-precision numerical differentiation, independent of the
closed forms in the C test). Each result is checked against a second run at
60 digits before it is rounded to the nearest double.

x* is found in 40-digit arithmetic by Levenberg-Marquardt from x0, then
polished by Newton's method (the C test compares f(x*) with the published
f*); the script checks at 60 digits that the gradient there is below 1e-20
of its size at x0, far less than rounding x* to double changes it.
"""

import mpmath as mp

DPS = 40
CHECK_DPS = 60


def d(x):
    """The exact value of the double nearest to the decimal string x."""
    return mp.mpf(float(x))


def ds(text):
    """d() of each number in a whitespace-separated string."""
    return [d(v) for v in text.split()]


def rosenbrock(x1, x2):                     # problem 1
    return [10 * (x2 - x1**2), 1 - x1]


def freudenstein_roth(x1, x2):              # problem 2
    return [-13 + x1 + ((5 - x2) * x2 - 2) * x2,
            -29 + x1 + ((x2 + 1) * x2 - 14) * x2]


def powell_badly_scaled(x1, x2):            # problem 3
    return [10**4 * x1 * x2 - 1, mp.exp(-x1) + mp.exp(-x2) - d("1.0001")]


def brown_badly_scaled(x1, x2):             # problem 4
    return [x1 - 10**6, x2 - 2 * mp.mpf(10)**-6, x1 * x2 - 2]


def beale(x1, x2):                          # problem 5
    y = ds("1.5 2.25 2.625")
    return [y[i] - x1 * (1 - x2**(i + 1)) for i in range(3)]


def jennrich_sampson(x1, x2):               # problem 6, m = 10
    return [2 + 2 * i - (mp.exp(i * x1) + mp.exp(i * x2))
            for i in range(1, 11)]


def helical_valley(x1, x2, x3):             # problem 7
    theta = mp.atan(x2 / x1) / (2 * mp.pi)
    if x1 < 0:
        theta += mp.mpf(1) / 2
    return [10 * (x3 - 10 * theta), 10 * (mp.sqrt(x1**2 + x2**2) - 1), x3]


BARD_Y = ds("0.14 0.18 0.22 0.25 0.29 0.32 0.35 0.39 0.37 0.58 0.73 0.96"
            " 1.34 2.10 4.39")


def bard(x1, x2, x3):                       # problem 8
    res = []
    for i in range(1, 16):
        u, v = i, 16 - i
        w = min(u, v)
        res.append(BARD_Y[i - 1] - (x1 + u / (v * x2 + w * x3)))
    return res


GAUSSIAN_Y = ds("0.0009 0.0044 0.0175 0.0540 0.1295 0.2420 0.3521 0.3989"
                " 0.3521 0.2420 0.1295 0.0540 0.0175 0.0044 0.0009")


def gaussian(x1, x2, x3):                   # problem 9
    return [x1 * mp.exp(-x2 * (mp.mpf(8 - i) / 2 - x3)**2 / 2)
            - GAUSSIAN_Y[i - 1] for i in range(1, 16)]


MEYER_Y = ds("34780 28610 23650 19630 16370 13720 11540 9744 8261 7030 6005"
             " 5147 4427 3820 3307 2872")


def meyer(x1, x2, x3):                      # problem 10
    return [x1 * mp.exp(x2 / (45 + 5 * i + x3)) - MEYER_Y[i - 1]
            for i in range(1, 17)]


def gulf(x1, x2, x3):                       # problem 11, m = 99
    res = []
    for i in range(1, 100):
        t = d("0.%02d" % i)
        y = 25 + (-50 * mp.log(t))**(mp.mpf(2) / 3)
        res.append(mp.exp(-abs(y - x2)**x3 / x1) - t)
    return res


def box_3d(x1, x2, x3):                     # problem 12, m = 10
    # t_i = 0.1 i, each the double nearest to the decimal, as in the C test
    t = [d("0.%d" % i) for i in range(1, 10)] + [d("1.0")]
    return [mp.exp(-ti * x1) - mp.exp(-ti * x2)
            - x3 * (mp.exp(-ti) - mp.exp(-10 * ti)) for ti in t]


def powell_singular(x1, x2, x3, x4):        # problem 13
    return [x1 + 10 * x2, mp.sqrt(5) * (x3 - x4), (x2 - 2 * x3)**2,
            mp.sqrt(10) * (x1 - x4)**2]


def wood(x1, x2, x3, x4):                   # problem 14
    return [10 * (x2 - x1**2), 1 - x1, mp.sqrt(90) * (x4 - x3**2), 1 - x3,
            mp.sqrt(10) * (x2 + x4 - 2), (x2 - x4) / mp.sqrt(10)]


KOWALIK_Y = ds("0.1957 0.1947 0.1735 0.1600 0.0844 0.0627 0.0456 0.0342"
               " 0.0323 0.0235 0.0246")
KOWALIK_U = ds("4 2 1 0.5 0.25 0.167 0.125 0.1 0.0833 0.0714 0.0625")


def kowalik_osborne(x1, x2, x3, x4):        # problem 15
    return [y - x1 * (u**2 + u * x2) / (u**2 + u * x3 + x4)
            for y, u in zip(KOWALIK_Y, KOWALIK_U)]


def brown_dennis(x1, x2, x3, x4):           # problem 16, m = 20
    res = []
    for i in range(1, 21):
        t = mp.mpf(i / 5)                   # the double nearest i/5
        res.append((x1 + t * x2 - mp.exp(t))**2
                   + (x3 + x4 * mp.sin(t) - mp.cos(t))**2)
    return res


OSBORNE1_Y = ds("0.844 0.908 0.932 0.936 0.925 0.908 0.881 0.850 0.818 0.784"
                " 0.751 0.718 0.685 0.658 0.628 0.603 0.580 0.558 0.538 0.522"
                " 0.506 0.490 0.478 0.467 0.457 0.448 0.438 0.431 0.424 0.420"
                " 0.414 0.411 0.406")


def osborne_1(x1, x2, x3, x4, x5):          # problem 17
    return [y - (x1 + x2 * mp.exp(-10 * i * x4) + x3 * mp.exp(-10 * i * x5))
            for i, y in enumerate(OSBORNE1_Y)]


def biggs_exp6(x1, x2, x3, x4, x5, x6):     # problem 18, m = 13
    res = []
    for i in range(1, 14):
        t = mp.mpf(i / 10)                  # the double nearest 0.1 i
        y = mp.exp(-t) - 5 * mp.exp(-10 * t) + 3 * mp.exp(-4 * t)
        res.append(x3 * mp.exp(-t * x1) - x4 * mp.exp(-t * x2)
                   + x6 * mp.exp(-t * x5) - y)
    return res


def extended_rosenbrock(*x):                # problem 21, n = 10
    return [r for i in range(len(x) // 2)
            for r in rosenbrock(x[2 * i], x[2 * i + 1])]


# (name, residuals, x0, whether to search for x*: the paper gives f* but
# no exact x* for these)
PROBLEMS = [
    ("rosenbrock", rosenbrock, ["-1.2", "1"], False),
    ("freudenstein_roth", freudenstein_roth, ["0.5", "-2"], False),
    ("powell_badly_scaled", powell_badly_scaled, ["0", "1"], True),
    ("brown_badly_scaled", brown_badly_scaled, ["1", "1"], False),
    ("beale", beale, ["1", "1"], False),
    ("jennrich_sampson", jennrich_sampson, ["0.3", "0.4"], True),
    ("helical_valley", helical_valley, ["-1", "0", "0"], False),
    ("bard", bard, ["1", "1", "1"], True),
    ("gaussian", gaussian, ["0.4", "1", "0"], True),
    ("meyer", meyer, ["0.02", "4000", "250"], True),
    ("gulf", gulf, ["5", "2.5", "0.15"], False),
    ("box_3d", box_3d, ["0", "10", "20"], False),
    ("powell_singular", powell_singular, ["3", "-1", "0", "1"], False),
    ("wood", wood, ["-3", "-1", "-3", "-1"], False),
    ("kowalik_osborne", kowalik_osborne, ["0.25", "0.39", "0.415", "0.39"],
     True),
    ("brown_dennis", brown_dennis, ["25", "5", "-5", "-1"], True),
    ("osborne_1", osborne_1, ["0.5", "1.5", "-1", "0.01", "0.02"], True),
    ("biggs_exp6", biggs_exp6, ["1", "2", "1", "1", "1", "1"], False),
    ("extended_rosenbrock", extended_rosenbrock, ["-1.2", "1"] * 5, False),
]


def sum_of_squares(residuals):
    return lambda *x: mp.fsum(r**2 for r in residuals(*x))


def value_and_gradient(f, x, dps):
    with mp.workdps(dps):
        n = len(x)
        grad = []
        for k in range(n):
            order = [0] * n
            order[k] = 1
            grad.append(mp.diff(f, x, tuple(order)))
        return f(*x), grad


def jacobian(residuals, x):
    """Central differences: error O(h^2) = 1e-30 relative at 40 digits."""
    cols = []
    for k in range(len(x)):
        h = mp.mpf(10)**-15 * max(1, abs(x[k]))
        up, down = list(x), list(x)
        up[k] += h
        down[k] -= h
        cols.append([(a - b) / (2 * h)
                     for a, b in zip(residuals(*up), residuals(*down))])
    return mp.matrix([list(row) for row in zip(*cols)])


def gradient(residuals, x):
    return jacobian(residuals, x).T * mp.matrix(residuals(*x)) * 2


def levenberg_marquardt(residuals, x):
    """Gauss-Newton steps damped by Marquardt's scaled diagonal; stops when
    the step is negligible or nothing lowers f at this precision. Fast far
    from x*, but only linear near a minimum with large residuals."""
    f = sum_of_squares(residuals)
    fx, damping = f(*x), mp.mpf(10)**-3
    for _ in range(1000):
        J = jacobian(residuals, x)
        A = J.T * J
        g = J.T * mp.matrix(residuals(*x))
        while True:
            B = A.copy()
            for k in range(len(x)):
                B[k, k] += damping * A[k, k]
            step = mp.lu_solve(B, -g)
            trial = [a + b for a, b in zip(x, step)]
            ft = f(*trial)
            if ft < fx:
                x, fx, damping = trial, ft, damping / 10
                break
            damping *= 10
            if damping > 10**40:
                return x
        if mp.norm(step) <= mp.mpf(10)**-32 * (1 + mp.norm(mp.matrix(x))):
            return x
    return x


def newton(residuals, x):
    """Newton's method on grad f = 0 with a difference Hessian (accurate to
    about 1e-20), which converges fast where Gauss-Newton crawls."""
    for _ in range(20):
        n = len(x)
        H = mp.matrix(n, n)
        for k in range(n):
            h = mp.mpf(10)**-10 * max(1, abs(x[k]))
            up, down = list(x), list(x)
            up[k] += h
            down[k] -= h
            col = (gradient(residuals, up)
                   - gradient(residuals, down)) / (2 * h)
            for j in range(n):
                H[j, k] = col[j]
        step = mp.lu_solve(H, -gradient(residuals, x))
        x = [a + b for a, b in zip(x, step)]
        if mp.norm(step) <= mp.mpf(10)**-30 * (1 + mp.norm(mp.matrix(x))):
            break
    return x


def minimise(residuals, x0):
    with mp.workdps(DPS):
        return newton(residuals,
                      levenberg_marquardt(residuals, [d(v) for v in x0]))


def to_double(v):
    return float(mp.nstr(v, 30))


def c_lit(v):
    s = repr(to_double(v))
    assert float(s) == to_double(v)
    return s


def check_gaussian_data():
    """The paper's table for problem 9 is the standard normal density at
    t_i = (8 - i) / 2, to four decimals."""
    for i, y in zip(range(1, 16), GAUSSIAN_Y):
        assert abs(y - mp.npdf(mp.mpf(8 - i) / 2)) <= mp.mpf("0.00005"), i


def main():
    check_gaussian_data()
    print("/* mgh_refs.h - f and its gradient at the standard starting point")
    print(" * x0 of the Moré, Garbow & Hillstrom (1981) functions in")
    print(" * test_published.c, by mpmath %s at %d digits (checked at %d),"
          % (mp.__version__, DPS, CHECK_DPS))
    print(" * and minimisers x* (rounded to double) where the paper gives f*")
    print(" * without an exact x*.")
    print(" * Generated by: /usr/bin/python3 tests/gen_mgh_refs.py"
          " > tests/e2e/mgh_refs.h */")
    for name, residuals, x0, search in PROBLEMS:
        f = sum_of_squares(residuals)
        v, g = value_and_gradient(f, [d(e) for e in x0], DPS)
        v2, g2 = value_and_gradient(f, [d(e) for e in x0], CHECK_DPS)
        for a, b in zip([v] + g, [v2] + g2):
            assert abs(a - b) <= mp.mpf(10)**-25 * max(1, abs(b)), (name, a, b)
        print("")
        print("/* %s at x0 = (%s); f(x0) = %s */"
              % (name, ", ".join(x0), mp.nstr(v, 20)))
        print("static const double mp_%s_f0 = %s;" % (name, c_lit(v)))
        print("static const double mp_%s_g0[%d] = {%s};"
              % (name, len(g), ", ".join(c_lit(e) for e in g)))
        if search:
            xs = minimise(residuals, x0)
            fs, gs = value_and_gradient(f, xs, CHECK_DPS)
            scale = max(abs(e) for e in g2)
            # far below what rounding x* to double changes
            assert all(abs(e) <= mp.mpf(10)**-20 * scale for e in gs), name
            print("/* a minimiser, where f = %s */" % mp.nstr(fs, 20))
            print("#define MP_%s_XSTAR {%s}"
                  % (name.upper(), ", ".join(c_lit(e) for e in xs)))


if __name__ == "__main__":
    main()
