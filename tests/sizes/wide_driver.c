/* wide_driver.c - wide.dvs built twice: with the default --stack-limit
 * (--name inwork: the 1000 x 1000 intermediate and its adjoint in work) and
 * with --stack-limit 2000000 (--name onstack: 16 MB of local arrays, so it
 * runs on a thread with a 64 MB stack).  Prints "work COUNT", one line
 * "NAME VALUE_ERR GRAD_ERR SAME_RETURN" per build against the closed form
 * loss = sum sin(a[i] x[j]), d/da[i] = sum_j x[j] cos(a[i] x[j]) (errors
 * scaled by the sums of |terms|), and "identical 1" when both builds gave
 * the same bits. */
#define _POSIX_C_SOURCE 200809L

#include "driver_util.h"
#include "inwork.h"
#include "onstack.h"

#include <pthread.h>

#define N 1000

static onstack_param stack_p, stack_g;
static onstack_input stack_in;
static double stack_value, stack_ret;

static void *run_on_stack(void *unused)
{
    (void)unused;
    stack_value = onstack_value(&stack_p, &stack_in);
    stack_ret = onstack_gradient(&stack_p, &stack_in, &stack_g);
    return NULL;
}

static void report(const char *name, double value, double ret, const double *g,
                   const inwork_param *p, const inwork_input *in)
{
    double loss = 0, scale = 0, gerr = 0;
    for (int i = 0; i < N; i++) {
        double da = 0, dscale = 0;
        for (int j = 0; j < N; j++) {
            double s = sin(p->a[i] * in->x[j]);
            double t = in->x[j] * cos(p->a[i] * in->x[j]);
            loss += s;
            scale += fabs(s);
            da += t;
            dscale += fabs(t);
        }
        gerr = fmax(gerr, du_err(g[i], da, dscale));
    }
    printf("%s %.3e %.3e %d\n", name, du_err(value, loss, scale), gerr,
           ret == value);
}

int main(void)
{
    static inwork_param p, g;
    static inwork_input in;
    for (int i = 0; i < N; i++) {
        p.a[i] = 2 * du_uniform();
        in.x[i] = 3 * du_uniform();
    }
    size_t count = inwork_work_count(&in);
    printf("work %zu\n", count);
    double *work = du_doubles(count);
    double value = inwork_value(&p, &in, work);
    double ret = inwork_gradient(&p, &in, &g, work);
    free(work);
    report("inwork", value, ret, g.a, &p, &in);

    memcpy(stack_p.a, p.a, sizeof p.a);
    memcpy(stack_in.x, in.x, sizeof in.x);
    pthread_attr_t attr;
    pthread_t thread;
    if (pthread_attr_init(&attr) != 0 ||
        pthread_attr_setstacksize(&attr, (size_t)64 << 20) != 0 ||
        pthread_create(&thread, &attr, run_on_stack, NULL) != 0 ||
        pthread_join(thread, NULL) != 0) {
        fputs("driver: cannot run a thread with a 64 MB stack\n", stderr);
        return 2;
    }
    report("onstack", stack_value, stack_ret, stack_g.a, &p, &in);
    printf("identical %d\n", stack_value == value && stack_ret == ret &&
                                 memcmp(stack_g.a, g.a, sizeof g.a) == 0);
    return 0;
}
