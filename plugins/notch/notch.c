/* notch: removes line interference -- a second-order notch at `freq` and, optionally, at its
 * harmonics (50, 100, 150 Hz ...), each with the same quality factor (common practice: the
 * notch widens with frequency as the harmonics do). */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <weft/stage.h>

#include "notch_design.h"
#include "sos.h"

#define MAX_HARMONICS 20

static const weft_param_spec params[] = {
    { "freq", WEFT_PARAM_NUMBER, 0, "50", 0, 1e6, "Hz", NULL,
      "notch frequency (the line frequency: 50 or 60 Hz)" },
    { "q", WEFT_PARAM_NUMBER, 0, "30", 0.1, 1000, "", NULL,
      "quality factor: the notch frequency over the -3 dB width of the notch" },
    { "harmonics", WEFT_PARAM_INTEGER, 0, "1", 1, MAX_HARMONICS, "", NULL,
      "notches at freq, 2 freq ... up to this many multiples" },
    { "precision", WEFT_PARAM_CHOICE, 0, "double", WEFT_NO_RANGE, "", "double|single",
      "arithmetic between and inside the sections: double or single (faster, less accurate)" },
    { .name = NULL },
};

typedef struct notch {
    const weft_host *host;
    sos_cascade cascade;
} notch;

static void destroy(void *self)
{
    notch *s = self;
    if (!s)
        return;
    sos_cascade_free(&s->cascade);
    free(s);
}

static int init(const weft_host *host, const weft_params *p, const weft_layout *in,
                uint32_t n_in, weft_layout *out, void **self)
{
    (void)n_in;
    double freq = weft_param_number(p, "freq"), q = weft_param_number(p, "q"),
           rate = in[0].rate;
    int harmonics = (int)weft_param_number(p, "harmonics");
    if (!(freq > 0)) {
        host->param_error(host, "freq", "freq (%g Hz) must be above 0 Hz", freq);
        return WEFT_EINVAL;
    }
    if (!(freq < rate / 2)) {
        host->param_error(host, "freq", "freq (%g Hz) must be below half the input rate "
                          "(%g Hz)", freq, rate / 2);
        return WEFT_EINVAL;
    }
    if (!(harmonics * freq < rate / 2)) {
        int fit = (int)ceil(rate / 2 / freq) - 1;
        host->param_error(host, "harmonics", "harmonic %d (%g Hz) must be below half the "
                          "input rate (%g Hz); use harmonics: %d", harmonics, harmonics * freq,
                          rate / 2, fit);
        return WEFT_EINVAL;
    }
    sos_coef sections[MAX_HARMONICS];
    for (int h = 0; h < harmonics; h++)
        sections[h] = notch_design((h + 1) * freq, q, rate);
    sos_precision precision =
        strcmp(weft_param_text(p, "precision"), "single") ? SOS_DOUBLE : SOS_SINGLE;
    notch *s = calloc(1, sizeof *s);
    int rc = s ? sos_cascade_init_precision(&s->cascade, sections, (uint32_t)harmonics,
                                            in[0].channels, precision)
               : -1;
    if (rc == SOS_ESINGLE) {
        host->param_error(host, "precision", "precision: single cannot hold a notch at %g Hz "
                          "with q %g at %g Hz (its poles are beyond float32); use precision: "
                          "double", freq, q, rate);
        destroy(s);
        return WEFT_EINVAL;
    }
    if (rc) {
        host->error(host, "out of memory for %u channels", in[0].channels);
        destroy(s);
        return WEFT_ENOMEM;
    }
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
    notch *s = self;
    if (in[0].frames > out->capacity) {
        s->host->error(s->host, "block of %u frames does not fit the output's %u",
                       in[0].frames, out->capacity);
        return WEFT_EINVAL;
    }
    sos_cascade_run(&s->cascade, in[0].data, out->data, in[0].frames);
    out->frames = in[0].frames;
    return WEFT_OK;
}

static const weft_stage_api api = {
    WEFT_API_HEADER,
    .roles = WEFT_ROLE_FILTER,
    .name = "notch",
    .version = "0.1.0",
    .summary = "second-order notch at a line frequency and, optionally, its harmonics",
    .params = params,
    .min_inputs = 1,
    .max_inputs = 1,
    .init = init,
    .process = process,
    .destroy = destroy,
};

WEFT_STAGE(api)
