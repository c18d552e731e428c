/* resample: changes the rate by up / down (integer decimation when up = 1) with a polyphase
 * anti-aliasing FIR: conceptually, insert up - 1 zeros between samples, low-pass at the lower
 * of the two Nyquist frequencies, keep every down-th sample -- computing only the kept outputs
 * from the nonzero inputs (Crochiere and Rabiner, Multirate Digital Signal Processing, 1983,
 * ch. 3). Causal: output m is the filter's output at up-sampled index m * down, which
 * scipy.signal.upfirdn computes too. Markers move to the first output sample at or after
 * them. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <weft/stage.h>

#include "fir_design.h"
#include "fir_filter.h"

#define MAX_FACTOR 1000
#define MIN_RUN 1024
#define PENDING_MAX 256
#define LABEL_MAX 64

static const weft_param_spec params[] = {
    { "rate", WEFT_PARAM_NUMBER, 0, "0", 0, 1e7, "Hz", NULL,
      "output rate; up and down follow from the ratio of whole rates; 0: use up and down" },
    { "up", WEFT_PARAM_INTEGER, 0, "1", 1, MAX_FACTOR, "", NULL, "interpolation factor" },
    { "down", WEFT_PARAM_INTEGER, 0, "2", 1, MAX_FACTOR, "", NULL, "decimation factor" },
    { "zero_crossings", WEFT_PARAM_INTEGER, 0, "10", 1, 100, "", NULL,
      "half the anti-aliasing filter's length, in zero crossings of its sinc" },
    { "beta", WEFT_PARAM_NUMBER, 0, "5", 0, 50, "", NULL, "Kaiser window shape of the filter" },
    { .name = NULL },
};

typedef struct pending_marker {
    char label[LABEL_MAX];
    uint64_t index;             /* on the output stream */
    double duration;
} pending_marker;

typedef struct resampler {
    const weft_host *host;
    uint32_t channels, up, down, per_phase;
    uint32_t half;              /* the filter's delay, in up-sampled samples */
    float *phases;              /* up x per_phase: tap q of phase p at [p * per_phase + q] */
    float *buf;                 /* input history, cap frames */
    size_t cap, end, keep;
    int64_t buf_first;          /* stream index of buf's frame 0 (negative: leading silence) */
    uint64_t n_in, m_next;      /* inputs received; next output index */
    fir_direct_fn direct;
    pending_marker pending[PENDING_MAX];  /* mapped, waiting for their output block */
    uint32_t n_pending;
    pending_marker sent[PENDING_MAX];     /* this block's, whose labels out->markers use */
} resampler;

static void destroy(void *self)
{
    resampler *r = self;
    if (!r)
        return;
    free(r->phases);
    free(r->buf);
    free(r);
}

static uint64_t gcd(uint64_t a, uint64_t b)
{
    while (b) {
        uint64_t t = a % b;
        a = b;
        b = t;
    }
    return a;
}

/* up and down from `rate`, or as given; reduced to lowest terms. */
static int factors(const weft_host *host, const weft_params *p, double in_rate, uint32_t *up,
                   uint32_t *down)
{
    double out_rate = weft_param_number(p, "rate");
    if (out_rate > 0) { /* 0, the default: up and down say it */
        if (weft_param_given(p, "up") || weft_param_given(p, "down")) {
            host->param_error(host, "rate", "give rate, or up and down, not both");
            return -1;
        }
        if (out_rate != floor(out_rate) || in_rate != floor(in_rate)) {
            host->param_error(host, "rate", "rate %g Hz from %g Hz is not a ratio of whole "
                              "rates; give up and down instead", out_rate, in_rate);
            return -1;
        }
        uint64_t g = gcd((uint64_t)out_rate, (uint64_t)in_rate);
        uint64_t u = (uint64_t)out_rate / g, d = (uint64_t)in_rate / g;
        if (u > MAX_FACTOR || d > MAX_FACTOR) {
            host->param_error(host, "rate", "%g Hz from %g Hz needs up %llu / down %llu; "
                              "factors above %d are not supported", out_rate, in_rate,
                              (unsigned long long)u, (unsigned long long)d, MAX_FACTOR);
            return -1;
        }
        *up = (uint32_t)u;
        *down = (uint32_t)d;
    } else {
        uint64_t u = (uint64_t)weft_param_number(p, "up");
        uint64_t d = (uint64_t)weft_param_number(p, "down");
        uint64_t g = gcd(u, d);
        *up = (uint32_t)(u / g);
        *down = (uint32_t)(d / g);
    }
    if (*up == 1 && *down == 1) {
        host->param_error(host, out_rate > 0 ? "rate" : "down",
                          "up and down are both 1: nothing to resample (give rate, or down: 2 "
                          "for half the rate)");
        return -1;
    }
    return 0;
}

