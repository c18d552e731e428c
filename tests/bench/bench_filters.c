/* bench_filters: throughput of the temporal filter stages, driven through the stage driver as
 * a graph would drive them. Prints figures; sets no pass/fail threshold (see docs/filters.md).
 *   bench_filters [iir]   band-pass order 4 (4 sections), 64 channels at 1 kHz, in double
 *                         and in single precision: warm cache (repeated passes over a buffer
 *                         that fits in L2), streaming 10-frame blocks (warm), one long pass
 *                         (cold, 10 min)
 *   bench_filters fir     direct vs FFT (overlap-save) FIR over kernel lengths 16-4096
 * Figures are channel-samples per second (frames x channels / wall time), best of several
 * repetitions, on one core. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "fir_filter.h"
#include "stage_driver.h"

#define CHANNELS 64
#define RATE 1000.0

static double now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

static const char *plugin_file(const char *name)
{
    static char path[512];
    snprintf(path, sizeof path, "%s/%s.so", WEFT_PLUGIN_DIR, name);
    return path;
}

static void fill_noise(float *x, size_t n)
{
    uint32_t s = 12345;
    for (size_t i = 0; i < n; i++) {
        s = s * 1664525u + 1013904223u;
        x[i] = (float)((double)s / 4294967296.0 - 0.5) * 100.0f;
    }
}

static int open_stage(stage_driver *sd, const char *plugin, const char *params,
                      uint32_t channels, uint32_t max_frames)
{
    weft_layout in = { .kind = WEFT_STREAM_SAMPLES, .channels = channels, .rate = RATE,
                       .max_frames = max_frames };
    diag d = { 0 };
    if (stage_driver_open(sd, plugin_file(plugin), params, &in, 1, &d)) {
        fprintf(stderr, "bench_filters: %s\n", d.msg);
        return -1;
    }
    return 0;
}

/* Channel-samples per second for `frames` frames in blocks of `block`, best of `reps` passes
 * of `passes` each. */
static double time_stage(const char *plugin, const char *params, uint32_t channels,
                         const float *x, float *y, size_t frames, uint32_t block, int reps,
                         int passes)
{
    stage_driver sd;
    if (open_stage(&sd, plugin, params, channels, block))
        exit(1);
    diag d = { 0 };
    double best = 1e300;
    for (int r = 0; r < reps; r++) {
        double t0 = now();
        for (int p = 0; p < passes; p++)
            for (size_t at = 0; at < frames; at += block) {
                uint32_t n = frames - at < block ? (uint32_t)(frames - at) : block;
                if (stage_driver_process(&sd, x + at * channels, n, y + at * channels, block,
                                         &d) < 0) {
                    fprintf(stderr, "bench_filters: %s\n", d.msg);
                    exit(1);
                }
            }
        double t = now() - t0;
        if (t < best)
            best = t;
    }
    stage_driver_close(&sd);
    return (double)frames * channels * passes / best;
}

/* The three figures of one precision; `key` prefixes the machine-readable lines. */
static void bench_iir_precision(const char *params, const char *label, const char *key,
                                const float *x, float *y, size_t warm, size_t cold)
{
    printf("%s\n", label);
    double w = time_stage("butterworth", params, CHANNELS, x, y, warm, (uint32_t)warm, 7, 50);
    printf("  warm, %zu-frame blocks        %8.1f M channel-samples/s\n", warm, w / 1e6);
    double s = time_stage("butterworth", params, CHANNELS, x, y, warm, 10, 7, 50);
    printf("  warm, 10-frame blocks          %8.1f M channel-samples/s\n", s / 1e6);
    double c = time_stage("butterworth", params, CHANNELS, x, y, cold, 4096, 3, 1);
    printf("  one long pass, %zu frames  %8.1f M channel-samples/s\n", cold, c / 1e6);
    printf("%s_warm %.6g\n%s_stream10 %.6g\n%s_long %.6g\n", key, w, key, s, key, c);
}

