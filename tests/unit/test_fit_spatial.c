/* The spatial filters driven on their own: any block split gives the same samples, the common
 * average and the small Laplacian have the weights their definitions say, and wrong shapes
 * are errors that name the parameter. CSP unfitted passes zeros and, once fitted, applies
 * its learned filters. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "stage_driver.h"

#define SPATIAL WEFT_PLUGIN_DIR "/spatial.so"
#define CSP WEFT_PLUGIN_DIR "/csp.so"

static const char *const names[6] = { "C3", "C1", "Cz", "FC3", "CP3", "C5" };
static const weft_layout six = { .name = "eeg", .kind = WEFT_STREAM_SAMPLES, .channels = 6,
                                 .rate = 250, .labels = names, .max_frames = 64 };

static void ramp(float *x, uint32_t frames, uint32_t ch)
{
    for (uint32_t f = 0; f < frames; f++)
        for (uint32_t c = 0; c < ch; c++)
            x[(size_t)f * ch + c] = (float)sin(0.37 * f + 1.3 * c) * (float)(c + 1) + 0.25f * c;
}

/* One frame through the stage, so the weights can be read off unit vectors. */
static void response(stage_driver *sd, uint32_t in_ch, uint32_t input, float *out)
{
    float x[16] = { 0 };
    x[input] = 1;
    diag d = { 0 };
    cr_assert_eq(stage_driver_process(sd, x, 1, out, 1, &d), 1, "%s", d.msg);
    (void)in_ch;
}

Test(fit_spatial, any_block_split_gives_the_same_samples)
{
    enum { FRAMES = 600 };
    static float in[FRAMES * 6], whole[FRAMES * 6], parts[FRAMES * 6];
    ramp(in, FRAMES, 6);
    static const char *const modes[] = { "{ mode: car }", "{ mode: laplacian }",
                                         ("{ mode: matrix, weights: [[1, 2, 3, 4, 5, 6], [0.5, 0, -1, 0, 2, 1],"
                                          " [-3, 1, 0.25, 0, 0, 9]] }") };
    for (size_t m = 0; m < sizeof modes / sizeof modes[0]; m++) {
        stage_driver a, b;
        diag d = { 0 };
        cr_assert_eq(stage_driver_open(&a, SPATIAL, modes[m], &six, 1, &d), 0, "%s", d.msg);
        cr_assert_eq(stage_driver_open(&b, SPATIAL, modes[m], &six, 1, &d), 0, "%s", d.msg);
        uint32_t ch = stage_driver_out(&a)->channels;
        for (uint32_t at = 0; at < FRAMES; at += 64)
            stage_driver_process(&a, in + at * 6, FRAMES - at < 64 ? FRAMES - at : 64,
                                 whole + at * ch, 64, &d);
        static const uint32_t sizes[] = { 1, 7, 3, 64, 13, 2, 31 };
        for (uint32_t at = 0, k = 0; at < FRAMES; k++) {
            uint32_t n = sizes[k % 7] < FRAMES - at ? sizes[k % 7] : FRAMES - at;
            cr_assert_eq(stage_driver_process(&b, in + at * 6, n, parts + at * ch, 64, &d),
                         (long)n);
            at += n;
        }
        cr_assert_eq(memcmp(whole, parts, (size_t)FRAMES * ch * sizeof(float)), 0,
                     "mode %zu: block split changed the output", m);
        stage_driver_close(&a);
        stage_driver_close(&b);
    }
}

Test(fit_spatial, common_average_subtracts_the_mean_of_all_channels)
{
    stage_driver sd;
    diag d = { 0 };
    cr_assert_eq(stage_driver_open(&sd, SPATIAL, "{ mode: car }", &six, 1, &d), 0, "%s", d.msg);
    cr_assert_str_eq(stage_driver_out(&sd)->labels[3], "FC3");
    float x[6] = { 1, 2, 3, 4, 5, 9 }, y[6];
    cr_assert_eq(stage_driver_process(&sd, x, 1, y, 1, &d), 1);
    for (int c = 0; c < 6; c++)
        cr_assert_float_eq(y[c], x[c] - 4.0f, 1e-5, "channel %d: %g", c, y[c]);
    stage_driver_close(&sd);
}

Test(fit_spatial, small_laplacian_uses_the_grid_neighbours)
{
    stage_driver sd;
    diag d = { 0 };
    cr_assert_eq(stage_driver_open(&sd, SPATIAL, "{ mode: laplacian }", &six, 1, &d), 0, "%s",
                 d.msg);
    /* The response to a unit on channel j is column j of the weights W[out][in]. */
    float w[6][6], y[6];
    for (int j = 0; j < 6; j++) {
        response(&sd, 6, (uint32_t)j, y);
        for (int r = 0; r < 6; r++)
            w[r][j] = y[r];
    }
    /* C3's neighbours on the 10-10 grid: C1, FC3, CP3, C5 (all present), each -1/4. */
    static const float c3[6] = { 1, -0.25f, 0, -0.25f, -0.25f, -0.25f };
    for (int j = 0; j < 6; j++)
        cr_assert_float_eq(w[0][j], c3[j], 1e-6, "C3 row, %s: %g", names[j], w[0][j]);
    /* C1 has C3 and Cz (FC1, CP1 are not in the montage); Cz has only C1. */
    cr_assert_float_eq(w[1][0], -0.5f, 1e-6, "C1 row, C3: %g", w[1][0]);
    cr_assert_float_eq(w[1][2], -0.5f, 1e-6, "C1 row, Cz: %g", w[1][2]);
    cr_assert_float_eq(w[2][1], -1.0f, 1e-6, "Cz row, C1: %g", w[2][1]);
    cr_assert_float_eq(w[2][0], 0.0f, 1e-6, "Cz row, C3: %g", w[2][0]);
    stage_driver_close(&sd);
}

