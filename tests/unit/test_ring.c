/* The mirrored ring: every window up to the capacity is contiguous, also across the wrap. */
#include <criterion/criterion.h>

#include "ring.h"

static void push_ramp(ring *r, uint64_t from, uint32_t n, uint32_t channels)
{
    float frame[8 * 64];
    for (uint32_t i = 0; i < n; i++)
        for (uint32_t c = 0; c < channels; c++)
            frame[i * channels + c] = (float)(from + i) + 0.25f * (float)c;
    ring_push(r, frame, n);
}

Test(ring, window_across_the_wrap_is_contiguous)
{
    ring r;
    cr_assert_eq(ring_init(&r, 10, 2), 0);
    uint64_t n = 0;
    for (int k = 0; k < 7; k++, n += 3) /* 21 frames: the ring wrapped twice */
        push_ramp(&r, n, 3, 2);
    cr_assert_eq(r.end, 21);
    const float *w = ring_window(&r, 21, 10);
    cr_assert_not_null(w);
    for (uint32_t i = 0; i < 10; i++) {
        cr_expect_eq(w[i * 2], (float)(11 + i), "frame %u", i);
        cr_expect_eq(w[i * 2 + 1], (float)(11 + i) + 0.25f);
    }
    ring_free(&r);
}

Test(ring, every_window_position_reads_the_right_samples)
{
    ring r;
    cr_assert_eq(ring_init(&r, 16, 1), 0);
    for (uint64_t n = 0; n < 200; n++) {
        push_ramp(&r, n, 1, 1);
        for (uint32_t len = 1; len <= 16 && len <= n + 1; len++) {
            uint64_t end = n + 1;
            const float *w = ring_window(&r, end, len);
            cr_assert_not_null(w, "end %llu len %u", (unsigned long long)end, len);
            cr_assert_eq(w[0], (float)(end - len));
            cr_assert_eq(w[len - 1], (float)(end - 1));
        }
    }
    ring_free(&r);
}

Test(ring, overwritten_or_future_windows_are_refused)
{
    ring r;
    cr_assert_eq(ring_init(&r, 8, 1), 0);
    push_ramp(&r, 0, 20, 1);
    cr_expect_null(ring_window(&r, 21, 1), "not yet arrived");
    cr_expect_null(ring_window(&r, 20, 9), "longer than the ring");
    cr_expect_null(ring_window(&r, 11, 2), "already overwritten (samples 9, 10)");
    cr_expect_not_null(ring_window(&r, 14, 2), "samples 12, 13 are still there");
    cr_expect_null(ring_window(&r, 3, 5), "window before stream start");
    ring_free(&r);
}

Test(ring, oversized_block_keeps_the_newest_frames)
{
    ring r;
    cr_assert_eq(ring_init(&r, 4, 1), 0);
    push_ramp(&r, 0, 11, 1);
    cr_assert_eq(r.end, 11);
    const float *w = ring_window(&r, 11, 4);
    cr_assert_not_null(w);
    cr_expect_eq(w[0], 7.0f);
    cr_expect_eq(w[3], 10.0f);
    ring_free(&r);
}

Test(ring, impossible_sizes_fail_cleanly)
{
    ring r;
    cr_expect_eq(ring_init(&r, 0, 1), -1);
    cr_expect_eq(ring_init(&r, 1, 0), -1);
    cr_expect_eq(ring_init(&r, 1u << 31, 4096), -1);
}
