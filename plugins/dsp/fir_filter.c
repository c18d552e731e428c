/* fir_filter: direct and partitioned FIR convolution over interleaved frames.
 *
 * Partitioned, with B = hop:  y[n] = sum_{k < B} h[k] x[n-k]  +  sum_{k >= B} h[k] x[n-k].
 * The first sum runs directly, frame by frame. The second only needs inputs at least B frames
 * old, so for the block of outputs [m B, (m+1) B) it is known as soon as frame m B - 1 has
 * arrived; it is cut into partitions of B taps, each an overlap-save convolution with FFTs of
 * 2 B points, summed in the frequency domain over a delay line of past input spectra
 * (uniformly partitioned convolution; the direct head removes its block delay, as in
 * Gardner 1995, "Efficient convolution without input-output delay", J. Audio Eng. Soc.
 * 43(3)). Blocks start at fixed stream positions, so every output is rounded the same way
 * however the stream is cut into calls. */
#include "fir_filter.h"

#include <stdlib.h>
#include <string.h>

#define FIR_KERNEL fir_direct_default
#define FIR_TARGET
#define FIR_LANES 4
#include "fir_kernel.h"

#if defined(__x86_64__) && (defined(__GNUC__) || defined(__clang__))
#define HAVE_AVX2_PATH 1
/* No fused multiply-add (-ffp-contract=off): the same bits as the default path. */
#define FIR_KERNEL fir_direct_avx2
#define FIR_TARGET __attribute__((target("avx2")))
#define FIR_LANES 8
#include "fir_kernel.h"
#endif

/* History frames processed between two compactions of the buffer, at least. */
#define MIN_RUN 1024

static int init_fft(fir_filter *f, const double *h)
{
    const uint32_t C = f->channels, B = f->hop, M = 2 * B, bins = B + 1;
    f->fft_size = M;
    f->parts = (f->taps - B + B - 1) / B;
    /* Delay-line slots start on 64-byte boundaries, as new-array FFTW execution needs the
     * alignment the plan was made with. */
    f->slot = ((size_t)C * bins + 7) / 8 * 8;
    size_t slots = (size_t)f->parts * f->slot;
    f->fft_in = fftwf_alloc_real((size_t)M * C);
    f->fft_out = fftwf_alloc_real((size_t)M * C);
    f->tail = fftwf_alloc_real((size_t)B * C);
    f->kernel = fftwf_alloc_complex((size_t)f->parts * bins);
    f->delay_line = fftwf_alloc_complex(slots);
    f->sum = fftwf_alloc_complex((size_t)C * bins);
    float *g = fftwf_alloc_real(M);
    fftwf_complex *gs = fftwf_alloc_complex(bins);
    fftwf_plan kp = g && gs ? fftwf_plan_dft_r2c_1d((int)M, g, gs, FFTW_ESTIMATE) : NULL;
    int rc = f->fft_in && f->fft_out && f->tail && f->kernel && f->delay_line && f->sum && kp
                 ? 0 : -1;
    /* Each partition's taps, zero-padded to 2 B, in the frequency domain, with the inverse
     * transform's 1 / (2 B) folded in. */
    for (uint32_t p = 0; rc == 0 && p < f->parts; p++) {
        memset(g, 0, M * sizeof *g);
        for (uint32_t j = 0; j < B && B + p * B + j < f->taps; j++)
            g[j] = (float)h[B + p * B + j];
        fftwf_execute(kp);
        for (uint32_t b = 0; b < bins; b++) {
            f->kernel[p * bins + b][0] = gs[b][0] / (float)M;
            f->kernel[p * bins + b][1] = gs[b][1] / (float)M;
        }
    }
    if (kp)
        fftwf_destroy_plan(kp);
    fftwf_free(g);
    fftwf_free(gs);
    if (rc)
        return rc;
    memset(f->delay_line, 0, slots * sizeof *f->delay_line); /* silence before the stream */
    /* One plan for all channels, each channel's frames contiguous (transposed in and out of
     * the interleaved history): several times faster than strided transforms. */
    int n = (int)M;
    f->forward = fftwf_plan_many_dft_r2c(1, &n, (int)C, f->fft_in, NULL, 1, (int)M,
                                         f->delay_line, NULL, 1, (int)bins, FFTW_ESTIMATE);
    f->inverse = fftwf_plan_many_dft_c2r(1, &n, (int)C, f->sum, NULL, 1, (int)bins,
                                         f->fft_out, NULL, 1, (int)M, FFTW_ESTIMATE);
    return f->forward && f->inverse ? 0 : -1;
}

