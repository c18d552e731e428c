/* sos_kernel.h: one section of the biquad cascade over a tile, channels innermost. Included by
 * sos.c once per instruction set, with
 *   SOS_KERNEL   the function's name
 *   SOS_TARGET   its attributes (e.g. __attribute__((target("avx2"))), or nothing)
 *   SOS_LANES    doubles per vector register on that target (2 for SSE2/NEON, 4 for AVX2)
 * Every path does the same operations in the same order on each channel, so all of them give
 * the same bits; they differ only in how many channels share one instruction. */

#define SOS_CAT_(a, b) a##b
#define SOS_CAT(a, b) SOS_CAT_(a, b)
#define SOS_VEC SOS_CAT(SOS_KERNEL, _vec)
#define SOS_GROUP SOS_CAT(SOS_KERNEL, _group)

typedef double SOS_VEC __attribute__((vector_size(SOS_LANES * sizeof(double))));

/* Up to four vectors of channels whose history stays in registers across the tile: enough
 * independent recursions in flight to cover the 6-cycle latency of the last multiply-add. */
SOS_TARGET static inline __attribute__((always_inline)) void
SOS_GROUP(const sos_coef *k, const double *restrict x, double *restrict y, uint32_t frames,
          size_t C, size_t c0, int vecs, int monic)
{
    const double b0 = k->b0, b1 = k->b1, b2 = k->b2, a1 = k->a1, a2 = k->a2;
    const size_t L = SOS_LANES;
    /* y[n-1] stays in a register (it is on the critical path); y[n-2] is read back from the
     * tile, which leaves registers for four vectors of channels without spilling. */
    SOS_VEC p1[4], x0, x1, x2, y2;
#pragma GCC unroll 4
    for (int j = 0; j < vecs; j++)
        memcpy(&p1[j], y - C + c0 + L * j, sizeof p1[j]);
    for (uint32_t n = 0; n < frames; n++) {
        const double *xr = x + n * C + c0;
        double *yr = y + n * C + c0;
#pragma GCC unroll 4
        for (int j = 0; j < vecs; j++) {
            memcpy(&x0, xr + L * j, sizeof x0);
            memcpy(&x1, xr - C + L * j, sizeof x1);
            memcpy(&x2, xr - 2 * C + L * j, sizeof x2);
            memcpy(&y2, yr - 2 * C + L * j, sizeof y2);
            SOS_VEC out = monic ? SOS_MONIC_STEP(x0, x1, x2, p1[j], y2)
                                : SOS_STEP(x0, x1, x2, p1[j], y2);
            memcpy(yr + L * j, &out, sizeof out);
            p1[j] = out;
        }
    }
}

SOS_TARGET static void SOS_KERNEL(const sos_coef *k, const double *restrict x,
                                  double *restrict y, uint32_t frames, uint32_t channels)
{
    const size_t C = channels, L = SOS_LANES;
    const int monic = k->b0 == 1;
    size_t c0 = 0;
    /* Each call has constant `vecs` and `monic` once inlined: four specialised loops. */
    for (; c0 + 4 * L <= C; c0 += 4 * L) {
        if (monic)
            SOS_GROUP(k, x, y, frames, C, c0, 4, 1);
        else
            SOS_GROUP(k, x, y, frames, C, c0, 4, 0);
    }
    for (; c0 + L <= C; c0 += L) {
        if (monic)
            SOS_GROUP(k, x, y, frames, C, c0, 1, 1);
        else
            SOS_GROUP(k, x, y, frames, C, c0, 1, 0);
    }
    const double b0 = k->b0, b1 = k->b1, b2 = k->b2, a1 = k->a1, a2 = k->a2;
    for (uint32_t n = 0; c0 < C && n < frames; n++) {
        const double *xr = x + n * C;
        double *yr = y + n * C;
        for (size_t c = c0; c < C; c++)
            yr[c] = monic ? SOS_MONIC_STEP(xr[c], xr[c - C], xr[c - 2 * C], yr[c - C],
                                             yr[c - 2 * C])
                            : SOS_STEP(xr[c], xr[c - C], xr[c - 2 * C], yr[c - C],
                                       yr[c - 2 * C]);
    }
}

#undef SOS_VEC
#undef SOS_GROUP
#undef SOS_KERNEL
#undef SOS_TARGET
#undef SOS_LANES
