/* dvs_sign: 1.0 for positive x, -1.0 for negative x, +0.0 for either zero,
 * and NaN for NaN (returned as it came in). */
static double dvs_sign(double x)
{
    if (x > 0.0)
        return 1.0;
    if (x < 0.0)
        return -1.0;
    if (isnan(x))
        return x;
    return 0.0;
}
