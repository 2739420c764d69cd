/* main.c - locates a drifting data buoy from its acoustic ranges to four
 * moored stations (buoy.dvs) by Gauss-Newton steps on the generated
 * buoy_jacobian, once with exact ranges and once with invented noisy ones.
 * Checks the Jacobian against its closed form and against central
 * differences of buoy_value, the adjoint against the Jacobian, and each
 * fix: exact ranges give the true position back, noisy ones a point where
 * the gradient of the squared residuals, J^T r, vanishes. */
#include "buoy.h"
#include "sample_util.h"

#include <math.h>
#include <stdio.h>

#define NSTATION BUOY_OUTPUT_COUNT
#define NOISE 0.5 /* sd of a range measurement, m */

/* Invented stations, m east and north of the harbour mark, and the
 * buoy's true position, which the ranges are made from. */
static const double station_e[NSTATION] = {0.0, 900.0, 850.0, -120.0};
static const double station_n[NSTATION] = {0.0, 60.0, -700.0, -640.0};
static const double true_e = 412.0, true_n = -138.5;

typedef buoy_param_flat flat;

static void make_ranges(buoy_input *in, double noise, uint64_t seed)
{
    sample_rng rng;
    sample_rng_seed(&rng, seed);
    for (int i = 0; i < NSTATION; i++) {
        in->sx[i] = station_e[i];
        in->sy[i] = station_n[i];
        in->range[i] = hypot(true_e - station_e[i], true_n - station_n[i]) +
                       sample_normal(&rng, 0.0, noise);
    }
}

/* Gauss-Newton: solve (J^T J) step = -J^T r, a 2 x 2 system, until the
 * step is below a micrometre.  Returns the iterations taken. */
static int locate(flat *x, const buoy_input *in, int verbose)
{
    for (int iter = 1; iter <= 30; iter++) {
        buoy_output_flat r;
        double J[BUOY_OUTPUT_COUNT][BUOY_PARAM_COUNT];
        buoy_jacobian(&x->p, in, &r.o, J);
        double a = 0, b = 0, c = 0, ge = 0, gn = 0, ss = 0;
        for (int i = 0; i < NSTATION; i++) {
            a += J[i][0] * J[i][0];
            b += J[i][0] * J[i][1];
            c += J[i][1] * J[i][1];
            ge += J[i][0] * r.v[i];
            gn += J[i][1] * r.v[i];
            ss += r.v[i] * r.v[i];
        }
        double det = a * c - b * b;
        double de = -(c * ge - b * gn) / det, dn = -(a * gn - b * ge) / det;
        x->v[0] += de;
        x->v[1] += dn;
        if (verbose)
            printf("  step %d: east %10.4f m, north %10.4f m, rms residual "
                   "%.3g m\n", iter, x->v[0], x->v[1], sqrt(ss / NSTATION));
        if (hypot(de, dn) < 1e-6)
            return iter;
    }
    return -1;
}

/* The Jacobian at x against its closed form, d r_i / d east = (east -
 * sx_i) / dist_i and likewise north (the derivative of a distance), and
 * against central differences of buoy_value; the adjoint seeded with the
 * residuals against J^T r.  Returns the number of failures. */
static int check_jacobian(const flat *x, const buoy_input *in)
{
    buoy_output_flat r, up, down;
    double J[BUOY_OUTPUT_COUNT][BUOY_PARAM_COUNT];
    buoy_jacobian(&x->p, in, &r.o, J);
    double worst_exact = 0, worst_diff = 0, worst_adj = 0;
    for (int k = 0; k < BUOY_PARAM_COUNT; k++) {
        flat moved = *x;
        double h = 1e-3;
        moved.v[k] = x->v[k] + h;
        buoy_value(&moved.p, in, &up.o);
        moved.v[k] = x->v[k] - h;
        buoy_value(&moved.p, in, &down.o);
        for (int i = 0; i < NSTATION; i++) {
            double de = x->v[0] - in->sx[i], dn = x->v[1] - in->sy[i];
            double exact = (k == 0 ? de : dn) / hypot(de, dn);
            worst_exact = fmax(worst_exact, fabs(J[i][k] - exact));
            double diff = (up.v[i] - down.v[i]) / (2 * h);
            worst_diff = fmax(worst_diff, fabs(J[i][k] - diff));
        }
    }
    flat g;
    buoy_output out;
    buoy_adjoint(&x->p, in, &r.o, &out, &g.p);
    for (int k = 0; k < BUOY_PARAM_COUNT; k++) {
        double jtr = 0;
        for (int i = 0; i < NSTATION; i++)
            jtr += J[i][k] * r.v[i];
        worst_adj = fmax(worst_adj, fabs(g.v[k] - jtr));
    }
    printf("Jacobian: largest difference from the closed form %.1e, from "
           "central differences %.1e;\n  adjoint seeded with the residuals "
           "against J^T r: %.1e\n", worst_exact, worst_diff, worst_adj);
    return (worst_exact > 1e-15) + (worst_diff > 1e-7) + (worst_adj > 1e-12);
}

int main(void)
{
    int failures = 0;
    buoy_input in;
    flat x;

    make_ranges(&in, 0.0, 7);
    x.v[0] = 0.25 * (station_e[0] + station_e[1] + station_e[2] + station_e[3]);
    x.v[1] = 0.25 * (station_n[0] + station_n[1] + station_n[2] + station_n[3]);
    failures += check_jacobian(&x, &in);
    printf("exact ranges, starting from the stations' centre:\n");
    int iters = locate(&x, &in, 1);
    double miss = hypot(x.v[0] - true_e, x.v[1] - true_n);
    printf("fix after %d steps: %.1e m from the true position\n", iters, miss);
    failures += iters < 0 || miss > 1e-9;

    make_ranges(&in, NOISE, 7);
    x.v[0] = 0.25 * (station_e[0] + station_e[1] + station_e[2] + station_e[3]);
    x.v[1] = 0.25 * (station_n[0] + station_n[1] + station_n[2] + station_n[3]);
    printf("\nranges with %.1f m of noise:\n", NOISE);
    iters = locate(&x, &in, 1);
    buoy_output_flat r;
    double J[BUOY_OUTPUT_COUNT][BUOY_PARAM_COUNT], jtr[2] = {0, 0};
    buoy_jacobian(&x.p, &in, &r.o, J);
    for (int i = 0; i < NSTATION; i++)
        for (int k = 0; k < 2; k++)
            jtr[k] += J[i][k] * r.v[i];
    miss = hypot(x.v[0] - true_e, x.v[1] - true_n);
    printf("fix after %d steps: east %.3f m, north %.3f m; %.2f m from the "
           "true position;\n  J^T r there: (%.1e, %.1e) m\n", iters, x.v[0],
           x.v[1], miss, jtr[0], jtr[1]);
    failures += iters < 0 || fabs(jtr[0]) > 1e-9 || fabs(jtr[1]) > 1e-9;
    failures += miss > 3 * NOISE;
    failures += check_jacobian(&x, &in);

    printf("%s\n", failures ? "buoy: FAILED" : "buoy: all checks passed");
    return failures != 0;
}
