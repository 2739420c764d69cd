/* main.c - trains the pump-condition classifier of pump.dvs on invented
 * vibration readings by gradient descent on the generated pump_gradient,
 * then sorts unseen readings and prints the confusion table. Fails when the
 * unseen accuracy is poor or the fit misses a property every minimum of this
 * loss has (below). */
#include "pump.h"
#include "sample_util.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

/* Sizes from the generated struct, so they follow pump.dvs. */
#define ROWS     ((int)(sizeof((pump_input *)0)->X / sizeof((pump_input *)0)->X[0]))
#define FEATURES ((int)(sizeof((pump_input *)0)->X[0] / sizeof(double)))
#define CLASSES  ((int)(sizeof((pump_param *)0)->b / sizeof(double)))
#define UNSEEN   60
#define STEPS    1500
#define RATE     1.0 /* gradient descent step */

static const char *const class_name[] = {"healthy", "misaligned", "worn bearing"};

/* Invented class centres of the scaled features: overall vibration
 * velocity, twice-running-speed share, high-frequency envelope energy. */
static const double centre[CLASSES][FEATURES] = {
    {-0.8, -0.6, -0.7}, /* healthy */
    {0.5, 1.0, -0.2},   /* misaligned: strong 2x component */
    {0.6, -0.3, 1.1},   /* worn bearing: high-frequency energy */
};

static int reading(sample_rng *rng, double *x)
{
    int c = (int)sample_uniform(rng, 0.0, CLASSES);
    for (int f = 0; f < FEATURES; f++)
        x[f] = sample_normal(rng, centre[c][f], 0.45);
    return c;
}

/* Deployment needs only the scores; the largest one wins. */
static int classify(const pump_param *p, const double *x, double *prob)
{
    double z[CLASSES], top, total = 0.0;
    int best = 0;
    for (int c = 0; c < CLASSES; c++) {
        z[c] = p->b[c];
        for (int f = 0; f < FEATURES; f++)
            z[c] += p->W[c][f] * x[f];
        if (z[c] > z[best])
            best = c;
    }
    top = z[best];
    for (int c = 0; c < CLASSES; c++)
        total += (prob[c] = exp(z[c] - top));
    for (int c = 0; c < CLASSES; c++)
        prob[c] /= total;
    return best;
}

static double training_accuracy(const pump_param *p, const pump_input *in)
{
    double prob[CLASSES];
    int right = 0;
    for (int n = 0; n < ROWS; n++)
        right += in->Y[n][classify(p, in->X[n], prob)] == 1.0;
    return (double)right / ROWS;
}

static double flat_value(const double *x, const void *ctx)
{
    pump_param_flat p;
    memcpy(p.v, x, sizeof p.v);
    return pump_value(&p.p, ctx);
}

int main(void)
{
    static pump_input train;
    pump_param_flat p, grad;
    int confusion[CLASSES][CLASSES] = {{0}};
    double prob[CLASSES], mean_prob[CLASSES] = {0}, share[CLASSES] = {0};
    double start_loss, loss, unseen;
    sample_rng rng;
    int failed = 0, right = 0, shares_differ = 0;

    sample_rng_seed(&rng, 31415u);
    for (int n = 0; n < ROWS; n++) {
        int c = reading(&rng, train.X[n]);
        for (int k = 0; k < CLASSES; k++)
            train.Y[n][k] = k == c;
    }
    for (int k = 0; k < PUMP_PARAM_COUNT; k++)
        p.v[k] = sample_normal(&rng, 0.0, 0.1);

    start_loss = pump_gradient(&p.p, &train, &grad.p);
    failed |= sample_gradcheck("pump, start", flat_value, &train, p.v, grad.v, NULL,
                               PUMP_PARAM_COUNT, 1e-6);

    printf("%d readings, %d features, %d classes; gradient descent, step %.1f\n", ROWS,
           FEATURES, CLASSES, RATE);
    printf("%6s  %10s  %9s\n", "step", "loss", "accuracy");
    for (int step = 0; step <= STEPS; step++) {
        loss = pump_gradient(&p.p, &train, &grad.p);
        if (step % 300 == 0)
            printf("%6d  %10.6f  %8.1f%%\n", step, loss,
                   100.0 * training_accuracy(&p.p, &train));
        if (step < STEPS)
            for (int k = 0; k < PUMP_PARAM_COUNT; k++)
                p.v[k] -= RATE * grad.v[k];
    }

    for (int n = 0; n < UNSEEN; n++) {
        double x[FEATURES];
        int truth = reading(&rng, x), said = classify(&p.p, x, prob);
        confusion[truth][said]++;
        right += truth == said;
    }
    unseen = (double)right / UNSEEN;
    printf("\n%d unseen readings: %.1f%% right\n%-14s", UNSEEN, 100.0 * unseen,
           "true \\ said");
    for (int c = 0; c < CLASSES; c++)
        printf("%14s", class_name[c]);
    printf("\n");
    for (int t = 0; t < CLASSES; t++) {
        printf("%-14s", class_name[t]);
        for (int c = 0; c < CLASSES; c++)
            printf("%14d", confusion[t][c]);
        printf("\n");
    }

    /* At a minimum the bias gradient is zero, and it is the mean predicted
     * probability minus the class share: the fitted model must reproduce
     * the class shares of its training data. Probabilities here come from
     * classify(), not from the generated code. */
    for (int n = 0; n < ROWS; n++) {
        classify(&p.p, train.X[n], prob);
        for (int c = 0; c < CLASSES; c++) {
            mean_prob[c] += prob[c] / ROWS;
            share[c] += train.Y[n][c] / ROWS;
        }
    }
    printf("\nclass share in training data vs mean predicted probability:");
    for (int c = 0; c < CLASSES; c++) {
        printf(" %.4f/%.4f", share[c], mean_prob[c]);
        if (!(fabs(share[c] - mean_prob[c]) <= 1e-6))
            shares_differ = 1;
    }
    printf("\nloss %.6f at the start, %.6f at the end\n", start_loss, loss);
    if (shares_differ) {
        printf("FAIL: the fit does not reproduce the class shares: not at a minimum\n");
        failed = 1;
    }
    if (unseen < 0.85) {
        printf("FAIL: only %.1f%% of unseen readings classified right\n",
               100.0 * unseen);
        failed = 1;
    }
    return failed;
}
