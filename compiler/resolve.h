/* resolve.h - from syntax tree to IR: names, constants, shapes, index
 * ranges, and the lowering of reductions into accumulating statements.
 *
 * Needs: a parsed model.  Def calls are expanded into the expressions that
 * make them.  Leaves: ir->forward holding every statement that
 * some output depends on, in model order; arrays for inputs, params, values
 * and temporaries; ir->output set.  Errors and warnings go to diag. */
#ifndef DERVISH_RESOLVE_H
#define DERVISH_RESOLVE_H

#include "ast.h"
#include "ir.h"

/* name: the symbol prefix from --name, or NULL.  stem: the model file's
 * name without directory and extension, the prefix of last resort.  The
 * files 'use' statements name are searched for along diag->files (which
 * must be set for a model with 'use'), added to it and reported in. */
Ir *resolve_model(Arena *arena, Diag *diag, const Source *src,
                  const AstModel *model, const char *name, const char *stem);

#endif
