/* sos: cascades of second-order sections (biquads) run over interleaved float32 blocks, with
 * each channel's signal and state carried between sections in double precision or, on request,
 * in single precision (twice the channels per vector instruction, less accurate). */
#ifndef DSP_SOS_H
#define DSP_SOS_H

#include <stddef.h>
#include <stdint.h>

/* One section H(z) = (b0 + b1 z^-1 + b2 z^-2) / (1 + a1 z^-1 + a2 z^-2). */
typedef struct sos_coef {
    double b0, b1, b2, a1, a2;
} sos_coef;

/* What the samples between sections, the history and the arithmetic are held in. */
typedef enum sos_precision { SOS_DOUBLE = 0, SOS_SINGLE = 1 } sos_precision;

/* The loops of one instruction set and precision (sos_kernel.h): a section over a tile, and
 * the conversions from float32 in and to float32 out. Tiles hold `element_size`-byte elements
 * (double or float), hence the untyped pointers. */
typedef struct sos_kernels {
    void (*section)(const sos_coef *k, const void *x, void *y, uint32_t frames,
                    uint32_t channels);
    void (*load)(const float *src, void *dst, size_t n, double gain);
    void (*store)(const void *src, float *dst, size_t n);
    size_t element_size;
} sos_kernels;

typedef struct sos_cascade {
    uint32_t n_sections, channels;
    sos_coef *coef;             /* each with b0 = 1 where it was not 0 ... */
    double gain;                /* ... and the product of those b0, applied to the input (in
                                 * single precision only its square root; see sos.c) */
    sos_precision precision;
    void *history;              /* (n_sections + 1) x 2 x channels elements: the last two
                                 * frames of the signal before, between and after the sections */
    void *tile[2];              /* (2 + tile_frames) x channels elements each: two history
                                 * frames, then the frames being filtered */
    uint32_t tile_frames;
    uint32_t since_flush;       /* frames since the stream last crossed a flush point */
    const sos_kernels *kernels;
} sos_cascade;

/* Copy the sections and allocate the state (zero: the filter starts at rest), in double
 * precision. Returns 0, or -1 for bad sizes or when out of memory. */
int sos_cascade_init(sos_cascade *c, const sos_coef *coef, uint32_t n_sections,
                     uint32_t channels);

/* The same in the given precision. Returns 0, -1 as above, or SOS_ESINGLE when the design
 * cannot be held in single precision: a section whose poles, rounded to float32, are not
 * strictly inside the unit circle, or a gain too small for float32's range. */
#define SOS_ESINGLE (-2)
int sos_cascade_init_precision(sos_cascade *c, const sos_coef *coef, uint32_t n_sections,
                               uint32_t channels, sos_precision precision);
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
