/* logvar_lda driven on its own: fitting on labelled epochs of two inputs of different rates
 * and window lengths (EEG 1.0 s at 250 Hz + EMG 0.2 s at 1 kHz), querying, and the errors a
 * user sees for a wrong weight shape, a missing class or an unfitted stage. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "stage_driver.h"

#define PLUGIN WEFT_PLUGIN_DIR "/logvar_lda.so"
#define EEG_CH 4
#define EMG_CH 2
#define EEG_FRAMES 250   /* 1.0 s at 250 Hz */
#define EMG_FRAMES 200   /* 0.2 s at 1 kHz */

static const char *const eeg_labels[EEG_CH] = { "C3", "C4", "Cz", "Pz" };
static const char *const emg_labels[EMG_CH] = { "flexor", "extensor" };

static weft_layout layouts[2] = {
    { .name = "eeg", .kind = WEFT_STREAM_SAMPLES, .channels = EEG_CH, .rate = 250,
      .labels = eeg_labels, .max_frames = 5 },
    { .name = "emg", .kind = WEFT_STREAM_SAMPLES, .channels = EMG_CH, .rate = 1000,
      .labels = emg_labels, .max_frames = 20 },
};

static uint64_t rng_state = 88172645463325252ull;

static double gauss(void)
{
    /* xorshift64 and Box-Muller: enough for test data, deterministic. */
    double u[2];
    for (int i = 0; i < 2; i++) {
        rng_state ^= rng_state << 13;
        rng_state ^= rng_state >> 7;
        rng_state ^= rng_state << 17;
        u[i] = ((rng_state >> 11) + 0.5) / 9007199254740992.0;
    }
    return sqrt(-2 * log(u[0])) * cos(2 * WEFT_PI * u[1]);
}

/* Class 1 ("grip"): C3 loses 60% of its amplitude (a desynchronisation) and the flexor EMG
 * triples; the other channels do not change. */
static void fill_window(float *data, uint32_t frames, uint32_t ch, int is_emg, int cls,
                        double offset)
{
    for (uint32_t f = 0; f < frames; f++)
        for (uint32_t c = 0; c < ch; c++) {
            double sd = 1.0;
            if (!is_emg && c == 0 && cls == 1)
                sd = 0.4;
            if (is_emg && c == 0 && cls == 1)
                sd = 3.0;
            data[(size_t)f * ch + c] = (float)(offset + sd * gauss());
        }
}

typedef struct epoch_set {
    uint32_t n;
    float *eeg, *emg;
    uint32_t *cls;
    weft_window *win;
} epoch_set;

static void make_epochs(epoch_set *s, uint32_t n, double offset)
{
    s->n = n;
    s->eeg = malloc((size_t)n * EEG_FRAMES * EEG_CH * sizeof(float));
    s->emg = malloc((size_t)n * EMG_FRAMES * EMG_CH * sizeof(float));
    s->cls = malloc(n * sizeof *s->cls);
    s->win = malloc(2 * (size_t)n * sizeof *s->win);
    cr_assert(s->eeg && s->emg && s->cls && s->win);
    for (uint32_t e = 0; e < n; e++) {
        s->cls[e] = e % 2;
        float *eeg = s->eeg + (size_t)e * EEG_FRAMES * EEG_CH;
        float *emg = s->emg + (size_t)e * EMG_FRAMES * EMG_CH;
        fill_window(eeg, EEG_FRAMES, EEG_CH, 0, (int)s->cls[e], offset);
        fill_window(emg, EMG_FRAMES, EMG_CH, 1, (int)s->cls[e], offset);
        s->win[2 * e] = (weft_window){ eeg, EEG_FRAMES, EEG_CH, 250, 0 };
        s->win[2 * e + 1] = (weft_window){ emg, EMG_FRAMES, EMG_CH, 1000, 0 };
    }
}

static void free_epochs(epoch_set *s)
{
    free(s->eeg);
    free(s->emg);
    free(s->cls);
    free(s->win);
}

static const char *const class_names[2] = { "rest", "grip" };

