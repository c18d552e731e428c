/* envelope: the amplitude envelope of surface EMG -- Butterworth band-pass (the EMG band),
 * full-wave rectification or squaring, then smoothing by a low-pass (a "linear envelope") or
 * a moving RMS over a window -- at the input's rate (common practice; e.g. Merletti and
 * Parker, Electromyography, 2004, ch. 6, from memory). */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <weft/stage.h>

#include "butter_design.h"
#include "sos.h"

#define SCRATCH_FRAMES 1024u
#define SMOOTH_ORDER 2

static const weft_param_spec params[] = {
    { "low", WEFT_PARAM_NUMBER, 0, "20", 0, 1e6, "Hz", NULL,
      "lower edge of the EMG band (removes motion artefact and drift)" },
    { "high", WEFT_PARAM_NUMBER, 0, "0", 0, 1e6, "Hz", NULL,
      "upper edge of the EMG band; 0: no upper edge (a high-pass)" },
    { "order", WEFT_PARAM_INTEGER, 0, "4", 1, BUTTER_MAX_ORDER, "", NULL,
      "order of the band filter" },
    { "detector", WEFT_PARAM_CHOICE, 0, "rectify", WEFT_NO_RANGE, "", "rectify|square",
      "before a low-pass: absolute value, or square (the envelope is then its root)" },
    { "smooth", WEFT_PARAM_CHOICE, 0, "lowpass", WEFT_NO_RANGE, "", "lowpass|rms",
      "second-order Butterworth low-pass at cutoff, or RMS over the last window" },
    { "cutoff", WEFT_PARAM_NUMBER, 0, "6", 0, 1e6, "Hz", NULL, "low-pass smoothing cutoff" },
    { "window", WEFT_PARAM_NUMBER, 0, "0.1", 0, 3600, "s", NULL, "moving RMS window" },
    { .name = NULL },
};

typedef struct envelope {
    const weft_host *host;
    uint32_t channels;
    int square, rms;
    sos_cascade band, smooth;
    float *scratch;             /* SCRATCH_FRAMES x channels */
    /* moving RMS: the last `window` squares of each channel and their sums */
    uint32_t window, at;        /* at: ring slot of the oldest square */
    uint64_t pos;               /* frames seen, for the periodic exact re-summation */
    double *squares, *sums;
} envelope;

static void destroy(void *self)
{
    envelope *e = self;
    if (!e)
        return;
    sos_cascade_free(&e->band);
    sos_cascade_free(&e->smooth);
    free(e->scratch);
    free(e->squares);
    free(e->sums);
    free(e);
}

static int below_half_rate(const weft_host *host, const char *name, double f, double rate)
{
    if (!(f > 0)) {
        host->param_error(host, name, "%s (%g Hz) must be above 0 Hz", name, f);
        return 0;
    }
    if (!(f < rate / 2)) {
        host->param_error(host, name, "%s (%g Hz) must be below half the input rate (%g Hz)",
                          name, f, rate / 2);
        return 0;
    }
    return 1;
}

static int setup(envelope *e, const weft_host *host, const weft_params *p, double rate)
{
    double low = weft_param_number(p, "low"), high = weft_param_number(p, "high");
    int order = (int)weft_param_number(p, "order");
    if (!below_half_rate(host, "low", low, rate) ||
        (high != 0 && !below_half_rate(host, "high", high, rate)))
        return WEFT_EINVAL;
    if (high != 0 && !(low < high)) {
        host->param_error(host, "low", "low (%g Hz) must be below high (%g Hz)", low, high);
        return WEFT_EINVAL;
    }
    sos_coef s[BUTTER_MAX_SECTIONS];
    int n = butter_design(high != 0 ? BUTTER_BANDPASS : BUTTER_HIGHPASS, order, rate, low,
                          high, s);
    if (n < 0 || sos_cascade_init(&e->band, s, (uint32_t)n, e->channels))
        return WEFT_ENOMEM;
    if (e->rms) {
        double frames = round(weft_param_number(p, "window") * rate);
        if (frames < 1 || frames > (double)(1u << 24)) {
            host->param_error(host, "window", "window (%g s) must span 1 to 2^24 samples at "
                              "%g Hz", weft_param_number(p, "window"), rate);
            return WEFT_EINVAL;
        }
        e->window = (uint32_t)frames;
        e->squares = calloc((size_t)e->window * e->channels, sizeof *e->squares);
        e->sums = calloc(e->channels, sizeof *e->sums);
        return e->squares && e->sums ? WEFT_OK : WEFT_ENOMEM;
    }
    double cutoff = weft_param_number(p, "cutoff");
    if (!below_half_rate(host, "cutoff", cutoff, rate))
        return WEFT_EINVAL;
    n = butter_design(BUTTER_LOWPASS, SMOOTH_ORDER, rate, cutoff, 0, s);
    if (n < 0 || sos_cascade_init(&e->smooth, s, (uint32_t)n, e->channels))
        return WEFT_ENOMEM;
    return WEFT_OK;
}

