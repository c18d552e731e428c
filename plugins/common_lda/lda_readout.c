/* lda_readout: init, query, fit and destroy shared by the "features + LDA" readouts. */
#include "lda_readout.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define MAX_FEATURES 65536u

void lda_readout_destroy(void *self)
{
    lda_readout *r = self;
    if (!r)
        return;
    lda_model_free(&r->model);
    free(r->features);
    free(r->scratch);
    free(r);
}

static void describe(const lda_readout *r, const weft_layout *in, char *buf, size_t size)
{
    size_t len = 0;
    for (uint32_t i = 0; i < r->n_in && len < size; i++)
        len += (size_t)snprintf(buf + len, size - len, "%s%u %s of '%s'", i ? " + " : "",
                                in[i].channels * r->per_channel, r->kind->what,
                                in[i].name ? in[i].name : "?");
}

int lda_readout_init(const lda_features *kind, const weft_host *host, const weft_params *p,
                     const weft_layout *in, uint32_t n_in, weft_layout *out, void **self)
{
    lda_readout *r = calloc(1, sizeof *r);
    if (!r) {
        host->error(host, "out of memory");
        return WEFT_ENOMEM;
    }
    r->host = host;
    r->kind = kind;
    r->n_in = n_in;
    r->per_channel = kind->per_channel(p);
    if (kind->configure)
        kind->configure(r, p);
    uint64_t total = 0;
    uint32_t widest = 1;
    for (uint32_t i = 0; i < n_in; i++) {
        r->channels[i] = in[i].channels;
        total += (uint64_t)in[i].channels * r->per_channel;
        if (in[i].channels > widest)
            widest = in[i].channels;
    }
    if (total > MAX_FEATURES) {
        host->error(host, "%llu features in all; at most %u", (unsigned long long)total,
                    MAX_FEATURES);
        lda_readout_destroy(r);
        return WEFT_EINVAL;
    }
    r->n_features = (uint32_t)total;
    char what[512];
    describe(r, in, what, sizeof what);
    int rc = lda_model_init(&r->model, host, p, r->n_features, what);
    r->features = calloc(r->n_features + 1, sizeof *r->features);
    r->scratch = calloc(2 * (size_t)widest, sizeof *r->scratch);
    if (rc == WEFT_OK && (!r->features || !r->scratch)) {
        host->error(host, "out of memory for %u features", r->n_features);
        rc = WEFT_ENOMEM;
    }
    if (rc != WEFT_OK) {
        lda_readout_destroy(r);
        return rc;
    }
    out->kind = WEFT_STREAM_RESULTS;
    out->channels = r->model.n_classes;
    out->labels = r->model.labels;
    *self = r;
    return WEFT_OK;
}

static int features_of(const lda_readout *r, const weft_window *win, double *scratch,
                       double *out)
{
    uint32_t at = 0;
    for (uint32_t i = 0; i < r->n_in; i++) {
        int rc = r->kind->compute(r, &win[i], scratch, out + at);
        if (rc != WEFT_OK)
            return rc;
        at += r->channels[i] * r->per_channel;
    }
    return WEFT_OK;
}

int lda_readout_query(void *self, const weft_window *win, uint32_t n_in, weft_result *out)
{
    (void)n_in;
    lda_readout *r = self;
    if (!r->model.fitted) {
        r->host->error(r->host, "not fitted: no weights and bias; run `weft fit` first");
        return WEFT_ESTATE;
    }
    int rc = features_of(r, win, r->scratch, r->features);
    if (rc != WEFT_OK)
        return rc;
    lda_model_probabilities(&r->model, r->features, out->values);
    return WEFT_OK;
}

int lda_readout_fit(void *self, const weft_epochs *ep, const weft_param_sink *learned)
{
    lda_readout *r = self;
    double *x = calloc((size_t)ep->n_epochs * r->n_features + 1, sizeof *x);
    if (!x) {
        r->host->error(r->host, "out of memory for %u epochs of %u features", ep->n_epochs,
                       r->n_features);
        return WEFT_ENOMEM;
    }
    int rc = WEFT_OK;
    for (uint32_t e = 0; rc == WEFT_OK && e < ep->n_epochs; e++)
        rc = features_of(r, ep->windows + (size_t)e * ep->n_in, r->scratch,
                         x + (size_t)e * r->n_features);
    if (rc == WEFT_OK)
        rc = lda_model_fit(&r->model, r->host, ep, x, learned);
    free(x);
    return rc;
}