static void fit_on(stage_driver *sd, const epoch_set *s)
{
    weft_epochs ep = { .n_epochs = s->n, .n_in = 2, .n_classes = 2, .classes = s->cls,
                       .class_names = class_names, .windows = s->win };
    diag d = { 0 };
    cr_assert_eq(stage_driver_fit(sd, &ep, &d), 0, "%s", d.msg);
}

Test(fit_logvar_lda, two_inputs_of_different_rates_are_learned_and_predicted)
{
    stage_driver sd;
    diag d = { 0 };
    cr_assert_eq(stage_driver_open(&sd, PLUGIN, "{ classes: [rest, grip] }", layouts, 2, &d),
                 0, "%s", d.msg);
    cr_assert_eq(stage_driver_out(&sd)->kind, WEFT_STREAM_RESULTS);
    cr_assert_eq(stage_driver_out(&sd)->channels, 2);
    cr_assert_str_eq(stage_driver_out(&sd)->labels[1], "grip");
    epoch_set train, test;
    make_epochs(&train, 40, 0);
    make_epochs(&test, 40, 0);
    fit_on(&sd, &train);
    const weft_param *w = weft_param_get(&sd.n->params.view, "weights");
    cr_assert_eq(w->rows, 2);
    cr_assert_eq(w->cols, EEG_CH + EMG_CH);
    unsigned correct = 0;
    for (uint32_t e = 0; e < test.n; e++) {
        double prob[2];
        cr_assert_eq(stage_driver_query(&sd, test.win + 2 * e, 2, prob, &d), 0, "%s", d.msg);
        cr_assert(prob[0] >= 0 && prob[1] >= 0);
        cr_assert_float_eq(prob[0] + prob[1], 1.0, 1e-12);
        correct += (prob[1] > prob[0]) == (test.cls[e] == 1);
    }
    cr_assert_geq(correct, 38, "held-out accuracy %u/40", correct);
    free_epochs(&train);
    free_epochs(&test);
    stage_driver_close(&sd);
}

Test(fit_logvar_lda, a_dc_offset_does_not_change_the_probabilities)
{
    stage_driver sd;
    diag d = { 0 };
    cr_assert_eq(stage_driver_open(&sd, PLUGIN, "{ classes: [rest, grip] }", layouts, 2, &d),
                 0, "%s", d.msg);
    epoch_set train, plain, shifted;
    make_epochs(&train, 30, 0);
    uint64_t state = rng_state;
    make_epochs(&plain, 4, 0);
    rng_state = state;
    make_epochs(&shifted, 4, 5000.0); /* same noise, on a 5 mV offset */
    fit_on(&sd, &train);
    for (uint32_t e = 0; e < plain.n; e++) {
        double a[2], b[2];
        cr_assert_eq(stage_driver_query(&sd, plain.win + 2 * e, 2, a, &d), 0);
        cr_assert_eq(stage_driver_query(&sd, shifted.win + 2 * e, 2, b, &d), 0);
        /* float32 storage of offset + noise keeps about 3 digits of the noise at 5000. */
        cr_assert_float_eq(a[1], b[1], 0.05, "%g vs %g", a[1], b[1]);
    }
    free_epochs(&train);
    free_epochs(&plain);
    free_epochs(&shifted);
    stage_driver_close(&sd);
}

Test(fit_logvar_lda, wrong_weight_shape_names_the_parameter_and_the_expected_shape)
{
    stage_driver sd;
    diag d = { 0 };
    int rc = stage_driver_open(&sd, PLUGIN,
                               "{ classes: [rest, grip], weights: [[1, 2, 3], [4, 5, 6]],"
                               "  bias: [0, 0] }", layouts, 2, &d);
    cr_assert_neq(rc, 0);
    cr_assert(strstr(d.msg, "weights is 2 x 3"), "%s", d.msg);
    cr_assert(strstr(d.msg, "2 x 6"), "%s", d.msg);
    cr_assert(strstr(d.msg, "4 log-variances of 'eeg' + 2 log-variances of 'emg'"), "%s",
              d.msg);
    stage_driver_close(&sd);
}

