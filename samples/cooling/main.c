/* main.c - fits Newton's law of cooling (cooling.dvs) to invented readings
 * of a cooling casting, one of them glitched, with BFGS driven by the
 * generated cooling_gradient. Fits twice, with a squared loss and with the
 * Huber loss, prints both against the constants that made the data, and
 * fails unless the Huber fit recovers them. */
#include "cooling.h"
#include "sample_util.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

/* Readings per fit: N in cooling.dvs, read back from the generated struct. */
#define NREAD     ((int)(sizeof((cooling_input *)0)->t / sizeof(double)))
#define MINUTES   4.0 /* between readings */
#define NOISE_C   1.0 /* thermocouple noise, degC */
#define GLITCH_AT 7   /* this reading is 45 degC too high */
#define GLITCH_C  45.0
#define DELTA     3.0 /* degC: where the Huber loss turns linear */

/* The invented truth: a casting at 415 degC in 23 degC air, k = 0.045/min. */
static const double true_T0 = 415.0, true_Tamb = 23.0, true_k = 0.045;

typedef cooling_param_flat flat;

static void make_readings(cooling_input *in)
{
    sample_rng rng;
    sample_rng_seed(&rng, 415023045u);
    for (int n = 0; n < NREAD; n++) {
        double t = MINUTES * n;
        in->t[n] = t;
        in->temp[n] = true_Tamb + (true_T0 - true_Tamb) * exp(-true_k * t)
                      + sample_normal(&rng, 0.0, NOISE_C);
    }
    in->temp[GLITCH_AT] += GLITCH_C;
}

static double dot(const double *a, const double *b)
{
    double s = 0.0;
    for (int i = 0; i < COOLING_PARAM_COUNT; i++)
        s += a[i] * b[i];
    return s;
}

static void set_scaled_identity(double H[COOLING_PARAM_COUNT][COOLING_PARAM_COUNT],
                                double scale)
{
    for (int i = 0; i < COOLING_PARAM_COUNT; i++)
        for (int j = 0; j < COOLING_PARAM_COUNT; j++)
            H[i][j] = i == j ? scale : 0.0;
}

/* BFGS on the inverse Hessian H with a backtracking (Armijo) line search:
 * only values and gradients of the model are needed. The first step is
 * kept short (0.1 in parameter space), and H is rescaled by s.y / y.y
 * before its first update, so the start does not depend on the loss's
 * units. Stops when the gradient norm is below gtol or when double
 * precision allows no further decrease; returns the iterations taken. */
static int bfgs(flat *x, const cooling_input *in, double gtol)
{
    enum { n = COOLING_PARAM_COUNT };
    double H[n][n], d[n], s[n], y[n], Hy[n];
    flat g, x_new, g_new;
    double f = cooling_gradient(&x->p, in, &g.p);
    int fresh = 1; /* H is still a multiple of the identity */

    set_scaled_identity(H, 0.1 / sqrt(dot(g.v, g.v)));
    for (int iter = 1; iter <= 500; iter++) {
        double step = 1.0, f_new, slope, sy, yHy;
        if (sqrt(dot(g.v, g.v)) < gtol)
            return iter - 1;
        for (int i = 0; i < n; i++) {
            d[i] = 0.0;
            for (int j = 0; j < n; j++)
                d[i] -= H[i][j] * g.v[j];
        }
        slope = dot(g.v, d);
        for (;;) {
            for (int i = 0; i < n; i++)
                x_new.v[i] = x->v[i] + step * d[i];
            f_new = cooling_gradient(&x_new.p, in, &g_new.p);
            if (f_new <= f + 1e-4 * step * slope)
                break;
            step *= 0.5;
            if (step < 1e-12)
                return iter - 1;
        }
        if (f - f_new <= 1e-15 * fabs(f))
            return iter - 1;
        for (int i = 0; i < n; i++) {
            s[i] = x_new.v[i] - x->v[i];
            y[i] = g_new.v[i] - g.v[i];
        }
        sy = dot(s, y);
        if (sy > 0.0) { /* the curvature condition keeps H positive definite */
            if (fresh)
                set_scaled_identity(H, sy / dot(y, y));
            fresh = 0;
            for (int i = 0; i < n; i++) {
                Hy[i] = 0.0;
                for (int j = 0; j < n; j++)
                    Hy[i] += H[i][j] * y[j];
            }
            yHy = dot(y, Hy);
            for (int i = 0; i < n; i++)
                for (int j = 0; j < n; j++)
                    H[i][j] += ((sy + yHy) * s[i] * s[j]) / (sy * sy)
                               - (Hy[i] * s[j] + s[i] * Hy[j]) / sy;
        }
        *x = x_new;
        g = g_new;
        f = f_new;
        if (iter == 1 || iter % 10 == 0)
            printf("  iter %3d  loss %12.6f  T0 %8.3f  Tamb %7.3f  k %.5f\n", iter, f,
                   x->p.T0, x->p.Tamb, exp(x->p.log_k));
    }
    return 500;
}

