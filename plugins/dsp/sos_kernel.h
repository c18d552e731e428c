/* sos_kernel.h: one section of the biquad cascade over a tile, channels innermost. Included by
 * sos.c once per instruction set and precision, with
 *   SOS_KERNEL   the function's name
 *   SOS_TARGET   its attributes (e.g. __attribute__((target("avx2"))), or nothing)
 *   SOS_T        the element type of tiles, history and arithmetic: double or float
 *   SOS_LANES    SOS_Ts per vector register on that target (for double 2 with SSE2/NEON,
 *                4 with AVX2, 8 with AVX-512; twice that for float)
 *   SOS_VECS     vectors of channels whose history fits in its registers at once
 * Every path of one precision does the same operations in the same order on each channel, so
 * all of them give the same bits; they differ only in how many channels share one
 * instruction. The coefficients arrive in double and are rounded once to SOS_T. */

#define SOS_CAT_(a, b) a##b
#define SOS_CAT(a, b) SOS_CAT_(a, b)
#define SOS_VEC SOS_CAT(SOS_KERNEL, _vec)
#define SOS_GROUP SOS_CAT(SOS_KERNEL, _group)

typedef SOS_T SOS_VEC __attribute__((vector_size(SOS_LANES * sizeof(SOS_T))));

/* Up to four vectors of channels whose history stays in registers across the tile: enough
 * independent recursions in flight to cover the 6-cycle latency of the last multiply-add. */
SOS_TARGET static inline __attribute__((always_inline)) void
SOS_GROUP(const sos_coef *k, const SOS_T *restrict x, SOS_T *restrict y, uint32_t frames,
          size_t C, size_t c0, int vecs, int monic)
{
    const SOS_T b0 = (SOS_T)k->b0, b1 = (SOS_T)k->b1, b2 = (SOS_T)k->b2, a1 = (SOS_T)k->a1,
                a2 = (SOS_T)k->a2;
    const size_t L = SOS_LANES;
    /* Both y[n-1] and y[n-2] stay in registers, taking turns: frame n overwrites y[n-2]
     * with y[n], so no register is copied and none is spilled with four vectors. */
    SOS_VEC h1[SOS_VECS], h2[SOS_VECS], x0, x1, x2;
#pragma GCC unroll 8
    for (int j = 0; j < vecs; j++) {
        memcpy(&h1[j], y - C + c0 + L * j, sizeof h1[j]);
        memcpy(&h2[j], y - 2 * C + c0 + L * j, sizeof h2[j]);
    }
    const SOS_T *xr = x + c0;
    SOS_T *yr = y + c0;
#define SOS_FRAME(older, newer)                                                               \
    do {                                                                                       \
        _Pragma("GCC unroll 8") for (int j = 0; j < vecs; j++)                                 \
        {                                                                                      \
            memcpy(&x0, xr + L * j, sizeof x0);                                                \
            memcpy(&x1, xr - C + L * j, sizeof x1);                                            \
            memcpy(&x2, xr - 2 * C + L * j, sizeof x2);                                        \
            older[j] = monic ? SOS_MONIC_STEP(x0, x1, x2, newer[j], older[j])                  \
                             : SOS_STEP(x0, x1, x2, newer[j], older[j]);                       \
            memcpy(yr + L * j, &older[j], sizeof older[j]);                                    \
        }                                                                                      \
        xr += C;                                                                               \
        yr += C;                                                                               \
    } while (0)
    uint32_t n = 0;
    for (; n + 2 <= frames; n += 2) {
        SOS_FRAME(h2, h1);
        SOS_FRAME(h1, h2);
    }
    if (n < frames)
        SOS_FRAME(h2, h1);
#undef SOS_FRAME
}

