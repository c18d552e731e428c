/* sos: cascades of second-order sections (biquads) run over interleaved float32 blocks, with
 * each channel's signal and state carried between sections in double precision. */
#ifndef DSP_SOS_H
#define DSP_SOS_H

#include <stddef.h>
#include <stdint.h>

/* One section H(z) = (b0 + b1 z^-1 + b2 z^-2) / (1 + a1 z^-1 + a2 z^-2). */
typedef struct sos_coef {
    double b0, b1, b2, a1, a2;
} sos_coef;

/* The loops of one instruction set (sos_kernel.h): a section over a tile, and the float32 to
 * double conversions in and out of it. */
typedef struct sos_kernels {
    void (*section)(const sos_coef *k, const double *x, double *y, uint32_t frames,
                    uint32_t channels);
    void (*load)(const float *src, double *dst, size_t n, double gain);
    void (*store)(const double *src, float *dst, size_t n);
} sos_kernels;

typedef struct sos_cascade {
    uint32_t n_sections, channels;
    sos_coef *coef;             /* each with b0 = 1 where it was not 0 ... */
    double gain;                /* ... and the product of those b0, applied to the input */
    double *history;            /* (n_sections + 1) x 2 x channels: the last two frames of the
                                 * signal before, between and after the sections */
    double *tile[2];            /* (2 + tile_frames) x channels each: two history frames, then
                                 * the frames being filtered */
    uint32_t tile_frames;
    uint32_t since_flush;       /* frames since the stream last crossed a flush point */
    const sos_kernels *kernels;
} sos_cascade;

/* Copy the sections and allocate the state (zero: the filter starts at rest). Returns 0, or
 * -1 for bad sizes or when out of memory. */
int sos_cascade_init(sos_cascade *c, const sos_coef *coef, uint32_t n_sections,
                     uint32_t channels);
void sos_cascade_free(sos_cascade *c);

/* Filter `frames` interleaved frames. `out` may be `in`. Allocation-free; any split of a
 * stream into calls gives bit-identical output. */
void sos_cascade_run(sos_cascade *c, const float *in, float *out, uint32_t frames);

/* Forget the past: the filter is at rest again. */
void sos_cascade_reset(sos_cascade *c);

/* Frequency response of the cascade at `freq` Hz for sample rate `rate`, as magnitude and
 * phase (radians) -- for checks and design reports, not the streaming path. */
void sos_response(const sos_coef *coef, uint32_t n_sections, double freq, double rate,
                  double *magnitude, double *phase);

#endif
