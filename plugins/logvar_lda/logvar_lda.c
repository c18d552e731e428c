/* logvar_lda: the readout "log-variance + LDA" -- for each input window the log of each
 * channel's variance, the features of all inputs concatenated (an EEG and an EMG window of
 * different lengths and rates in one vector), then a linear discriminant whose softmax gives
 * the class probabilities. Band power by log-variance after band-pass and spatial filters is
 * the usual feature for motor imagery (Ramoser, Mueller-Gerking and Pfurtscheller 2000). */
#include <math.h>
#include <weft/stage.h>

#include "../common_lda/lda_readout.h"

/* A silent channel (an unfitted spatial filter upstream, a flat electrode) would give
 * log(0) = -inf; the floor keeps the feature finite and far below any real signal. */
#define VARIANCE_FLOOR 1e-30

static const weft_param_spec params[] = {
    LDA_READOUT_PARAMS,
    WEFT_PARAMS_END,
};

static uint32_t one_per_channel(const weft_params *p)
{
    (void)p;
    return 1;
}

/* Variance in one pass over the window, shifted by the first frame so that a large offset
 * (a DC level on raw EEG) does not cancel the small spread in float64 (Chan, Golub and
 * LeVeque 1983, "Algorithms for computing the sample variance", the shifted-data form). */
static int log_variances(const lda_readout *r, const weft_window *w, double *scratch,
                         double *out)
{
    (void)r;
    uint32_t ch = w->channels;
    double *sum = scratch, *sq = scratch + ch;
    const float *shift = w->data;
    for (uint32_t c = 0; c < ch; c++)
        sum[c] = sq[c] = 0;
    for (uint32_t f = 0; f < w->frames; f++) {
        const float *frame = w->data + (size_t)f * ch;
        for (uint32_t c = 0; c < ch; c++) {
            double d = (double)frame[c] - shift[c];
            sum[c] += d;
            sq[c] += d * d;
        }
    }
    double n = w->frames ? w->frames : 1;
    for (uint32_t c = 0; c < ch; c++) {
        double var = (sq[c] - sum[c] * sum[c] / n) / n;
        out[c] = log(var > VARIANCE_FLOOR ? var : VARIANCE_FLOOR);
    }
    return WEFT_OK;
}

static const lda_features logvar = { "log-variances", one_per_channel, log_variances, NULL };

static int init(const weft_host *host, const weft_params *p, const weft_layout *in,
                uint32_t n_in, weft_layout *out, void **self)
{
    return lda_readout_init(&logvar, host, p, in, n_in, out, self);
}

static const weft_stage_api api = {
    WEFT_API_HEADER,
    .roles = WEFT_ROLE_READOUT | WEFT_ROLE_FITTABLE,
    .name = "logvar_lda",
    .version = "0.1.0",
    .summary = "log-variance of each channel of every input window, then LDA class "
               "probabilities",
    .params = params,
    .min_inputs = 1,
    .max_inputs = LDA_READOUT_MAX_INPUTS,
    .init = init,
    .query = lda_readout_query,
    .fit = lda_readout_fit,
    .destroy = lda_readout_destroy,
};

WEFT_STAGE(api)