SOS_TARGET static void SOS_KERNEL(const sos_coef *k, const void *x_tile, void *y_tile,
                                  uint32_t frames, uint32_t channels)
{
    const SOS_T *restrict x = x_tile;
    SOS_T *restrict y = y_tile;
    const size_t C = channels, L = SOS_LANES;
    const int monic = k->b0 == 1;
    size_t c0 = 0;
    /* Each call has constant `vecs` and `monic` once inlined: specialised loops. */
    for (; c0 + SOS_VECS * L <= C; c0 += SOS_VECS * L) {
        if (monic)
            SOS_GROUP(k, x, y, frames, C, c0, SOS_VECS, 1);
        else
            SOS_GROUP(k, x, y, frames, C, c0, SOS_VECS, 0);
    }
#if SOS_VECS > 4
    /* Wide registers: 64 channels are only four vectors of floats; keep four in flight. */
    for (; c0 + 4 * L <= C; c0 += 4 * L) {
        if (monic)
            SOS_GROUP(k, x, y, frames, C, c0, 4, 1);
        else
            SOS_GROUP(k, x, y, frames, C, c0, 4, 0);
    }
#endif
    for (; c0 + L <= C; c0 += L) {
        if (monic)
            SOS_GROUP(k, x, y, frames, C, c0, 1, 1);
        else
            SOS_GROUP(k, x, y, frames, C, c0, 1, 0);
    }
    const SOS_T b0 = (SOS_T)k->b0, b1 = (SOS_T)k->b1, b2 = (SOS_T)k->b2, a1 = (SOS_T)k->a1,
                a2 = (SOS_T)k->a2;
    for (uint32_t n = 0; c0 < C && n < frames; n++) {
        const SOS_T *xr = x + n * C;
        SOS_T *yr = y + n * C;
        for (size_t c = c0; c < C; c++)
            yr[c] = monic ? SOS_MONIC_STEP(xr[c], xr[c - C], xr[c - 2 * C], yr[c - C],
                                             yr[c - 2 * C])
                            : SOS_STEP(xr[c], xr[c - C], xr[c - 2 * C], yr[c - C],
                                       yr[c - 2 * C]);
    }
}

/* Float32 frames in, scaled by the cascade's gain (rounded to SOS_T), and out again. */
typedef float SOS_CAT(SOS_KERNEL, _fvec) __attribute__((vector_size(SOS_LANES * sizeof(float))));

SOS_TARGET static void SOS_CAT(SOS_KERNEL, _load)(const float *restrict src, void *dst_tile,
                                                  size_t n, double gain_double)
{
    SOS_T *restrict dst = dst_tile;
    const SOS_T gain = (SOS_T)gain_double;
    size_t i = 0;
    for (; i + SOS_LANES <= n; i += SOS_LANES) {
        SOS_CAT(SOS_KERNEL, _fvec) f;
        memcpy(&f, src + i, sizeof f);
        SOS_VEC d = __builtin_convertvector(f, SOS_VEC) * gain;
        memcpy(dst + i, &d, sizeof d);
    }
    for (; i < n; i++)
        dst[i] = src[i] * gain;
}

SOS_TARGET static void SOS_CAT(SOS_KERNEL, _store)(const void *src_tile,
                                                   float *restrict dst, size_t n)
{
    const SOS_T *restrict src = src_tile;
    size_t i = 0;
    for (; i + SOS_LANES <= n; i += SOS_LANES) {
        SOS_VEC d;
        memcpy(&d, src + i, sizeof d);
        SOS_CAT(SOS_KERNEL, _fvec) f = __builtin_convertvector(d, SOS_CAT(SOS_KERNEL, _fvec));
        memcpy(dst + i, &f, sizeof f);
    }
    for (; i < n; i++)
        dst[i] = (float)src[i];
}

static const sos_kernels SOS_CAT(SOS_KERNEL, _set) = {
    SOS_KERNEL, SOS_CAT(SOS_KERNEL, _load), SOS_CAT(SOS_KERNEL, _store), sizeof(SOS_T)
};

#undef SOS_VEC
#undef SOS_GROUP
#undef SOS_KERNEL
#undef SOS_TARGET
#undef SOS_T
#undef SOS_LANES
#undef SOS_VECS
