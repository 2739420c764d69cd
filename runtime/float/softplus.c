/* dvs_softplus for --real float: log(1 + e^x) with expf never seeing a
 * positive argument, as in runtime/softplus.c. */
static float dvs_softplus(float x)
{
    if (x > 0.0f)
        return x + log1pf(expf(-x));
    return log1pf(expf(x)); /* x <= 0, or NaN, which passes through */
}