static double flat_value(const double *x, const void *ctx)
{
    flat p;
    memcpy(p.v, x, sizeof p.v);
    return cooling_value(&p.p, ctx);
}

/* Fits from a guess read off the data; returns 1 unless the fit ends at a
 * point where the gradient vanishes (to the rounding floor of the sums). */
static int fit(const char *label, cooling_input *in, double delta, flat *x)
{
    flat g;
    double gnorm;
    int iters;
    in->delta = delta;
    x->p.T0 = in->temp[0];
    x->p.Tamb = in->temp[NREAD - 1];
    x->p.log_k = log(1.0 / (MINUTES * NREAD)); /* about one decay over the log */
    printf("%s\n", label);
    iters = bfgs(x, in, 1e-9);
    cooling_gradient(&x->p, in, &g.p);
    gnorm = sqrt(dot(g.v, g.v));
    printf("  stopped after %d iterations, gradient norm %.1e\n", iters, gnorm);
    if (!(gnorm <= 1e-4)) {
        printf("FAIL: %s did not reach a minimum\n", label);
        return 1;
    }
    return 0;
}

int main(void)
{
    cooling_input in;
    flat lsq, robust, truth, g;
    double loss_fit, loss_truth;
    int failed = 0;

    make_readings(&in);
    truth.p.T0 = true_T0;
    truth.p.Tamb = true_Tamb;
    truth.p.log_k = log(true_k);

    in.delta = DELTA; /* the glitch then sits on the linear branch */
    cooling_gradient(&truth.p, &in, &g.p);
    failed |= sample_gradcheck("cooling, at the true constants", flat_value, &in,
                               truth.v, g.v, NULL, COOLING_PARAM_COUNT, 1e-6);

    /* A delta past every residual makes the Huber loss plain least squares. */
    failed |= fit("least squares", &in, 1e6, &lsq);
    failed |= fit("Huber loss", &in, DELTA, &robust);

    printf("\n%-8s %10s %14s %12s\n", "", "true", "least squares", "Huber");
    printf("%-8s %10.3f %14.3f %12.3f\n", "T0 degC", true_T0, lsq.p.T0, robust.p.T0);
    printf("%-8s %10.3f %14.3f %12.3f\n", "Tamb", true_Tamb, lsq.p.Tamb, robust.p.Tamb);
    printf("%-8s %10.5f %14.5f %12.5f\n", "k 1/min", true_k, exp(lsq.p.log_k),
           exp(robust.p.log_k));

    /* A minimiser cannot be worse than the constants that made the data. */
    in.delta = DELTA;
    loss_fit = cooling_value(&robust.p, &in);
    loss_truth = cooling_value(&truth.p, &in);
    if (!(loss_fit <= loss_truth)) {
        printf("FAIL: Huber fit loss %g is above the loss %g at the true constants\n",
               loss_fit, loss_truth);
        failed = 1;
    }
    /* Written so that a NaN fails too. */
    if (!(fabs(robust.p.T0 - true_T0) <= 2.0 && fabs(robust.p.Tamb - true_Tamb) <= 2.0
          && fabs(exp(robust.p.log_k) / true_k - 1.0) <= 0.02)) {
        printf("FAIL: the Huber fit is not within 2 degC and 2%% of the truth\n");
        failed = 1;
    }
    if (!failed)
        printf("\nHuber fit within 2 degC and 2%% of the true constants\n");
    return failed;
}
