/* graph.h - `dervish graph`: the computation graph of a compiled model in
 * Graphviz DOT, with values and operations as nodes, roles told apart by
 * style, a legend, and optionally the order of the adjoint sweep.
 * Needs: the IR after the reverse pass.  Changes nothing in it. */
#ifndef DERVISH_GRAPH_H
#define DERVISH_GRAPH_H

#include "buf.h"
#include "ir.h"

typedef struct GraphOptions {
    const char *model_file; /* the model file's name, for the title */
    int sweep;              /* --sweep: number values in adjoint order */
} GraphOptions;

/* Append the DOT text of the model's graph to *out. */
void graph_write(const Ir *ir, const GraphOptions *opt, Buf *out);

#endif
