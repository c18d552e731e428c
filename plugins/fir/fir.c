/* fir: a linear-phase FIR filter -- designed at init by the window method (Hamming, Blackman
 * or Kaiser) or given as explicit taps -- run by direct convolution for short kernels and by
 * FFT-partitioned convolution for long ones. Reports its group delay at init. */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <weft/stage.h>

#include "fir_design.h"
#include "fir_filter.h"

#define MAX_TAPS (1 << 18)
#define DEFAULT_LOW 8.0
#define DEFAULT_HIGH 30.0
/* Kernels up to this many taps run directly, longer ones partitioned: where the two met in
 * `bench_filters fir` (64 channels, 20-frame blocks; docs/filters.md). */
#define DIRECT_MAX_TAPS 256
/* Partition size of a partitioned kernel, the fastest in the same measurement: 128 taps up to
 * 3072-tap kernels, 256 beyond. */
#define HOP_LONG_FROM 3072

static const weft_param_spec params[] = {
    { "kind", WEFT_PARAM_CHOICE, 0, "lowpass", WEFT_NO_RANGE, "",
      "lowpass|highpass|bandpass|bandstop", "which band passes (as for butterworth)" },
    { "low", WEFT_PARAM_NUMBER, 0, "8", 0, 1e6, "Hz", NULL,
      "lower band edge (-6 dB); the cutoff of a highpass" },
    { "high", WEFT_PARAM_NUMBER, 0, "30", 0, 1e6, "Hz", NULL,
      "upper band edge (-6 dB); the cutoff of a lowpass" },
    { "window", WEFT_PARAM_CHOICE, 0, "hamming", WEFT_NO_RANGE, "", "hamming|blackman|kaiser",
      "window that truncates the ideal response" },
    { "taps", WEFT_PARAM_INTEGER, 0, "0", 0, MAX_TAPS, "", NULL,
      "kernel length; 0: derived from transition (and ripple for kaiser)" },
    { "transition", WEFT_PARAM_NUMBER, 0, "5", 0, 1e6, "Hz", NULL,
      "width of the transition band, to derive taps" },
    { "ripple", WEFT_PARAM_NUMBER, 0, "60", 8, 300, "dB", NULL,
      "kaiser: stop-band attenuation (and pass-band ripple) to design for" },
    { "beta", WEFT_PARAM_NUMBER, 0, "0", 0, 50, "", NULL,
      "kaiser: window shape; default from ripple" },
    { "coefficients", WEFT_PARAM_NUMBERS, 0, "[]", -1e12, 1e12, "", NULL,
      "explicit taps (newest sample first) instead of a design" },
    { "engine", WEFT_PARAM_CHOICE, 0, "auto", WEFT_NO_RANGE, "", "auto|direct|fft",
      "direct convolution, FFT-partitioned, or chosen by kernel length" },
    { .name = NULL },
};

typedef struct fir_stage {
    const weft_host *host;
    fir_filter filter;
} fir_stage;

static void destroy(void *self)
{
    fir_stage *s = self;
    if (!s)
        return;
    fir_filter_free(&s->filter);
    free(s);
}

