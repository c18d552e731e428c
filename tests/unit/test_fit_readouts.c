/* The windowed-means and RMS readouts: their features as defined (checked through given
 * weights), fitting on event-related and amplitude-coded epochs, and their errors. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "stage_driver.h"

#define WINMEAN WEFT_PLUGIN_DIR "/winmean_lda.so"
#define RMS WEFT_PLUGIN_DIR "/rms_lda.so"

static const weft_layout two = { .name = "eeg", .kind = WEFT_STREAM_SAMPLES, .channels = 2,
                                 .rate = 100, .max_frames = 10 };
static const char *const class_names[2] = { "a", "b" };
static uint64_t state = 0x9e3779b97f4a7c15ull;

static double gauss(void)
{
    double u[2];
    for (int i = 0; i < 2; i++) {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        u[i] = ((state >> 11) + 0.5) / 9007199254740992.0;
    }
    return sqrt(-2 * log(u[0])) * cos(2 * WEFT_PI * u[1]);
}

static double softmax1(double s0, double s1) { return exp(s1) / (exp(s0) + exp(s1)); }

Test(fit_readouts, winmean_features_are_the_means_of_consecutive_segments)
{
    stage_driver sd;
    diag d = { 0 };
    /* 2 channels x 3 segments: weights pick segment 2 (index 1) of channel 0 for class b. */
    cr_assert_eq(stage_driver_open(&sd, WINMEAN,
                                   "{ classes: [a, b], segments: 3,"
                                   "  weights: [[0, 0, 0, 0, 0, 0], [0, 0, 1, 0, 0, 0]],"
                                   "  bias: [0, 0] }", &two, 1, &d), 0, "%s", d.msg);
    /* 7 frames: segments [0,2), [2,4), [4,7). Channel 0 = frame index. */
    float data[14];
    for (int f = 0; f < 7; f++) {
        data[2 * f] = (float)f;
        data[2 * f + 1] = 100;
    }
    weft_window w = { data, 7, 2, 100, 7 };
    double prob[2];
    cr_assert_eq(stage_driver_query(&sd, &w, 1, prob, &d), 0, "%s", d.msg);
    cr_assert_float_eq(prob[1], softmax1(0, 2.5), 1e-12, "%g", prob[1]); /* mean of 2, 3 */
    stage_driver_close(&sd);
}

Test(fit_readouts, winmean_window_shorter_than_its_segments_is_an_error)
{
    stage_driver sd;
    diag d = { 0 };
    cr_assert_eq(stage_driver_open(&sd, WINMEAN,
                                   "{ classes: [a, b], segments: 4,"
                                   "  weights: [[0, 0, 0, 0, 0, 0, 0, 0], [0, 0, 0, 0, 0, 0, 0, 0]],"
                                   "  bias: [0, 0] }", &two, 1, &d), 0, "%s", d.msg);
    float data[6] = { 0 };
    weft_window w = { data, 3, 2, 100, 3 };
    double prob[2];
    cr_assert_neq(stage_driver_query(&sd, &w, 1, prob, &d), 0);
    cr_assert(strstr(d.msg, "3 samples cannot be cut into 4 segments"), "%s", d.msg);
    stage_driver_close(&sd);
}

/* Event-related epochs: class b carries a deflection of 1.5 noise SD on channel 1 in the
 * middle fifth of the window. */
static void erp_epochs(float *data, uint32_t *cls, weft_window *win, uint32_t n, uint32_t frames)
{
    for (uint32_t e = 0; e < n; e++) {
        cls[e] = e % 2;
        float *x = data + (size_t)e * frames * 2;
        for (uint32_t f = 0; f < frames; f++) {
            int bump = cls[e] && f >= 2 * frames / 5 && f < 3 * frames / 5;
            x[2 * f] = (float)gauss();
            x[2 * f + 1] = (float)(gauss() + (bump ? 1.5 : 0));
        }
        win[e] = (weft_window){ x, frames, 2, 100, 0 };
    }
}

