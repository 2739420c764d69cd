/* parse_ahead.h - the two readings of a model file (see rs_read_twice)
 * done by a thread of its own: the statements are parsed ahead of the
 * caller, who takes them in order, in batches, while the reading goes on. */
#ifndef DERVISH_PARSE_AHEAD_H
#define DERVISH_PARSE_AHEAD_H

#include "parse_state.h"

typedef struct ParseAhead ParseAhead;

/* Start reading SRC twice: first reporting syntax errors in DIAG, with
 * the statements given as to a names_only visitor; then silently (errors
 * counted in a Diag of its own, like DIAG's but showing nothing), with
 * whole trees.  DIAG is the thread's until parse_ahead_first returns.
 * Returns NULL when no thread can be had: the caller then reads SRC
 * itself. */
ParseAhead *parse_ahead_start(Diag *diag, const Source *src);
/* Hand the first reading's statements to VISIT, in the file's order;
 * then the names of the statements that failed to parse (kept until
 * parse_ahead_finish) are in *failed. */
void parse_ahead_first(ParseAhead *pa, void (*visit)(void *, const AstStmt *),
                       void *ctx, const char ***failed, int *nfailed);
/* The same for the second reading; frees PA. */
void parse_ahead_finish(ParseAhead *pa, void (*visit)(void *, const AstStmt *),
                        void *ctx);

#endif
