/* fir_kernel.h: direct FIR convolution over interleaved frames, channels innermost. Included
 * by fir_filter.c once per instruction set, with
 *   FIR_KERNEL   the function's name
 *   FIR_TARGET   its attributes (e.g. __attribute__((target("avx2"))), or nothing)
 *   FIR_LANES    floats per vector register on that target (4 for SSE2/NEON, 8 for AVX2)
 * For output frame i and channel c:  out = ((0 + h0 x[i] + h1 x[i-1] + ...) + tail[i]),
 * summed in that order on every path, so all of them give the same bits. */

#define FIR_CAT_(a, b) a##b
#define FIR_CAT(a, b) FIR_CAT_(a, b)
#define FIR_VEC FIR_CAT(FIR_KERNEL, _vec)
#define FIR_GROUP FIR_CAT(FIR_KERNEL, _group)

typedef float FIR_VEC __attribute__((vector_size(FIR_LANES * sizeof(float))));

/* Four (or one) vectors of channels accumulate in registers over all taps. */
FIR_TARGET static inline __attribute__((always_inline)) void
FIR_GROUP(const float *restrict h, uint32_t taps, const float *restrict x, size_t C,
          const float *restrict tail, float *restrict out, uint32_t frames, size_t c0,
          int vecs)
{
    const size_t L = FIR_LANES;
    for (uint32_t i = 0; i < frames; i++) {
        FIR_VEC acc[4], v;
#pragma GCC unroll 4
        for (int j = 0; j < vecs; j++)
            acc[j] = (FIR_VEC){ 0 };
        const float *row = x + i * C + c0;
        for (uint32_t k = 0; k < taps; k++, row -= C) {
            const float hk = h[k];
#pragma GCC unroll 4
            for (int j = 0; j < vecs; j++) {
                memcpy(&v, row + L * j, sizeof v);
                acc[j] = acc[j] + hk * v;
            }
        }
#pragma GCC unroll 4
        for (int j = 0; j < vecs; j++) {
            if (tail) {
                memcpy(&v, tail + i * C + c0 + L * j, sizeof v);
                acc[j] = acc[j] + v;
            }
            memcpy(out + i * C + c0 + L * j, &acc[j], sizeof acc[j]);
        }
    }
}

FIR_TARGET static void FIR_KERNEL(const float *restrict h, uint32_t taps,
                                  const float *restrict x, size_t C, const float *restrict tail,
                                  float *restrict out, uint32_t frames)
{
    const size_t L = FIR_LANES;
    size_t c0 = 0;
    for (; c0 + 4 * L <= C; c0 += 4 * L)
        FIR_GROUP(h, taps, x, C, tail, out, frames, c0, 4);
    for (; c0 + L <= C; c0 += L)
        FIR_GROUP(h, taps, x, C, tail, out, frames, c0, 1);
    for (uint32_t i = 0; c0 < C && i < frames; i++)
        for (size_t c = c0; c < C; c++) {
            float acc = 0;
            const float *p = x + i * C + c;
            for (uint32_t k = 0; k < taps; k++, p -= C)
                acc = acc + h[k] * *p;
            if (tail)
                acc = acc + tail[i * C + c];
            out[i * C + c] = acc;
        }
}

#undef FIR_VEC
#undef FIR_GROUP
#undef FIR_KERNEL
#undef FIR_TARGET
#undef FIR_LANES
