/* dvs_clamp: x limited to [lo, hi]. Only a strict crossing replaces x, so
 * x == lo or x == hi returns x itself (ties count as inside, as the
 * derivative rule says), and a NaN x comes back unchanged. */
static double dvs_clamp(double x, double lo, double hi)
{
    if (x < lo)
        return lo;
    if (x > hi)
        return hi;
    return x;
}
