/* dvs_clamp for --real float: x limited to [lo, hi], ties and NaN as in
 * runtime/clamp.c (only a strict crossing replaces x). */
static float dvs_clamp(float x, float lo, float hi)
{
    if (x < lo)
        return lo;
    if (x > hi)
        return hi;
    return x;
}
