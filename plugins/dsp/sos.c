/* sos: the biquad cascade over interleaved frames.
 *
 * Each section runs in direct form I over a tile of frames, channels innermost:
 *   y[n] = (b0 x[n] + b1 x[n-1] + b2 x[n-2] - a2 y[n-2]) - a1 y[n-1]
 * Interleaved data makes the channel loop contiguous, so channels run side by side on vector
 * registers while each channel's recursion stays sequential in time. Direct form I rather
 * than the transposed form II of scipy.signal.sosfilt: everything but the last multiply-add
 * is off the recursion's critical path (6 cycles of latency per frame instead of 9), and a
 * section's output history is the next section's input history, so the tiles double as the
 * delay lines.
 *
 * Double precision for the samples between sections and the history (measured, see
 * docs/filters.md): in float32 the sections of a low-cutoff high-pass or a narrow band-pass,
 * whose poles sit within 1e-3 of z = 1, drift up to 1e-3 of full scale from the float64
 * reference; in double the output stays within a float32 rounding or two of it. The data
 * stays float32 in and out.
 *
 * Single precision (sos_cascade_init_precision, SOS_SINGLE) is the same cascade with float
 * tiles, history and coefficients: twice the channels per instruction, for the cases where
 * its measured error is acceptable. Two things change with it. The gain: the product of the
 * b0s is as small as 1e-31 for narrow low band-passes of order 10, which would put the input
 * near float32's underflow, so the input takes only its square root and the last section's
 * numerator the rest; the signal between sections then stays within sqrt(gain) of the data's
 * scale either way. And init refuses a design whose rounded float32 poles leave the unit
 * circle, rather than run an unstable filter. */
#include "sos.h"

#include "simd_level.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

/* Frames filtered per pass: both tiles (frames x channels elements) stay in the L1 cache
 * while every section runs over them. */
#define TILE_BYTES 12288

/* One frame of one section, for one channel or a vector of them:
 *   y[n] = (((b0 x[n] + b1 x[n-1]) + b2 x[n-2]) - a2 y[n-2]) - a1 y[n-1]
 * The monic form is the same with b0 = 1, one multiply fewer: sos_cascade_init moves every
 * section's b0 into one gain applied to the input. */
#define SOS_STEP(x0, x1, x2, y1, y2)                                                          \
    ((((b0 * (x0) + b1 * (x1)) + b2 * (x2)) - a2 * (y2)) - a1 * (y1))
#define SOS_MONIC_STEP(x0, x1, x2, y1, y2)                                                    \
    (((((x0) + b1 * (x1)) + b2 * (x2)) - a2 * (y2)) - a1 * (y1))

#define SOS_KERNEL f64_default
#define SOS_TARGET
#define SOS_T double
#define SOS_LANES 2
#define SOS_VECS 4
#include "sos_kernel.h"

#define SOS_KERNEL f32_default
#define SOS_TARGET
#define SOS_T float
#define SOS_LANES 4
#define SOS_VECS 4
#include "sos_kernel.h"

#if defined(__x86_64__) && (defined(__GNUC__) || defined(__clang__))
#define HAVE_AVX2_PATH 1
/* Chosen at init when the processor has AVX2 or AVX-512F (simd_level.h). No fused
 * multiply-add (the plugins build with -ffp-contract=off), so the results equal the default
 * path's of the same precision bit for bit. */
#define SOS_KERNEL f64_avx2
#define SOS_TARGET __attribute__((target("avx2")))
#define SOS_T double
#define SOS_LANES 4
#define SOS_VECS 4
#include "sos_kernel.h"

#define SOS_KERNEL f32_avx2
#define SOS_TARGET __attribute__((target("avx2")))
#define SOS_T float
#define SOS_LANES 8
#define SOS_VECS 4
#include "sos_kernel.h"

/* 32 registers of 8 doubles or 16 floats: 64 or 128 channels' history at once. */
#define SOS_KERNEL f64_avx512
#define SOS_TARGET __attribute__((target("avx512f")))
#define SOS_T double
#define SOS_LANES 8
#define SOS_VECS 8
#include "sos_kernel.h"