/* The anti-aliasing low-pass at up-sampled rate up * fs: cutoff at 1 / max(up, down) of the
 * Nyquist frequency, 2 * zero_crossings * max(up, down) + 1 taps, Kaiser window, gain `up`
 * (the zeros inserted take that much energy) -- the filter of scipy.signal.resample_poly. */
static int make_phases(resampler *r, const weft_params *p, double in_rate)
{
    uint32_t m = r->up > r->down ? r->up : r->down;
    uint32_t half = r->half = (uint32_t)weft_param_number(p, "zero_crossings") * m;
    int taps = 2 * (int)half + 1;
    double fs_up = in_rate * r->up;
    double *h = malloc((size_t)taps * sizeof *h);
    if (!h)
        return WEFT_ENOMEM;
    if (fir_windowed_sinc(FIR_LOWPASS, fs_up / 2 / m, 0, fs_up, FIR_KAISER,
                          weft_param_number(p, "beta"), taps, h)) {
        free(h);
        return WEFT_EINVAL;
    }
    r->per_phase = ((uint32_t)taps + r->up - 1) / r->up;
    r->phases = calloc((size_t)r->up * r->per_phase, sizeof *r->phases);
    if (!r->phases) {
        free(h);
        return WEFT_ENOMEM;
    }
    for (uint32_t ph = 0; ph < r->up; ph++)
        for (uint32_t q = 0; q < r->per_phase; q++) {
            size_t k = ph + (size_t)q * r->up;
            r->phases[ph * r->per_phase + q] = k < (size_t)taps ? (float)(h[k] * r->up) : 0.0f;
        }
    free(h);
    return WEFT_OK;
}

static int init(const weft_host *host, const weft_params *p, const weft_layout *in,
                uint32_t n_in, weft_layout *out, void **self)
{
    (void)n_in;
    uint32_t up, down;
    if (factors(host, p, in[0].rate, &up, &down))
        return WEFT_EINVAL;
    resampler *r = calloc(1, sizeof *r);
    if (!r)
        return WEFT_ENOMEM;
    r->host = host;
    r->channels = in[0].channels;
    r->up = up;
    r->down = down;
    int rc = make_phases(r, p, in[0].rate);
    if (rc == WEFT_OK) {
        r->keep = r->per_phase - 1;
        r->cap = r->keep + (r->keep > MIN_RUN ? r->keep : MIN_RUN);
        r->buf = calloc(r->cap * r->channels, sizeof *r->buf);
        r->end = r->keep;
        r->buf_first = -(int64_t)r->keep;
        if (!r->buf)
            rc = WEFT_ENOMEM;
    }
    /* At most ceil(F up / down) outputs for F inputs, plus one for where the block falls. */
    double bound = ceil((double)in[0].max_frames * up / down) + 1;
    if (rc == WEFT_OK && bound > (double)(1u << 20)) {
        host->error(host, "blocks of %u frames resampled by %u/%u exceed 2^20 frames",
                    in[0].max_frames, up, down);
        rc = WEFT_EINVAL;
    }
    if (rc) {
        if (rc == WEFT_ENOMEM)
            host->error(host, "out of memory for the resampler");
        destroy(r);
        return rc;
    }
    r->direct = fir_direct_kernel();
    host->log(host, WEFT_LOG_INFO, "%g Hz -> %g Hz (up %u, down %u), %u-tap filter, delay %g "
              "input samples (%.4g s)", in[0].rate, in[0].rate * up / down, up, down,
              2 * r->half + 1, (double)r->half / up, (double)r->half / up / in[0].rate);
    out->kind = WEFT_STREAM_SAMPLES;
    out->labels = in[0].labels; /* the same channels; the host keeps the strings */
    out->channels = r->channels;
    out->rate = in[0].rate * up / down;
    out->max_frames = (uint32_t)bound;
    *self = r;
    return WEFT_OK;
}

