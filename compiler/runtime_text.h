/* runtime_text.h - the runtime helpers (runtime/NAME.c) as text, generated
 * into build/runtime_text.c so emitted code can carry copies of them. */
#ifndef DERVISH_RUNTIME_TEXT_H
#define DERVISH_RUNTIME_TEXT_H

typedef struct RuntimeText {
    const char *name;   /* the file's stem, e.g. "sigmoid" */
    const char *text;   /* the file's whole text */
} RuntimeText;

extern const RuntimeText runtime_texts[];
extern const int runtime_text_count;

#endif
