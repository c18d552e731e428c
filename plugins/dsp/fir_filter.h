/* fir_filter: an FIR filter streamed over interleaved float32 frames -- direct convolution, or
 * for long kernels a partitioned one: the first `hop` taps directly, the rest in partitions of
 * `hop` taps by FFT (FFTW), so long kernels cost less without adding any delay. */
#ifndef DSP_FIR_FILTER_H
#define DSP_FIR_FILTER_H

#include <fftw3.h>
#include <stddef.h>
#include <stdint.h>

typedef void (*fir_direct_fn)(const float *h, uint32_t taps, const float *x, size_t C,
                              const float *tail, float *out, uint32_t frames);

typedef struct fir_filter {
    uint32_t taps, channels;
    uint32_t head;              /* taps convolved directly: all of them, or the first `hop` */
    float *h;                   /* the taps, h[0] for the newest frame */
    float *buf;                 /* input history, cap frames x channels */
    size_t cap, end, keep;      /* frames: room, one past the newest, needed history */
    uint64_t pos;               /* stream index of the next input frame */
    fir_direct_fn direct;
    /* FFT part (hop > 0): taps head .. taps-1, for the `hop` frames from tail_at on. */
    uint32_t hop, fft_size;     /* fft_size = 2 hop */
    uint32_t parts, newest;     /* partitions of the tail; delay-line slot of the newest */
    uint64_t tail_at;
    float *fft_in, *fft_out, *tail;
    fftwf_complex *kernel;      /* parts x bins: each partition's spectrum */
    fftwf_complex *delay_line;  /* parts slots of channels x bins: spectra of past inputs */
    size_t slot;                /* complex values from one slot to the next */
    fftwf_complex *sum;         /* channels x bins */
    fftwf_plan forward, inverse;
} fir_filter;

/* Set up for `taps` taps (h[0] applies to the newest frame) on `channels` channels. hop == 0:
 * direct convolution; hop > 0 (a power of two below taps): partitioned. FFTW plans are made
 * here (FFTW_ESTIMATE: the same plan, hence the same bits, on every run). Returns 0 or -1 when
 * out of memory. */
int fir_filter_init(fir_filter *f, const double *h, uint32_t taps, uint32_t channels,
                    uint32_t hop);
void fir_filter_free(fir_filter *f);

/* The fastest direct-convolution loop this processor runs (the same bits on every path):
 * out[i] = (sum_k h[k] x[i - k]) + tail[i] for frames i, x rows C floats apart, tail may be
 * NULL. For stages that convolve with kernels of their own (resampling). */
fir_direct_fn fir_direct_kernel(void);

/* Filter `frames` frames. Allocation-free; any split of the stream into calls gives
 * bit-identical output. `out` must not overlap `in`. */
void fir_filter_run(fir_filter *f, const float *in, float *out, uint32_t frames);

#endif
