/* filters_util.h: helpers shared by the test_filters_*.c unit tests -- drive one filter plugin
 * through the stage driver, collect its output, and measure responses. */
#ifndef FILTERS_UTIL_H
#define FILTERS_UTIL_H

#include <criterion/criterion.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "stage_driver.h"

static inline const char *filters_plugin(const char *name)
{
    static char path[512];
    snprintf(path, sizeof path, "%s/%s.so", WEFT_PLUGIN_DIR, name);
    return path;
}

static inline int filters_open(stage_driver *sd, const char *plugin, const char *params,
                               uint32_t channels, double rate, uint32_t max_frames, diag *d)
{
    weft_layout in = { .kind = WEFT_STREAM_SAMPLES, .channels = channels, .rate = rate,
                       .max_frames = max_frames };
    return stage_driver_open(sd, filters_plugin(plugin), params, &in, 1, d);
}

/* The message init gives for these parameters ("" if init succeeded). */
static inline const char *filters_init_error(const char *plugin, const char *params,
                                             uint32_t channels, double rate)
{
    static diag d;
    stage_driver sd;
    memset(&d, 0, sizeof d);
    int rc = filters_open(&sd, plugin, params, channels, rate, 64, &d);
    stage_driver_close(&sd);
    return rc ? d.msg : "";
}

typedef struct filters_output {
    float *data;                /* malloc'd, frames x channels */
    size_t frames;
    uint32_t channels;
    double rate;
} filters_output;

/* Run `frames` frames of x through a fresh stage, `block` frames per call. */
static inline filters_output filters_run_blocks(const char *plugin, const char *params,
                                                uint32_t channels, double rate, const float *x,
                                                size_t frames, uint32_t block)
{
    stage_driver sd;
    diag d = { 0 };
    cr_assert(filters_open(&sd, plugin, params, channels, rate, block, &d) == 0, "%s", d.msg);
    const weft_layout *lo = stage_driver_out(&sd);
    filters_output o = { .channels = lo->channels, .rate = lo->rate };
    uint32_t cap = lo->max_frames;
    /* Room for every frame the stage may produce over the whole input. */
    size_t room = (size_t)(lo->rate / rate * (double)frames) + 2 * (size_t)cap + 16;
    o.data = calloc(room * o.channels, sizeof *o.data);
    cr_assert(o.data != NULL);
    for (size_t at = 0; at < frames; at += block) {
        uint32_t n = frames - at < block ? (uint32_t)(frames - at) : block;
        cr_assert(o.frames + cap <= room);
        long k = stage_driver_process(&sd, x + at * channels, n, o.data + o.frames * o.channels,
                                      cap, &d);
        cr_assert(k >= 0, "%s", d.msg);
        o.frames += (size_t)k;
    }
    stage_driver_close(&sd);
    return o;
}

/* The same, returning only the data and its frame count. */
static inline float *filters_run(const char *plugin, const char *params, uint32_t channels,
                                 double rate, const float *x, size_t frames, uint32_t block,
                                 size_t *out_frames)
{
    filters_output o = filters_run_blocks(plugin, params, channels, rate, x, frames, block);
    *out_frames = o.frames;
    return o.data;
}

/* |H(f)| from an impulse response h[0 .. n-1] (one channel, stride `stride`), by the DFT
 * sum in double. */
static inline double filters_magnitude(const float *h, size_t n, size_t stride, double freq,
                                       double rate)
{
    double re = 0, im = 0, w = 2 * WEFT_PI * freq / rate;
    for (size_t i = 0; i < n; i++) {
        re += h[i * stride] * cos(w * (double)i);
        im -= h[i * stride] * sin(w * (double)i);
    }
    return hypot(re, im);
}

static inline double filters_db(double magnitude) { return 20 * log10(magnitude); }

/* Uniform noise in [-1, 1), the same on every run. */
static inline void filters_noise(float *x, size_t n, uint32_t seed)
{
    uint32_t s = seed * 2654435761u + 1;
    for (size_t i = 0; i < n; i++) {
        s = s * 1664525u + 1013904223u;
        x[i] = (float)((double)s / 2147483648.0 - 1.0);
    }
}

#endif
