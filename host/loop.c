/* loop: sources -> filters -> rings -> queries -> sinks, one round per source block. */
#include "loop.h"

#include <errno.h>
#include <math.h>
#include <poll.h>
#include <stdio.h>
#include <string.h>
#include <time.h>

typedef struct run {
    pipeline *pl;
    const loop_options *opt;
    const loop_hooks *hooks;
    loop_stats *st;
    diag *d;
    double t0;                  /* monotonic clock at start */
    double last_service;        /* when between_rounds last ran */
} run;

static double mono_seconds(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

/* Frames a source may still produce under --duration (UINT64_MAX if unlimited). */
static uint64_t frames_left(const run *r, const node *n)
{
    if (r->opt->duration <= 0)
        return UINT64_MAX;
    uint64_t limit = query_index_at(r->opt->duration, n->out.rate);
    return limit > n->produced ? limit - n->produced : 0;
}

static int source_done(const run *r, const node *n)
{
    return n->skip || n->ended || frames_left(r, n) == 0;
}

static int runtime_fail(node *n, diag *d, uint64_t index, double rate)
{
    char when[96];
    if (rate > 0)
        snprintf(when, sizeof when, "failed at sample %llu (%.3f s)",
                 (unsigned long long)index, (double)index / rate);
    else
        snprintf(when, sizeof when, "failed at sample %llu", (unsigned long long)index);
    return node_fail(n, d, when);
}

static void publish_markers(run *r, node *src)
{
    pipeline *pl = r->pl;
    weft_block *b = &src->out_block;
    for (uint32_t m = 0; m < b->n_markers; m++) {
        weft_marker *mk = &b->markers[m];
        double t = (double)mk->index / src->out.rate;
        if (r->hooks && r->hooks->on_marker)
            r->hooks->on_marker(r->hooks->ctx, src, mk, t);
        for (unsigned i = 0; i < pl->n; i++) {
            node *n = &pl->nodes[i];
            if (n->role == WEFT_ROLE_READOUT && !n->skip)
                query_plan_marker(&n->plan, mk->label, t);
        }
    }
}

static int pull_source(run *r, node *n, uint32_t request)
{
    weft_block *b = &n->out_block;
    *b = (weft_block){
        .data = n->out_data,
        .capacity = request,
        .channels = n->out.channels,
        .first_index = n->produced,
        .first_time = r->opt->realtime ? mono_seconds() - r->t0
                                       : (double)n->produced / n->out.rate,
        .markers = n->out_markers,
        .marker_capacity = NODE_MARKERS_MAX,
    };
    int rc = n->api->process(n->self, NULL, 0, b);
    if (rc < 0)
        return runtime_fail(n, r->d, n->produced, n->out.rate);
    /* The contract says an ended stream brings no frames; frames that come anyway are kept,
     * since data already received is never dropped. */
    if (rc == WEFT_END)
        n->ended = 1;
    if (b->frames > request || b->n_markers > NODE_MARKERS_MAX) {
        snprintf(n->error, sizeof n->error,
                 "produced %u frames and %u markers for a request of %u and %d", b->frames,
                 b->n_markers, request, NODE_MARKERS_MAX);
        return runtime_fail(n, r->d, n->produced, n->out.rate);
    }
    /* The plugin's label strings are only valid during its call; keep copies for the round. */
    for (uint32_t m = 0; m < b->n_markers; m++) {
        snprintf(n->marker_text[m], NODE_LABEL_MAX, "%s",
                 b->markers[m].label ? b->markers[m].label : "");
        b->markers[m].label = n->marker_text[m];
    }
    n->produced += b->frames;
    publish_markers(r, n);
    return 0;
}

static int run_filter(run *r, node *n)
{
    const weft_block *in = &n->in_blocks[0];
    if (n->history.data) /* kept so a replacement can be warmed up (swap) */
        ring_push(&n->history, in->data, in->frames);
    weft_block *b = &n->out_block;
    *b = (weft_block){
        .data = n->out_data,
        .capacity = n->out.max_frames,
        .channels = n->out.channels,
        .first_index = n->produced,
        .first_time = in->first_time,
        .markers = n->out_markers,
        .marker_capacity = NODE_MARKERS_MAX,
        .n_markers = in->n_markers < NODE_MARKERS_MAX ? in->n_markers : NODE_MARKERS_MAX,
    };
    memcpy(b->markers, in->markers, b->n_markers * sizeof *b->markers);
    int rc = n->api->process(n->self, in, 1, b);
    if (rc < 0)
        return runtime_fail(n, r->d, in->first_index, n->in_layouts[0].rate);
    if (b->frames > b->capacity || b->n_markers > NODE_MARKERS_MAX) {
        snprintf(n->error, sizeof n->error, "produced %u frames into room for %u", b->frames,
                 b->capacity);
        return runtime_fail(n, r->d, in->first_index, n->in_layouts[0].rate);
    }
    n->produced += b->frames;
    return 0;
}

static int feed_readout(run *r, node *n)
{
    for (unsigned k = 0; k < n->n_in; k++) {
        const weft_block *in = &n->in_blocks[k];
        if (in->frames)
            ring_push(&n->rings[k], in->data, in->frames);
    }
    if (!n->api->process)
        return 0;
    int rc = n->api->process(n->self, n->in_blocks, n->n_in, NULL);
    return rc < 0 ? runtime_fail(n, r->d, n->rings[0].end, n->in_layouts[0].rate) : 0;
}

static int run_sink(run *r, node *n)
{
    if (!n->api->process)
        return 0;
    int rc = n->api->process(n->self, n->in_blocks, n->n_in, NULL);
    return rc < 0 ? runtime_fail(n, r->d, n->in_blocks[0].first_index, n->in_layouts[0].rate)
                  : 0;
}

/* Push the round's new blocks through every stage after the source, in graph order. */
static int propagate(run *r)
{
    pipeline *pl = r->pl;
    for (unsigned k = 0; k < pl->n; k++) {
        node *n = &pl->nodes[pl->order[k]];
        if (n->skip)
            continue;
        if (n->role == WEFT_ROLE_SOURCE) {
            if (n->out_block.frames && r->hooks && r->hooks->on_block)
                r->hooks->on_block(r->hooks->ctx, n, &n->out_block);
            continue;
        }
        int any = 0;
        for (unsigned i = 0; i < n->n_in; i++) {
            const node *up = &pl->nodes[n->in_node[i]];
            n->in_blocks[i] = up->out_block;
            if (up->out.kind != WEFT_STREAM_SAMPLES)
                n->in_blocks[i].frames = 0;
            any |= n->in_blocks[i].frames > 0;
        }
        if (!any)
            continue;
        int rc = 0;
        if (n->role == WEFT_ROLE_FILTER)
            rc = run_filter(r, n);
        else if (n->role == WEFT_ROLE_READOUT)
            rc = feed_readout(r, n);
        else
            rc = run_sink(r, n);
        if (rc)
            return -1;
        if (n->role == WEFT_ROLE_FILTER && n->out_block.frames && r->hooks && r->hooks->on_block)
            r->hooks->on_block(r->hooks->ctx, n, &n->out_block);
    }
    return 0;
}

static int deliver(run *r, node *readout, const weft_result *res)
{
    pipeline *pl = r->pl;
    for (unsigned i = 0; i < pl->n; i++) {
        node *n = &pl->nodes[i];
        if (n->role != WEFT_ROLE_SINK || !n->api->deliver || n->skip)
            continue;
        for (unsigned k = 0; k < n->n_in; k++) {
            if (n->in_node[k] != readout->index)
                continue;
            if (n->api->deliver(n->self, k, res) < 0)
                return runtime_fail(n, r->d, res->index, readout->in_layouts[0].rate);
        }
    }
    if (r->hooks && r->hooks->on_result)
        r->hooks->on_result(r->hooks->ctx, readout, res);
    r->st->results++;
    return 0;
}

static int check_values(node *n, const weft_result *res, diag *d)
{
    for (uint32_t v = 0; v < res->count; v++) {
        if (isfinite(res->values[v]))
            continue;
        const char *label = n->out.labels ? n->out.labels[v] : "?";
        snprintf(n->error, sizeof n->error,
                 "returned %g for '%s' at query time %.3f s; results must be finite",
                 res->values[v], label, res->time);
        return runtime_fail(n, d, res->index, n->in_layouts[0].rate);
    }
    return 0;
}

/* Run every query of `n` whose windows have fully arrived. */
static int run_due_queries(run *r, node *n)
{
    query_due q;
    while (query_plan_peek(&n->plan, &q)) {
        for (unsigned k = 0; k < n->n_in; k++) {
            uint64_t end = query_index_at(q.time, n->in_layouts[k].rate);
            if (n->rings[k].end < end)
                return 0;
            const float *data = ring_window(&n->rings[k], end, n->win_frames[k]);
            if (!data) {
                snprintf(n->error, sizeof n->error,
                         "internal: window of input %u for the query at %.3f s was "
                         "overwritten before it ran", k, q.time);
                return runtime_fail(n, r->d, end, n->in_layouts[k].rate);
            }
            n->windows[k] = (weft_window){ data, n->win_frames[k], n->in_layouts[k].channels,
                                           n->in_layouts[k].rate, end };
        }
        query_plan_pop(&n->plan);
        weft_result res = {
            .values = n->values,
            .count = n->out.channels,
            .time = q.time,
            .index = n->windows[0].end_index,
            .seq = n->seq++,
            .trigger = q.trigger[0] ? q.trigger : NULL,
        };
        memset(n->values, 0, n->out.channels * sizeof *n->values);
        if (n->api->query(n->self, n->windows, n->n_in, &res) < 0)
            return runtime_fail(n, r->d, res.index, n->in_layouts[0].rate);
        if (check_values(n, &res, r->d) || deliver(r, n, &res))
            return -1;
    }
    return 0;
}

static int run_queries(run *r)
{
    for (unsigned k = 0; k < r->pl->n; k++) {
        node *n = &r->pl->nodes[r->pl->order[k]];
        if (n->role == WEFT_ROLE_READOUT && !n->skip && run_due_queries(r, n))
            return -1;
    }
    return 0;
}

static int round_for(run *r, node *src, uint32_t request)
{
    double start = mono_seconds();
    for (unsigned i = 0; i < r->pl->n; i++)
        r->pl->nodes[i].out_block.frames = 0;
    if (pull_source(r, src, request) || propagate(r) || run_queries(r))
        return -1;
    r->st->rounds++;
    latency_add(&r->st->round_us, (mono_seconds() - start) * 1e6);
    return 0;
}

/* Returns 1 if the hook asked to stop, -1 on failure. */
static int service(run *r)
{
    if (!r->hooks || !r->hooks->between_rounds)
        return 0;
    double now = mono_seconds();
    if (now - r->last_service < r->opt->service_every)
        return 0;
    r->last_service = now;
    return r->hooks->between_rounds(r->hooks->ctx, r->d);
}

static uint32_t request_for(const run *r, const node *n, uint64_t want)
{
    uint64_t left = frames_left(r, n);
    if (want > left)
        want = left;
    return want > n->out.max_frames ? n->out.max_frames : (uint32_t)want;
}

/* Wait up to `seconds` for a watched descriptor or the clock. */
static void wait_a_little(run *r, double seconds)
{
    pipeline *pl = r->pl;
    struct pollfd fds[PIPELINE_WATCH_MAX];
    for (unsigned i = 0; i < pl->n_watched; i++)
        fds[i] = (struct pollfd){ pl->watched_fd[i],
                                  (short)((pl->watched_events[i] & WEFT_WATCH_READ ? POLLIN : 0) |
                                          (pl->watched_events[i] & WEFT_WATCH_WRITE ? POLLOUT
                                                                                     : 0)),
                                  0 };
    int ms = (int)ceil(seconds * 1e3);
    if (pl->n_watched) {
        poll(fds, pl->n_watched, ms);
        return;
    }
    struct timespec ts = { (time_t)seconds, (long)((seconds - floor(seconds)) * 1e9) };
    while (nanosleep(&ts, &ts) && errno == EINTR && !(r->opt->stop && *r->opt->stop))
        ;
}

/* As fast as possible: always serve the source furthest behind in stream time, so streams of
 * different rates advance together and any block size gives the same results. */
static int run_fast(run *r)
{
    pipeline *pl = r->pl;
    for (;;) {
        if (r->opt->stop && *r->opt->stop)
            return 0;
        int svc = service(r);
        if (svc)
            return svc < 0 ? -1 : 0;
        node *next = NULL;
        for (unsigned i = 0; i < pl->n; i++) {
            node *n = &pl->nodes[i];
            if (n->role != WEFT_ROLE_SOURCE || source_done(r, n))
                continue;
            if (!next || (double)n->produced / n->out.rate <
                             (double)next->produced / next->out.rate)
                next = n;
        }
        if (!next)
            return 0;
        uint64_t before = next->produced;
        if (round_for(r, next, request_for(r, next, next->out.max_frames)))
            return -1;
        if (next->produced == before && !next->ended)
            wait_a_little(r, 0.005); /* a live source with nothing yet */
    }
}

/* Paced: each source gets the frames its clock says are due. */
static int run_paced(run *r)
{
    pipeline *pl = r->pl;
    for (;;) {
        if (r->opt->stop && *r->opt->stop)
            return 0;
        int svc = service(r);
        if (svc)
            return svc < 0 ? -1 : 0;
        double now = mono_seconds() - r->t0, next_due = 0.01;
        int active = 0;
        for (unsigned i = 0; i < pl->n; i++) {
            node *n = &pl->nodes[i];
            if (n->role != WEFT_ROLE_SOURCE || source_done(r, n))
                continue;
            active = 1;
            uint64_t target = query_index_at(now, n->out.rate);
            while (target > n->produced && !source_done(r, n)) {
                uint64_t before = n->produced;
                if (round_for(r, n, request_for(r, n, target - n->produced)))
                    return -1;
                if (n->produced == before)
                    break;
            }
            double wait = (double)(n->produced + 1) / n->out.rate - now;
            if (wait < next_due)
                next_due = wait;
        }
        if (!active)
            return 0;
        if (next_due > 0)
            wait_a_little(r, next_due);
    }
}

int loop_run(pipeline *pl, const loop_options *opt, const loop_hooks *hooks, loop_stats *st,
             diag *d)
{
    memset(st, 0, sizeof *st);
    if (latency_init(&st->round_us))
        return diag_set(d, "out of memory");
    run r = { pl, opt, hooks, st, d, mono_seconds(), 0 };
    int rc = opt->realtime ? run_paced(&r) : run_fast(&r);
    /* Queries that became due with the last blocks. */
    if (rc == 0)
        rc = run_queries(&r);
    st->wall_seconds = mono_seconds() - r.t0;
    for (unsigned i = 0; i < pl->n; i++) {
        const node *n = &pl->nodes[i];
        if (n->role == WEFT_ROLE_SOURCE && n->out.rate > 0 &&
            (double)n->produced / n->out.rate > st->stream_seconds)
            st->stream_seconds = (double)n->produced / n->out.rate;
        if (n->role == WEFT_ROLE_READOUT)
            st->dropped_triggers += n->plan.dropped;
    }
    return rc;
}

void loop_stats_free(loop_stats *st) { latency_free(&st->round_us); }
