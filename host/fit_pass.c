/* fit_pass: one replay for `weft fit` through the same run loop as `weft run`, with hooks that
 * record what the stage being fitted would have seen. */
#include "fit_pass.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "fnv1a.h"
#include "loop.h"

/* A recording is kept whole in memory: calibration runs are minutes long (10 min of 64
 * channels at 1 kHz is 150 MB). Past this, say so rather than swap. */
#define MAX_RECORDED_BYTES (4ull << 30)

uint8_t *fit_ancestors(const pipeline *pl)
{
    unsigned n = pl->n;
    uint8_t *a = calloc((size_t)n * n + 1, 1);
    if (!a)
        return NULL;
    for (unsigned k = 0; k < n; k++) {
        const node *x = &pl->nodes[pl->order[k]];
        uint8_t *row = a + (size_t)x->index * n;
        for (unsigned i = 0; i < x->n_in; i++) {
            unsigned up = x->in_node[i];
            row[up] = 1;
            for (unsigned j = 0; j < n; j++)
                row[j] |= a[(size_t)up * n + j];
        }
    }
    return a;
}

int fit_pass_init(fit_pass *fp, pipeline *pl, const uint8_t *ancestors, double duration)
{
    memset(fp, 0, sizeof *fp);
    fp->pl = pl;
    fp->ancestors = ancestors;
    fp->duration = duration;
    fp->rec = calloc(pl->n, sizeof *fp->rec);
    fp->recorded = calloc(pl->n, sizeof *fp->recorded);
    fp->hash = calloc(pl->n, sizeof *fp->hash);
    fp->marker_hash = calloc(pl->n, sizeof *fp->marker_hash);
    return fp->rec && fp->recorded && fp->hash && fp->marker_hash ? 0 : -1;
}

void fit_pass_free(fit_pass *fp)
{
    for (unsigned i = 0; fp->rec && i < fp->pl->n; i++)
        free(fp->rec[i].data);
    free(fp->rec);
    free(fp->recorded);
    free(fp->hash);
    free(fp->marker_hash);
    free(fp->markers);
    memset(fp, 0, sizeof *fp);
}

static void record_block(fit_pass *fp, const node *n, const weft_block *b)
{
    stream_rec *r = &fp->rec[n->index];
    uint64_t need = r->frames + b->frames;
    if (need > r->capacity) {
        uint64_t cap = r->capacity ? r->capacity * 2 : 4096;
        while (cap < need)
            cap *= 2;
        if (cap * r->channels * sizeof(float) > MAX_RECORDED_BYTES) {
            fp->failed_alloc = 1;
            return;
        }
        float *grown = realloc(r->data, cap * r->channels * sizeof(float));
        if (!grown) {
            fp->failed_alloc = 1;
            return;
        }
        r->data = grown;
        r->capacity = cap;
    }
    memcpy(r->data + r->frames * r->channels, b->data,
           (size_t)b->frames * r->channels * sizeof(float));
    r->frames = need;
}

static void hash_block(fit_pass *fp, const node *n, const weft_block *b)
{
    fp->hash[n->index] = fnv1a_update(fp->hash[n->index], b->data,
                                      (size_t)b->frames * b->channels * sizeof(float));
    uint64_t h = fp->marker_hash[n->index];
    for (uint32_t m = 0; m < b->n_markers; m++) {
        h = fnv1a_update(h, b->markers[m].label, strlen(b->markers[m].label) + 1);
        h = fnv1a_update(h, &b->markers[m].index, sizeof b->markers[m].index);
    }
    fp->marker_hash[n->index] = h;
}

static void on_block(void *ctx, const node *n, const weft_block *b)
{
    fit_pass *fp = ctx;
    if (fp->recorded[n->index])
        record_block(fp, n, b);
    if (fp->survey && n->role == WEFT_ROLE_SOURCE)
        hash_block(fp, n, b);
}

static void on_marker(void *ctx, const node *source, const weft_marker *m, double time)
{
    fit_pass *fp = ctx;
    if (!fp->survey)
        return;
    if (fp->n_markers == fp->markers_cap) {
        unsigned cap = fp->markers_cap ? fp->markers_cap * 2 : 256;
        marker_rec *grown = realloc(fp->markers, cap * sizeof *grown);
        if (!grown) {
            fp->failed_alloc = 1;
            return;
        }
        fp->markers = grown;
        fp->markers_cap = cap;
    }
    marker_rec *r = &fp->markers[fp->n_markers++];
    snprintf(r->label, sizeof r->label, "%s", m->label ? m->label : "");
    r->time = time;
    r->source = source->index;
}

/* Sources always run (one of them carries the markers); everything else only if the target
 * depends on it. The target itself and what follows it are left out: they are not fitted. */
static void choose_stages(fit_pass *fp, unsigned target)
{
    pipeline *pl = fp->pl;
    for (unsigned i = 0; i < pl->n; i++) {
        node *n = &pl->nodes[i];
        int needed = n->role == WEFT_ROLE_SOURCE ||
                     (target != UINT32_MAX && fp->ancestors[(size_t)target * pl->n + i]);
        n->skip = !needed;
        fp->recorded[i] = 0;
        free(fp->rec[i].data);
        fp->rec[i] = (stream_rec){ .channels = n->out.channels, .rate = n->out.rate };
    }
    if (target == UINT32_MAX)
        return;
    const node *t = &pl->nodes[target];
    for (unsigned k = 0; k < t->n_in; k++)
        fp->recorded[t->in_node[k]] = 1;
}

int fit_pass_run(fit_pass *fp, unsigned target, diag *d)
{
    pipeline *pl = fp->pl;
    fp->survey = target == UINT32_MAX;
    fp->failed_alloc = 0;
    if (fp->survey) {
        fp->n_markers = 0;
        for (unsigned i = 0; i < pl->n; i++)
            fp->hash[i] = fp->marker_hash[i] = FNV1A_OFFSET;
    }
    choose_stages(fp, target);
    if (pipeline_rewind(pl, d))
        return -1;
    loop_options lo = { .realtime = 0, .duration = fp->duration };
    loop_hooks hooks = { .ctx = fp, .on_block = on_block, .on_marker = on_marker };
    loop_stats st;
    int rc = loop_run(pl, &lo, &hooks, &st, d);
    loop_stats_free(&st);
    for (unsigned i = 0; i < pl->n; i++)
        pl->nodes[i].skip = !pl->nodes[i].initialised; /* idle sinks stay out */
    if (rc)
        return -1;
    if (fp->failed_alloc)
        return diag_set(d, "the data is too long to keep in memory for fitting (more than "
                           "%llu MB at one stage's input); fit on a shorter recording or "
                           "use --duration", (unsigned long long)(MAX_RECORDED_BYTES >> 20));
    return 0;
}