Test(fit_readouts, winmean_learns_an_event_related_deflection)
{
    enum { N = 60, FRAMES = 50 };
    static float train[N * FRAMES * 2], test[N * FRAMES * 2];
    uint32_t ctrain[N], ctest[N];
    weft_window wtrain[N], wtest[N];
    erp_epochs(train, ctrain, wtrain, N, FRAMES);
    erp_epochs(test, ctest, wtest, N, FRAMES);
    stage_driver sd;
    diag d = { 0 };
    cr_assert_eq(stage_driver_open(&sd, WINMEAN, "{ classes: [a, b], segments: 5 }", &two, 1, &d),
                 0, "%s", d.msg);
    weft_epochs ep = { .n_epochs = N, .n_in = 1, .n_classes = 2, .classes = ctrain,
                       .class_names = class_names, .windows = wtrain };
    cr_assert_eq(stage_driver_fit(&sd, &ep, &d), 0, "%s", d.msg);
    unsigned correct = 0;
    for (uint32_t e = 0; e < N; e++) {
        double prob[2];
        cr_assert_eq(stage_driver_query(&sd, &wtest[e], 1, prob, &d), 0, "%s", d.msg);
        correct += (prob[1] > 0.5) == (ctest[e] == 1);
    }
    /* The segment mean over 10 samples has SD 0.32 against a 1.5 deflection: nearly
     * separable; shrinkage keeps the 10-feature LDA from overfitting 60 trials. */
    cr_assert_geq(correct, 54, "held-out accuracy %u/%d", correct, N);
    stage_driver_close(&sd);
}

Test(fit_readouts, rms_feature_is_the_log_of_the_root_mean_square)
{
    weft_layout one = two;
    one.channels = 1;
    stage_driver sd;
    diag d = { 0 };
    cr_assert_eq(stage_driver_open(&sd, RMS, "{ classes: [a, b], weights: [[0], [1]], bias: [0, 0] }",
                                   &one, 1, &d), 0, "%s", d.msg);
    float data[4] = { 3, 3, -3, 3 }; /* a mean of 1.5 that log-variance would remove */
    weft_window w = { data, 4, 1, 100, 4 };
    double prob[2];
    cr_assert_eq(stage_driver_query(&sd, &w, 1, prob, &d), 0, "%s", d.msg);
    cr_assert_float_eq(prob[1], softmax1(0, log(3.0)), 1e-12, "%g", prob[1]);
    stage_driver_close(&sd);
    cr_assert_eq(stage_driver_open(&sd, RMS,
                                   "{ classes: [a, b], log: false, weights: [[0], [1]], bias: [0, 0] }",
                                   &one, 1, &d), 0, "%s", d.msg);
    cr_assert_eq(stage_driver_query(&sd, &w, 1, prob, &d), 0, "%s", d.msg);
    cr_assert_float_eq(prob[1], softmax1(0, 3.0), 1e-12, "%g", prob[1]);
    stage_driver_close(&sd);
}

Test(fit_readouts, rms_learns_contraction_from_rest)
{
    enum { N = 40, FRAMES = 100 };
    static float data[2][N * FRAMES * 2];
    uint32_t cls[N];
    weft_window win[2][N];
    for (int set = 0; set < 2; set++)
        for (uint32_t e = 0; e < N; e++) {
            cls[e] = e % 2;
            float *x = data[set] + (size_t)e * FRAMES * 2;
            double level = cls[e] ? 2.0 + gauss() * 0.3 : 0.5 + gauss() * 0.1;
            for (uint32_t f = 0; f < 2 * FRAMES; f++)
                x[f] = (float)(level * gauss() * (f % 2 ? 0.6 : 1.0));
            win[set][e] = (weft_window){ x, FRAMES, 2, 1000, 0 };
        }
    stage_driver sd;
    diag d = { 0 };
    cr_assert_eq(stage_driver_open(&sd, RMS, "{ classes: [a, b] }", &two, 1, &d), 0, "%s", d.msg);
    weft_epochs ep = { .n_epochs = N, .n_in = 1, .n_classes = 2, .classes = cls,
                       .class_names = class_names, .windows = win[0] };
    cr_assert_eq(stage_driver_fit(&sd, &ep, &d), 0, "%s", d.msg);
    unsigned correct = 0;
    for (uint32_t e = 0; e < N; e++) {
        double prob[2];
        cr_assert_eq(stage_driver_query(&sd, &win[1][e], 1, prob, &d), 0, "%s", d.msg);
        cr_assert_float_eq(prob[0] + prob[1], 1.0, 1e-12);
        correct += (prob[1] > 0.5) == (cls[e] == 1);
    }
    cr_assert_geq(correct, 38, "held-out accuracy %u/%d", correct, N);
    stage_driver_close(&sd);
}
