/* jsonl: a sink writing each readout result as one JSON object per line, to standard output
 * or a file, for study programs that read results line by line. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <weft/stage.h>

#include "async_writer.h"
#include "result_text.h"

#define LINE_MAX_BYTES 16384

static const weft_param_spec params[] = {
    { "path", WEFT_PARAM_STRING, 0, "-", WEFT_NO_RANGE, "", NULL,
      "file to write; - is standard output" },
    { "buffer", WEFT_PARAM_INTEGER, 0, "1048576", 4096, 1073741824, "bytes", NULL,
      "queue between the run loop and the writer thread; lines are dropped if it fills" },
    WEFT_PARAMS_END,
};

typedef struct jsonl {
    const weft_host *host;
    async_writer *out;
    uint32_t n_in;
    weft_layout *layouts;
    char line[LINE_MAX_BYTES];
} jsonl;

static void destroy(void *self)
{
    jsonl *j = self;
    if (!j)
        return;
    uint64_t dropped = async_writer_dropped(j->out);
    if (async_writer_close(j->out))
        j->host->log(j->host, WEFT_LOG_WARN, "output was not completely written");
    if (dropped)
        j->host->log(j->host, WEFT_LOG_WARN, "%llu results dropped: the output could not "
                     "keep up (raise `buffer`)", (unsigned long long)dropped);
    free(j->layouts);
    free(j);
}

static int init(const weft_host *host, const weft_params *p, const weft_layout *in,
                uint32_t n_in, weft_layout *out, void **self)
{
    (void)out;
    for (uint32_t i = 0; i < n_in; i++)
        if (in[i].kind != WEFT_STREAM_RESULTS) {
            host->error(host, "jsonl writes readout results; input %u ('%s') is a sample "
                        "stream (record samples with a recording sink instead)", i + 1,
                        in[i].name ? in[i].name : "?");
            return WEFT_EINVAL;
        }
    jsonl *j = calloc(1, sizeof *j);
    if (!j || !(j->layouts = calloc(n_in, sizeof *j->layouts))) {
        free(j);
        host->error(host, "out of memory");
        return WEFT_ENOMEM;
    }
    memcpy(j->layouts, in, n_in * sizeof *in);
    j->host = host;
    j->n_in = n_in;
    char why[512];
    if (host->flags & WEFT_HOST_CHECK_ONLY) { /* weft check: do not create the file */
        *self = j;
        return WEFT_OK;
    }
    j->out = async_writer_open(weft_param_text(p, "path"),
                               (size_t)weft_param_number(p, "buffer"), why, sizeof why);
    if (!j->out) {
        host->param_error(host, "path", "%s", why);
        free(j->layouts);
        free(j);
        return WEFT_EIO;
    }
    *self = j;
    return WEFT_OK;
}

/* {"stage":"intent","seq":3,"time":1.3,"index":325,"trigger":null,"top":"grip",
 *  "values":{"rest":0.2,"grip":0.8}} */
static int deliver(void *self, uint32_t input, const weft_result *r)
{
    jsonl *j = self;
    const weft_layout *l = &j->layouts[input];
    text_line t = { j->line, sizeof j->line, 0, 0 };
    uint32_t top = 0;
    for (uint32_t v = 1; v < r->count; v++)
        if (r->values[v] > r->values[top])
            top = v;
    text_put(&t, "{\"stage\":");
    text_json_string(&t, l->name ? l->name : "");
    text_printf(&t, ",\"seq\":%llu,\"time\":", (unsigned long long)r->seq);
    text_seconds(&t, r->time);
    text_printf(&t, ",\"index\":%llu,\"trigger\":", (unsigned long long)r->index);
    if (r->trigger)
        text_json_string(&t, r->trigger);
    else
        text_put(&t, "null");
    text_put(&t, ",\"top\":");
    text_json_string(&t, l->labels ? l->labels[top] : "");
    text_put(&t, ",\"values\":{");
    for (uint32_t v = 0; v < r->count; v++) {
        char fallback[16];
        const char *name = l->labels ? l->labels[v] : fallback;
        if (!l->labels)
            snprintf(fallback, sizeof fallback, "v%u", (unsigned)v);
        text_put(&t, v ? "," : "");
        text_json_string(&t, name);
        text_put(&t, ":");
        text_double(&t, r->values[v]);
    }
    text_put(&t, "}}\n");
    if (t.overflow) {
        j->host->error(j->host, "a result of %u values does not fit a %d-byte line", r->count,
                       LINE_MAX_BYTES);
        return WEFT_EINVAL;
    }
    if (async_writer_put(j->out, t.buf, t.len) && async_writer_error(j->out)) {
        j->host->error(j->host, "%s", async_writer_error(j->out));
        return WEFT_EIO;
    }
    return WEFT_OK;
}

static const weft_stage_api api = {
    WEFT_API_HEADER,
    .roles = WEFT_ROLE_SINK,
    .name = "jsonl",
    .version = "0.1.0",
    .summary = "writes readout results as JSON lines (stdout or a file), never blocking",
    .params = params,
    .min_inputs = 1,
    .max_inputs = 64,
    .init = init,
    .deliver = deliver,
    .destroy = destroy,
};

WEFT_STAGE(api)
