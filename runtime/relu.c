/* dvs_relu: max(0, x) written as one comparison: x when x > 0, else +0.0.
 * So -0.0 and every negative give +0.0, and so does NaN, because the
 * comparison is false for it. */
static double dvs_relu(double x)
{
    return x > 0.0 ? x : 0.0;
}