Test(fit_spatial, explicit_neighbours_replace_the_grid)
{
    stage_driver sd;
    diag d = { 0 };
    cr_assert_eq(stage_driver_open(&sd, SPATIAL,
                                   "{ mode: laplacian, neighbours: [\"C3: FC3, CP3\"] }", &six,
                                   1, &d), 0, "%s", d.msg);
    float y[6];
    response(&sd, 6, 3, y); /* a unit on FC3: column FC3 */
    cr_assert_float_eq(y[0], -0.5f, 1e-6, "FC3 into C3: %g", y[0]);
    stage_driver_close(&sd);
}

Test(fit_spatial, a_channel_off_the_grid_without_neighbours_is_an_error)
{
    static const char *const odd[3] = { "C3", "C4", "flexor" };
    weft_layout in = six;
    in.channels = 3;
    in.labels = odd;
    stage_driver sd;
    diag d = { 0 };
    cr_assert_neq(stage_driver_open(&sd, SPATIAL, "{ mode: laplacian }", &in, 1, &d), 0);
    cr_assert(strstr(d.msg, "channel 'C3' has no neighbour"), "%s", d.msg);
    stage_driver_close(&sd);
}

Test(fit_spatial, wrong_weight_columns_name_the_input_channels)
{
    stage_driver sd;
    diag d = { 0 };
    cr_assert_neq(stage_driver_open(&sd, SPATIAL, "{ mode: matrix, weights: [[1, 0], [0, 1]] }", &six, 1, &d),
                  0);
    cr_assert(strstr(d.msg, "weights is 2 x 2") && strstr(d.msg, "C_in = 6"), "%s", d.msg);
    stage_driver_close(&sd);
}

Test(fit_spatial, weights_outside_mode_matrix_are_an_error)
{
    stage_driver sd;
    diag d = { 0 };
    cr_assert_neq(stage_driver_open(&sd, SPATIAL, "{ weights: [[1, 0, 0, 0, 0, 0]] }", &six, 1,
                                    &d), 0);
    cr_assert(strstr(d.msg, "only used with mode: matrix"), "%s", d.msg);
    stage_driver_close(&sd);
}

Test(fit_spatial, unfitted_csp_passes_zeros_and_fitted_csp_applies_its_filters)
{
    stage_driver sd;
    diag d = { 0 };
    cr_assert_eq(stage_driver_open(&sd, CSP, "{ pairs: 1 }", &six, 1, &d), 0, "%s", d.msg);
    cr_assert_eq(stage_driver_out(&sd)->channels, 2);
    float x[6] = { 1, 2, 3, 4, 5, 6 }, y[2] = { 7, 7 };
    cr_assert_eq(stage_driver_process(&sd, x, 1, y, 1, &d), 1);
    cr_assert(y[0] == 0 && y[1] == 0, "unfitted CSP gave %g %g", y[0], y[1]);
    stage_driver_close(&sd);

    cr_assert_eq(stage_driver_open(&sd, CSP,
                                   "{ pairs: 1, filters: [[1, 0, 0, 0, 0, -1], [0, 1, 1, 0, 0, 0]] }",
                                   &six, 1, &d), 0, "%s", d.msg);
    cr_assert_eq(stage_driver_process(&sd, x, 1, y, 1, &d), 1);
    cr_assert_float_eq(y[0], -5.0f, 1e-6);
    cr_assert_float_eq(y[1], 5.0f, 1e-6);
    stage_driver_close(&sd);
}

Test(fit_spatial, csp_filters_of_the_wrong_shape_are_refused)
{
    stage_driver sd;
    diag d = { 0 };
    cr_assert_neq(stage_driver_open(&sd, CSP, "{ pairs: 2, filters: [[1, 0, 0, 0, 0, 0]] }",
                                    &six, 1, &d), 0);
    cr_assert(strstr(d.msg, "filters is 1 x 6") && strstr(d.msg, "must be 4 x 6"), "%s", d.msg);
    stage_driver_close(&sd);
    diag d2 = { 0 };
    cr_assert_neq(stage_driver_open(&sd, CSP, "{ pairs: 4 }", &six, 1, &d2), 0);
    d = d2;
    cr_assert(strstr(d.msg, "pairs 4 needs 8 input channels"), "%s", d.msg);
    stage_driver_close(&sd);
}
