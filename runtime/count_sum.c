/* dvs_count_sum: a + b for counts of doubles, saturating at (size_t)-1 like
 * dvs_count_product, so scratch offsets never wrap round. */
static size_t dvs_count_sum(size_t a, size_t b)
{
    size_t most = (size_t)-1;
    if (a == most || b == most || b > most - a)
        return most;
    return a + b;
}