static int bench_iir(void)
{
    /* 1000 frames: 256 KB in and 256 KB out, inside the L2 cache. */
    size_t warm = 1000, cold = 600000;
    float *x = malloc(cold * CHANNELS * sizeof *x), *y = malloc(cold * CHANNELS * sizeof *y);
    if (!x || !y)
        return 1;
    fill_noise(x, cold * CHANNELS);
    memset(y, 0, cold * CHANNELS * sizeof *y);
    printf("butterworth bandpass 8-30 Hz order 4 (4 sections), %d channels at %g Hz\n",
           CHANNELS, RATE);
    bench_iir_precision("{ kind: bandpass, order: 4, low: 8, high: 30 }",
                        "precision: double (the default)", "iir", x, y, warm, cold);
    bench_iir_precision("{ kind: bandpass, order: 4, low: 8, high: 30, precision: single }",
                        "precision: single", "iir_single", x, y, warm, cold);
    free(x);
    free(y);
    return 0;
}

/* Channel-samples per second of fir_filter_run (the fir stage's engine) with `hop` (0: direct),
 * on `block`-frame blocks, best of 5 passes over `frames` frames. */
static double time_fir(uint32_t taps, uint32_t hop, const float *x, float *y, size_t frames,
                       uint32_t block)
{
    double *h = malloc(taps * sizeof *h);
    for (uint32_t k = 0; k < taps; k++)
        h[k] = 1.0 / (k + 1);
    fir_filter f;
    if (!h || fir_filter_init(&f, h, taps, CHANNELS, hop)) {
        fprintf(stderr, "bench_filters: cannot set up %u taps\n", taps);
        exit(1);
    }
    free(h);
    double best = 1e300;
    for (int r = 0; r < 5; r++) {
        double t0 = now();
        for (size_t at = 0; at < frames; at += block)
            fir_filter_run(&f, x + at * CHANNELS, y + at * CHANNELS,
                           frames - at < block ? (uint32_t)(frames - at) : block);
        double t = now() - t0;
        if (t < best)
            best = t;
    }
    fir_filter_free(&f);
    return (double)frames * CHANNELS / best;
}

/* Direct against FFT-partitioned (partitions of 32, 64, 128, 256 taps) for kernel lengths 16-4096,
 * 64 channels, 20-frame blocks (20 ms at 1 kHz): where the FFT starts to pay. */
static int bench_fir(void)
{
    const uint32_t lengths[] = { 16, 32, 64, 128, 256, 384, 512, 768, 1024, 2048, 4096 };
    const uint32_t hops[] = { 32, 64, 128, 256 };
    size_t frames = 16384;
    float *x = malloc(frames * CHANNELS * sizeof *x), *y = malloc(frames * CHANNELS * sizeof *y);
    if (!x || !y)
        return 1;
    fill_noise(x, frames * CHANNELS);
    printf("FIR, %d channels, 20-frame blocks: M channel-samples/s\n", CHANNELS);
    printf("  %6s %9s", "taps", "direct");
    for (int j = 0; j < 4; j++)
        printf("  fft/h%-4u", hops[j]);
    printf("\n");
    for (size_t i = 0; i < sizeof lengths / sizeof lengths[0]; i++) {
        uint32_t taps = lengths[i];
        size_t n = taps >= 1024 ? frames : frames / 2;
        printf("  %6u %9.1f", taps, time_fir(taps, 0, x, y, n, 20) / 1e6);
        for (int j = 0; j < 4; j++) {
            if (hops[j] < taps)
                printf("  %9.1f", time_fir(taps, hops[j], x, y, n, 20) / 1e6);
            else
                printf("  %9s", "-");
        }
        printf("\n");
    }
    free(x);
    free(y);
    return 0;
}

int main(int argc, char **argv)
{
    const char *what = argc > 1 ? argv[1] : "iir";
    if (!strcmp(what, "iir"))
        return bench_iir();
    if (!strcmp(what, "fir"))
        return bench_fir();
    fprintf(stderr, "usage: bench_filters [iir|fir]\n");
    return 2;
}
