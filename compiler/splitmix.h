/* splitmix.h - the small seeded generator of dervish check (splitmix64:
 * one seed gives the same numbers on every machine). */
#ifndef DERVISH_SPLITMIX_H
#define DERVISH_SPLITMIX_H

#include <stdint.h>

static inline uint64_t splitmix64(uint64_t *state)
{
    uint64_t z = (*state += 0x9e3779b97f4a7c15ULL);
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
    return z ^ (z >> 31);
}

#endif