static int edge_ok(const weft_host *host, const weft_params *p, const char *name,
                   const char *kind, int used, double rate)
{
    double f = weft_param_number(p, name);
    double default_hz = !strcmp(name, "low") ? DEFAULT_LOW : DEFAULT_HIGH;
    if (!used) {
        /* Ignored; said when written with a value of its own (not a full graph's default). */
        if (weft_param_given(p, name) && f != default_hz)
            host->log(host, WEFT_LOG_WARN, "a %s has no %s edge; %s (%g Hz) is ignored", kind,
                      name, name, f);
        return 1;
    }
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

static fir_kind kind_of(const char *t)
{
    return !strcmp(t, "highpass")   ? FIR_HIGHPASS
           : !strcmp(t, "bandpass") ? FIR_BANDPASS
           : !strcmp(t, "bandstop") ? FIR_BANDSTOP
                                    : FIR_LOWPASS;
}

/* Taps from the transition width: Kaiser's formula, or for Hamming and Blackman the usual
 * 3.3 / 5.5 times rate / width (Ifeachor and Jervis, Digital Signal Processing, 2002,
 * Table 7.2; from memory). Odd where the kind needs it. */
static int derive_taps(const weft_host *host, const weft_params *p, fir_kind kind,
                       fir_window w, double rate)
{
    double width = weft_param_number(p, "transition");
    if (!(width > 0)) {
        host->param_error(host, "transition", "give taps, or transition (the width of the "
                          "transition band in Hz, above 0) to derive them, e.g. transition: 2");
        return -1;
    }
    double n = w == FIR_KAISER ? fir_kaiser_taps(weft_param_number(p, "ripple"), width, rate)
                               : ceil((w == FIR_HAMMING ? 3.3 : 5.5) * rate / width);
    if (n > MAX_TAPS) {
        host->param_error(host, "transition", "transition %g Hz at %g Hz needs %.0f taps; at "
                          "most %d are allowed: widen the transition", width, rate, n,
                          MAX_TAPS);
        return -1;
    }
    int taps = (int)n;
    if ((kind == FIR_HIGHPASS || kind == FIR_BANDSTOP) && taps % 2 == 0)
        taps++;
    return taps;
}

/* The kernel, designed or given, in a malloc'd array; its length in *taps. */
static double *make_kernel(const weft_host *host, const weft_params *p, double rate,
                           uint32_t *taps)
{
    const weft_param *given = weft_param_get(p, "coefficients");
    if (given->cols > 0) {
        if ((weft_param_given(p, "low") && weft_param_number(p, "low") != DEFAULT_LOW) ||
            (weft_param_given(p, "high") && weft_param_number(p, "high") != DEFAULT_HIGH))
            host->log(host, WEFT_LOG_WARN, "coefficients are given, so the design parameters "
                      "(low, high, window, taps ...) are ignored");
        double *h = malloc(given->cols * sizeof *h);
        if (h)
            memcpy(h, given->values, given->cols * sizeof *h);
        *taps = given->cols;
        return h;
    }
    const char *kind_text = weft_param_text(p, "kind"), *wt = weft_param_text(p, "window");
    fir_kind kind = kind_of(kind_text);
    fir_window w = !strcmp(wt, "kaiser") ? FIR_KAISER
                   : !strcmp(wt, "blackman") ? FIR_BLACKMAN : FIR_HAMMING;
    int uses_low = kind != FIR_LOWPASS, uses_high = kind != FIR_HIGHPASS;
    if (!edge_ok(host, p, "low", kind_text, uses_low, rate) ||
        !edge_ok(host, p, "high", kind_text, uses_high, rate))
        return NULL;
    double low = weft_param_number(p, "low"), high = weft_param_number(p, "high");
    if (uses_low && uses_high && !(low < high)) {
        host->param_error(host, "low", "low (%g Hz) must be below high (%g Hz)", low, high);
        return NULL;
    }
    int n = (int)weft_param_number(p, "taps");
    if (n == 0 && (n = derive_taps(host, p, kind, w, rate)) < 0)
        return NULL;
    if ((kind == FIR_HIGHPASS || kind == FIR_BANDSTOP) && n % 2 == 0) {
        host->param_error(host, "taps", "taps (%d) must be odd for a %s: an even-length "
                          "linear-phase filter has a zero at half the rate", n, kind_text);
        return NULL;
    }
    double beta = weft_param_given(p, "beta") ? weft_param_number(p, "beta")
                                              : fir_kaiser_beta(weft_param_number(p, "ripple"));
    double *h = malloc((size_t)n * sizeof *h);
    if (h && fir_windowed_sinc(kind, uses_low ? low : high, high, rate, w, beta, n, h)) {
        host->error(host, "cannot design a %d-tap %s", n, kind_text);
        free(h);
        return NULL;
    }
    *taps = (uint32_t)n;
    return h;
}

static void log_delay(const weft_host *host, const double *h, uint32_t taps, double rate,
                      const char *engine)
{
    /* Symmetric (or antisymmetric) taps, to rounding of the values as written: linear phase. */
    double peak = 0;
    for (uint32_t k = 0; k < taps; k++)
        peak = fmax(peak, fabs(h[k]));
    int symmetric = 1, anti = 1;
    for (uint32_t k = 0; k < taps / 2; k++) {
        symmetric &= fabs(h[k] - h[taps - 1 - k]) <= 1e-9 * peak;
        anti &= fabs(h[k] + h[taps - 1 - k]) <= 1e-9 * peak;
    }
    if (symmetric || anti)
        host->log(host, WEFT_LOG_INFO, "%u taps, %s convolution; linear phase, group delay "
                  "%g samples (%.4g s at %g Hz)", taps, engine, (taps - 1) / 2.0,
                  (taps - 1) / 2.0 / rate, rate);
    else
        host->log(host, WEFT_LOG_INFO, "%u taps, %s convolution; the taps are not symmetric, "
                  "so the phase is not linear and the group delay varies with frequency",
                  taps, engine);
}

static int init(const weft_host *host, const weft_params *p, const weft_layout *in,
                uint32_t n_in, weft_layout *out, void **self)
{
    (void)n_in;
    double rate = in[0].rate;
    uint32_t taps = 0;
    double *h = make_kernel(host, p, rate, &taps);
    if (!h)
        return WEFT_EINVAL;
    const char *engine = weft_param_text(p, "engine");
    int use_fft = !strcmp(engine, "fft") || (!strcmp(engine, "auto") && taps > DIRECT_MAX_TAPS);
    uint32_t hop = 0;
    if (use_fft) {
        /* The direct head must be shorter than the kernel; short kernels get a short one. */
        for (hop = taps > HOP_LONG_FROM ? 256 : 128; hop >= taps && hop > 1; hop /= 2)
            ;
        if (hop >= taps)
            hop = 0;
    }
    fir_stage *s = calloc(1, sizeof *s);
    if (!s || fir_filter_init(&s->filter, h, taps, in[0].channels, hop)) {
        host->error(host, "out of memory for %u taps on %u channels", taps, in[0].channels);
        free(h);
        destroy(s);
        return WEFT_ENOMEM;
    }
    log_delay(host, h, taps, rate, hop ? "FFT-partitioned" : "direct");
    free(h);
    s->host = host;
    out->kind = WEFT_STREAM_SAMPLES;
    out->labels = in[0].labels; /* the same channels; the host keeps the strings */
    out->channels = in[0].channels;
    out->rate = rate;
    *self = s;
    return WEFT_OK;
}

static int process(void *self, const weft_block *in, uint32_t n_in, weft_block *out)
{
    (void)n_in;
    fir_stage *s = self;
    if (in[0].frames > out->capacity) {
        s->host->error(s->host, "block of %u frames does not fit the output's %u",
                       in[0].frames, out->capacity);
        return WEFT_EINVAL;
    }
    fir_filter_run(&s->filter, in[0].data, out->data, in[0].frames);
    out->frames = in[0].frames;
    return WEFT_OK;
}

static const weft_stage_api api = {
    WEFT_API_HEADER,
    .roles = WEFT_ROLE_FILTER,
    .name = "fir",
    .version = "0.1.0",
    .summary = "linear-phase FIR (Hamming, Blackman, Kaiser window design, or given taps)",
    .params = params,
    .min_inputs = 1,
    .max_inputs = 1,
    .init = init,
    .process = process,
    .destroy = destroy,
};

WEFT_STAGE(api)
