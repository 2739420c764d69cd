/* stream.h - row-by-row evaluation.
 *
 * Needs: ir->forward after resolve.  When the output reduces, over a size,
 * terms that each depend on one row (and nothing computed inside the rows
 * reads a reduction over them), the forward statements are reordered into
 * those before the rows, the row statements, and those after, and the row
 * statements and per-row arrays are tagged: the emitter then computes the
 * rows one at a time, keeping one row in local variables, so scratch does
 * not grow with the number of rows.  Leaves ir->row_size (or -1) and
 * ir->row_plan, a sentence saying what was chosen and why. */
#ifndef DERVISH_STREAM_H
#define DERVISH_STREAM_H

#include "ir.h"

void stream_plan(Ir *ir);

#endif
