/* detrend: removes the DC offset and slow drift of each channel, causally -- by a one-pole
 * high-pass (the "DC blocker" y[n] = x[n] - x[n-1] + R y[n-1], R = exp(-2 pi fc / fs);
 * Smith, Introduction to Digital Filters, 2007, from memory), or by subtracting the mean of the
 * last `window` seconds. State in double. */
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <weft/stage.h>


static const weft_param_spec params[] = {
    { "method", WEFT_PARAM_CHOICE, 0, "highpass", WEFT_NO_RANGE, "", "highpass|mean",
      "one-pole high-pass at cutoff, or subtract the running mean over window" },
    { "cutoff", WEFT_PARAM_NUMBER, 0, "0.1", 0, 1e6, "Hz", NULL,
      "high-pass -3 dB frequency (approximately, for cutoffs well below the rate)" },
    { "window", WEFT_PARAM_NUMBER, 0, "10", 0, 3600, "s", NULL, "running-mean window" },
    { .name = NULL },
};

typedef struct detrend {
    const weft_host *host;
    uint32_t channels;
    int mean;
    double pole;                /* R */
    double *prev_x, *prev_y;    /* high-pass state */
    uint32_t window, at;        /* running mean: ring of the last `window` inputs */
    uint64_t pos;
    double *ring, *sums;
} detrend;

static void destroy(void *self)
{
    detrend *d = self;
    if (!d)
        return;
    free(d->prev_x);
    free(d->prev_y);
    free(d->ring);
    free(d->sums);
    free(d);
}

static int setup(detrend *d, const weft_host *host, const weft_params *p, double rate)
{
    const size_t C = d->channels;
    if (d->mean) {
        double frames = round(weft_param_number(p, "window") * rate);
        if (frames < 2 || frames > (double)(1u << 26)) {
            host->param_error(host, "window", "window (%g s) must span 2 to 2^26 samples at "
                              "%g Hz", weft_param_number(p, "window"), rate);
            return WEFT_EINVAL;
        }
        d->window = (uint32_t)frames;
        if ((size_t)d->window > SIZE_MAX / sizeof(double) / C)
            return WEFT_ENOMEM;
        d->ring = calloc((size_t)d->window * C, sizeof *d->ring);
        d->sums = calloc(C, sizeof *d->sums);
        return d->ring && d->sums ? WEFT_OK : WEFT_ENOMEM;
    }
    double fc = weft_param_number(p, "cutoff");
    if (!(fc > 0) || !(fc < rate / 2)) {
        host->param_error(host, "cutoff", "cutoff (%g Hz) must be above 0 Hz and below half "
                          "the input rate (%g Hz)", fc, rate / 2);
        return WEFT_EINVAL;
    }
    d->pole = exp(-2 * WEFT_PI * fc / rate);
    d->prev_x = calloc(C, sizeof *d->prev_x);
    d->prev_y = calloc(C, sizeof *d->prev_y);
    return d->prev_x && d->prev_y ? WEFT_OK : WEFT_ENOMEM;
}

static int init(const weft_host *host, const weft_params *p, const weft_layout *in,
                uint32_t n_in, weft_layout *out, void **self)
{
    (void)n_in;
    detrend *d = calloc(1, sizeof *d);
    if (!d)
        return WEFT_ENOMEM;
    d->host = host;
    d->channels = in[0].channels;
    d->mean = !strcmp(weft_param_text(p, "method"), "mean");
    int rc = setup(d, host, p, in[0].rate);
    if (rc) {
        if (rc == WEFT_ENOMEM)
            host->error(host, "out of memory for %u channels", d->channels);
        destroy(d);
        return rc;
    }
    out->kind = WEFT_STREAM_SAMPLES;
    out->labels = in[0].labels; /* the same channels; the host keeps the strings */
    out->channels = d->channels;
    out->rate = in[0].rate;
    *self = d;
    return WEFT_OK;
}

static void highpass(detrend *d, const float *x, float *y, size_t frames)
{
    const size_t C = d->channels;
    for (size_t n = 0; n < frames; n++)
        for (size_t c = 0; c < C; c++) {
            double v = x[n * C + c];
            double out = (v - d->prev_x[c]) + d->pole * d->prev_y[c];
            d->prev_x[c] = v;
            d->prev_y[c] = out;
            y[n * C + c] = (float)out;
        }
}

/* x minus the mean of the last `window` inputs (fewer at the start: the mean of what came).
 * The running sums are recomputed from the ring every `window` frames from the stream's start,
 * so rounding cannot drift. */
static void minus_mean(detrend *d, const float *x, float *y, size_t frames)
{
    const size_t C = d->channels;
    for (size_t n = 0; n < frames; n++) {
        double *slot = d->ring + (size_t)d->at * C;
        for (size_t c = 0; c < C; c++) {
            double v = x[n * C + c];
            d->sums[c] += v - slot[c];
            slot[c] = v;
        }
        d->at = d->at + 1 == d->window ? 0 : d->at + 1;
        if (++d->pos % d->window == 0) {
            memset(d->sums, 0, C * sizeof *d->sums);
            for (size_t k = 0; k < d->window; k++)
                for (size_t c = 0; c < C; c++)
                    d->sums[c] += d->ring[(((size_t)d->at + k) % d->window) * C + c];
        }
        double count = d->pos < d->window ? (double)d->pos : (double)d->window;
        for (size_t c = 0; c < C; c++)
            y[n * C + c] = (float)(x[n * C + c] - d->sums[c] / count);
    }
}

static int process(void *self, const weft_block *in, uint32_t n_in, weft_block *out)
{
    (void)n_in;
    detrend *d = self;
    if (in[0].frames > out->capacity) {
        d->host->error(d->host, "block of %u frames does not fit the output's %u",
                       in[0].frames, out->capacity);
        return WEFT_EINVAL;
    }
    if (d->mean)
        minus_mean(d, in[0].data, out->data, in[0].frames);
    else
        highpass(d, in[0].data, out->data, in[0].frames);
    out->frames = in[0].frames;
    return WEFT_OK;
}

static const weft_stage_api api = {
    WEFT_API_HEADER,
    .roles = WEFT_ROLE_FILTER,
    .name = "detrend",
    .version = "0.1.0",
    .summary = "remove DC offset and drift: one-pole high-pass or running mean",
    .params = params,
    .min_inputs = 1,
    .max_inputs = 1,
    .init = init,
    .process = process,
    .destroy = destroy,
};

WEFT_STAGE(api)
