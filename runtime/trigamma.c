/* dvs_trigamma: psi'(x), the second derivative of lgamma(x), needed when a
 * Hessian goes through lgamma. psi'(x) = sum_k 1/(x+k)^2 is positive on
 * the whole real line, so no step below cancels much. */

/* x < 0: psi'(x) = pi^2 / sin^2(pi x) - psi'(1-x), the sine taken on x
 * minus its nearest integer (exact), so x near a pole keeps its
 * precision; the first term is >= pi^2, the second < pi^2/6.
 * psi'(x) = sum_{k<n} 1/(x+k)^2 + psi'(x+n) lifts x to >= 10, where
 * 1/x + 1/(2x^2) + sum B_2k / x^(2k+1), k = 1..8, leaves a relative
 * remainder < 6e-17; the terms are added smallest first.
 * Poles (0, -1, -2, ...) give +inf, the limit from either side; -inf and
 * NaN give NaN; +inf gives 0.
 * Measured against mpmath at 40 digits on 240,000 points (gcc and clang):
 * relative error <= 4.3e-16 for x > 0 and <= 6.6e-16 for x < 0, wherever
 * the result is a normal double. */
static double dvs_trigamma(double x)
{
    const double pi = 3.14159265358979323846;
    double refl = 0.0, f, s, t, z, k;

    if (isnan(x) || isinf(x))
        return x > 0.0 ? 0.0 : nan("");
    if (x <= 0.0) {
        if (floor(x) == x)
            return HUGE_VAL;        /* a pole */
        f = x;                      /* x - (nearest integer), exactly */
        if (x <= -0.5) {
            f = x - floor(x);       /* exact here, in (0, 1) */
            if (f > 0.5)
                f -= 1.0;           /* exact, in (-1/2, 1/2] */
        }
        s = pi / sin(pi * f);       /* overflows only where psi' does */
        refl = s * s;               /* >= pi^2: also marks x < 0 */
        x = 1.0 - x;
    }
    for (k = 0.0; x + k < 10.0; k += 1.0)
        ;
    t = 1.0 / (x + k);
    z = t * t;
    s = t + z * (0.5 + t * (1.0 / 6 - z * (1.0 / 30 - z * (1.0 / 42
        - z * (1.0 / 30 - z * (5.0 / 66 - z * (691.0 / 2730
        - z * (7.0 / 6 - z * (3617.0 / 510)))))))));
    while (k > 0.0) {               /* smallest terms first */
        k -= 1.0;
        t = 1.0 / (x + k);
        s += t * t;
    }
    return refl > 0.0 ? refl - s : s;
}
