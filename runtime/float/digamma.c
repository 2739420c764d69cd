/* dvs_digamma for --real float: psi(x), the derivative of lgamma(x), by the
 * method of runtime/digamma.c (reflection for x < 0, the fitted polynomial
 * within 1/4 of the positive root, else the recurrence to x >= 10 and the
 * asymptotic series), in float arithmetic.  The polynomial's coefficients
 * are the double ones rounded to float; the root is split into two floats
 * (1.4616321f + 1.243815e-08f, from mpmath's root at 40 digits), so the
 * error stays relative at the root.  Poles and NaN give NaN, +inf +inf. */
static float dvs_digamma(float x)
{
    const float pi = 3.14159265358979323846f;
    const float r_hi = 1.4616321f, r_lo = 1.243815e-08f;
    const float p[17] = {
        0.0012233433006454324f, -0.0017881731629368614f, 0.002288935746653952f,
        -0.0033461365316861395f, 0.004927732045782053f, -0.007205923913340662f,
        0.010538759984258197f, -0.015424719669211927f, 0.022597648827772654f,
        -0.0331611273453454f, 0.04880428815820619f, -0.07219956124777696f,
        0.1078240506912889f, -0.16394270544244532f, 0.25849976095565097f,
        -0.4427631689835921f, 0.9676722454476212f
    };
    float acc = 0.0f, f, t, k, h, z, series;
    int i;

    if (isnan(x) || (isinf(x) && x > 0.0f))
        return x;
    if (x <= 0.0f) {
        if (floorf(x) == x)
            return nanf("");        /* a pole, or -inf */
        f = x;                      /* x - (nearest integer), exactly */
        if (x <= -0.5f) {
            f = x - floorf(x);      /* exact here, in (0, 1) */
            if (f > 0.5f)
                f -= 1.0f;          /* exact, in (-1/2, 1/2] */
        }
        if (fabsf(f) < 1e-9f)       /* pi cot(pi f) = 1/f - pi^2 f/3 ... */
            t = 1.0f / f;
        else if (fabsf(f) <= 0.25f)
            t = pi / tanf(pi * f);
        else {                      /* cot(pi f) = tan(pi (1/2 - f)) */
            t = pi * tanf(pi * (0.5f - fabsf(f)));
            if (f < 0.0f)
                t = -t;
        }
        acc = -t;
        x = 1.0f - x;
    }
    if (fabsf(x - r_hi) <= 0.25f) {
        h = (x - r_hi) - r_lo;      /* x - r_hi is exact here */
        t = p[0];
        for (i = 1; i < 17; i++)
            t = t * h + p[i];
        return acc + h * t;
    }
    for (k = 0.0f; x + k < 10.0f; k += 1.0f)
        acc -= 1.0f / (x + k);
    x += k;
    z = 1.0f / (x * x);
    series = z * (1.0f / 12 - z * (1.0f / 120 - z * (1.0f / 252 - z * (1.0f / 240
             - z * (1.0f / 132 - z * (691.0f / 32760 - z / 12))))));
    return acc + (logf(x) - 0.5f / x - series);
}
