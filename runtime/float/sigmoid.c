/* dvs_sigmoid for --real float: 1/(1+e^-x), evaluating only expf(-|x|),
 * which lies in [0, 1], so nothing overflows (see runtime/sigmoid.c). */
static float dvs_sigmoid(float x)
{
    float e = expf(-fabsf(x));
    if (x >= 0.0f)
        return 1.0f / (1.0f + e);
    return e / (1.0f + e); /* x < 0, or x is NaN (then e is NaN too) */
}
