/* dvs_max2: the larger of a and b. On a tie the first argument is returned
 * (this decides which of +0.0 and -0.0 comes back, and matches the language
 * rule that max's derivative goes to the first argument on a tie). With a
 * NaN the comparison is false and b is returned. */
static double dvs_max2(double a, double b)
{
    return a >= b ? a : b;
}
