/* main.c - fits the Arrhenius law (arrhenius.dvs) to invented cure rates
 * of an adhesive with Newton's method on the generated gradient and
 * Hessian (built with --emit value,gradient,hessian), then
 * checks the fit against the straight-line least-squares solution for
 * ln k against 1/T, which this loss has in closed form, and against the
 * constants that made the data.  Prints the time to 95 % cure at 80 degC. */
#include "arrhenius.h"
#include "sample_util.h"

#include <math.h>
#include <stdio.h>

#define NRUN ((int)(sizeof((arrhenius_input *)0)->k / sizeof(double)))
#define GAS_R 8.314462618 /* J/(mol K), as in common/kinetics.dvs */
#define NOISE 0.04        /* sd of the measurement error of ln k */

/* The invented truth: ln A = 19.5 (A in 1/s), Ea = 78 kJ/mol. */
static const double true_lnA = 19.5, true_Ea_kJ = 78.0;

typedef arrhenius_param_flat flat;

static void make_runs(arrhenius_input *in)
{
    sample_rng rng;
    sample_rng_seed(&rng, 19500078u);
    for (int i = 0; i < NRUN; i++) {
        double c = 60.0 + 10.0 * i, T = c + 273.15;
        in->celsius[i] = c;
        in->k[i] = exp(true_lnA - 1000.0 * true_Ea_kJ / (GAS_R * T) +
                       sample_normal(&rng, 0.0, NOISE));
    }
}

static double value_flat(const double *x, const void *ctx)
{
    flat p;
    p.v[0] = x[0];
    p.v[1] = x[1];
    return arrhenius_value(&p.p, ctx);
}

/* Newton steps with the generated Hessian: the loss is quadratic in
 * (lnA, Ea_kJ), so one step lands on the minimum; a second only
 * polishes. */
static void newton(flat *x, const arrhenius_input *in)
{
    for (int iter = 0; iter < 2; iter++) {
        flat g;
        double H[ARRHENIUS_PARAM_COUNT][ARRHENIUS_PARAM_COUNT];
        arrhenius_hessian(&x->p, in, &g.p, H);
        double det = H[0][0] * H[1][1] - H[0][1] * H[1][0];
        x->v[0] -= (H[1][1] * g.v[0] - H[0][1] * g.v[1]) / det;
        x->v[1] -= (H[0][0] * g.v[1] - H[1][0] * g.v[0]) / det;
    }
}

/* Least squares for y = a + b u with u = -1000 / (R T), y = ln k: the
 * normal equations, solved directly. */
static void straight_line(const arrhenius_input *in, double *a, double *b)
{
    double su = 0, sy = 0, suu = 0, suy = 0;
    for (int i = 0; i < NRUN; i++) {
        double u = -1000.0 / (GAS_R * (in->celsius[i] + 273.15));
        double y = log(in->k[i]);
        su += u;
        sy += y;
        suu += u * u;
        suy += u * y;
    }
    *b = (NRUN * suy - su * sy) / (NRUN * suu - su * su);
    *a = (sy - *b * su) / NRUN;
}

int main(void)
{
    arrhenius_input in;
    make_runs(&in);
    int failed = 0;

    flat x, g;
    x.p.lnA = 10.0;
    x.p.Ea_kJ = 50.0;
    arrhenius_gradient(&x.p, &in, &g.p);
    failed |= sample_gradcheck("loss", value_flat, &in, x.v, g.v, NULL, 2,
                               1e-6);

    newton(&x, &in);
    double loss = arrhenius_gradient(&x.p, &in, &g.p);
    double a, b;
    straight_line(&in, &a, &b);
    printf("%-26s %10s %10s\n", "", "ln A", "Ea kJ/mol");
    printf("%-26s %10.4f %10.4f\n", "fit (Newton on dervish)", x.p.lnA,
           x.p.Ea_kJ);
    printf("%-26s %10.4f %10.4f\n", "straight line on 1/T", a, b);
    printf("%-26s %10.4f %10.4f\n", "constants of the data", true_lnA,
           true_Ea_kJ);
    printf("rms misfit of ln k: %.4f; gradient at the fit: %.1e, %.1e\n",
           sqrt(loss), g.v[0], g.v[1]);

    /* first-order cure: 95 % after ln(20) / k */
    double k80 = exp(x.p.lnA - 1000.0 * x.p.Ea_kJ / (GAS_R * 353.15));
    printf("time to 95%% cure at 80 degC: %.1f min\n", log(20.0) / k80 / 60);

    if (fabs(x.p.lnA - a) > 1e-8 * fabs(a) ||
        fabs(x.p.Ea_kJ - b) > 1e-8 * fabs(b)) {
        printf("FAIL: the fit is not the least-squares line\n");
        failed = 1;
    }
    if (fabs(x.p.Ea_kJ - true_Ea_kJ) > 0.05 * true_Ea_kJ ||
        fabs(x.p.lnA - true_lnA) > 0.1 * true_lnA) {
        printf("FAIL: the fit is far from the constants of the data\n");
        failed = 1;
    }
    return failed;
}
