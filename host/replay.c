/* replay: running a graph on a recording through the live loop, and scoring its results. */
#include "replay.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "edf_header.h"
#include "fit.h"
#include "graph_recording.h"

#define PROGRESS_INTERVAL 0.1       /* seconds of wall time between progress bar updates */
#define PROGRESS_WIDTH 30

static double wall_seconds(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

/* The recording's length, for the progress bar: records x record duration. */
static double recording_seconds(const char *path)
{
    FILE *f = fopen(path, "rb");
    if (!f)
        return 0;
    uint8_t fixed[EDF_FIXED_BYTES];
    edf_header h;
    char err[EDF_ERROR_MAX];
    double seconds = 0;
    if (fread(fixed, 1, sizeof fixed, f) == sizeof fixed &&
        edf_header_parse_fixed(fixed, sizeof fixed, &h, err, sizeof err) == 0) {
        uint8_t *all = malloc(h.header_bytes);
        if (all && fseek(f, 0, SEEK_SET) == 0 && fread(all, 1, h.header_bytes, f) ==
                                                     h.header_bytes &&
            edf_header_parse(all, h.header_bytes, &h, err, sizeof err) == 0 &&
            fseek(f, 0, SEEK_END) == 0) {
            uint64_t records = edf_header_records_in(&h, (uint64_t)ftell(f));
            if (h.n_records >= 0 && (uint64_t)h.n_records < records)
                records = (uint64_t)h.n_records;
            seconds = (double)records * h.record_seconds;
        }
        free(all);
        edf_header_free(&h);
    }
    fclose(f);
    return seconds;
}

/* ---- collecting, from the loop's hooks --------------------------------------------------- */

static void on_marker(void *ctx, const node *source, const weft_marker *m, double time)
{
    (void)source;
    replay *r = ctx;
    if (time < r->keep_from - 1e-9 || time >= r->keep_to - 1e-9)
        return;
    if (r->n_cues == r->cap_cues) {
        size_t cap = r->cap_cues ? 2 * r->cap_cues : 256;
        replay_cue *c = realloc(r->cues, cap * sizeof *c);
        if (!c) {
            r->out_of_memory = 1;
            return;
        }
        r->cues = c;
        r->cap_cues = cap;
    }
    replay_cue *c = &r->cues[r->n_cues++];
    c->time = time;
    c->duration = m->duration;
    snprintf(c->label, sizeof c->label, "%s", m->label ? m->label : "");
}

static int grow_results(replay_readout *ro)
{
    size_t cap = ro->cap_results ? 2 * ro->cap_results : 1024;
    replay_result *res = realloc(ro->results, cap * sizeof *res);
    if (res)
        ro->results = res;
    double *v = res ? realloc(ro->values, cap * ro->n_classes * sizeof *v) : NULL;
    if (!v)
        return -1;
    ro->values = v;
    ro->cap_results = cap;
    return 0;
}

/* Results are kept in memory: a replay is offline and minutes long, so growing the arrays
 * on the loop's thread costs nothing that matters (a --realtime replay included). */
static void on_result(void *ctx, const node *readout, const weft_result *res)
{
    replay *r = ctx;
    replay_readout *ro = NULL;
    if (res->time < r->keep_from - 1e-9 || res->time >= r->keep_to - 1e-9)
        return;
    for (unsigned i = 0; i < r->n_readouts && !ro; i++)
        if (r->readouts[i].node == readout->index)
            ro = &r->readouts[i];
    if (!ro || (ro->n_results == ro->cap_results && grow_results(ro))) {
        r->out_of_memory |= ro != NULL;
        return;
    }
    ro->results[ro->n_results] = (replay_result){ res->time, res->index, res->trigger != NULL,
                                                  -1 };
    for (unsigned k = 0; k < ro->n_classes; k++)
        ro->values[ro->n_results * ro->n_classes + k] = k < res->count ? res->values[k] : 0;
    ro->n_results++;
}

static void on_block(void *ctx, const node *n, const weft_block *b)
{
    replay *r = ctx;
    if (!r->opt.progress || n->role != WEFT_ROLE_SOURCE || r->recording_seconds <= 0)
        return;
    double now = wall_seconds();
    if (now - r->progress_shown < PROGRESS_INTERVAL)
        return;
    r->progress_shown = now;
    double t = (double)(b->first_index + b->frames) / n->out.rate;
    double f = t / r->recording_seconds;
    if (f > 1)
        f = 1;
    int filled = (int)(f * PROGRESS_WIDTH);
    fprintf(stderr, "\rreplay [%.*s%*s] %3.0f%%  %.1f / %.1f s", filled,
            "##############################", PROGRESS_WIDTH - filled, "", f * 100, t,
            r->recording_seconds);
    fflush(stderr);
}

/* ---- scoring ----------------------------------------------------------------------------- */

int replay_cue_class(const replay *r, const replay_readout *ro, const char *label)
{
    (void)r;
    const graph_stage *def = ro->def;
    const char *name = label;
    if (def->has_fit) {
        name = NULL;
        for (unsigned c = 0; c < def->fit.n_classes && !name; c++)
            for (unsigned k = 0; k < def->fit.classes[c].n_labels && !name; k++)
                if (!strcmp(def->fit.classes[c].labels[k], label))
                    name = def->fit.classes[c].name;
        if (!name)
            return -1;
    }
    for (unsigned k = 0; k < ro->n_classes; k++)
        if (!strcmp(ro->class_names[k], name))
            return (int)k;
    return -1;
}

static unsigned argmax(const double *v, unsigned n)
{
    unsigned best = 0;
    for (unsigned k = 1; k < n; k++)
        if (v[k] > v[best])
            best = k;
    return best;
}

/* The end of cue c's trial when scoring periodic results. */
static double trial_end(const replay *r, const replay_readout *ro, const long *class_cues,
                        size_t n, size_t i)
{
    const replay_cue *c = &r->cues[class_cues[i]];
    if (ro->score_to >= 0)
        return c->time + ro->score_to;
    if (c->duration > 0)
        return c->time + c->duration;
    return i + 1 < n ? r->cues[class_cues[i + 1]].time : INFINITY;
}

static void attribute_results(const replay *r, replay_readout *ro, const long *class_cues,
                              size_t n_class_cues, size_t first_result)
{
    size_t next = 0; /* class cues are in time order, and so are results */
    for (size_t i = first_result; i < ro->n_results; i++) {
        replay_result *res = &ro->results[i];
        while (next < n_class_cues && r->cues[class_cues[next]].time <= res->time + 1e-9)
            next++;
        res->cue = -1;
        if (res->triggered) {
            /* the latest cue at or before the query; its label triggered it */
            if (next > 0)
                res->cue = class_cues[next - 1];
            continue;
        }
        if (next == 0)
            continue;
        const replay_cue *c = &r->cues[class_cues[next - 1]];
        if (res->time >= c->time + ro->score_from - 1e-9 &&
            res->time <= trial_end(r, ro, class_cues, n_class_cues, next - 1) + 1e-9)
            res->cue = class_cues[next - 1];
    }
}

static int score_results(const replay *r, replay_readout *ro)
{
    size_t n = ro->n_results, scored = 0;
    unsigned *truth = malloc((n + 1) * sizeof *truth), *pred = malloc((n + 1) * sizeof *pred);
    double *score = malloc((n + 1) * sizeof *score);
    int rc = -1;
    if (!truth || !pred || !score)
        goto done;
    for (size_t i = 0; i < n; i++) {
        const replay_result *res = &ro->results[i];
        if (res->cue < 0)
            continue;
        const double *v = ro->values + i * ro->n_classes;
        truth[scored] = (unsigned)replay_cue_class(r, ro, r->cues[res->cue].label);
        pred[scored] = argmax(v, ro->n_classes);
        score[scored] = ro->n_classes > 1 ? v[1] : v[0];
        scored++;
    }
    rc = metrics_compute(truth, pred, score, scored, ro->n_classes, 0, &ro->per_result);
done:
    free(truth);
    free(pred);
    free(score);
    return rc;
}

/* Per trial, the mean of its results' values decides: one pass sums them per cue. */
static int score_trials(const replay *r, replay_readout *ro, const long *class_cues,
                        size_t n_class_cues)
{
    size_t nc = ro->n_classes;
    double *sum = calloc((r->n_cues + 1) * nc, sizeof *sum);
    unsigned *count = calloc(r->n_cues + 1, sizeof *count);
    ro->trials = calloc(n_class_cues + 1, sizeof *ro->trials);
    unsigned *truth = malloc((n_class_cues + 1) * sizeof *truth);
    unsigned *pred = malloc((n_class_cues + 1) * sizeof *pred);
    double *score = malloc((n_class_cues + 1) * sizeof *score);
    int rc = -1;
    if (!sum || !count || !ro->trials || !truth || !pred || !score)
        goto done;
    for (size_t i = 0; i < ro->n_results; i++) {
        long cue = ro->results[i].cue;
        if (cue < 0)
            continue;
        for (size_t k = 0; k < nc; k++)
            sum[(size_t)cue * nc + k] += ro->values[i * nc + k];
        count[cue]++;
    }
    for (size_t i = 0; i < n_class_cues; i++) {
        long cue = class_cues[i];
        if (!count[cue])
            continue;
        const double *v = sum + (size_t)cue * nc;
        replay_trial t = { .cue = cue, .results = count[cue] };
        t.truth = (unsigned)replay_cue_class(r, ro, r->cues[cue].label);
        t.predicted = argmax(v, ro->n_classes);
        t.score = (nc > 1 ? v[1] : v[0]) / count[cue];
        truth[ro->n_trials] = t.truth;
        pred[ro->n_trials] = t.predicted;
        score[ro->n_trials] = t.score;
        ro->trials[ro->n_trials++] = t;
    }
    ro->seconds_per_trial = NAN;
    if (n_class_cues >= 2)
        ro->seconds_per_trial = (r->cues[class_cues[n_class_cues - 1]].time -
                                 r->cues[class_cues[0]].time) / (double)(n_class_cues - 1);
    rc = metrics_compute(truth, pred, score, ro->n_trials, ro->n_classes,
                         isnan(ro->seconds_per_trial) ? 0 : ro->seconds_per_trial,
                         &ro->per_trial);
done:
    free(sum);
    free(count);
    free(truth);
    free(pred);
    free(score);
    return rc;
}

/* The cues from `first_cue` on that name one of the readout's classes, in time order. */
static long *class_cues_of(const replay *r, const replay_readout *ro, size_t first_cue,
                           size_t *n)
{
    long *class_cues = malloc((r->n_cues + 1) * sizeof *class_cues);
    *n = 0;
    for (size_t i = first_cue; class_cues && i < r->n_cues; i++)
        if (replay_cue_class(r, ro, r->cues[i].label) >= 0)
            class_cues[(*n)++] = (long)i;
    return class_cues;
}

/* Results from `first_result` on are matched with cues from `first_cue` on: a fold's results
 * only ever belong to the fold's own cues. */
static int attribute_readout(replay *r, replay_readout *ro, size_t first_cue,
                             size_t first_result)
{
    size_t n;
    long *class_cues = class_cues_of(r, ro, first_cue, &n);
    if (!class_cues)
        return -1;
    attribute_results(r, ro, class_cues, n, first_result);
    free(class_cues);
    return 0;
}

static int score_readout(replay *r, replay_readout *ro)
{
    size_t n;
    long *class_cues = class_cues_of(r, ro, 0, &n);
    if (!class_cues)
        return -1;
    int rc = score_results(r, ro) || score_trials(r, ro, class_cues, n) ? -1 : 0;
    free(class_cues);
    return rc;
}

/* ---- running ----------------------------------------------------------------------------- */

static int setup_readouts(replay *r, diag *d)
{
    pipeline *pl = &r->pl;
    for (unsigned i = 0; i < pl->n; i++)
        r->n_readouts += pl->nodes[i].role == WEFT_ROLE_READOUT;
    r->readouts = calloc(r->n_readouts + 1, sizeof *r->readouts);
    if (!r->readouts)
        return diag_set(d, "out of memory");
    unsigned k = 0;
    for (unsigned i = 0; i < pl->n; i++) {
        const node *n = &pl->nodes[i];
        if (n->role != WEFT_ROLE_READOUT)
            continue;
        replay_readout *ro = &r->readouts[k++];
        ro->node = i;
        ro->def = n->def;
        snprintf(ro->name, sizeof ro->name, "%s", n->def->name);
        ro->n_classes = n->out.channels;
        ro->class_names = calloc(ro->n_classes, sizeof *ro->class_names);
        if (!ro->class_names)
            return diag_set(d, "out of memory");
        for (unsigned c = 0; c < ro->n_classes; c++)
            snprintf(ro->class_names[c], REPLAY_LABEL_MAX, "%s",
                     n->out.labels && n->out.labels[c] ? n->out.labels[c] : "?");
        double longest = 0;
        for (unsigned w = 0; w < n->def->n_inputs; w++)
            if (n->def->inputs[w].window > longest)
                longest = n->def->inputs[w].window;
        ro->score_from = isnan(r->opt.score_from) ? longest : r->opt.score_from;
        ro->score_to = isnan(r->opt.score_to) ? -1 : r->opt.score_to;
    }
    return 0;
}

static void add_stats(replay *r, loop_stats *st)
{
    if (!r->have_stats) {
        r->stats = *st;
        r->have_stats = 1;
        return;
    }
    for (unsigned b = 0; b <= LATENCY_BUCKETS; b++)
        r->stats.round_us.counts[b] += st->round_us.counts[b];
    r->stats.round_us.n += st->round_us.n;
    if (st->round_us.max_us > r->stats.round_us.max_us)
        r->stats.round_us.max_us = st->round_us.max_us;
    r->stats.rounds += st->rounds;
    r->stats.results += st->results;
    r->stats.wall_seconds += st->wall_seconds;
    if (st->stream_seconds > r->stats.stream_seconds)
        r->stats.stream_seconds = st->stream_seconds;
    loop_stats_free(st);
}

/* Run r->pl (open) through the loop for `duration` seconds (0: to the end) and close it. */
static int run_open_pipeline(replay *r, double duration, diag *d)
{
    loop_options lo = { .realtime = r->opt.realtime, .duration = duration };
    loop_hooks hooks = { .ctx = r, .on_marker = on_marker, .on_result = on_result,
                         .on_block = on_block };
    loop_stats st;
    int rc = loop_run(&r->pl, &lo, &hooks, &st, d);
    add_stats(r, &st);
    if (r->opt.progress && r->recording_seconds > 0)
        fprintf(stderr, "\r%*s\r", PROGRESS_WIDTH + 40, "");
    /* Sinks flush and close now, as at the end of a live run. */
    pipeline_close(&r->pl);
    r->opened = 0;
    if (rc == 0 && r->out_of_memory)
        rc = diag_set(d, "out of memory keeping the replay's results");
    return rc;
}

static int load(replay *r, const char *graph_path, const replay_options *opt, diag *d)
{
    memset(r, 0, sizeof *r);
    r->opt = *opt;
    r->keep_from = -INFINITY;
    r->keep_to = INFINITY;
    if (graph_load(&r->g, graph_path, NULL, d) || graph_use_recording(&r->g, opt->data, d))
        return -1;
    r->recording_seconds = recording_seconds(opt->data);
    return 0;
}

static int score_all(replay *r, diag *d)
{
    for (unsigned i = 0; i < r->n_readouts; i++)
        if (score_readout(r, &r->readouts[i]))
            return diag_set(d, "out of memory scoring readout '%s'", r->readouts[i].name);
    return 0;
}

int replay_run(replay *r, const char *graph_path, const replay_options *opt, diag *d)
{
    if (load(r, graph_path, opt, d))
        return -1;
    pipeline_options po = { .block = opt->block };
    if (pipeline_open(&r->pl, &r->g, &po, d))
        return -1;
    r->opened = 1;
    if (setup_readouts(r, d) || run_open_pipeline(r, 0, d))
        return -1;
    for (unsigned i = 0; i < r->n_readouts; i++)
        if (attribute_readout(r, &r->readouts[i], 0, 0))
            return diag_set(d, "out of memory");
    return score_all(r, d);
}

/* ---- chronological cross-validation ------------------------------------------------------ */

/* The learned parameters of every fitted stage of `from` into the same stage of `to`, which
 * is then initialised with them. Both pipelines run the same graph. */
static int carry_learned(pipeline *from, pipeline *to, diag *d)
{
    for (unsigned k = 0; k < to->n; k++) {
        unsigned i = to->order[k];
        node *src = &from->nodes[i], *dst = &to->nodes[i];
        if (!(dst->api->roles & WEFT_ROLE_FITTABLE))
            continue;
        for (uint32_t p = 0; p < src->params.count; p++) {
            const weft_param *v = &src->params.items[p];
            if (!(src->api->params[p].flags & WEFT_PARAM_LEARNED) || !v->given)
                continue;
            int rc;
            if (v->type == WEFT_PARAM_NUMBERS || v->type == WEFT_PARAM_MATRIX)
                rc = param_set_numbers(&dst->params, v->name, v->values, v->rows, v->cols,
                                       v->type == WEFT_PARAM_MATRIX);
            else if (v->type == WEFT_PARAM_STRINGS)
                rc = param_set_strings(&dst->params, v->name, v->strings, v->n_strings);
            else
                rc = param_set_number(&dst->params, v->name, v->number);
            if (rc)
                return diag_set(d, "stage '%s': cannot carry learned '%s' over",
                                dst->def->name, v->name);
        }
        if (pipeline_reinit(to, i, d))
            return -1;
    }
    return 0;
}

static int fold_fit(replay *r, double until, pipeline *fitted, diag *d)
{
    pipeline_options po = { .block = r->opt.block, .for_fit = 1 };
    if (pipeline_open(fitted, &r->g, &po, d))
        return -1;
    fit_options fo = { .folds = 1, .duration = until };
    fit_summary sum;
    int rc = fit_pipeline(fitted, &fo, &sum, d);
    if (rc == 0)
        fit_summary_free(&sum);
    if (rc)
        pipeline_close(fitted);
    return rc;
}

static int run_fold(replay *r, unsigned k, diag *d)
{
    double block = r->recording_seconds / r->folds;
    double from = k * block, to = k + 1 == r->folds ? INFINITY : (k + 1) * block;
    pipeline fitted;
    diag why = { 0 };
    replay_fold *f = &r->fold[k];
    f->from = from;
    f->to = to;
    if (fold_fit(r, from, &fitted, &why)) {
        snprintf(f->skipped, sizeof f->skipped, "%s", why.msg);
        return 0; /* too few trials so early, say: the fold is reported as skipped */
    }
    pipeline_options po = { .block = r->opt.block, .for_fit = 1 };
    int rc = pipeline_open(&r->pl, &r->g, &po, d);
    r->opened = rc == 0;
    if (rc == 0)
        rc = carry_learned(&fitted, &r->pl, d);
    pipeline_close(&fitted);
    if (rc == 0 && !r->readouts)
        rc = setup_readouts(r, d);
    size_t first_cue = r->n_cues;
    size_t *first_result = calloc(r->n_readouts + 1, sizeof *first_result);
    if (rc == 0 && !first_result)
        rc = diag_set(d, "out of memory");
    for (unsigned i = 0; rc == 0 && i < r->n_readouts; i++)
        first_result[i] = r->readouts[i].n_results;
    r->keep_from = from;
    r->keep_to = to;
    if (rc == 0)
        rc = run_open_pipeline(r, isfinite(to) ? to : 0, d);
    for (unsigned i = 0; rc == 0 && i < r->n_readouts; i++)
        if (attribute_readout(r, &r->readouts[i], first_cue, first_result[i]))
            rc = diag_set(d, "out of memory");
    free(first_result);
    f->tested = 1;
    return rc;
}

int replay_folds(replay *r, const char *graph_path, const replay_options *opt, unsigned folds,
                 diag *d)
{
    if (load(r, graph_path, opt, d))
        return -1;
    if (folds < 2 || folds > REPLAY_FOLDS_MAX)
        return diag_set(d, "--folds must be 2 to %d, not %u", REPLAY_FOLDS_MAX, folds);
    if (!(r->recording_seconds > 0))
        return diag_set(d, "recording '%s' holds no data records", opt->data);
    r->folds = folds;
    /* Block 0 has no earlier data to fit on: blocks 1 .. K-1 are tested. */
    for (unsigned k = 1; k < folds; k++)
        if (run_fold(r, k, d))
            return -1;
    if (!r->readouts)
        return diag_set(d, "no fold could be fitted: %s", r->fold[1].skipped);
    return score_all(r, d);
}

void replay_free(replay *r)
{
    if (r->opened)
        pipeline_close(&r->pl);
    for (unsigned i = 0; i < r->n_readouts; i++) {
        replay_readout *ro = &r->readouts[i];
        free(ro->class_names);
        free(ro->results);
        free(ro->values);
        free(ro->trials);
        metrics_free(&ro->per_result);
        metrics_free(&ro->per_trial);
    }
    free(r->readouts);
    free(r->cues);
    if (r->have_stats)
        loop_stats_free(&r->stats);
    graph_free(&r->g);
    memset(r, 0, sizeof *r);
}