/* Output index of input sample i: the first output at or after it, ceil(i up / down). */
static uint64_t map_index(const resampler *r, uint64_t i)
{
    uint64_t q = i / r->down, rem = i % r->down;
    return q * r->up + (rem * r->up + r->down - 1) / r->down;
}

/* Markers whose output sample is in this block go out; later ones wait, labels copied. */
static int map_markers(resampler *r, weft_block *out)
{
    for (uint32_t k = 0; k < out->n_markers; k++) {
        if (r->n_pending == PENDING_MAX) {
            r->host->error(r->host, "more than %d markers wait for their output sample",
                           PENDING_MAX);
            return WEFT_EINVAL;
        }
        pending_marker *pm = &r->pending[r->n_pending++];
        snprintf(pm->label, sizeof pm->label, "%s",
                 out->markers[k].label ? out->markers[k].label : "");
        pm->index = map_index(r, out->markers[k].index);
        pm->duration = out->markers[k].duration;
    }
    uint64_t end = out->first_index + out->frames;
    uint32_t sent = 0, left = 0;
    for (uint32_t k = 0; k < r->n_pending; k++) {
        pending_marker *pm = &r->pending[k];
        if (pm->index < end && sent < out->marker_capacity) {
            r->sent[sent] = *pm;
            out->markers[sent] = (weft_marker){ r->sent[sent].label, pm->index, pm->duration };
            sent++;
        } else {
            r->pending[left++] = *pm;
        }
    }
    r->n_pending = left;
    out->n_markers = sent;
    return WEFT_OK;
}

/* The outputs whose newest input has arrived: output m needs input floor(m down / up). */
static uint32_t emit(resampler *r, float *out, uint32_t room)
{
    const size_t C = r->channels;
    uint32_t n = 0;
    for (; n < room; n++) {
        uint64_t j = r->m_next * r->down;
        uint64_t i0 = j / r->up;
        if (i0 >= r->n_in)
            break;
        const float *row = r->buf + (size_t)((int64_t)i0 - r->buf_first) * C;
        const float *phase = r->phases + (size_t)(j % r->up) * r->per_phase;
        r->direct(phase, r->per_phase, row, C, NULL, out + (size_t)n * C, 1);
        r->m_next++;
    }
    return n;
}

static int process(void *self, const weft_block *in, uint32_t n_in, weft_block *out)
{
    (void)n_in;
    resampler *r = self;
    const size_t C = r->channels;
    uint32_t made = 0;
    for (uint32_t done = 0; done < in[0].frames;) {
        if (r->end == r->cap) {
            memmove(r->buf, r->buf + (r->end - r->keep) * C, r->keep * C * sizeof *r->buf);
            r->buf_first += (int64_t)(r->end - r->keep);
            r->end = r->keep;
        }
        size_t n = in[0].frames - done;
        if (n > r->cap - r->end)
            n = r->cap - r->end;
        memcpy(r->buf + r->end * C, in[0].data + (size_t)done * C, n * C * sizeof *r->buf);
        r->end += n;
        r->n_in += n;
        done += (uint32_t)n;
        made += emit(r, out->data + (size_t)made * C, out->capacity - made);
    }
    if (r->m_next * r->down / r->up < r->n_in) {
        r->host->error(r->host, "output room of %u frames is too small for %u input frames",
                       out->capacity, in[0].frames);
        return WEFT_EINVAL;
    }
    out->frames = made;
    return map_markers(r, out);
}

static const weft_stage_api api = {
    WEFT_API_HEADER,
    .roles = WEFT_ROLE_FILTER,
    .name = "resample",
    .version = "0.1.0",
    .summary = "rational resampling by up / down with a polyphase anti-aliasing FIR",
    .params = params,
    .min_inputs = 1,
    .max_inputs = 1,
    .init = init,
    .process = process,
    .destroy = destroy,
};

WEFT_STAGE(api)
