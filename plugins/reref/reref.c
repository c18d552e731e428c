/* reref: re-references every channel -- to the common average of the channels (CAR), or to
 * one chosen channel (by label or 1-based number), whose own output is then zero. Sample by
 * sample, no state. */
#include <stdlib.h>
#include <string.h>
#include <weft/stage.h>


static const weft_param_spec params[] = {
    { "reference", WEFT_PARAM_STRING, 0, "average", WEFT_NO_RANGE, "", NULL,
      "average (common average reference), or the label or 1-based number of a channel" },
    { .name = NULL },
};

typedef struct reref {
    const weft_host *host;
    uint32_t channels;
    int32_t ref;                /* channel index, or -1 for the common average */
} reref;

static void destroy(void *self)
{
    reref *r = self;
    if (!r)
        return;
    free(r);
}

/* The channel called `name` (label first, then a 1-based number), or -1. */
static int32_t find_channel(const weft_layout *in, const char *name)
{
    for (uint32_t c = 0; in->labels && c < in->channels; c++)
        if (in->labels[c] && !strcmp(in->labels[c], name))
            return (int32_t)c;
    char *end = NULL;
    long k = strtol(name, &end, 10);
    if (*name && end && !*end && k >= 1 && k <= (long)in->channels)
        return (int32_t)(k - 1);
    return -1;
}

static int init(const weft_host *host, const weft_params *p, const weft_layout *in,
                uint32_t n_in, weft_layout *out, void **self)
{
    (void)n_in;
    const char *name = weft_param_text(p, "reference");
    int32_t ref = -1;
    if (strcmp(name, "average") != 0 && (ref = find_channel(&in[0], name)) < 0) {
        host->param_error(host, "reference", "reference '%s' is not a channel of the input; "
                          "give average, a channel label or a number from 1 to %u", name,
                          in[0].channels);
        return WEFT_EINVAL;
    }
    if (ref < 0 && in[0].channels < 2) {
        host->param_error(host, "reference", "a common average of one channel leaves nothing; "
                          "it needs 2 or more channels");
        return WEFT_EINVAL;
    }
    reref *r = calloc(1, sizeof *r);
    if (!r) {
        host->error(host, "out of memory");
        destroy(r);
        return WEFT_ENOMEM;
    }
    r->host = host;
    r->channels = in[0].channels;
    r->ref = ref;
    out->kind = WEFT_STREAM_SAMPLES;
    out->labels = in[0].labels; /* the same channels; the host keeps the strings */
    out->channels = in[0].channels;
    out->rate = in[0].rate;
    *self = r;
    return WEFT_OK;
}

static int process(void *self, const weft_block *in, uint32_t n_in, weft_block *out)
{
    (void)n_in;
    reref *r = self;
    const size_t C = r->channels;
    if (in[0].frames > out->capacity) {
        r->host->error(r->host, "block of %u frames does not fit the output's %u",
                       in[0].frames, out->capacity);
        return WEFT_EINVAL;
    }
    for (size_t n = 0; n < in[0].frames; n++) {
        const float *x = in[0].data + n * C;
        float *y = out->data + n * C;
        double ref;
        if (r->ref >= 0) {
            ref = x[r->ref];
        } else {
            double sum = 0;
            for (size_t c = 0; c < C; c++)
                sum += x[c];
            ref = sum / (double)C;
        }
        for (size_t c = 0; c < C; c++)
            y[c] = (float)(x[c] - ref);
    }
    out->frames = in[0].frames;
    return WEFT_OK;
}

static const weft_stage_api api = {
    WEFT_API_HEADER,
    .roles = WEFT_ROLE_FILTER,
    .name = "reref",
    .version = "0.1.0",
    .summary = "re-reference to the common average or to one channel",
    .params = params,
    .min_inputs = 1,
    .max_inputs = 1,
    .init = init,
    .process = process,
    .destroy = destroy,
};

WEFT_STAGE(api)
