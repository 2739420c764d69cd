/* names.h - which names a model may use.  Names go verbatim into C, so
 * anything that would change the meaning of the emitted code is refused. */
#ifndef DERVISH_NAMES_H
#define DERVISH_NAMES_H

/* The prefix every identifier the emitter invents starts with. */
#define DV_PREFIX "dvs_"

/* NULL when NAME may name a value or index in model MODEL, else the reason
 * it may not (a phrase that completes "'NAME' ..."). */
const char *names_reserved(const char *name, const char *model);

/* True when NAME is a valid C identifier. */
int names_is_identifier(const char *name);

#endif
