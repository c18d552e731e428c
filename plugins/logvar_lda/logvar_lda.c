/* logvar_lda: the readout "log-variance + LDA" -- for each input window the log of each
 * channel's variance, the features of all inputs concatenated (an EEG and an EMG window of
 * different lengths and rates in one vector), then a linear discriminant whose softmax gives
 * the class probabilities. Band power by log-variance after band-pass and spatial filters is
 * the usual feature for motor imagery (Ramoser, Mueller-Gerking and Pfurtscheller 2000). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <weft/stage.h>

#include "../common_lda/lda.h"

#define MAX_INPUTS 16
#define MAX_FEATURES 65536u

/* A silent channel (an unfitted spatial filter upstream, a flat electrode) would give
 * log(0) = -inf; the floor keeps the feature finite and far below any real signal. */
#define VARIANCE_FLOOR 1e-30

static const weft_param_spec params[] = {
    { "classes", WEFT_PARAM_STRINGS, 0, NULL, WEFT_NO_RANGE, "", NULL,
      "class names, in the order of the output probabilities, e.g. [rest, grip]" },
    { "shrinkage", WEFT_PARAM_STRING, 0, "auto", WEFT_NO_RANGE, "", NULL,
      "covariance shrinkage for fit: auto (Ledoit-Wolf), none, or a number from 0 to 1" },
    { "weights", WEFT_PARAM_MATRIX, WEFT_PARAM_LEARNED, NULL, WEFT_NO_RANGE, "", NULL,
      "learned: one row per class, one column per channel of all inputs in order" },
    { "bias", WEFT_PARAM_NUMBERS, WEFT_PARAM_LEARNED, NULL, WEFT_NO_RANGE, "", NULL,
      "learned: one value per class" },
    WEFT_PARAMS_END,
};

typedef struct logvar_lda {
    const weft_host *host;      /* valid until destroy */
    uint32_t n_in;
    uint32_t channels[MAX_INPUTS];
    uint32_t n_features;
    double *features;           /* scratch: n_features */
    double *sum, *sq;           /* scratch: the widest input's channels */
    lda_model model;
} logvar_lda;

static void destroy(void *self)
{
    logvar_lda *s = self;
    if (!s)
        return;
    lda_model_free(&s->model);
    free(s->features);
    free(s->sum);
    free(s->sq);
    free(s);
}

/* Variance in one pass over the window, shifted by the first frame so that a large offset
 * (a DC level on raw EEG) does not cancel the small spread in float64 (Chan, Golub and
 * LeVeque 1983, "Algorithms for computing the sample variance", the shifted-data form). */
static void log_variances(const weft_window *w, double *sum, double *sq, double *out)
{
    uint32_t ch = w->channels;
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
    for (uint32_t c = 0; c < ch; c++) {
        double n = w->frames ? w->frames : 1;
        double var = (sq[c] - sum[c] * sum[c] / n) / n;
        out[c] = log(var > VARIANCE_FLOOR ? var : VARIANCE_FLOOR);
    }
}

static void features_of(const logvar_lda *s, const weft_window *win, double *out)
{
    uint32_t at = 0;
    for (uint32_t i = 0; i < s->n_in; i++) {
        log_variances(&win[i], s->sum, s->sq, out + at);
        at += s->channels[i];
    }
}

static void describe_features(const weft_layout *in, uint32_t n_in, char *buf, size_t size)
{
    size_t len = 0;
    for (uint32_t i = 0; i < n_in && len < size; i++)
        len += (size_t)snprintf(buf + len, size - len, "%s%u log-variances of '%s'",
                                i ? " + " : "", in[i].channels, in[i].name ? in[i].name : "?");
}

static int init(const weft_host *host, const weft_params *p, const weft_layout *in,
                uint32_t n_in, weft_layout *out, void **self)
{
    logvar_lda *s = calloc(1, sizeof *s);
    if (!s) {
        host->error(host, "out of memory");
        return WEFT_ENOMEM;
    }
    s->host = host;
    s->n_in = n_in;
    uint32_t widest = 1;
    for (uint32_t i = 0; i < n_in; i++) {
        /* Channels are bounded by the host (4096) and inputs by MAX_INPUTS: no overflow. */
        s->channels[i] = in[i].channels;
        s->n_features += in[i].channels;
        if (in[i].channels > widest)
            widest = in[i].channels;
    }
    if (s->n_features > MAX_FEATURES) {
        host->error(host, "%u features in all; at most %u", s->n_features, MAX_FEATURES);
        destroy(s);
        return WEFT_EINVAL;
    }
    char what[512];
    describe_features(in, n_in, what, sizeof what);
    int rc = lda_model_init(&s->model, host, p, s->n_features, what);
    s->features = calloc(s->n_features, sizeof *s->features);
    s->sum = calloc(widest, sizeof *s->sum);
    s->sq = calloc(widest, sizeof *s->sq);
    if (rc == WEFT_OK && (!s->features || !s->sum || !s->sq)) {
        host->error(host, "out of memory for %u features", s->n_features);
        rc = WEFT_ENOMEM;
    }
    if (rc != WEFT_OK) {
        destroy(s);
        return rc;
    }
    out->kind = WEFT_STREAM_RESULTS;
    out->channels = s->model.n_classes;
    out->labels = s->model.labels;
    *self = s;
    return WEFT_OK;
}

static int query(void *self, const weft_window *win, uint32_t n_in, weft_result *out)
{
    (void)n_in;
    logvar_lda *s = self;
    if (!s->model.fitted) {
        s->host->error(s->host, "not fitted: no weights and bias; run `weft fit` first");
        return WEFT_ESTATE;
    }
    features_of(s, win, s->features);
    lda_model_probabilities(&s->model, s->features, out->values);
    return WEFT_OK;
}

static int fit(void *self, const weft_epochs *ep, const weft_param_sink *learned)
{
    logvar_lda *s = self;
    /* Not a weft_host member of self: the host given to init stays valid until destroy. */
    const weft_host *host = s->host;
    double *x = calloc((size_t)ep->n_epochs * s->n_features + 1, sizeof *x);
    if (!x) {
        host->error(host, "out of memory for %u epochs of %u features", ep->n_epochs,
                    s->n_features);
        return WEFT_ENOMEM;
    }
    for (uint32_t e = 0; e < ep->n_epochs; e++)
        features_of(s, ep->windows + (size_t)e * ep->n_in, x + (size_t)e * s->n_features);
    int rc = lda_model_fit(&s->model, host, ep, x, learned);
    free(x);
    return rc;
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
    .max_inputs = MAX_INPUTS,
    .init = init,
    .query = query,
    .fit = fit,
    .destroy = destroy,
};

WEFT_STAGE(api)
