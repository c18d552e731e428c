/* csv: a sink writing one readout's results as comma-separated rows with a header, for
 * spreadsheets and quick plots. */
#include <stdio.h>
#include <stdlib.h>
#include <weft/stage.h>

#include "async_writer.h"
#include "result_text.h"

#define LINE_MAX_BYTES 16384

static const weft_param_spec params[] = {
    { "path", WEFT_PARAM_STRING, 0, "-", WEFT_NO_RANGE, "", NULL,
      "file to write; - is standard output" },
    { "buffer", WEFT_PARAM_INTEGER, 0, "1048576", 4096, 1073741824, "bytes", NULL,
      "queue between the run loop and the writer thread; rows are dropped if it fills" },
    WEFT_PARAMS_END,
};

typedef struct csv {
    const weft_host *host;
    async_writer *out;
    weft_layout in;
    char line[LINE_MAX_BYTES];
} csv;

static void destroy(void *self)
{
    csv *c = self;
    if (!c)
        return;
    uint64_t dropped = async_writer_dropped(c->out);
    if (async_writer_close(c->out))
        c->host->log(c->host, WEFT_LOG_WARN, "output was not completely written");
    if (dropped)
        c->host->log(c->host, WEFT_LOG_WARN, "%llu rows dropped: the output could not keep "
                     "up (raise `buffer`)", (unsigned long long)dropped);
    free(c);
}

static int write_header(csv *c)
{
    text_line t = { c->line, sizeof c->line, 0, 0 };
    text_put(&t, "stage,seq,time,index,trigger");
    for (uint32_t v = 0; v < c->in.channels; v++) {
        text_put(&t, ",");
        if (c->in.labels)
            text_csv_field(&t, c->in.labels[v]);
        else
            text_printf(&t, "v%u", (unsigned)v);
    }
    text_put(&t, "\n");
    if (t.overflow)
        return -1;
    return async_writer_put(c->out, t.buf, t.len);
}

static int init(const weft_host *host, const weft_params *p, const weft_layout *in,
                uint32_t n_in, weft_layout *out, void **self)
{
    (void)out;
    (void)n_in;
    if (in[0].kind != WEFT_STREAM_RESULTS) {
        host->error(host, "csv writes readout results; input '%s' is a sample stream",
                    in[0].name ? in[0].name : "?");
        return WEFT_EINVAL;
    }
    csv *c = calloc(1, sizeof *c);
    if (!c) {
        host->error(host, "out of memory");
        return WEFT_ENOMEM;
    }
    c->host = host;
    c->in = in[0];
    char why[512];
    if (host->flags & WEFT_HOST_CHECK_ONLY) { /* weft check: do not create the file */
        *self = c;
        return WEFT_OK;
    }
    c->out = async_writer_open(weft_param_text(p, "path"),
                               (size_t)weft_param_number(p, "buffer"), why, sizeof why);
    if (!c->out) {
        host->param_error(host, "path", "%s", why);
        free(c);
        return WEFT_EIO;
    }
    if (write_header(c)) {
        host->error(host, "the header of %u columns does not fit a line", c->in.channels);
        destroy(c);
        return WEFT_EINVAL;
    }
    *self = c;
    return WEFT_OK;
}

static int deliver(void *self, uint32_t input, const weft_result *r)
{
    (void)input;
    csv *c = self;
    text_line t = { c->line, sizeof c->line, 0, 0 };
    text_csv_field(&t, c->in.name ? c->in.name : "");
    text_printf(&t, ",%llu,", (unsigned long long)r->seq);
    text_seconds(&t, r->time);
    text_printf(&t, ",%llu,", (unsigned long long)r->index);
    if (r->trigger)
        text_csv_field(&t, r->trigger);
    for (uint32_t v = 0; v < r->count; v++) {
        text_put(&t, ",");
        text_double(&t, r->values[v]);
    }
    text_put(&t, "\n");
    if (t.overflow) {
        c->host->error(c->host, "a row of %u values does not fit a line", r->count);
        return WEFT_EINVAL;
    }
    if (async_writer_put(c->out, t.buf, t.len) && async_writer_error(c->out)) {
        c->host->error(c->host, "%s", async_writer_error(c->out));
        return WEFT_EIO;
    }
    return WEFT_OK;
}

static const weft_stage_api api = {
    WEFT_API_HEADER,
    .roles = WEFT_ROLE_SINK,
    .name = "csv",
    .version = "0.1.0",
    .summary = "writes one readout's results as CSV rows with a header, never blocking",
    .params = params,
    .min_inputs = 1,
    .max_inputs = 1,
    .init = init,
    .deliver = deliver,
    .destroy = destroy,
};

WEFT_STAGE(api)
