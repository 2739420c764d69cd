/* emit_layout.h - where the arrays of emitted code live.  Small fixed
 * arrays are locals; arrays with a runtime size, and fixed ones above the
 * stack limit, live in the caller's work buffer, at offsets a generated
 * function computes from the sizes (and checks for negative sizes and
 * overflowing counts). */
#ifndef DERVISH_EMIT_LAYOUT_H
#define DERVISH_EMIT_LAYOUT_H

#include "buf.h"
#include "ir.h"

typedef struct Storage {
    int *slot;          /* per array: its place in the work layout, or -1 */
    int nslots;
    int uses_work;      /* the functions take a work argument */
    int has_input;      /* there is an m_input (inputs or sizes) */
    int uses_product;   /* the layout multiplies extents (count_product) */
} Storage;

/* Decide the storage of every array the emitted statements use;
 * stack_limit is the most doubles one local array may hold. */
Storage layout_plan(const Ir *ir, long stack_limit);
void layout_free(Storage *st);

/* The C text of an extent: "5", or "dvs_in->n" for a size. */
const char *layout_extent(const Ir *ir, int extent);

/* Emit the static function dvs_layout and the exported m_work_count;
 * real is the emitted code's real type, "double" or "float". */
void layout_emit(Buf *c, const Ir *ir, const Storage *st, const char *real);

/* Emit the check of the sizes at the start of a function, and the offsets
 * of the work arrays.  FAIL is what follows the condition: the statement
 * run when the sizes are invalid, on a new line, or a block. */
void layout_emit_pointers(Buf *c, const Storage *st, const char *fail);

/* The work_count prototype, for the header. */
void layout_prototype(Buf *h, const Ir *ir, const Storage *st,
                      const char *prefix);

#endif
