/* dvs_hypot_slope: a / hypot(a, b), the derivative of hypot(a, b) with
 * respect to a.  Where hypot itself would round to a subnormal (tiny
 * arguments) or overflow (huge ones) the quotient loses every digit, so
 * such arguments are first scaled by a power of two, which is exact and
 * leaves the quotient unchanged. */
static double dvs_hypot_slope(double a, double b)
{
    double m = fmax(fabs(a), fabs(b));
    if (m < 0x1p-500) {
        a *= 0x1p600;
        b *= 0x1p600;
    } else if (m > 0x1p500) {
        a *= 0x1p-600;
        b *= 0x1p-600;
    }
    return a / hypot(a, b);
}