int fir_filter_init(fir_filter *f, const double *h, uint32_t taps, uint32_t channels,
                    uint32_t hop)
{
    memset(f, 0, sizeof *f);
    if (taps == 0 || channels == 0 || channels > (1u << 16) || taps > (1u << 24) ||
        (hop && (hop >= taps || (hop & (hop - 1)))))
        return -1;
    f->taps = taps;
    f->channels = channels;
    f->hop = hop;
    f->head = hop ? hop : taps;
    f->tail_at = UINT64_MAX;
    f->h = malloc(f->head * sizeof *f->h);
    if (!f->h || (hop && init_fft(f, h))) {
        fir_filter_free(f);
        return -1;
    }
    for (uint32_t k = 0; k < f->head; k++)
        f->h[k] = (float)h[k];
    f->keep = hop ? 2 * hop : taps - 1;
    f->cap = f->keep + (f->keep > MIN_RUN ? f->keep : MIN_RUN);
    f->buf = calloc(f->cap * channels, sizeof *f->buf);
    if (!f->buf) {
        fir_filter_free(f);
        return -1;
    }
    f->end = f->keep; /* the stream starts after `keep` frames of silence */
    f->direct = fir_direct_kernel();
    return 0;
}

fir_direct_fn fir_direct_kernel(void)
{
#ifdef HAVE_AVX2_PATH
    __builtin_cpu_init();
    if (__builtin_cpu_supports("avx2"))
        return fir_direct_avx2;
#endif
    return fir_direct_default;
}

void fir_filter_free(fir_filter *f)
{
    if (f->forward)
        fftwf_destroy_plan(f->forward);
    if (f->inverse)
        fftwf_destroy_plan(f->inverse);
    fftwf_free(f->fft_in);
    fftwf_free(f->fft_out);
    fftwf_free(f->tail);
    fftwf_free(f->kernel);
    fftwf_free(f->delay_line);
    fftwf_free(f->sum);
    free(f->h);
    free(f->buf);
    memset(f, 0, sizeof *f);
}

/* The tail sums for the hop outputs from f->pos on: the spectrum of the last 2 B input frames
 * joins the delay line, and partition p meets the spectrum from p blocks ago. */
static void compute_tail(fir_filter *f)
{
    const size_t C = f->channels, B = f->hop, M = 2 * B, bins = B + 1, P = f->parts;
    f->newest = f->newest == 0 ? f->parts - 1 : f->newest - 1;
    const float *src = f->buf + (f->end - M) * C;
    for (size_t i = 0; i < M; i++)
        for (size_t c = 0; c < C; c++)
            f->fft_in[c * M + i] = src[i * C + c];
    fftwf_execute_dft_r2c(f->forward, f->fft_in, f->delay_line + f->newest * f->slot);
    for (size_t c = 0; c < C; c++) {
        fftwf_complex *acc = f->sum + c * bins;
        memset(acc, 0, bins * sizeof *acc);
        for (size_t p = 0; p < P; p++) {
            size_t slot = (f->newest + p) % P;
            fftwf_complex *x = f->delay_line + slot * f->slot + c * bins;
            fftwf_complex *g = f->kernel + p * bins;
            for (size_t b = 0; b < bins; b++) {
                acc[b][0] += x[b][0] * g[b][0] - x[b][1] * g[b][1];
                acc[b][1] += x[b][0] * g[b][1] + x[b][1] * g[b][0];
            }
        }
    }
    fftwf_execute(f->inverse);
    /* Samples B .. 2 B - 1 of each circular convolution have no wrap-around. */
    for (size_t r = 0; r < B; r++)
        for (size_t c = 0; c < C; c++)
            f->tail[r * C + c] = f->fft_out[c * M + B + r];
    f->tail_at = f->pos;
}

void fir_filter_run(fir_filter *f, const float *in, float *out, uint32_t frames)
{
    const size_t C = f->channels;
    for (uint32_t done = 0; done < frames;) {
        if (f->end == f->cap) {
            memmove(f->buf, f->buf + (f->end - f->keep) * C, f->keep * C * sizeof *f->buf);
            f->end = f->keep;
        }
        size_t n = frames - done;
        if (n > f->cap - f->end)
            n = f->cap - f->end;
        const float *tail = NULL;
        if (f->hop) {
            uint32_t into = (uint32_t)(f->pos % f->hop);
            if (into == 0 && f->tail_at != f->pos)
                compute_tail(f);
            if (n > f->hop - into)
                n = f->hop - into;
            tail = f->tail + (size_t)into * C;
        }
        float *row = f->buf + f->end * C;
        memcpy(row, in + (size_t)done * C, n * C * sizeof *row);
        f->direct(f->h, f->head, row, C, tail, out + (size_t)done * C, (uint32_t)n);
        f->end += n;
        f->pos += n;
        done += (uint32_t)n;
    }
}
