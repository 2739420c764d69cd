/* driver.c - evaluates the generated tank model at one invented reading,
 * checks tank_gradient against a central difference of tank_value, and
 * prints the misfit and its derivative (the build-system tests compare
 * them with the closed form). */
#include "tank.h"

#include <math.h>
#include <stdio.h>

int main(void)
{
    /* a 1.44 m level falling to a measured 1.2 m; a first guess of c */
    const tank_input in = {1.44, 1.2};
    tank_param p = {0.05}, grad;
    double misfit = tank_gradient(&p, &in, &grad);

    const double h = 1e-6;
    tank_param up = {p.c + h}, down = {p.c - h};
    double central = (tank_value(&up, &in) - tank_value(&down, &in)) / (2 * h);

    printf("misfit %.17g\n", misfit);
    printf("d misfit / d c %.17g\n", grad.c);
    if (!(fabs(grad.c - central) <= 1e-6 * fmax(1.0, fabs(central)))) {
        printf("the gradient disagrees with the central difference %.17g\n",
               central);
        return 1;
    }
    return 0;
}
