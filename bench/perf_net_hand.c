/* perf_net_hand.c - the gradient of net2.dvs written by hand as a C
 * engineer would: a forward pass that keeps the activations, then the
 * backward pass with the transposed matrix products. */
#include "perf_net_hand.h"

#include <math.h>

enum { NIN = 64, NHID = 256, NOUT = 10 };

double net_hand_gradient(const net2_param *p, const net2_input *in, net2_param *grad)
{
    double h[NHID], z[NOUT], e[NOUT];
    for (int j = 0; j < NHID; j++) {
        double a = p->b1[j];
        for (int i = 0; i < NIN; i++)
            a += p->W1[j][i] * in->x[i];
        h[j] = tanh(a);
    }
    double zmax = -HUGE_VAL, dot = 0.0;
    for (int k = 0; k < NOUT; k++) {
        double s = p->b2[k];
        for (int j = 0; j < NHID; j++)
            s += p->W2[k][j] * h[j];
        z[k] = s;
        zmax = s > zmax ? s : zmax;
        dot += in->label[k] * s;
    }
    double esum = 0.0;
    for (int k = 0; k < NOUT; k++) {
        e[k] = exp(z[k] - zmax);
        esum += e[k];
    }

    /* d loss / d z = softmax(z) - label; then back through W2 and tanh. */
    double dh[NHID] = {0};
    for (int k = 0; k < NOUT; k++) {
        double dz = e[k] / esum - in->label[k];
        grad->b2[k] = dz;
        for (int j = 0; j < NHID; j++) {
            grad->W2[k][j] = dz * h[j];
            dh[j] += dz * p->W2[k][j];
        }
    }
    for (int j = 0; j < NHID; j++) {
        double da = dh[j] * (1.0 - h[j] * h[j]);
        grad->b1[j] = da;
        for (int i = 0; i < NIN; i++)
            grad->W1[j][i] = da * in->x[i];
    }
    return zmax + log(esum) - dot;
}
