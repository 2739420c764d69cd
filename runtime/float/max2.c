/* dvs_max2 for --real float: the larger of a and b, the first on a tie and
 * b when either is NaN, as in runtime/max2.c. */
static float dvs_max2(float a, float b)
{
    return a >= b ? a : b;
}