#define SOS_KERNEL f32_avx512
#define SOS_TARGET __attribute__((target("avx512f")))
#define SOS_T float
#define SOS_LANES 16
#define SOS_VECS 8
#include "sos_kernel.h"
#endif

static const sos_kernels *kernels_for(sos_precision precision)
{
    int single = precision == SOS_SINGLE;
#ifdef HAVE_AVX2_PATH
    int level = simd_level();
    if (level == SIMD_AVX2)
        return single ? &f32_avx2_set : &f64_avx2_set;
    if (level == SIMD_AVX512)
        return single ? &f32_avx512_set : &f64_avx512_set;
#endif
    return single ? &f32_default_set : &f64_default_set;
}

/* Jury's stability test for a second-order denominator 1 + a1 z^-1 + a2 z^-2: both poles lie
 * strictly inside the unit circle iff |a2| < 1 and |a1| < 1 + a2 (the "stability triangle";
 * Proakis and Manolakis, Digital Signal Processing, 4th ed. 2007, sec. 3.6, from memory).
 * Applied to the coefficients as float32 rounds them. */
static int stable_in_single(const sos_coef *k)
{
    float a1 = (float)k->a1, a2 = (float)k->a2;
    return fabsf(a2) < 1 && fabsf(a1) < 1 + a2;
}

/* Below this the input's share of the gain, sqrt(|gain|), would put microvolt-scale data near
 * the single-precision flush threshold (FLUSH_BELOW_SINGLE, 1e-30): 1e-6 x 1e-16 = 1e-22 still
 * leaves 8 decades. */
#define MIN_SINGLE_INPUT_GAIN 1e-16

int sos_cascade_init(sos_cascade *c, const sos_coef *coef, uint32_t n_sections,
                     uint32_t channels)
{
    return sos_cascade_init_precision(c, coef, n_sections, channels, SOS_DOUBLE);
}

int sos_cascade_init_precision(sos_cascade *c, const sos_coef *coef, uint32_t n_sections,
                               uint32_t channels, sos_precision precision)
{
    memset(c, 0, sizeof *c);
    if (n_sections == 0 || n_sections > 1024 || channels == 0 || channels > (1u << 20))
        return -1;
    c->n_sections = n_sections;
    c->channels = channels;
    c->precision = precision;
    c->kernels = kernels_for(precision);
    const size_t size = c->kernels->element_size;
    c->tile_frames = TILE_BYTES / size / channels > 4 ? TILE_BYTES / size / channels : 4;
    size_t tile = (size_t)(c->tile_frames + 2) * channels;
    c->coef = malloc(n_sections * sizeof *c->coef);
    c->history = calloc((size_t)(n_sections + 1) * 2 * channels, size);
    c->tile[0] = calloc(tile, size);
    c->tile[1] = calloc(tile, size);
    if (!c->coef || !c->history || !c->tile[0] || !c->tile[1]) {
        sos_cascade_free(c);
        return -1;
    }
    c->gain = 1;
    for (uint32_t s = 0; s < n_sections; s++) {
        sos_coef k = coef[s];
        if (k.b0 != 0) {
            c->gain *= k.b0;
            k.b1 /= k.b0;
            k.b2 /= k.b0;
            k.b0 = 1;
        }
        c->coef[s] = k;
    }
    if (precision == SOS_SINGLE) {
        double input_gain = sqrt(fabs(c->gain)), rest = c->gain / input_gain;
        sos_coef *last = &c->coef[n_sections - 1];
        last->b0 *= rest;
        last->b1 *= rest;
        last->b2 *= rest;
        c->gain = input_gain;
        int ok = input_gain >= MIN_SINGLE_INPUT_GAIN;
        for (uint32_t s = 0; s < n_sections; s++)
            ok = ok && stable_in_single(&c->coef[s]);
        if (!ok) {
            sos_cascade_free(c);
            return SOS_ESINGLE;
        }
    }
    return 0;
}

void sos_cascade_free(sos_cascade *c)
{
    free(c->coef);
    free(c->history);
    free(c->tile[0]);
    free(c->tile[1]);
    memset(c, 0, sizeof *c);
}

void sos_cascade_reset(sos_cascade *c)
{
    c->since_flush = 0;
    memset(c->history, 0,
           (size_t)(c->n_sections + 1) * 2 * c->channels * c->kernels->element_size);
}

