/* tangent.h - the tangent (forward-mode) pass, IR in and IR out.  Over the
 * forward statements it gives the directional derivative of the output
 * along a direction, the tangent of the params (ir->tangent); over the
 * reverse sweep too, the tangents of the gradient: the Hessian times that
 * direction (ir->hv_forward, ir->hv_reverse). */
#ifndef DERVISH_TANGENT_H
#define DERVISH_TANGENT_H

#include "ir.h"

/* Fill ir->tangent when TANGENT is set, ir->hv_forward and ir->hv_reverse
 * when HESSVEC is.  Needs the activity analysis and the reverse sweep of
 * reverse_pass. */
void tangent_pass(Ir *ir, int tangent, int hessvec);

#endif
