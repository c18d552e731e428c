/* verify_stream: test streams for the conformance checker, and a stage driven through them. */
#include "verify_stream.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define ROUND_SECONDS 0.1       /* readouts and sinks: one round of input, then queries */
#define GUARD_FLOATS 64
#define GUARD_BITS 0x7fc0deadu  /* a NaN no computation produces */
#define MARKER_EVERY 211        /* input frames between markers given to a filter */
#define FIT_EPOCHS 40

/* xorshift64* (Vigna 2016, "An experimental exploration of Marsaglia's xorshift generators,
 * scrambled", ACM TOMS 42(4)): small, fast, and the same on every machine. */
static double uniform(uint64_t *state)
{
    uint64_t x = *state;
    x ^= x >> 12;
    x ^= x << 25;
    x ^= x >> 27;
    *state = x;
    return (double)((x * 0x2545F4914F6CDD1Dull) >> 11) * 0x1.0p-53;
}

/* Box-Muller transform (Box and Muller 1958, Ann. Math. Statist. 29(2), eq. 1). */
static double gauss(uint64_t *state)
{
    double u = uniform(state), v = uniform(state);
    return sqrt(-2 * log(u > 0 ? u : 0x1.0p-53)) * cos(2 * WEFT_PI * v);
}

/* Noise plus a 10 Hz rhythm, with a spike every 401 frames and a flat (all-zero) stretch of
 * 20 frames at 1.5 s: what a real amplifier gives, including its ugly moments. */
static float *make_signal(uint64_t frames, uint32_t channels, double rate, uint64_t seed)
{
    if (channels && frames > SIZE_MAX / sizeof(float) / channels)
        return NULL;
    float *x = malloc((size_t)(frames ? frames : 1) * channels * sizeof *x);
    if (!x)
        return NULL;
    uint64_t state = 0x9E3779B97F4A7C15ull ^ (seed * 0xBF58476D1CE4E5B9ull);
    uint64_t flat = (uint64_t)(1.5 * rate);
    for (uint64_t n = 0; n < frames; n++)
        for (uint32_t c = 0; c < channels; c++) {
            double v = 20 * gauss(&state) + 30 * sin(2 * WEFT_PI * 10 * (double)n / rate + c);
            if (n % 401 == 200)
                v += (c % 2 ? -5000 : 5000);
            if (n >= flat && n < flat + 20)
                v = 0;
            x[n * channels + c] = (float)v;
        }
    return x;
}

static int grow(void **buf, size_t *cap, size_t need, size_t item)
{
    if (need <= *cap)
        return 0;
    size_t cap2 = *cap ? *cap : 256;
    while (cap2 < need)
        cap2 *= 2;
    void *p = realloc(*buf, cap2 * item);
    if (!p)
        return -1;
    *buf = p;
    *cap = cap2;
    return 0;
}

/* Two classes (or as many as the readout has values) that differ in the variance of one
 * channel per class: any working linear readout or spatial filter fits them. */
static int fit_synthetic(vrun *r, diag *d)
{
    const verify_setup *s = r->s;
    const weft_layout *out = stage_driver_out(&r->sd);
    uint32_t n_classes = 2;
    if (s->role == WEFT_ROLE_READOUT && out->channels >= 2)
        n_classes = out->channels;
    uint32_t n_in = s->n_in;
    weft_window *win = calloc((size_t)FIT_EPOCHS * n_in, sizeof *win);
    uint32_t *classes = calloc(FIT_EPOCHS, sizeof *classes);
    char (*names)[VERIFY_LABEL_MAX] = calloc(n_classes, sizeof *names);
    const char **name_ptrs = calloc(n_classes, sizeof *name_ptrs);
    float **data = calloc((size_t)FIT_EPOCHS * n_in, sizeof *data);
    int rc = -1;
    if (!win || !classes || !names || !name_ptrs || !data) {
        diag_set(d, "out of memory for the fit epochs");
        goto done;
    }
    for (uint32_t k = 0; k < n_classes; k++) {
        if (s->role == WEFT_ROLE_READOUT && out->labels && out->labels[k])
            snprintf(names[k], sizeof names[k], "%s", out->labels[k]);
        else
            snprintf(names[k], sizeof names[k], "class%u", (unsigned)k);
        name_ptrs[k] = names[k];
    }
    uint64_t state = 42;
    for (uint32_t e = 0; e < FIT_EPOCHS; e++) {
        classes[e] = e % n_classes;
        for (uint32_t i = 0; i < n_in; i++) {
            const weft_layout *l = &s->in[i];
            uint32_t frames = (uint32_t)fmax(1, round(s->window * l->rate));
            float *x = data[e * n_in + i] = malloc((size_t)frames * l->channels * sizeof *x);
            if (!x) {
                diag_set(d, "out of memory for the fit epochs");
                goto done;
            }
            for (uint32_t n = 0; n < frames; n++)
                for (uint32_t c = 0; c < l->channels; c++) {
                    double scale = c % n_classes == classes[e] ? 3 : 1;
                    x[(size_t)n * l->channels + c] =
                        (float)(scale * (10 * gauss(&state) +
                                         10 * sin(2 * WEFT_PI * 10 * n / l->rate + c)));
                }
            win[e * n_in + i] = (weft_window){ x, frames, l->channels, l->rate,
                                               (uint64_t)(e + 1) * 4 * frames };
        }
    }
    weft_epochs ep = { .n_epochs = FIT_EPOCHS, .n_in = n_in, .n_classes = n_classes,
                       .classes = classes, .class_names = name_ptrs, .windows = win };
    rc = stage_driver_fit(&r->sd, &ep, d);
done:
    for (uint32_t e = 0; data && e < (uint32_t)FIT_EPOCHS * n_in; e++)
        free(data[e]);
    free(data);
    free(win);
    free(classes);
    free(names);
    free(name_ptrs);
    return rc;
}

