/* products.c - checks of the tangent and of the Hessian times a direction
 * against the gradient; see products.h.  The tangent and the gradient come
 * from separate passes (tangent.c, reverse.c) over the same rules, so
 * their agreement checks each pass's bookkeeping: which reads contribute,
 * the winners of max and min, rows.  The Hessian times a direction is
 * compared with differences of the gradient along it. */
#include "products.h"
#include "checkpoint.h"
#include "splitmix.h"

#include <math.h>
#include <stdlib.h>

/* n zeroed doubles (check_alloc exits when memory runs out) */
static double *doubles(long n)
{
    return check_alloc((size_t)n * sizeof(double));
}

double *products_random_vector(long n, unsigned long seed, uint64_t salt)
{
    double *dir = doubles(n);
    uint64_t state = seed ^ salt;
    for (long k = 0; k < n; k++)
        dir[k] = (double)(splitmix64(&state) >> 43) / 1048576.0 - 1.0;
    return dir;
}

int products_check_tangent(Evaluation *ev, const double *grad,
                           unsigned long seed, double tolerance, FILE *out)
{
    long n = eval_param_count(ev);
    double *dir = products_random_vector(n, seed, 0x7461676e65746e61ULL);
    double dot = 0, scale = 0;
    for (long k = 0; k < n; k++) {
        dot += grad[k] * dir[k];
        scale += fabs(grad[k] * dir[k]);
    }
    double dvalue;
    eval_tangent(ev, dir, &dvalue);
    free(dir);
    double diff = fabs(dvalue - dot);
    double rel = diff == 0 ? 0 : scale > 0 ? diff / scale : HUGE_VAL;
    int bad = !(rel <= tolerance);
    fprintf(out, "tangent along a random direction (seed %lu): %.15g\n"
                 "the gradient times that direction:          %.15g\n"
                 "check: the tangent %s the gradient (relative difference "
                 "%.1e, tolerance %g)\n",
            seed, dvalue, dot, bad ? "disagrees with" : "agrees with", rel,
            tolerance);
    return bad;
}

/* The gradient at the params moved by t along dir, into g. */
static void gradient_along(Evaluation *ev, const double *p0, const double *dir,
                           double t, double *g)
{
    long n = eval_param_count(ev);
    for (long k = 0; k < n; k++)
        *eval_param(ev, k) = p0[k] + t * dir[k];
    eval_gradient(ev, g);
}

int products_check_hessvec(Evaluation *ev, const double *grad,
                           unsigned long seed, double tolerance, FILE *out)
{
    long n = eval_param_count(ev);
    double *dir = products_random_vector(n, seed, 0x6865737376656321ULL);
    double *g = doubles(n), *hv = doubles(n), *p0 = doubles(n);
    double *d[2], *gp = doubles(n), *gm = doubles(n);
    eval_hessvec(ev, dir, g, hv);
    int same_grad = 1;
    for (long k = 0; k < n; k++) {
        same_grad &= g[k] == grad[k] || (g[k] != g[k] && grad[k] != grad[k]);
        p0[k] = *eval_param(ev, k);
    }
    /* central differences of the gradient at steps h and h/2, combined
     * by Richardson extrapolation as for the gradient's own check */
    double h = 1e-3;
    for (int s = 0; s < 2; s++) {
        double t = s ? h / 2 : h;
        d[s] = doubles(n);
        gradient_along(ev, p0, dir, t, gp);
        gradient_along(ev, p0, dir, -t, gm);
        for (long k = 0; k < n; k++)
            d[s][k] = (gp[k] - gm[k]) / (2 * t);
    }
    for (long k = 0; k < n; k++)
        *eval_param(ev, k) = p0[k];
    long agree = 0;
    double worst = 0;
    for (long k = 0; k < n; k++) {
        double r = (4 * d[1][k] - d[0][k]) / 3;
        double err = fabs(hv[k] - r) / fmax(1, fabs(r));
        if (!(err <= worst))
            worst = err;
        agree += err <= tolerance;
    }
    fprintf(out, "Hessian times a random direction (seed %lu): %ld of %ld "
                 "entries agree with\n  differences of the gradient (largest "
                 "error %.1e, tolerance %g)\n", seed, agree, n, worst,
            tolerance);
    if (!same_grad)
        fputs("check: the Hessian-vector function's gradient differs from "
              "the gradient's\n", out);
    int bad = agree < n || !same_grad;
    fprintf(out, "check: the Hessian times the direction %s\n",
            bad ? "disagrees" : "agrees");
    free(dir);
    free(g);
    free(hv);
    free(p0);
    free(gp);
    free(gm);
    free(d[0]);
    free(d[1]);
    return bad;
}

/* The Jacobian of outputs in a struct, two ways: row i from the reverse
 * sweep seeded with unit vector i, column k from the tangent sweep along
 * unit vector k.  The emitted Jacobian calls one of the two; their
 * agreement checks the other's bookkeeping too. */
int products_check_jacobian(const Ir *ir, Evaluation *ev, const double *seed,
                            double tolerance, FILE *out)
{
    long n = eval_param_count(ev), m = eval_output_count(ev);
    double *rows = doubles(m * n), *col = doubles(m), *unit_out = doubles(m);
    double *unit_in = doubles(n);
    for (long i = 0; i < m; i++) {
        unit_out[i] = 1;
        eval_set_seed(ev, unit_out);
        eval_gradient(ev, rows + i * n);
        unit_out[i] = 0;
    }
    eval_set_seed(ev, seed);
    long agree = 0, worst_at = 0;
    double worst = 0, dvalue;
    for (long k = 0; k < n; k++) {
        unit_in[k] = 1;
        eval_tangent(ev, unit_in, &dvalue);
        eval_output_tangents(ev, col);
        unit_in[k] = 0;
        for (long i = 0; i < m; i++) {
            double r = rows[i * n + k];
            double err = fabs(r - col[i]) / fmax(1, fabs(col[i]));
            if (!(err <= worst)) {
                worst = err;
                worst_at = i * n + k;
            }
            agree += err <= tolerance;
        }
    }
    fprintf(out, "Jacobian, %ld x %ld: %ld of %ld entries of its rows (reverse "
                 "sweeps) agree with\n  its columns (tangent sweeps); largest "
                 "error %.1e, at d %s / d %s (tolerance %g)\n",
            m, n, agree, m * n, worst,
            check_entry_name(ir, worst_at / n, 1),
            check_entry_name(ir, worst_at % n, 0), tolerance);
    int bad = agree < m * n;
    fprintf(out, "check: the Jacobian's rows and columns %s\n",
            bad ? "disagree" : "agree");
    free(rows);
    free(col);
    free(unit_out);
    free(unit_in);
    return bad;
}
