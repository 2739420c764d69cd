/* dvs_softplus: log(1 + e^x), the smooth version of max(0, x).
 * For x > 0 it is rewritten as x + log(1 + e^-x), so exp never sees a
 * positive argument (no overflow) and log1p keeps the small correction
 * exact; for x <= 0, log1p(e^x) is accurate even when e^x is tiny. */
static double dvs_softplus(double x)
{
    if (x > 0.0)
        return x + log1p(exp(-x));
    return log1p(exp(x)); /* x <= 0, or NaN, which passes through */
}