int vrun_open(vrun *r, const verify_setup *s, uint32_t block, diag *d)
{
    memset(r, 0, sizeof *r);
    r->s = s;
    r->block = block ? block : 1;
    r->is_open = 1; /* stage_driver_close also releases a half-opened driver */
    if (stage_driver_open(&r->sd, s->file, s->params, s->in, s->n_in, d))
        return -1;
    if (s->fit && (s->api->roles & WEFT_ROLE_FITTABLE) && fit_synthetic(r, d))
        return -1;
    const weft_layout *out = stage_driver_out(&r->sd);
    r->out_channels = out->channels;
    for (uint32_t k = 0; k < s->n_in; k++) {
        const weft_layout *l = &s->in[k];
        r->in_frames[k] = (uint64_t)ceil(s->seconds * l->rate);
        if (!(r->input[k] = make_signal(r->in_frames[k], l->channels, l->rate, k + 1)))
            return diag_set(d, "out of memory for %llu test frames",
                            (unsigned long long)r->in_frames[k]);
    }
    if (s->role == WEFT_ROLE_SOURCE)
        r->in_frames[0] = (uint64_t)ceil(s->seconds * out->rate);
    if (s->role == WEFT_ROLE_SOURCE || s->role == WEFT_ROLE_FILTER) {
        r->call_cap = s->role == WEFT_ROLE_SOURCE ? r->block : out->max_frames;
        size_t floats = r->call_cap * out->channels + GUARD_FLOATS;
        if (!(r->call_out = malloc(floats * sizeof *r->call_out)))
            return diag_set(d, "out of memory for an output block");
    }
    return 0;
}

static void arm_guard(vrun *r)
{
    uint32_t bits = GUARD_BITS;
    float *g = r->call_out + r->call_cap * r->out_channels;
    for (unsigned i = 0; i < GUARD_FLOATS; i++)
        memcpy(&g[i], &bits, sizeof bits);
}

static int guard_intact(const vrun *r)
{
    const float *g = r->call_out + r->call_cap * r->out_channels;
    for (unsigned i = 0; i < GUARD_FLOATS; i++) {
        uint32_t bits;
        memcpy(&bits, &g[i], sizeof bits);
        if (bits != GUARD_BITS)
            return 0;
    }
    return 1;
}

/* The stage's own code runs only between start and stop, so only its allocations count. */
static int watched_process(vrun *r, const weft_block *in, uint32_t n_in, weft_block *out)
{
    node *n = r->sd.n;
    alloc_counts before = alloc_watch_counts();
    alloc_watch_start();
    int rc = n->api->process(n->self, in, n_in, out);
    alloc_watch_stop();
    alloc_counts after = alloc_watch_counts();
    r->in_calls.allocs += after.allocs - before.allocs;
    r->in_calls.frees += after.frees - before.frees;
    r->calls++;
    return rc;
}

