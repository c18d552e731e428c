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
 * stays float32 in and out. */
#include "sos.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

/* Frames filtered per pass: both tiles (frames x channels doubles) stay in the L1 cache while
 * every section runs over them. */
#define TILE_DOUBLES 1536

/* One frame of one section, for one channel or a vector of them:
 *   y[n] = (((b0 x[n] + b1 x[n-1]) + b2 x[n-2]) - a2 y[n-2]) - a1 y[n-1]
 * The monic form is the same with b0 = 1, one multiply fewer: sos_cascade_init moves every
 * section's b0 into one gain applied to the input. */
#define SOS_STEP(x0, x1, x2, y1, y2)                                                          \
    ((((b0 * (x0) + b1 * (x1)) + b2 * (x2)) - a2 * (y2)) - a1 * (y1))
#define SOS_MONIC_STEP(x0, x1, x2, y1, y2)                                                    \
    (((((x0) + b1 * (x1)) + b2 * (x2)) - a2 * (y2)) - a1 * (y1))

#define SOS_KERNEL section_default
#define SOS_TARGET
#define SOS_LANES 2
#include "sos_kernel.h"

#if defined(__x86_64__) && (defined(__GNUC__) || defined(__clang__))
#define HAVE_AVX2_PATH 1
/* Chosen at init when the processor has AVX2. No fused multiply-add (the plugins build with
 * -ffp-contract=off), so the results equal the default path's bit for bit. */
#define SOS_KERNEL section_avx2
#define SOS_TARGET __attribute__((target("avx2")))
#define SOS_LANES 4
#include "sos_kernel.h"
#endif

int sos_cascade_init(sos_cascade *c, const sos_coef *coef, uint32_t n_sections,
                     uint32_t channels)
{
    memset(c, 0, sizeof *c);
    if (n_sections == 0 || n_sections > 1024 || channels == 0 || channels > (1u << 20))
        return -1;
    c->n_sections = n_sections;
    c->channels = channels;
    c->tile_frames = TILE_DOUBLES / channels > 4 ? TILE_DOUBLES / channels : 4;
    size_t tile = (size_t)(c->tile_frames + 2) * channels;
    c->coef = malloc(n_sections * sizeof *c->coef);
    c->history = calloc((size_t)(n_sections + 1) * 2 * channels, sizeof *c->history);
    c->tile[0] = calloc(tile, sizeof *c->tile[0]);
    c->tile[1] = calloc(tile, sizeof *c->tile[1]);
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
    c->kernels = &section_default_set;
#ifdef HAVE_AVX2_PATH
    __builtin_cpu_init();
    if (__builtin_cpu_supports("avx2"))
        c->kernels = &section_avx2_set;
#endif
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
    memset(c->history, 0, (size_t)(c->n_sections + 1) * 2 * c->channels * sizeof *c->history);
}

/* After the input stops, a decaying recursion ends in a limit cycle among subnormal doubles
 * that never reaches zero, and subnormal arithmetic is slow on many processors. At fixed
 * points of the stream (every FLUSH_FRAMES frames from its start, so not depending on how it
 * is cut into blocks) history below FLUSH_BELOW is set to zero: far below anything a float32
 * output can show. */
#define FLUSH_FRAMES 512
#define FLUSH_BELOW 1e-250

static void flush_tiny(sos_cascade *c)
{
    size_t n = (size_t)(c->n_sections + 1) * 2 * c->channels;
    for (size_t i = 0; i < n; i++)
        if (fabs(c->history[i]) < FLUSH_BELOW)
            c->history[i] = 0;
}

/* Tiles hold two history frames, then the new ones: frame n of the tile at t + (2 + n) * C. */
void sos_cascade_run(sos_cascade *c, const float *in, float *out, uint32_t frames)
{
    const size_t C = c->channels, hist = 2 * C;
    for (uint32_t done = 0; done < frames;) {
        uint32_t n = frames - done < c->tile_frames ? frames - done : c->tile_frames;
        if (n > FLUSH_FRAMES - c->since_flush)
            n = FLUSH_FRAMES - c->since_flush;
        size_t count = n * C;
        const float *src = in + done * C;
        double *x = c->tile[0], *y = c->tile[1];
        memcpy(x, c->history, hist * sizeof *x);
        c->kernels->load(src, x + hist, count, c->gain);
        for (uint32_t s = 0; s < c->n_sections; s++) {
            double *h_in = c->history + s * hist, *h_out = h_in + hist;
            memcpy(y, h_out, hist * sizeof *y);
            c->kernels->section(&c->coef[s], x + hist, y + hist, n, c->channels);
            memcpy(h_in, x + count, hist * sizeof *x); /* the last two input frames */
            double *t = x;
            x = y;
            y = t;
        }
        memcpy(c->history + c->n_sections * hist, x + count, hist * sizeof *x);
        c->kernels->store(x + hist, out + done * C, count);
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
