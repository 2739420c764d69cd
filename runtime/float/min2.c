/* dvs_min2 for --real float: the smaller of a and b, the first on a tie
 * and b when either is NaN, as in runtime/min2.c. */
static float dvs_min2(float a, float b)
{
    return a <= b ? a : b;
}
