/* dvs_trigamma for --real float: psi'(x), the second derivative of
 * lgamma(x), by the method of runtime/trigamma.c (reflection for x < 0,
 * the recurrence to x >= 10, then the asymptotic series, smallest terms
 * first), in float arithmetic.  Poles give +inf, -inf and NaN NaN, +inf 0. */
static float dvs_trigamma(float x)
{
    const float pi = 3.14159265358979323846f;
    float refl = 0.0f, f, s, t, z, k;

    if (isnan(x) || isinf(x))
        return x > 0.0f ? 0.0f : nanf("");
    if (x <= 0.0f) {
        if (floorf(x) == x)
            return HUGE_VALF;       /* a pole */
        f = x;                      /* x - (nearest integer), exactly */
        if (x <= -0.5f) {
            f = x - floorf(x);      /* exact here, in (0, 1) */
            if (f > 0.5f)
                f -= 1.0f;          /* exact, in (-1/2, 1/2] */
        }
        s = pi / sinf(pi * f);      /* overflows only where psi' does */
        refl = s * s;               /* >= pi^2: also marks x < 0 */
        x = 1.0f - x;
    }
    for (k = 0.0f; x + k < 10.0f; k += 1.0f)
        ;
    t = 1.0f / (x + k);
    z = t * t;
    s = t + z * (0.5f + t * (1.0f / 6 - z * (1.0f / 30 - z * (1.0f / 42
        - z * (1.0f / 30 - z * (5.0f / 66 - z * (691.0f / 2730
        - z * (7.0f / 6 - z * (3617.0f / 510)))))))));
    while (k > 0.0f) {              /* smallest terms first */
        k -= 1.0f;
        t = 1.0f / (x + k);
        s += t * t;
    }
    return refl > 0.0f ? refl - s : s;
}
