/* rms_lda: the readout "RMS + LDA" for EMG -- the root mean square of each channel over the
 * window (the contraction's amplitude; on an envelope input, its level), by default as its
 * logarithm, then LDA. The log makes amplitude, which grows multiplicatively with effort, close
 * to Gaussian with equal spread per class, as LDA assumes (common practice for EMG amplitude
 * features). Unlike log-variance the mean is not removed: a rectified envelope's mean is the
 * signal. A threshold on one channel is the special case of one feature and two classes. */
#include <math.h>
#include <weft/stage.h>

#include "../common_lda/lda_readout.h"

#define RMS_FLOOR 1e-15

static const weft_param_spec params[] = {
    LDA_READOUT_PARAMS,
    { "log", WEFT_PARAM_BOOLEAN, 0, "true", WEFT_NO_RANGE, "", NULL,
      "use log(RMS) as the feature (true) or the RMS itself (false)" },
    WEFT_PARAMS_END,
};

static uint32_t one_per_channel(const weft_params *p)
{
    (void)p;
    return 1;
}

static void configure(lda_readout *r, const weft_params *p)
{
    r->option = weft_param_number(p, "log");
}

static int rms(const lda_readout *r, const weft_window *w, double *scratch, double *out)
{
    uint32_t ch = w->channels;
    double *sq = scratch;
    for (uint32_t c = 0; c < ch; c++)
        sq[c] = 0;
    for (uint32_t f = 0; f < w->frames; f++)
        for (uint32_t c = 0; c < ch; c++) {
            double x = w->data[(size_t)f * ch + c];
            sq[c] += x * x;
        }
    for (uint32_t c = 0; c < ch; c++) {
        double v = sqrt(sq[c] / (w->frames ? w->frames : 1));
        out[c] = r->option != 0 ? log(v > RMS_FLOOR ? v : RMS_FLOOR) : v;
    }
    return WEFT_OK;
}

static const lda_features rms_features = { "RMS values", one_per_channel, rms, configure };

static int init(const weft_host *host, const weft_params *p, const weft_layout *in,
                uint32_t n_in, weft_layout *out, void **self)
{
    return lda_readout_init(&rms_features, host, p, in, n_in, out, self);
}

static const weft_stage_api api = {
    WEFT_API_HEADER,
    .roles = WEFT_ROLE_READOUT | WEFT_ROLE_FITTABLE,
    .name = "rms_lda",
    .version = "0.1.0",
    .summary = "RMS (or log RMS) of each channel of every input window, then LDA class "
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
