/* main.c - a risk report for an invented book of calls, from the generated
 * greeks_gradient: per-option and book delta, vega, rho and theta, each next
 * to the textbook closed form and to central differences of greeks_value.
 * Fails when any of them disagree, or when the value misses a published one. */
#include "greeks.h"
#include "sample_util.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

/* Options in the book: NOPT in greeks.dvs, read back from the generated struct. */
#define NOPT ((int)(sizeof((greeks_input *)0)->K / sizeof(double)))

typedef struct greeks {
    double value, delta, vega, rho, theta;
} greeks;

static double norm_cdf(double x)
{
    return 0.5 * erfc(-x / sqrt(2.0));
}

static double norm_pdf(double x)
{
    return exp(-0.5 * x * x) / sqrt(2.0 * 3.14159265358979323846);
}

/* The closed-form Black-Scholes call and its Greeks, as printed in
 * J. C. Hull, Options, Futures, and Other Derivatives, chapter "The Greek
 * Letters" (theta is the change per year as expiry approaches: -dC/dT). */
static greeks closed_form(const greeks_param *p, double strike)
{
    greeks g;
    double sd = p->sigma * sqrt(p->T);
    double d1 = (log(p->S / strike) + (p->r + 0.5 * p->sigma * p->sigma) * p->T) / sd;
    double d2 = d1 - sd;
    double disc = strike * exp(-p->r * p->T);
    g.value = p->S * norm_cdf(d1) - disc * norm_cdf(d2);
    g.delta = norm_cdf(d1);
    g.vega = p->S * sqrt(p->T) * norm_pdf(d1);
    g.rho = p->T * disc * norm_cdf(d2);
    g.theta = -p->S * norm_pdf(d1) * p->sigma / (2.0 * sqrt(p->T))
              - p->r * disc * norm_cdf(d2);
    return g;
}

/* The Greeks as the generated gradient gives them. */
static greeks from_gradient(double value, const greeks_param *grad)
{
    greeks g;
    g.value = value;
    g.delta = grad->S;
    g.vega = grad->sigma;
    g.rho = grad->r;
    g.theta = -grad->T;
    return g;
}

static int close_to(double got, double want, double tol)
{
    return fabs(got - want) <= tol * (fabs(want) > 1.0 ? fabs(want) : 1.0);
}

static int same_greeks(const greeks *a, const greeks *b, double tol)
{
    return close_to(a->value, b->value, tol) && close_to(a->delta, b->delta, tol)
           && close_to(a->vega, b->vega, tol) && close_to(a->rho, b->rho, tol)
           && close_to(a->theta, b->theta, tol);
}

static void print_row(const char *label, const greeks *g)
{
    printf("%-20s %10.4f %9.4f %9.4f %9.4f %10.4f\n", label, g->value, g->delta,
           g->vega, g->rho, g->theta);
}

static double flat_value(const double *x, const void *ctx)
{
    greeks_param_flat p;
    memcpy(p.v, x, sizeof p.v);
    return greeks_value(&p.p, ctx);
}

/* A published value: Hull's worked example of the call formula (S = 42,
 * K = 40, r = 10%, sigma = 20%, T = 0.5 years) gives c = 4.76 (recalled
 * from the book, not looked up). The full digits, 4.7594223928715332196,
 * are Debian's mpmath at 30 digits; the command is in README.md. */
static int check_published(void)
{
    greeks_input in = {.K = {40.0, 40.0, 40.0, 40.0}, .qty = {1.0, 0.0, 0.0, 0.0}};
    greeks_param p = {.S = 42.0, .sigma = 0.20, .r = 0.10, .T = 0.5};
    double c = greeks_value(&p, &in);
    printf("Hull's worked example: call %.6f (published 4.76, mpmath 4.759422)\n\n", c);
    if (!(fabs(c - 4.759422392871533) <= 1e-9)) {
        printf("FAIL: the worked example's value is off\n");
        return 1;
    }
    return 0;
}

int main(void)
{
    /* An invented book on a mining stock: a call spread and a written wing. */
    greeks_input book = {.K = {40.0, 45.0, 50.0, 60.0},
                         .qty = {10.0, -5.0, 20.0, -15.0}};
    greeks_param_flat p = {.p = {.S = 48.20, .sigma = 0.31, .r = 0.035, .T = 0.75}};
    greeks_param_flat grad, numeric;
    greeks mine, theirs, fd, total = {0.0, 0.0, 0.0, 0.0, 0.0};
    int failed = check_published();

    printf("spot %.2f, volatility %.0f%%, rate %.1f%%, %.2f years to expiry\n", p.p.S,
           100.0 * p.p.sigma, 100.0 * p.p.r, p.p.T);
    printf("%-20s %10s %9s %9s %9s %10s\n", "per option", "value", "delta", "vega",
           "rho", "theta/yr");
    for (int k = 0; k < NOPT; k++) {
        greeks_input one = book;
        char label[32];
        for (int j = 0; j < NOPT; j++)
            one.qty[j] = j == k;
        mine = from_gradient(greeks_gradient(&p.p, &one, &grad.p), &grad.p);
        theirs = closed_form(&p.p, book.K[k]);
        snprintf(label, sizeof label, "K %.0f  dervish", book.K[k]);
        print_row(label, &mine);
        print_row("       closed form", &theirs);
        if (!same_greeks(&mine, &theirs, 1e-10)) {
            printf("FAIL: strike %.0f: the gradient disagrees with the closed form\n",
                   book.K[k]);
            failed = 1;
        }
        total.value += book.qty[k] * theirs.value;
        total.delta += book.qty[k] * theirs.delta;
        total.vega += book.qty[k] * theirs.vega;
        total.rho += book.qty[k] * theirs.rho;
        total.theta += book.qty[k] * theirs.theta;
    }

    mine = from_gradient(greeks_gradient(&p.p, &book, &grad.p), &grad.p);
    printf("\n");
    failed |= sample_gradcheck("book", flat_value, &book, p.v, grad.v, numeric.v,
                               GREEKS_PARAM_COUNT, 1e-6);
    printf("%-20s %10s %9s %9s %9s %10s\n", "the book", "value", "delta", "vega", "rho",
           "theta/yr");
    fd = from_gradient(mine.value, &numeric.p);
    print_row("dervish", &mine);
    print_row("closed form", &total);
    print_row("central difference", &fd);
    printf("theta per calendar day: %.4f\n", mine.theta / 365.0);
    if (!same_greeks(&mine, &total, 1e-10)) {
        printf("FAIL: the book's gradient disagrees with the closed form\n");
        failed = 1;
    }
    return failed;
}
