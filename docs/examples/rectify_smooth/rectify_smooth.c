/* rectify_smooth: an example weft stage -- full- or half-wave rectification followed by a
 * one-pole low-pass, the classic linear envelope of surface EMG. Built out of tree against
 * the installed SDK; docs/writing-a-stage.md walks through it line by line. */
#include <math.h>
#include <stdlib.h>
#include <weft/stage.h>

static const weft_param_spec params[] = {
    { "smooth", WEFT_PARAM_NUMBER, 0, "0.1", 0.001, 10, "s", NULL,
      "time constant of the low-pass that follows the rectifier" },
    { "mode", WEFT_PARAM_CHOICE, 0, "full", WEFT_NO_RANGE, "", "full|half",
      "full: |x|; half: max(x, 0)" },
    { "gain", WEFT_PARAM_NUMBER, 0, "1", -1e6, 1e6, "", NULL, "factor applied to the output" },
    { .name = NULL },
};

typedef struct rectify_smooth {
    uint32_t channels;
    int half;
    double alpha;               /* smoothing coefficient per sample */
    double gain;
    double *level;              /* the low-pass state, one per channel */
} rectify_smooth;

static void destroy(void *self)
{
    rectify_smooth *s = self;
    if (!s)
        return;
    free(s->level);
    free(s);
}

static int init(const weft_host *host, const weft_params *p, const weft_layout *in,
                uint32_t n_in, weft_layout *out, void **self)
{
    (void)n_in; /* a filter always has exactly one input */
    double smooth = weft_param_number(p, "smooth");
    /* One time constant must span at least one sample, or the "low-pass" passes everything. */
    if (smooth * in[0].rate < 1) {
        host->param_error(host, "smooth", "smooth %g s is shorter than one sample at %g Hz; "
                          "use %g s or more", smooth, in[0].rate, 1 / in[0].rate);
        return WEFT_EINVAL;
    }
    rectify_smooth *s = calloc(1, sizeof *s);
    if (!s || !(s->level = calloc(in[0].channels, sizeof *s->level))) {
        free(s);
        host->error(host, "out of memory for %u channels", in[0].channels);
        return WEFT_ENOMEM;
    }
    s->channels = in[0].channels;
    s->half = weft_param_text(p, "mode")[0] == 'h';
    s->gain = weft_param_number(p, "gain");
    /* Single-pole recursive low-pass, a = 1 - exp(-1/d) with d the time constant in samples
     * (Smith 1997, The Scientist and Engineer's Guide to DSP, eq. 19-5; from memory). */
    s->alpha = 1 - exp(-1 / (smooth * in[0].rate));

    *out = in[0];               /* same channels, rate, labels and block bound */
    out->kind = WEFT_STREAM_SAMPLES;
    *self = s;
    return WEFT_OK;
}

static int process(void *self, const weft_block *in, uint32_t n_in, weft_block *out)
{
    (void)n_in;
    rectify_smooth *s = self;
    const uint32_t C = s->channels;
    for (uint32_t n = 0; n < in[0].frames; n++)
        for (uint32_t c = 0; c < C; c++) {
            double x = in[0].data[(size_t)n * C + c];
            double r = s->half ? (x > 0 ? x : 0) : fabs(x);
            s->level[c] += s->alpha * (r - s->level[c]);
            out->data[(size_t)n * C + c] = (float)(s->gain * s->level[c]);
        }
    out->frames = in[0].frames; /* markers were copied by the host and stay where they are */
    return WEFT_OK;
}

static const weft_stage_api api = {
    WEFT_API_HEADER,
    .roles = WEFT_ROLE_FILTER,
    .name = "rectify_smooth",
    .version = "1.0.0",
    .summary = "rectify and low-pass: the linear envelope of EMG",
    .params = params,
    .min_inputs = 1,
    .max_inputs = 1,
    .init = init,
    .process = process,
    .destroy = destroy,
};

WEFT_STAGE(api)