static int keep_output(vrun *r, const weft_block *ob, diag *d)
{
    if (ob->frames > r->call_cap) {
        diag_set(d, "process wrote %u frames into room for %zu", ob->frames, r->call_cap);
        return VRUN_BROKE;
    }
    if (!guard_intact(r)) {
        diag_set(d, "process wrote past the end of out->data (room for %zu frames of %u "
                    "channels)", r->call_cap, r->out_channels);
        return VRUN_BROKE;
    }
    if (ob->n_markers > ob->marker_capacity) {
        diag_set(d, "process set %u markers, room for %u", ob->n_markers, ob->marker_capacity);
        return VRUN_BROKE;
    }
    size_t samples = (size_t)ob->frames * r->out_channels;
    if (grow((void **)&r->out, &r->out_cap, (r->out_frames + ob->frames) * r->out_channels,
             sizeof *r->out) ||
        grow((void **)&r->markers, &r->markers_cap, r->n_markers + ob->n_markers,
             sizeof *r->markers))
        return diag_set(d, "out of memory keeping the output");
    memcpy(r->out + r->out_frames * r->out_channels, ob->data, samples * sizeof *r->out);
    r->out_frames += ob->frames;
    for (uint32_t m = 0; m < ob->n_markers; m++) {
        verify_marker *vm = &r->markers[r->n_markers++];
        snprintf(vm->label, sizeof vm->label, "%s", ob->markers[m].label ? ob->markers[m].label
                                                                          : "(null)");
        vm->index = ob->markers[m].index;
    }
    return 0;
}

static int step_source(vrun *r, diag *d)
{
    if (r->out_frames >= r->in_frames[0])
        return 0;
    uint64_t left = r->in_frames[0] - r->out_frames;
    arm_guard(r);
    weft_block ob = { .data = r->call_out,
                      .capacity = left < r->block ? (uint32_t)left : r->block,
                      .channels = r->out_channels,
                      .first_index = r->out_frames, .markers = r->sd.markers,
                      .marker_capacity = NODE_MARKERS_MAX };
    int rc = watched_process(r, NULL, 0, &ob);
    if (rc < 0)
        return node_fail(r->sd.n, d, "failed in process");
    int kept = keep_output(r, &ob, d);
    if (kept)
        return kept;
    return rc == WEFT_END ? 0 : 1;
}

static int step_filter(vrun *r, diag *d)
{
    const weft_layout *in = &r->s->in[0];
    const weft_layout *out = stage_driver_out(&r->sd);
    uint64_t at = r->pos[0], left = r->in_frames[0] - at;
    if (left == 0)
        return 0;
    uint32_t frames = left < r->block ? (uint32_t)left : r->block;
    weft_marker in_markers[NODE_MARKERS_MAX];
    char labels[8][24];
    uint32_t n_markers = 0;
    for (uint64_t i = at + (MARKER_EVERY - at % MARKER_EVERY) % MARKER_EVERY; i < at + frames;
         i += MARKER_EVERY) {
        char *label = labels[n_markers % 8];
        snprintf(label, sizeof labels[0], "cue%llu", (unsigned long long)(i / MARKER_EVERY));
        in_markers[n_markers++] = (weft_marker){ label, i, 0 };
    }
    weft_block ib = { .data = r->input[0] + at * in->channels, .frames = frames,
                      .capacity = frames, .channels = in->channels, .first_index = at,
                      .n_markers = n_markers, .markers = in_markers,
                      .marker_capacity = n_markers };
    arm_guard(r);
    weft_block ob = { .data = r->call_out, .capacity = (uint32_t)r->call_cap,
                      .channels = r->out_channels, .first_index = r->out_frames,
                      .markers = r->sd.markers, .marker_capacity = NODE_MARKERS_MAX,
                      .n_markers = n_markers };
    memcpy(ob.markers, in_markers, n_markers * sizeof *in_markers); /* as the host does */
    int rc = watched_process(r, &ib, 1, &ob);
    if (rc < 0)
        return node_fail(r->sd.n, d, "failed in process");
    if (out->rate == in->rate && ob.frames != frames) {
        diag_set(d, "process wrote %u frames for %u input frames; a filter that keeps the "
                    "rate writes exactly in[0].frames", ob.frames, frames);
        return VRUN_BROKE;
    }
    int kept = keep_output(r, &ob, d);
    if (kept)
        return kept;
    r->pos[0] += frames;
    return r->pos[0] < r->in_frames[0];
}