static int init(const weft_host *host, const weft_params *p, const weft_layout *in,
                uint32_t n_in, weft_layout *out, void **self)
{
    (void)n_in;
    envelope *e = calloc(1, sizeof *e);
    if (!e)
        return WEFT_ENOMEM;
    e->host = host;
    e->channels = in[0].channels;
    e->rms = !strcmp(weft_param_text(p, "smooth"), "rms");
    int rectify = !strcmp(weft_param_text(p, "detector"), "rectify");
    e->square = e->rms || !rectify;
    if (e->rms && weft_param_given(p, "detector") && rectify) {
        host->param_error(host, "detector", "a moving RMS squares by definition; remove "
                          "detector: rectify, or use smooth: lowpass");
        destroy(e);
        return WEFT_EINVAL;
    }
    int rc = setup(e, host, p, in[0].rate);
    e->scratch = malloc((size_t)SCRATCH_FRAMES * e->channels * sizeof *e->scratch);
    if (rc == WEFT_OK && !e->scratch)
        rc = WEFT_ENOMEM;
    if (rc) {
        if (rc == WEFT_ENOMEM)
            host->error(host, "out of memory for %u channels", e->channels);
        destroy(e);
        return rc;
    }
    out->kind = WEFT_STREAM_SAMPLES;
    out->labels = in[0].labels; /* the same channels; the host keeps the strings */
    out->channels = e->channels;
    out->rate = in[0].rate;
    *self = e;
    return WEFT_OK;
}

/* Moving RMS by a running sum of squares in double. Every `window` frames from the stream's
 * start the sums are recomputed from the kept squares, so rounding cannot drift. */
static void moving_rms(envelope *e, const float *x, float *y, size_t frames)
{
    const size_t C = e->channels;
    for (size_t n = 0; n < frames; n++) {
        double *slot = e->squares + (size_t)e->at * C;
        for (size_t c = 0; c < C; c++) {
            double v = (double)x[n * C + c] * x[n * C + c];
            e->sums[c] += v - slot[c];
            slot[c] = v;
        }
        e->at = e->at + 1 == e->window ? 0 : e->at + 1;
        if (++e->pos % e->window == 0) {
            memset(e->sums, 0, C * sizeof *e->sums);
            for (size_t k = 0; k < e->window; k++)
                for (size_t c = 0; c < C; c++)
                    e->sums[c] += e->squares[(((size_t)e->at + k) % e->window) * C + c];
        }
        for (size_t c = 0; c < C; c++) {
            double mean = e->sums[c] / e->window;
            y[n * C + c] = (float)sqrt(mean > 0 ? mean : 0);
        }
    }
}

static int process(void *self, const weft_block *in, uint32_t n_in, weft_block *out)
{
    (void)n_in;
    envelope *e = self;
    const size_t C = e->channels;
    if (in[0].frames > out->capacity) {
        e->host->error(e->host, "block of %u frames does not fit the output's %u",
                       in[0].frames, out->capacity);
        return WEFT_EINVAL;
    }
    for (uint32_t done = 0; done < in[0].frames;) {
        uint32_t n = in[0].frames - done;
        if (n > SCRATCH_FRAMES)
            n = SCRATCH_FRAMES;
        const float *x = in[0].data + done * C;
        float *y = out->data + done * C;
        sos_cascade_run(&e->band, x, e->scratch, n);
        if (e->rms) {
            moving_rms(e, e->scratch, y, n);
        } else {
            for (size_t i = 0; i < n * C; i++)
                e->scratch[i] = e->square ? e->scratch[i] * e->scratch[i]
                                          : fabsf(e->scratch[i]);
            sos_cascade_run(&e->smooth, e->scratch, y, n);
            if (e->square)
                for (size_t i = 0; i < n * C; i++)
                    y[i] = y[i] > 0 ? sqrtf(y[i]) : 0;
        }
        done += n;
    }
    out->frames = in[0].frames;
    return WEFT_OK;
}

static const weft_stage_api api = {
    WEFT_API_HEADER,
    .roles = WEFT_ROLE_FILTER,
    .name = "envelope",
    .version = "0.1.0",
    .summary = "EMG envelope: band-pass, rectify or square, low-pass or moving RMS",
    .params = params,
    .min_inputs = 1,
    .max_inputs = 1,
    .init = init,
    .process = process,
    .destroy = destroy,
};

WEFT_STAGE(api)
