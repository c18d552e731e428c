/* winmean_lda: the readout "windowed means + shrinkage LDA" for event-related responses --
 * each input window cut into `segments` consecutive sub-windows, the mean of each channel in
 * each of them as features (the ERP's time course at a coarse resolution), then LDA with
 * analytic shrinkage, which such high-dimensional, few-trial features need (Blankertz et al.
 * 2011, "Single-trial analysis and classification of ERP components -- a tutorial",
 * NeuroImage 56:814-825, Sec. 3). No baseline is removed here: put a high-pass or detrend
 * stage before it. */
#include <weft/stage.h>

#include "../common_lda/lda_readout.h"

static const weft_param_spec params[] = {
    LDA_READOUT_PARAMS,
    { "segments", WEFT_PARAM_INTEGER, 0, "5", 1, 100, "", NULL,
      "consecutive sub-windows per input window; features are their means per channel" },
    WEFT_PARAMS_END,
};

static uint32_t segments(const weft_params *p) { return (uint32_t)weft_param_number(p, "segments"); }

/* Segment k covers frames [k N / K, (k + 1) N / K): equal to within one frame, all frames used.
 * Features are ordered segment by segment, channels within a segment. */
static int segment_means(const lda_readout *r, const weft_window *w, double *scratch,
                         double *out)
{
    (void)scratch;
    uint32_t k_max = r->per_channel, ch = w->channels;
    if (w->frames < k_max) {
        r->host->error(r->host, "a window of %u samples cannot be cut into %u segments; "
                       "lengthen the window or lower `segments`", w->frames, k_max);
        return WEFT_EINVAL;
    }
    for (uint32_t k = 0; k < k_max; k++) {
        uint32_t from = (uint32_t)((uint64_t)k * w->frames / k_max);
        uint32_t to = (uint32_t)((uint64_t)(k + 1) * w->frames / k_max);
        double *mean = out + (size_t)k * ch;
        for (uint32_t c = 0; c < ch; c++)
            mean[c] = 0;
        for (uint32_t f = from; f < to; f++)
            for (uint32_t c = 0; c < ch; c++)
                mean[c] += w->data[(size_t)f * ch + c];
        for (uint32_t c = 0; c < ch; c++)
            mean[c] /= to - from;
    }
    return WEFT_OK;
}

static const lda_features winmean = { "segment means", segments, segment_means, NULL };

static int init(const weft_host *host, const weft_params *p, const weft_layout *in,
                uint32_t n_in, weft_layout *out, void **self)
{
    return lda_readout_init(&winmean, host, p, in, n_in, out, self);
}

static const weft_stage_api api = {
    WEFT_API_HEADER,
    .roles = WEFT_ROLE_READOUT | WEFT_ROLE_FITTABLE,
    .name = "winmean_lda",
    .version = "0.1.0",
    .summary = "means of consecutive sub-windows per channel (event-related responses), then "
               "shrinkage LDA",
    .params = params,
    .min_inputs = 1,
    .max_inputs = LDA_READOUT_MAX_INPUTS,
    .init = init,
    .query = lda_readout_query,
    .fit = lda_readout_fit,
    .destroy = lda_readout_destroy,
};

WEFT_STAGE(api)