Test(fit_logvar_lda, weights_without_bias_is_refused)
{
    stage_driver sd;
    diag d = { 0 };
    int rc = stage_driver_open(&sd, PLUGIN, "{ classes: [a, b], weights: [[1], [2]] }",
                               layouts, 1, &d);
    cr_assert_neq(rc, 0);
    cr_assert(strstr(d.msg, "learned together"), "%s", d.msg);
    stage_driver_close(&sd);
}

Test(fit_logvar_lda, given_weights_give_the_softmax_of_the_discriminants)
{
    weft_layout one = { .name = "x", .kind = WEFT_STREAM_SAMPLES, .channels = 1, .rate = 100,
                        .max_frames = 10 };
    stage_driver sd;
    diag d = { 0 };
    cr_assert_eq(stage_driver_open(&sd, PLUGIN,
                                   "{ classes: [a, b, c], weights: [[1], [0], [-1]],"
                                   "  bias: [0, 0.5, 0] }", &one, 1, &d), 0, "%s", d.msg);
    /* Samples +-2: variance 4, feature log 4. Scores: log 4, 0.5, -log 4. */
    float data[4] = { 2, -2, 2, -2 };
    weft_window w = { data, 4, 1, 100, 4 };
    double prob[3];
    cr_assert_eq(stage_driver_query(&sd, &w, 1, prob, &d), 0, "%s", d.msg);
    double s[3] = { log(4.0), 0.5, -log(4.0) }, z = exp(s[0]) + exp(s[1]) + exp(s[2]);
    for (int k = 0; k < 3; k++)
        cr_assert_float_eq(prob[k], exp(s[k]) / z, 1e-12, "class %d: %g", k, prob[k]);
    stage_driver_close(&sd);
}

Test(fit_logvar_lda, unfitted_query_says_it_is_not_fitted)
{
    stage_driver sd;
    diag d = { 0 };
    cr_assert_eq(stage_driver_open(&sd, PLUGIN, "{ classes: [rest, grip] }", layouts, 2, &d),
                 0, "%s", d.msg);
    epoch_set s;
    make_epochs(&s, 1, 0);
    double prob[2];
    cr_assert_neq(stage_driver_query(&sd, s.win, 2, prob, &d), 0);
    cr_assert(strstr(d.msg, "not fitted"), "%s", d.msg);
    free_epochs(&s);
    stage_driver_close(&sd);
}

Test(fit_logvar_lda, a_class_with_one_trial_is_a_fit_error_naming_the_class)
{
    stage_driver sd;
    diag d = { 0 };
    cr_assert_eq(stage_driver_open(&sd, PLUGIN, "{ classes: [rest, grip] }", layouts, 2, &d),
                 0, "%s", d.msg);
    epoch_set s;
    make_epochs(&s, 8, 0);
    for (uint32_t e = 0; e < s.n; e++)
        s.cls[e] = e == 3; /* one grip trial */
    weft_epochs ep = { .n_epochs = s.n, .n_in = 2, .n_classes = 2, .classes = s.cls,
                       .class_names = class_names, .windows = s.win };
    cr_assert_neq(stage_driver_fit(&sd, &ep, &d), 0);
    cr_assert(strstr(d.msg, "class 'grip' has 1 trial"), "%s", d.msg);
    free_epochs(&s);
    stage_driver_close(&sd);
}

Test(fit_logvar_lda, a_fit_class_the_readout_does_not_have_is_an_error)
{
    stage_driver sd;
    diag d = { 0 };
    cr_assert_eq(stage_driver_open(&sd, PLUGIN, "{ classes: [rest, grip] }", layouts, 2, &d),
                 0, "%s", d.msg);
    epoch_set s;
    make_epochs(&s, 8, 0);
    static const char *const other[2] = { "rest", "squeeze" };
    weft_epochs ep = { .n_epochs = s.n, .n_in = 2, .n_classes = 2, .classes = s.cls,
                       .class_names = other, .windows = s.win };
    cr_assert_neq(stage_driver_fit(&sd, &ep, &d), 0);
    cr_assert(strstr(d.msg, "'squeeze' is not one of this readout's classes"), "%s", d.msg);
    free_epochs(&s);
    stage_driver_close(&sd);
}
