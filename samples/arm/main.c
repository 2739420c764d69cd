/* main.c - steers the two-joint arm of arm.dvs through a list of goal points
 * by gradient descent on the generated arm_gradient, printing the joints
 * and the tip as it goes. Each final pose is checked against closed-form
 * inverse kinematics (law of cosines), or, for a goal the shoulder range
 * forbids, against the closest pose with the shoulder at its limit. */
#include "arm.h"
#include "sample_util.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#define MAX_STEP  0.05 /* rad per control step: the joints' speed limit */
#define MAX_STEPS 2000
#define DEG       (180.0 / 3.14159265358979323846)

typedef struct goal {
    double x, y;
} goal;

/* Invented goals in metres; the last lies where the shoulder may not go. */
static const goal goals[] = {{0.50, 0.20}, {0.10, 0.55}, {-0.30, 0.35}, {0.54, -0.01}};

/* The driver's own forward kinematics, for printing and for the checks. */
static void tip(const arm_input *in, const arm_param *q, double *x, double *y)
{
    *x = in->l1 * cos(q->q1) + in->l2 * cos(q->q1 + q->q2);
    *y = in->l1 * sin(q->q1) + in->l2 * sin(q->q1 + q->q2);
}

/* Steepest descent. The step length is the Barzilai-Borwein one, s.s / s.y
 * from the last move s and gradient change y (2 on the first step), capped
 * at MAX_STEP per joint and halved until the cost falls enough (Armijo).
 * Prints the pose on steps 1, 2, 4, 8, ...; returns the steps taken. */
static int reach(arm_param_flat *q, const arm_input *in)
{
    arm_param_flat g, next, g_next;
    double cost = arm_gradient(&q->p, in, &g.p);
    double rate = 2.0;
    for (int step = 1; step <= MAX_STEPS; step++) {
        double biggest = 0.0, next_cost = 0.0, x, y, ss = 0.0, sy = 0.0;
        for (int n = 0; n < ARM_PARAM_COUNT; n++)
            biggest = fmax(biggest, fabs(g.v[n]));
        if (biggest < 1e-12)
            return step - 1;
        if (rate * biggest > MAX_STEP)
            rate = MAX_STEP / biggest;
        for (; rate > 1e-14; rate *= 0.5) {
            for (int n = 0; n < ARM_PARAM_COUNT; n++)
                next.v[n] = q->v[n] - rate * g.v[n];
            next_cost = arm_value(&next.p, in);
            if (next_cost <= cost - 1e-4 * rate * biggest * biggest)
                break;
        }
        if (!(next_cost < cost))
            return step - 1; /* no decrease left at double precision */
        cost = arm_gradient(&next.p, in, &g_next.p);
        for (int n = 0; n < ARM_PARAM_COUNT; n++) {
            double s = next.v[n] - q->v[n], dy = g_next.v[n] - g.v[n];
            ss += s * s;
            sy += s * dy;
        }
        rate = sy > 0.0 ? ss / sy : 2.0;
        *q = next;
        g = g_next;
        if ((step & (step - 1)) == 0) {
            tip(in, &q->p, &x, &y);
            printf("  step %4d   q1 %8.3f deg  q2 %8.3f deg   tip (%7.4f, %7.4f) m\n",
                   step, q->p.q1 * DEG, q->p.q2 * DEG, x, y);
        }
    }
    return MAX_STEPS;
}

/* The pose that puts the tip on the goal with the elbow bent positively. */
static void closed_form_pose(const arm_input *in, double *q1, double *q2)
{
    double l1 = in->l1, l2 = in->l2;
    double c2 =
        (in->gx * in->gx + in->gy * in->gy - l1 * l1 - l2 * l2) / (2.0 * l1 * l2);
    *q2 = acos(c2);
    *q1 = atan2(in->gy, in->gx) - atan2(l2 * sin(*q2), l1 + l2 * cos(*q2));
}

/* With the shoulder held at its low limit, the closest pose points the
 * forearm from the elbow straight at the goal. */
static void shoulder_limited_pose(const arm_input *in, double *q1, double *q2)
{
    double ex = in->l1 * cos(in->q1_lo), ey = in->l1 * sin(in->q1_lo);
    *q1 = in->q1_lo;
    *q2 = atan2(in->gy - ey, in->gx - ex) - in->q1_lo;
}

static double flat_value(const double *x, const void *ctx)
{
    arm_param_flat q;
    memcpy(q.v, x, sizeof q.v);
    return arm_value(&q.p, ctx);
}

int main(void)
{
    arm_input in;
    arm_param_flat q, g;
    int failed = 0;

    in.l1 = 0.40;
    in.l2 = 0.30;
    in.q1_lo = -0.50; /* about -29 deg */
    in.q1_hi = 2.60;
    in.q2_lo = 0.15; /* the elbow never straightens fully: no singular pose */
    in.q2_hi = 2.40;
    q.p.q1 = 0.8; /* the parked pose */
    q.p.q2 = 1.6;

    /* Check the gradient once inside the ranges and once outside both. */
    in.gx = goals[0].x;
    in.gy = goals[0].y;
    arm_gradient(&q.p, &in, &g.p);
    failed |= sample_gradcheck("arm, parked", flat_value, &in, q.v, g.v, NULL,
                               ARM_PARAM_COUNT, 1e-6);
    {
        arm_param_flat wild = {.p = {.q1 = -0.9, .q2 = 2.7}};
        arm_gradient(&wild.p, &in, &g.p);
        failed |= sample_gradcheck("arm, both joints out of range", flat_value, &in,
                                   wild.v, g.v, NULL, ARM_PARAM_COUNT, 1e-6);
    }

    for (size_t k = 0; k < sizeof goals / sizeof goals[0]; k++) {
        double want1, want2, x, y, tol;
        int steps, limited;
        in.gx = goals[k].x;
        in.gy = goals[k].y;
        closed_form_pose(&in, &want1, &want2);
        limited = want1 < in.q1_lo;
        if (limited)
            shoulder_limited_pose(&in, &want1, &want2);
        printf("\ngoal %zu: (%.2f, %.2f) m%s\n", k + 1, in.gx, in.gy,
               limited ? ", past the shoulder's range" : "");
        steps = reach(&q, &in);
        tip(&in, &q.p, &x, &y);
        printf("  done after %d steps: q1 %.3f deg, q2 %.3f deg, tip (%.4f, %.4f) m,"
               " %.2f mm from the goal\n",
               steps, q.p.q1 * DEG, q.p.q2 * DEG, x, y,
               1e3 * hypot(x - in.gx, y - in.gy));
        /* The soft limit lets the shoulder overshoot by about
         * (pull of the goal) / STIFF, a few thousandths of a radian here. */
        tol = limited ? 1e-2 : 1e-6;
        printf("  expected  q1 %.3f deg, q2 %.3f deg\n", want1 * DEG, want2 * DEG);
        if (!(fabs(q.p.q1 - want1) <= tol && fabs(q.p.q2 - want2) <= tol)) {
            printf("FAIL: goal %zu: joints more than %g rad from the expected pose\n",
                   k + 1, tol);
            failed = 1;
        }
    }
    return failed;
}
