/* dvs_count_product: a * b for counts of doubles, saturating at (size_t)-1
 * so that an overflow (or an operand that already overflowed) is seen by
 * the caller instead of wrapping round to a small, wrong count. */
static size_t dvs_count_product(size_t a, size_t b)
{
    size_t most = (size_t)-1;
    if (a == most || b == most || (a != 0 && b > most / a))
        return most;
    return a * b;
}