static int keep_values(vrun *r, const double *v, uint32_t n, diag *d)
{
    if (grow((void **)&r->values, &r->values_cap, r->n_values + n, sizeof *r->values))
        return diag_set(d, "out of memory keeping the results");
    memcpy(r->values + r->n_values, v, n * sizeof *v);
    r->n_values += n;
    return 0;
}

/* Readouts and sinks: one round of every input, then (readouts) a query whose windows end at
 * the round's end, once every window has filled. */
static int step_round(vrun *r, diag *d)
{
    const verify_setup *s = r->s;
    node *n = r->sd.n;
    double end_time = (double)(r->rounds + 1) * ROUND_SECONDS;
    if (end_time > s->seconds + 1e-9)
        return 0;
    weft_block blocks[VERIFY_MAX_INPUTS];
    int any = 0;
    for (uint32_t k = 0; k < s->n_in; k++) {
        uint64_t end = (uint64_t)llround(end_time * s->in[k].rate);
        if (end > r->in_frames[k])
            end = r->in_frames[k];
        uint32_t frames = (uint32_t)(end - r->pos[k]);
        if (s->in[k].kind != WEFT_STREAM_SAMPLES)
            frames = 0;
        blocks[k] = (weft_block){ .data = r->input[k] + r->pos[k] * s->in[k].channels,
                                  .frames = frames, .capacity = frames,
                                  .channels = s->in[k].channels, .first_index = r->pos[k] };
        any |= frames > 0;
        r->pos[k] = end;
    }
    r->rounds++;
    if (any && n->api->process && watched_process(r, blocks, s->n_in, NULL) < 0)
        return node_fail(n, d, "failed in process");
    if (s->role == WEFT_ROLE_SINK && n->api->deliver) {
        double v[2] = { 0.25, 0.75 };
        weft_result res = { .values = v, .count = 2, .time = end_time, .index = r->pos[0],
                            .seq = r->rounds - 1 };
        for (uint32_t k = 0; k < s->n_in; k++)
            if (s->in[k].kind == WEFT_STREAM_RESULTS && n->api->deliver(n->self, k, &res) < 0)
                return node_fail(n, d, "failed in deliver");
    }
    if (s->role != WEFT_ROLE_READOUT || end_time < s->window - 1e-9)
        return 1;
    weft_window win[VERIFY_MAX_INPUTS];
    for (uint32_t k = 0; k < s->n_in; k++) {
        uint64_t frames = (uint64_t)fmax(1, round(s->window * s->in[k].rate));
        if (frames > r->pos[k])
            return 1;
        win[k] = (weft_window){ r->input[k] + (r->pos[k] - frames) * s->in[k].channels,
                                (uint32_t)frames, s->in[k].channels, s->in[k].rate, r->pos[k] };
    }
    uint32_t count = n->out.channels;
    double values[256];
    if (count > 256)
        return diag_set(d, "the readout states %u values; the checker handles up to 256", count);
    memset(values, 0, sizeof values);
    weft_result res = { .values = values, .count = count, .time = end_time,
                        .index = win[0].end_index, .seq = r->n_queries++ };
    alloc_counts before = alloc_watch_counts();
    alloc_watch_start();
    int rc = n->api->query(n->self, win, s->n_in, &res);
    alloc_watch_stop();
    alloc_counts after = alloc_watch_counts();
    r->in_calls.allocs += after.allocs - before.allocs;
    r->in_calls.frees += after.frees - before.frees;
    r->calls++;
    if (rc < 0)
        return node_fail(n, d, "failed in query");
    return keep_values(r, values, count, d) ? -1 : 1;
}

int vrun_step(vrun *r, diag *d)
{
    if (r->done)
        return 0;
    int rc;
    switch (r->s->role) {
    case WEFT_ROLE_SOURCE: rc = step_source(r, d); break;
    case WEFT_ROLE_FILTER: rc = step_filter(r, d); break;
    default: rc = step_round(r, d); break;
    }
    if (rc <= 0)
        r->done = 1;
    return rc;
}

int vrun_all(vrun *r, diag *d)
{
    int rc;
    while ((rc = vrun_step(r, d)) > 0)
        ;
    return rc;
}

void vrun_close(vrun *r)
{
    if (r->is_open)
        stage_driver_close(&r->sd);
    for (uint32_t k = 0; k < VERIFY_MAX_INPUTS; k++)
        free(r->input[k]);
    free(r->call_out);
    free(r->out);
    free(r->markers);
    free(r->values);
    memset(r, 0, sizeof *r);
}
