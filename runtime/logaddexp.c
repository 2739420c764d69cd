/* dvs_logaddexp: log(e^a + e^b) as max + log1p(e^-(max - min)), so exp only
 * sees arguments <= 0 and nothing overflows. Infinities are settled first
 * (max - min would be inf - inf there): (-inf, -inf) gives -inf, the start
 * of a logsumexp sum; any +inf gives +inf; NaN wins over everything. */
static double dvs_logaddexp(double a, double b)
{
    double hi, lo;
    if (isnan(a) || isnan(b))
        return a + b;
    hi = a >= b ? a : b;
    lo = a >= b ? b : a;
    if (isinf(hi) || isinf(lo)) /* +inf, or lo (and maybe hi) = -inf */
        return hi;
    return hi + log1p(exp(lo - hi));
}
