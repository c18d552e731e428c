/* fnv1a: the 64-bit FNV-1a hash (Fowler, Noll and Vo; constants from the authors' published
 * description), used as a content hash of the data a graph was fitted on. It is NOT
 * cryptographic: it tells recordings apart, it does not protect them. */
#ifndef WEFT_FNV1A_H
#define WEFT_FNV1A_H

#include <stddef.h>
#include <stdint.h>

#define FNV1A_OFFSET 0xcbf29ce484222325ull
#define FNV1A_PRIME 0x100000001b3ull

static inline uint64_t fnv1a_update(uint64_t h, const void *data, size_t len)
{
    const unsigned char *p = data;
    for (size_t i = 0; i < len; i++) {
        h ^= p[i];
        h *= FNV1A_PRIME;
    }
    return h;
}

#endif
