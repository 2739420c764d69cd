/* dvs_sigmoid: the logistic function 1/(1+e^-x).
 * Only exp(-|x|) is ever evaluated, and it lies in [0, 1], so nothing
 * overflows for any x; for x < 0 the equivalent form e^x/(1+e^x) keeps full
 * relative precision in the tiny results. sigmoid(0) is exactly 0.5. */
static double dvs_sigmoid(double x)
{
    double e = exp(-fabs(x));
    if (x >= 0.0)
        return 1.0 / (1.0 + e);
    return e / (1.0 + e); /* x < 0, or x is NaN (then e is NaN too) */
}