/* After the input stops, a decaying recursion ends in a limit cycle among subnormal numbers
 * that never reaches zero, and subnormal arithmetic is slow on many processors. At fixed
 * points of the stream (every FLUSH_FRAMES frames from its start, so not depending on how it
 * is cut into blocks) history below a threshold is set to zero. In double, 1e-250: far below
 * anything a float32 output can show. In single, 1e-30: eight decades above float32's
 * smallest normal number (1.2e-38), so that a state flushed there has only so far to decay
 * into subnormals before the next flush point, and still 8 decades below the signal between
 * sections of microvolt-scale data (MIN_SINGLE_INPUT_GAIN). */
#define FLUSH_FRAMES 512
#define FLUSH_BELOW_DOUBLE 1e-250
#define FLUSH_BELOW_SINGLE 1e-30f

static void flush_tiny(sos_cascade *c)
{
    size_t n = (size_t)(c->n_sections + 1) * 2 * c->channels;
    if (c->precision == SOS_SINGLE) {
        float *h = c->history;
        for (size_t i = 0; i < n; i++)
            if (fabsf(h[i]) < FLUSH_BELOW_SINGLE)
                h[i] = 0;
    } else {
        double *h = c->history;
        for (size_t i = 0; i < n; i++)
            if (fabs(h[i]) < FLUSH_BELOW_DOUBLE)
                h[i] = 0;
    }
}

/* Element `i` of a tile or the history. */
static void *element(void *base, size_t i, size_t size) { return (char *)base + i * size; }

/* Tiles hold two history frames, then the new ones: frame n of the tile at t + (2 + n) * C. */
void sos_cascade_run(sos_cascade *c, const float *in, float *out, uint32_t frames)
{
    const size_t C = c->channels, hist = 2 * C, size = c->kernels->element_size;
    for (uint32_t done = 0; done < frames;) {
        uint32_t n = frames - done < c->tile_frames ? frames - done : c->tile_frames;
        if (n > FLUSH_FRAMES - c->since_flush)
            n = FLUSH_FRAMES - c->since_flush;
        size_t count = n * C;
        const float *src = in + done * C;
        void *x = c->tile[0], *y = c->tile[1];
        memcpy(x, c->history, hist * size);
        c->kernels->load(src, element(x, hist, size), count, c->gain);
        for (uint32_t s = 0; s < c->n_sections; s++) {
            void *h_in = element(c->history, s * hist, size), *h_out = element(h_in, hist, size);
            memcpy(y, h_out, hist * size);
            c->kernels->section(&c->coef[s], element(x, hist, size), element(y, hist, size), n,
                                c->channels);
            memcpy(h_in, element(x, count, size), hist * size); /* the last two input frames */
            void *t = x;
            x = y;
            y = t;
        }
        memcpy(element(c->history, c->n_sections * hist, size), element(x, count, size),
               hist * size);
        c->kernels->store(element(x, hist, size), out + done * C, count);
        done += n;
        c->since_flush += n;
        if (c->since_flush == FLUSH_FRAMES) {
            flush_tiny(c);
            c->since_flush = 0;
        }
    }
}

void sos_response(const sos_coef *coef, uint32_t n_sections, double freq, double rate,
                  double *magnitude, double *phase)
{
    const double w = 2 * 3.14159265358979323846 * freq / rate;
    double mag = 1, ph = 0;
    for (uint32_t s = 0; s < n_sections; s++) {
        const sos_coef *k = &coef[s];
        /* Numerator and denominator at z = e^{jw}, as real and imaginary parts. */
        double nr = k->b0 + k->b1 * cos(w) + k->b2 * cos(2 * w);
        double ni = -k->b1 * sin(w) - k->b2 * sin(2 * w);
        double dr = 1 + k->a1 * cos(w) + k->a2 * cos(2 * w);
        double di = -k->a1 * sin(w) - k->a2 * sin(2 * w);
        mag *= hypot(nr, ni) / hypot(dr, di);
        ph += atan2(ni, nr) - atan2(di, dr);
    }
    *magnitude = mag;
    *phase = ph;
}
