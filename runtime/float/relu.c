/* dvs_relu for --real float: x when x > 0, else +0.0f (also for -0.0f and
 * NaN), as in runtime/relu.c. */
static float dvs_relu(float x)
{
    return x > 0.0f ? x : 0.0f;
}
