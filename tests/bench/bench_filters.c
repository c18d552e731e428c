/* bench_filters: throughput of the temporal filter stages, driven through the stage driver as
 * a graph would drive them. Prints figures; sets no pass/fail threshold (see docs/filters.md).
 *   bench_filters [iir]   band-pass order 4 (4 sections), 64 channels at 1 kHz:
 *                         warm cache (repeated passes over a buffer that fits in L2),
 *                         streaming 10-frame blocks (warm), one long pass (cold, 10 min)
 *   bench_filters fir     direct vs FFT (overlap-save) FIR over kernel lengths 16-4096
 * Figures are channel-samples per second (frames x channels / wall time), best of several
 * repetitions, on one core. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

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

static int bench_iir(void)
{
    const char *params = "{ kind: bandpass, order: 4, low: 8, high: 30 }";
    /* 1000 frames: 256 KB in and 256 KB out, inside the L2 cache. */
    size_t warm = 1000, cold = 600000;
    float *x = malloc(cold * CHANNELS * sizeof *x), *y = malloc(cold * CHANNELS * sizeof *y);
    if (!x || !y)
        return 1;
    fill_noise(x, cold * CHANNELS);
    memset(y, 0, cold * CHANNELS * sizeof *y);
    printf("butterworth bandpass 8-30 Hz order 4 (4 sections), %d channels at %g Hz\n",
           CHANNELS, RATE);
    double w = time_stage("butterworth", params, CHANNELS, x, y, warm, (uint32_t)warm, 7, 50);
    printf("  warm, %zu-frame blocks        %8.1f M channel-samples/s\n", warm, w / 1e6);
    double s = time_stage("butterworth", params, CHANNELS, x, y, warm, 10, 7, 50);
    printf("  warm, 10-frame blocks          %8.1f M channel-samples/s\n", s / 1e6);
    double c = time_stage("butterworth", params, CHANNELS, x, y, cold, 4096, 3, 1);
    printf("  one long pass, %zu frames  %8.1f M channel-samples/s\n", cold, c / 1e6);
    printf("iir_warm %.6g\niir_stream10 %.6g\niir_long %.6g\n", w, s, c);
    free(x);
    free(y);
    return 0;
}

int main(int argc, char **argv)
{
    const char *what = argc > 1 ? argv[1] : "iir";
    if (!strcmp(what, "iir"))
        return bench_iir();
    fprintf(stderr, "usage: bench_filters [iir]\n");
    return 2;
}
