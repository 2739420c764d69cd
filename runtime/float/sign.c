/* dvs_sign for --real float: 1 for positive x, -1 for negative, +0.0f for
 * either zero and NaN for NaN, as in runtime/sign.c. */
static float dvs_sign(float x)
{
    if (x > 0.0f)
        return 1.0f;
    if (x < 0.0f)
        return -1.0f;
    if (isnan(x))
        return x;
    return 0.0f;
}
