/* dvs_hypot_slope for --real float: a / hypot(a, b).  As in
 * runtime/hypot_slope.c, arguments whose hypot would be subnormal or
 * overflow are first scaled by a power of two (exact); float's range
 * (2^-149 to 2^128) calls for 2^70 where double's uses 2^600. */
static float dvs_hypot_slope(float a, float b)
{
    float m = fmaxf(fabsf(a), fabsf(b));
    if (m < 0x1p-60f) {
        a *= 0x1p70f;
        b *= 0x1p70f;
    } else if (m > 0x1p60f) {
        a *= 0x1p-70f;
        b *= 0x1p-70f;
    }
    return a / hypotf(a, b);
}
