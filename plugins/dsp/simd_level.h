/* simd_level: which vector path the DSP loops take on this processor. Every path computes the
 * same operations in the same order, so the choice changes speed, never results; the
 * environment variable WEFT_SIMD (default, avx2) caps it, to compare paths or measure them. */
#ifndef DSP_SIMD_LEVEL_H
#define DSP_SIMD_LEVEL_H

#include <stdlib.h>
#include <string.h>

enum { SIMD_DEFAULT = 0, SIMD_AVX2 = 1, SIMD_AVX512 = 2 };

static inline int simd_level(void)
{
    int level = SIMD_DEFAULT;
#if defined(__x86_64__) && (defined(__GNUC__) || defined(__clang__))
    __builtin_cpu_init();
    if (__builtin_cpu_supports("avx2"))
        level = SIMD_AVX2;
    if (__builtin_cpu_supports("avx512f"))
        level = SIMD_AVX512;
#endif
    const char *cap = getenv("WEFT_SIMD");
    if (cap && !strcmp(cap, "default"))
        level = SIMD_DEFAULT;
    else if (cap && !strcmp(cap, "avx2") && level > SIMD_AVX2)
        level = SIMD_AVX2;
    return level;
}

#endif
