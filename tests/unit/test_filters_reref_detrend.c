/* reref and detrend: what re-referencing and DC removal must do to simple signals. */
#include "filters_util.h"

/* After a common average reference the channels of every frame sum to zero. */
Test(filters_reref, common_average_leaves_frames_summing_to_zero)
{
    const size_t frames = 500, C = 8;
    float *x = malloc(frames * C * sizeof *x);
    cr_assert(x != NULL);
    filters_noise(x, frames * C, 3);
    for (size_t i = 0; i < frames * C; i++)
        x[i] = x[i] * 20 + (float)(i % C) * 50;
    size_t n;
    float *y = filters_run("reref", "{ reference: average }", (uint32_t)C, 250, x, frames, 64, &n);
    for (size_t f = 0; f < frames; f++) {
        double sum = 0;
        for (size_t c = 0; c < C; c++)
            sum += y[f * C + c];
        cr_expect(fabs(sum) < 1e-4, "frame %zu sums to %g", f, sum);
    }
    free(y);
    free(x);
}

/* Referenced to itself, the reference channel is zero; the others lose its signal. */
Test(filters_reref, chosen_channel_becomes_zero)
{
    float x[3 * 4] = { 1, 2, 3, 4, 5, 7, -1, 0, 2, 8, 8, 8 };
    size_t n;
    float *y = filters_run("reref", "{ reference: '2' }", 3, 250, x, 4, 4, &n);
    for (size_t f = 0; f < 4; f++) {
        cr_expect(y[f * 3 + 1] == 0);
        cr_expect(y[f * 3] == x[f * 3] - x[f * 3 + 1]);
        cr_expect(y[f * 3 + 2] == x[f * 3 + 2] - x[f * 3 + 1]);
    }
    free(y);
}

/* A constant offset is removed: the one-pole high-pass decays with time constant
 * 1 / (2 pi fc), the running mean is exact once the window is full. */
Test(filters_detrend, constant_offset_is_removed)
{
    const size_t frames = 20000;
    float *x = malloc(frames * sizeof *x);
    cr_assert(x != NULL);
    for (size_t i = 0; i < frames; i++)
        x[i] = 250.0f;
    size_t n;
    float *y = filters_run("detrend", "{ method: highpass, cutoff: 1 }", 1, 1000, x, frames, 100,
                           &n);
    /* 20 s at 1 Hz: e^(-2 pi 20) of the step is left. */
    cr_expect(fabs(y[frames - 1]) < 1e-3, "high-pass leaves %g of a 250 offset", y[frames - 1]);
    cr_expect(fabs(y[0] - 250) < 1e-3, "the first sample passes: %g", y[0]);
    free(y);
    y = filters_run("detrend", "{ method: mean, window: 2 }", 1, 1000, x, frames, 100, &n);
    for (size_t i = 0; i < frames; i += 250)
        cr_expect(y[i] == 0, "running mean leaves %g at %zu", y[i], i);
    free(y);
    free(x);
}
