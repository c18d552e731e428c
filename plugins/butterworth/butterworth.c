/* butterworth: low-pass, high-pass, band-pass or band-stop Butterworth filter of order 1-10,
 * designed at init for the input's rate and run causally as cascaded second-order sections. */
#include <stdlib.h>
#include <string.h>
#include <weft/stage.h>

#include "butter_design.h"
#include "sos.h"

#define DEFAULT_LOW 8.0
#define DEFAULT_HIGH 30.0

static const weft_param_spec params[] = {
    { "kind", WEFT_PARAM_CHOICE, 0, "bandpass", WEFT_NO_RANGE, "",
      "lowpass|highpass|bandpass|bandstop",
      "which band passes: below high, above low, between low and high, or all but it" },
    { "order", WEFT_PARAM_INTEGER, 0, "4", 1, BUTTER_MAX_ORDER, "", NULL,
      "filter order; band-pass and band-stop have twice as many poles" },
    { "low", WEFT_PARAM_NUMBER, 0, "8", 0, 1e6, "Hz", NULL,
      "lower band edge (-3 dB); the cutoff of a highpass" },
    { "high", WEFT_PARAM_NUMBER, 0, "30", 0, 1e6, "Hz", NULL,
      "upper band edge (-3 dB); the cutoff of a lowpass" },
    { "precision", WEFT_PARAM_CHOICE, 0, "double", WEFT_NO_RANGE, "", "double|single",
      "arithmetic between and inside the sections: double (accurate for low cutoffs at high "
      "rates) or single (faster, see docs/filters.md for its error)" },
    { .name = NULL },
};

typedef struct butterworth {
    const weft_host *host;
    sos_cascade cascade;
} butterworth;

static void destroy(void *self)
{
    butterworth *b = self;
    if (!b)
        return;
    sos_cascade_free(&b->cascade);
    free(b);
}

static butter_kind kind_of(const char *text)
{
    if (!strcmp(text, "lowpass"))
        return BUTTER_LOWPASS;
    if (!strcmp(text, "highpass"))
        return BUTTER_HIGHPASS;
    if (!strcmp(text, "bandstop"))
        return BUTTER_BANDSTOP;
    return BUTTER_BANDPASS;
}

/* A kind's unused edge is ignored; when it was written with a value of its own, say so (a
 * graph written out in full, e.g. by a tool, carries the defaults and gets no notice). */
static void note_unused_edge(const weft_host *host, const weft_params *p, const char *name,
                             const char *kind, int used, double default_hz)
{
    if (!used && weft_param_given(p, name) && weft_param_number(p, name) != default_hz)
        host->log(host, WEFT_LOG_WARN, "a %s has no %s edge; %s (%g Hz) is ignored", kind,
                  name, name, weft_param_number(p, name));
}

/* A used edge (given, or its default) must be above 0 and below half the rate. */
static int check_edge(const weft_host *host, const weft_params *p, const char *name, int used,
                      double rate)
{
    double f = weft_param_number(p, name);
    if (!used)
        return WEFT_OK;
    if (!(f > 0)) {
        host->param_error(host, name, "%s (%g Hz) must be above 0 Hz", name, f);
        return WEFT_EINVAL;
    }
    if (!(f < rate / 2)) {
        host->param_error(host, name, "%s (%g Hz) must be below half the input rate (%g Hz)",
                          name, f, rate / 2);
        return WEFT_EINVAL;
    }
    return WEFT_OK;
}

static int init(const weft_host *host, const weft_params *p, const weft_layout *in,
                uint32_t n_in, weft_layout *out, void **self)
{
    (void)n_in;
    const char *kind_text = weft_param_text(p, "kind");
    butter_kind kind = kind_of(kind_text);
    int order = (int)weft_param_number(p, "order");
    double rate = in[0].rate, low = weft_param_number(p, "low"),
           high = weft_param_number(p, "high");
    int uses_low = kind != BUTTER_LOWPASS, uses_high = kind != BUTTER_HIGHPASS;
    note_unused_edge(host, p, "low", kind_text, uses_low, DEFAULT_LOW);
    note_unused_edge(host, p, "high", kind_text, uses_high, DEFAULT_HIGH);
    if (check_edge(host, p, "low", uses_low, rate) || check_edge(host, p, "high", uses_high, rate))
        return WEFT_EINVAL;
    if (uses_low && uses_high && !(low < high)) {
        host->param_error(host, "low", "low (%g Hz) must be below high (%g Hz)", low, high);
        return WEFT_EINVAL;
    }
    sos_coef sections[BUTTER_MAX_SECTIONS];
    int n = butter_design(kind, order, rate, uses_low ? low : high, high, sections);
    if (n < 0) {
        host->error(host, "cannot design a %s of order %d for %g Hz", kind_text, order, rate);
        return WEFT_EINVAL;
    }
    sos_precision precision =
        strcmp(weft_param_text(p, "precision"), "single") ? SOS_DOUBLE : SOS_SINGLE;
    butterworth *b = calloc(1, sizeof *b);
    int rc = b ? sos_cascade_init_precision(&b->cascade, sections, (uint32_t)n, in[0].channels,
                                            precision)
               : -1;
    if (rc == SOS_ESINGLE) {
        host->param_error(host, "precision", "precision: single cannot hold this %s of order %d "
                          "at %g Hz (its poles or gain are beyond float32); use precision: "
                          "double", kind_text, order, rate);
        destroy(b);
        return WEFT_EINVAL;
    }
    if (rc) {
        host->error(host, "out of memory for %u channels", in[0].channels);
        destroy(b);
        return WEFT_ENOMEM;
    }
    host->log(host, WEFT_LOG_DEBUG, "%s order %d at %g Hz: %d second-order sections in %s "
              "precision", kind_text, order, rate, n,
              precision == SOS_SINGLE ? "single" : "double");
    b->host = host;
    out->kind = WEFT_STREAM_SAMPLES;
    out->labels = in[0].labels; /* the same channels; the host keeps the strings */
    out->channels = in[0].channels;
    out->rate = rate;
    *self = b;
    return WEFT_OK;
}

static int process(void *self, const weft_block *in, uint32_t n_in, weft_block *out)
{
    (void)n_in;
    butterworth *b = self;
    if (in[0].frames > out->capacity) {
        b->host->error(b->host, "block of %u frames does not fit the output's %u", in[0].frames,
                       out->capacity);
        return WEFT_EINVAL;
    }
    sos_cascade_run(&b->cascade, in[0].data, out->data, in[0].frames);
    out->frames = in[0].frames;
    return WEFT_OK;
}

static const weft_stage_api api = {
    WEFT_API_HEADER,
    .roles = WEFT_ROLE_FILTER,
    .name = "butterworth",
    .version = "0.1.0",
    .summary = "Butterworth low-/high-/band-pass or band-stop, order 1-10, causal",
    .params = params,
    .min_inputs = 1,
    .max_inputs = 1,
    .init = init,
    .process = process,
    .destroy = destroy,
};

WEFT_STAGE(api)
