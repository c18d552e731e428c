/* The resample stage: output layout, marker indices on the new rate, and what resampling
 * must keep and remove. */
#include "filters_util.h"

Test(filters_resample, layout_states_the_new_rate_and_block_bound)
{
    stage_driver sd;
    diag d = { 0 };
    cr_assert(filters_open(&sd, "resample", "{ up: 2, down: 3 }", 4, 1000, 100, &d) == 0, "%s",
              d.msg);
    const weft_layout *out = stage_driver_out(&sd);
    cr_expect(fabs(out->rate - 2000.0 / 3) < 1e-9, "rate %g", out->rate);
    cr_expect_eq(out->channels, 4);
    cr_expect_eq(out->max_frames, 68, "100 frames -> at most ceil(200 / 3) + 1 = 68, not %u",
                 out->max_frames);
    stage_driver_close(&sd);
}

/* A marker at input sample i moves to the first output sample at or after it,
 * ceil(i up / down); one whose output sample is not in this block comes with the next. */
Test(filters_resample, markers_move_to_the_output_rate)
{
    stage_driver sd;
    diag d = { 0 };
    cr_assert(filters_open(&sd, "resample", "{ down: 4 }", 1, 1000, 64, &d) == 0, "%s", d.msg);
    float x[64] = { 0 }, y[64];
    weft_marker in_m[2] = { { "grip", 41, 0.5 }, { "late", 63, 0 } };
    weft_marker out_m[8];
    weft_block in = { .data = x, .frames = 64, .channels = 1, .first_index = 0,
                      .markers = in_m, .n_markers = 2 };
    weft_block out = { .data = y, .capacity = 64, .channels = 1, .first_index = 0,
                       .markers = out_m, .marker_capacity = 8, .n_markers = 2 };
    memcpy(out_m, in_m, sizeof in_m); /* the host copies the input's markers */
    node *n = sd.n;
    cr_assert(n->api->process(n->self, &in, 1, &out) == 0);
    cr_expect_eq(out.frames, 16, "64 inputs give 16 outputs, not %u", out.frames);
    cr_assert_eq(out.n_markers, 1, "only 'grip' lands in this block, got %u", out.n_markers);
    cr_expect_str_eq(out_m[0].label, "grip");
    cr_expect_eq(out_m[0].index, 11, "ceil(41 / 4) = 11, not %llu",
                 (unsigned long long)out_m[0].index);
    cr_expect(out_m[0].duration == 0.5);
    /* ceil(63 / 4) = 16: the first output of the next block. */
    in = (weft_block){ .data = x, .frames = 64, .channels = 1, .first_index = 64 };
    out = (weft_block){ .data = y, .capacity = 64, .channels = 1, .first_index = 16,
                        .markers = out_m, .marker_capacity = 8 };
    cr_assert(n->api->process(n->self, &in, 1, &out) == 0);
    cr_assert_eq(out.n_markers, 1);
    cr_expect_str_eq(out_m[0].label, "late");
    cr_expect_eq(out_m[0].index, 16);
    stage_driver_close(&sd);
}

/* Decimating by 4 from 1000 Hz: a 50 Hz sine passes with unit gain; a 300 Hz one, above the
 * new 125 Hz Nyquist frequency, is removed instead of folding onto 50 Hz. */
Test(filters_resample, keeps_the_pass_band_and_removes_what_would_alias)
{
    const size_t frames = 8000;
    float *x = malloc(frames * 2 * sizeof *x);
    cr_assert(x != NULL);
    for (size_t i = 0; i < frames; i++) {
        x[2 * i] = (float)sin(2 * WEFT_PI * 50 * (double)i / 1000);
        x[2 * i + 1] = (float)sin(2 * WEFT_PI * 300 * (double)i / 1000);
    }
    filters_output y = filters_run_blocks("resample", "{ rate: 250 }", 2, 1000, x, frames, 100);
    cr_assert_eq(y.frames, 2000);
    /* RMS over 300 whole periods of 50 Hz (5 samples each): A / sqrt(2) for amplitude A. */
    double sum[2] = { 0, 0 };
    for (size_t m = 500; m < 2000; m++)
        for (int c = 0; c < 2; c++)
            sum[c] += (double)y.data[2 * m + c] * y.data[2 * m + c];
    double amp50 = sqrt(2 * sum[0] / 1500), amp300 = sqrt(2 * sum[1] / 1500);
    cr_expect(fabs(amp50 - 1) < 2e-3, "50 Hz comes out with amplitude %.5f", amp50);
    cr_expect(amp300 < 1e-3, "300 Hz leaks through with amplitude %.5f", amp300);
    free(y.data);
    free(x);
}
