/* defects_driver.c - defects.dvs (built with --name sz) on the data of
 * tests/gen_size_refs.py: temp[i] = (i mod 11) / 8 - 1/2 and
 * count[i] = 7 i mod 5, both exact in binary, at a = 1/4, b = -3/4.  For each
 * n on the command line prints "case N VALUE D/DA D/DB SAME_RETURN". */
#include "sized_calls.h"

int main(int argc, char **argv)
{
    for (int arg = 1; arg < argc; arg++) {
        long n = strtol(argv[arg], NULL, 10);
        double *temp = du_doubles((size_t)n), *count = du_doubles((size_t)n);
        for (long i = 0; i < n; i++) {
            temp[i] = (double)(i % 11) / 8 - 0.5;
            count[i] = (double)(7 * i % 5);
        }
        sz_input in;
        in.n = n;
        in.temp = temp;
        in.count = count;
        double *work = du_doubles(sz_work_count(&in));
        sz_param p, g;
        p.a = 0.25;
        p.b = -0.75;
        double value = sz_value(&p, &in, work);
        double ret = sz_gradient(&p, &in, &g, work);
        printf("case %ld %.17g %.17g %.17g %d\n", n, value, g.a, g.b,
               ret == value);
        free(work);
        free(temp);
        free(count);
    }
    return 0;
}
