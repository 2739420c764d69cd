/* main.c - trains the kiln model (kiln.dvs) on invented firing logs with
 * Adam written out by hand, using the generated kiln_gradient; prints the
 * error falling and the fit on hours it never saw, and fails if the fit is
 * not close to the noise level of the logs. */
#include "kiln.h"
#include "sample_util.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#define HOURS   240 /* logged firing hours */
#define TRAIN   180 /* the first TRAIN are for training, the rest held out */
#define EPOCHS  3000
#define NOISE_C 5.0 /* thermocouple noise of the invented logs, in degC */

/* Sensor scaling: the network sees numbers near [-1, 1]. */
#define TEMP_MID  900.0
#define TEMP_SPAN 250.0

/* The invented plant: next-hour crown temperature (degC) from the present
 * one, the gas valve (0..1) and the flue damper (0..1). */
static double plant_next_hour(double temp, double gas, double damper)
{
    return temp + 170.0 * tanh(2.4 * gas - 1.1) - 55.0 * damper * (0.5 + gas)
           - 0.06 * (temp - TEMP_MID);
}

static void make_logs(kiln_input *logs)
{
    sample_rng rng;
    sample_rng_seed(&rng, 20240611u);
    for (int k = 0; k < HOURS; k++) {
        double temp = sample_uniform(&rng, 650.0, 1250.0);
        double gas = sample_uniform(&rng, 0.0, 1.0);
        double damper = sample_uniform(&rng, 0.0, 1.0);
        double next =
            plant_next_hour(temp, gas, damper) + sample_normal(&rng, 0.0, NOISE_C);
        logs[k].s[0] = (temp - TEMP_MID) / TEMP_SPAN;
        logs[k].s[1] = 2.0 * gas - 1.0;
        logs[k].s[2] = 2.0 * damper - 1.0;
        logs[k].target = (next - TEMP_MID) / TEMP_SPAN;
    }
}

/* Root-mean-square error in degC over logs[from, to). */
static double rmse_degc(const kiln_param *p, const kiln_input *logs, int from, int to)
{
    double sum = 0.0;
    for (int k = from; k < to; k++)
        sum += 2.0 * kiln_value(p, &logs[k]); /* loss is half the squared error */
    return TEMP_SPAN * sqrt(sum / (to - from));
}

/* The gradient of the mean loss over the training hours. */
static void batch_gradient(const kiln_param_flat *p, const kiln_input *logs,
                           kiln_param_flat *grad)
{
    kiln_param_flat one;
    memset(grad, 0, sizeof *grad);
    for (int k = 0; k < TRAIN; k++) {
        kiln_gradient(&p->p, &logs[k], &one.p);
        for (int n = 0; n < KILN_PARAM_COUNT; n++)
            grad->v[n] += one.v[n] / TRAIN;
    }
}

static double flat_value(const double *x, const void *ctx)
{
    kiln_param_flat p;
    memcpy(p.v, x, sizeof p.v);
    return kiln_value(&p.p, ctx);
}

int main(void)
{
    static kiln_input logs[HOURS];
    kiln_param_flat p, grad, m, s;
    const double rate = 0.01, beta1 = 0.9, beta2 = 0.999, eps = 1e-8;
    double start_rmse, train_rmse, held_rmse;
    sample_rng rng;
    int failed = 0;

    make_logs(logs);
    sample_rng_seed(&rng, 7u);
    for (int n = 0; n < KILN_PARAM_COUNT; n++)
        p.v[n] = sample_normal(&rng, 0.0, 0.5);

    kiln_gradient(&p.p, &logs[0], &grad.p);
    failed |= sample_gradcheck("kiln, first log", flat_value, &logs[0], p.v, grad.v,
                               NULL, KILN_PARAM_COUNT, 1e-6);

    start_rmse = rmse_degc(&p.p, logs, 0, TRAIN);
    printf("training %d params on %d logged hours (%d held out), Adam, %d epochs\n",
           KILN_PARAM_COUNT, TRAIN, HOURS - TRAIN, EPOCHS);
    printf("%6s  %12s  %12s\n", "epoch", "train degC", "held degC");
    memset(&m, 0, sizeof m);
    memset(&s, 0, sizeof s);
    for (int epoch = 1; epoch <= EPOCHS; epoch++) {
        double c1 = 1.0 - pow(beta1, epoch), c2 = 1.0 - pow(beta2, epoch);
        batch_gradient(&p, logs, &grad);
        for (int n = 0; n < KILN_PARAM_COUNT; n++) {
            m.v[n] = beta1 * m.v[n] + (1.0 - beta1) * grad.v[n];
            s.v[n] = beta2 * s.v[n] + (1.0 - beta2) * grad.v[n] * grad.v[n];
            p.v[n] -= rate * (m.v[n] / c1) / (sqrt(s.v[n] / c2) + eps);
        }
        if (epoch == 1 || epoch % 300 == 0)
            printf("%6d  %12.2f  %12.2f\n", epoch, rmse_degc(&p.p, logs, 0, TRAIN),
                   rmse_degc(&p.p, logs, TRAIN, HOURS));
    }

    printf("\nsome held-out hours (degC)\n%8s  %5s  %6s  %9s  %9s\n", "now", "gas",
           "damper", "next hour", "predicted");
    for (int k = TRAIN; k < TRAIN + 6; k++) {
        const kiln_input *in = &logs[k];
        /* The model outputs only the loss, but d loss / d c is exactly
         * pred - target, so the gradient hands back the prediction. */
        double pred;
        kiln_gradient(&p.p, in, &grad.p);
        pred = in->target + grad.p.c;
        printf("%8.0f  %5.2f  %6.2f  %9.1f  %9.1f\n", TEMP_MID + TEMP_SPAN * in->s[0],
               (in->s[1] + 1.0) / 2.0, (in->s[2] + 1.0) / 2.0,
               TEMP_MID + TEMP_SPAN * in->target, TEMP_MID + TEMP_SPAN * pred);
    }

    train_rmse = rmse_degc(&p.p, logs, 0, TRAIN);
    held_rmse = rmse_degc(&p.p, logs, TRAIN, HOURS);
    printf("\nRMS error: %.1f degC at the start, %.1f after training, %.1f on held-out"
           " hours (log noise %.1f)\n",
           start_rmse, train_rmse, held_rmse, NOISE_C);
    if (!(held_rmse <= 2.0 * NOISE_C)) {
        printf("FAIL: held-out error %.1f degC is above twice the log noise\n",
               held_rmse);
        failed = 1;
    }
    return failed;
}
