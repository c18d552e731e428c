/* Every temporal filter stage gives bit-identical output whether the stream comes in blocks of
 * 1, 3 or 64 frames or in one piece (memcmp, not a tolerance): state carries across blocks
 * exactly. */
#include "filters_util.h"

typedef struct stage_case {
    const char *plugin, *params;
    uint32_t channels;
    double rate;
} stage_case;

static const stage_case cases[] = {
    { "butterworth", "{ kind: bandpass, order: 4, low: 8, high: 30 }", 64, 1000 },
    { "butterworth", "{ kind: bandpass, order: 5, low: 8, high: 30 }", 5, 250 },
    { "butterworth", "{ kind: lowpass, order: 3, high: 40 }", 19, 500 },
    { "butterworth", "{ kind: highpass, order: 4, low: 0.5 }", 2, 2000 },
    { "butterworth", "{ kind: bandstop, order: 10, low: 45, high: 55 }", 8, 1000 },
    { "butterworth", "{ kind: bandpass, order: 4, low: 8, high: 30, precision: single }", 64,
      1000 },
    { "butterworth", "{ kind: highpass, order: 4, low: 0.5, precision: single }", 3, 2000 },
    { "butterworth", "{ kind: bandstop, order: 6, low: 45, high: 55, precision: single }", 21,
      1000 },
    { "notch", "{ freq: 50, q: 30, harmonics: 3 }", 9, 500 },
    { "notch", "{ freq: 60, q: 20, harmonics: 2, precision: single }", 9, 500 },
    { "fir", "{ kind: bandpass, low: 8, high: 30, taps: 63, engine: direct }", 13, 250 },
    { "fir", "{ kind: bandpass, low: 8, high: 30, taps: 701, engine: fft }", 21, 250 },
    { "fir", "{ coefficients: [0.25, -1, 2.5] }", 3, 250 },
    { "envelope", "{ low: 20, high: 450 }", 6, 1000 },
    { "envelope", "{ smooth: rms, window: 0.05 }", 4, 1000 },
    { "envelope", "{ detector: square, cutoff: 8 }", 2, 2000 },
    { "resample", "{ down: 4 }", 7, 1000 },
    { "resample", "{ up: 3, down: 2 }", 5, 500 },
    { "resample", "{ rate: 250 }", 17, 2000 },
    { "reref", "{ reference: average }", 9, 250 },
    { "reref", "{ reference: '4' }", 6, 250 },
    { "detrend", "{ method: highpass, cutoff: 0.5 }", 5, 500 },
    { "detrend", "{ method: mean, window: 0.5 }", 3, 500 },
};

static void expect_chunk_invariant(const stage_case *c)
{
    const size_t frames = 3000;
    float *x = malloc(frames * c->channels * sizeof *x);
    cr_assert(x != NULL);
    filters_noise(x, frames * c->channels, 11);
    /* A burst and a silence, so the state also carries a decay across block edges. */
    for (size_t i = frames / 2 * c->channels; i < frames * c->channels; i++)
        x[i] = i < (frames / 2 + 3) * c->channels ? 1000.0f : 0.0f;
    filters_output whole = filters_run_blocks(c->plugin, c->params, c->channels, c->rate, x,
                                              frames, (uint32_t)frames);
    cr_assert(whole.frames > 0);
    const uint32_t blocks[] = { 1, 3, 64 };
    for (int b = 0; b < 3; b++) {
        filters_output y = filters_run_blocks(c->plugin, c->params, c->channels, c->rate, x,
                                              frames, blocks[b]);
        cr_expect_eq(y.frames, whole.frames,
                     "%s %s: %zu frames in blocks of %u, %zu in one piece", c->plugin,
                     c->params, y.frames, blocks[b], whole.frames);
        cr_expect(y.frames == whole.frames &&
                      memcmp(y.data, whole.data, y.frames * y.channels * sizeof *y.data) == 0,
                  "%s %s: blocks of %u differ from one piece", c->plugin, c->params, blocks[b]);
        free(y.data);
    }
    free(whole.data);
    free(x);
}

Test(filters_chunking, every_stage_gives_the_same_bits_for_any_block_size)
{
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++)
        expect_chunk_invariant(&cases[i]);
}

/* The vector paths (default SSE2/NEON-width, AVX2, AVX-512) of one precision do the same
 * operations in the same order: capping the path with WEFT_SIMD must not change one bit. */
Test(filters_chunking, vector_paths_give_identical_bits)
{
    const size_t frames = 2000;
    /* 37 channels: groups of 16 and 32 doubles, vectors and a remainder. 200: in single
     * precision a full AVX-512 group (128 floats), a group of four vectors (64) and a
     * remainder; 6 AVX2 groups of 32 and a vector. */
    const uint32_t most = 200;
    float *x = malloc(frames * most * sizeof *x);
    cr_assert(x != NULL);
    filters_noise(x, frames * most, 5);
    const struct { const char *plugin, *params; uint32_t channels; } stages[] = {
        { "butterworth", "{ kind: bandpass, order: 6, low: 8, high: 30 }", 37 },
        { "butterworth", "{ kind: bandpass, order: 6, low: 8, high: 30, precision: single }",
          37 },
        { "butterworth", "{ kind: bandpass, order: 6, low: 8, high: 30, precision: single }",
          most },
        { "butterworth", "{ kind: highpass, order: 4, low: 0.5, precision: single }", most },
        { "fir", "{ kind: bandpass, low: 8, high: 30, taps: 101, engine: direct }", 37 },
        { "fir", "{ kind: bandpass, low: 8, high: 30, taps: 1001, engine: fft }", 37 },
        { "resample", "{ up: 2, down: 3 }", 37 },
    };
    const char *paths[] = { "default", "avx2" };
    for (size_t s = 0; s < sizeof stages / sizeof stages[0]; s++) {
        unsetenv("WEFT_SIMD");
        filters_output best = filters_run_blocks(stages[s].plugin, stages[s].params,
                                                 stages[s].channels, 500, x, frames, 50);
        for (int p = 0; p < 2; p++) {
            setenv("WEFT_SIMD", paths[p], 1);
            filters_output y = filters_run_blocks(stages[s].plugin, stages[s].params,
                                                  stages[s].channels, 500, x, frames, 50);
            cr_expect(y.frames == best.frames &&
                          memcmp(y.data, best.data, y.frames * y.channels * sizeof *y.data) == 0,
                      "%s %s, %u channels: the %s path differs from the fastest",
                      stages[s].plugin, stages[s].params, stages[s].channels, paths[p]);
            free(y.data);
        }
        unsetenv("WEFT_SIMD");
        free(best.data);
    }
    free(x);
}
