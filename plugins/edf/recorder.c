/* recorder: a sink that writes its input streams and their markers to a BDF+ or EDF+ file as
 * they arrive, so a session can be replayed, fitted on, or read by any EDF/BDF tool.
 *
 * The run loop never waits on the disk: process() copies each block into a lock-free
 * single-producer single-consumer queue (allocated in init) and a writer thread turns the
 * queue into data records. A record is appended as soon as every input has filled it, and the
 * header's record count is rewritten right after; a run killed at any moment (SIGKILL, power
 * aside) leaves a valid file holding every record but the one in progress. If the disk falls
 * behind by more than `buffer` seconds, the samples that do not fit the queue are replaced by
 * the last value and marked "lost NAME", so the streams stay aligned; the count is reported.
 * A run going faster than real time (a replay, a synthetic run without --realtime) has no
 * live person or device to keep up with: there the recorder waits for room instead, so an
 * offline recording is always complete. It tells the two apart by its input: a stream ahead
 * of the wall clock by more than AHEAD_SECONDS cannot be live. */
#include <math.h>
#include <pthread.h>
#include <stdatomic.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <weft/stage.h>

#include "edf_writer.h"
#include "item_queue.h"

#define MAX_INPUTS 64
#define PATH_MAX_BYTES 4096
#define ITEM_BYTES_MAX 16384        /* a large block goes into the queue in pieces */
#define QUEUE_MIN_BYTES (256u * 1024)
#define IDLE_NANOSECONDS 5000000L   /* the writer looks at the queue every 5 ms when idle */
#define AHEAD_SECONDS 1.0
/* Default physical ranges: 16-bit EDF at about 0.1 uV per step, 24-bit BDF at 1/32 uV. */
#define EDF_DEFAULT_RANGE 3276.8
#define BDF_DEFAULT_RANGE 262144.0

static const weft_param_spec params[] = {
    { "path", WEFT_PARAM_STRING, 0, NULL, WEFT_NO_RANGE, "", NULL,
      "file to create; strftime patterns such as %Y%m%d-%H%M%S are filled in" },
    { "format", WEFT_PARAM_CHOICE, 0, "auto", WEFT_NO_RANGE, "", "auto|bdf|edf",
      "BDF+ (24-bit) or EDF+ (16-bit); auto goes by the .bdf or .edf ending of path" },
    { "range_uv", WEFT_PARAM_NUMBERS, 0, "[]", 1e-6, 9999999, "uV", NULL,
      "physical range +-R per input (one value for all); default 262144 (BDF), 3276.8 (EDF)" },
    { "unit", WEFT_PARAM_STRING, 0, "uV", WEFT_NO_RANGE, "", NULL,
      "physical dimension written for every signal (range_uv is in this unit)" },
    { "record", WEFT_PARAM_NUMBER, 0, "1", 0.001, 60, "s", NULL,
      "data record length: the flush interval; each input's rate times it must be whole" },
    { "buffer", WEFT_PARAM_NUMBER, 0, "10", 1, 600, "s", NULL,
      "how far the disk may fall behind before samples are lost (and marked)" },
    { "overwrite", WEFT_PARAM_BOOLEAN, 0, "false", WEFT_NO_RANGE, "", NULL,
      "replace an existing file (by default an existing recording is never touched)" },
    { "sync", WEFT_PARAM_BOOLEAN, 0, "false", WEFT_NO_RANGE, "", NULL,
      "fdatasync after every record, for power loss (a killed process needs no sync)" },
    { .name = NULL },
};

enum { ITEM_SAMPLES = 1, ITEM_MARKER, ITEM_LOST };

typedef struct item {
    uint32_t kind, input;
    uint32_t frames, reserved;
    uint64_t index;             /* MARKER: sample index; LOST: frames lost */
    double duration;
    char label[EDF_WRITER_LABEL_MAX];
} item;

/* Samples follow the first 16 bytes of an item; markers use the whole struct. */
#define SAMPLES_OFFSET 16

typedef struct recorder {
    const weft_host *host;
    char path[PATH_MAX_BYTES];
    uint32_t n_in;
    uint32_t channels[MAX_INPUTS];
    uint32_t chunk_frames[MAX_INPUTS];
    double rate[MAX_INPUTS];
    char stage[MAX_INPUTS][65];
    double range[MAX_INPUTS];
    uint64_t lost[MAX_INPUTS];  /* frames waiting to be reported to the writer as lost */
    uint64_t lost_total, markers_dropped, frames_in;
    uint64_t received[MAX_INPUTS];  /* frames per input, for the pace */
    double first_call;          /* monotonic clock at the first process call; 0 before */
    char unit[9];
    item_queue q;
    edf_writer w;
    pthread_t thread;
    int thread_running;
    _Atomic int stopping;
    _Atomic int failed;
    int close_rc;
    double record_seconds;
    char (*labels)[EDF_LABEL_CHARS + 1];
    const char **label_ptrs;
} recorder;

/* ---- the writer thread ------------------------------------------------------------------- */

static int handle(recorder *r, const item *it)
{
    switch (it->kind) {
    case ITEM_SAMPLES:
        return edf_writer_samples(&r->w, it->input,
                                  (const float *)((const uint8_t *)it + SAMPLES_OFFSET),
                                  it->frames);
    case ITEM_MARKER:
        edf_writer_marker_at(&r->w, it->input, it->index, it->duration, it->label);
        return 0;
    case ITEM_LOST:
        return edf_writer_fill(&r->w, it->input, it->index);
    }
    return 0;
}

static void *writer_main(void *arg)
{
    recorder *r = arg;
    for (;;) {
        int stopping = atomic_load(&r->stopping);
        size_t size;
        const void *it;
        int any = 0;
        while ((it = item_queue_front(&r->q, &size))) {
            if (!atomic_load(&r->failed) && handle(r, it))
                atomic_store(&r->failed, 1); /* w.error holds the reason */
            item_queue_release(&r->q);
            any = 1;
        }
        if (stopping)
            break;
        if (!any) {
            struct timespec idle = { 0, IDLE_NANOSECONDS };
            nanosleep(&idle, NULL);
        }
    }
    return NULL;
}

/* ---- init -------------------------------------------------------------------------------- */

static int expand_path(recorder *r, const char *pattern)
{
    if (!strchr(pattern, '%')) {
        if (strlen(pattern) >= sizeof r->path)
            return -1;
        strcpy(r->path, pattern);
        return 0;
    }
    time_t now = time(NULL);
    struct tm t;
    localtime_r(&now, &t);
    return strftime(r->path, sizeof r->path, pattern, &t) ? 0 : -1;
}

static int ends_with(const char *s, const char *suffix)
{
    size_t n = strlen(s), m = strlen(suffix);
    if (n < m)
        return 0;
    for (size_t i = 0; i < m; i++)
        if ((s[n - m + i] | 0x20) != suffix[i])
            return 0;
    return 1;
}

static int choose_format(recorder *r, const weft_params *p, int *bdf)
{
    const char *format = weft_param_text(p, "format");
    if (!strcmp(format, "bdf") || !strcmp(format, "edf")) {
        *bdf = format[0] == 'b';
        return 0;
    }
    if (ends_with(r->path, ".bdf") || ends_with(r->path, ".edf")) {
        *bdf = ends_with(r->path, ".bdf");
        return 0;
    }
    r->host->param_error(r->host, "path", "'%s' ends neither in .bdf nor in .edf; rename it or "
                         "set format: bdf or format: edf", r->path);
    return -1;
}

static int check_inputs(recorder *r, const weft_layout *in, uint32_t n_in)
{
    const weft_host *host = r->host;
    if (n_in > MAX_INPUTS) {
        host->error(host, "%u inputs; a recorder takes at most %d", n_in, MAX_INPUTS);
        return -1;
    }
    for (uint32_t k = 0; k < n_in; k++) {
        const char *name = in[k].name ? in[k].name : "?";
        if (in[k].kind != WEFT_STREAM_SAMPLES || !(in[k].rate > 0)) {
            host->error(host, "input '%s' is a readout's results; the recorder writes sample "
                        "streams (write results with a jsonl or csv sink)", name);
            return -1;
        }
        double spr = in[k].rate * r->record_seconds;
        if (fabs(spr - round(spr)) > 1e-6 * (spr > 1 ? spr : 1) || round(spr) < 1) {
            host->param_error(host, "record", "a record of %g s holds %g samples of input '%s' "
                              "(%g Hz); EDF records hold whole samples, so choose `record` so "
                              "that every input's rate times it is a whole number", 
                              r->record_seconds, spr, name, in[k].rate);
            return -1;
        }
        for (uint32_t j = 0; j < k; j++)
            if (!strcmp(r->stage[j], name)) {
                host->error(host, "input '%s' is given twice", name);
                return -1;
            }
        snprintf(r->stage[k], sizeof r->stage[k], "%s", name);
        r->channels[k] = in[k].channels;
        r->rate[k] = in[k].rate;
        uint32_t chunk = (ITEM_BYTES_MAX - SAMPLES_OFFSET) / (in[k].channels * 4u);
        r->chunk_frames[k] = chunk ? chunk : 1;
    }
    return 0;
}

static int choose_ranges(recorder *r, const weft_params *p, int bdf)
{
    const weft_param *range = weft_param_get(p, "range_uv");
    if (range->cols > 1 && range->cols != r->n_in) {
        r->host->param_error(r->host, "range_uv", "range_uv has %u values; give one for all "
                             "inputs or one per input (%u)", range->cols, r->n_in);
        return -1;
    }
    for (uint32_t k = 0; k < r->n_in; k++)
        r->range[k] = range->cols == 0 ? (bdf ? BDF_DEFAULT_RANGE : EDF_DEFAULT_RANGE)
                                       : range->values[range->cols == 1 ? 0 : k];
    return 0;
}

/* "<stage>.<channel>", printable ASCII, cut to EDF's 16 characters; a cut that makes two
 * labels equal falls back to the channel's number ("eeg.12"). */
static int make_labels(recorder *r, const weft_layout *in)
{
    uint32_t total = 0;
    for (uint32_t k = 0; k < r->n_in; k++)
        total += r->channels[k];
    r->labels = calloc(total, sizeof *r->labels);
    r->label_ptrs = calloc(total, sizeof *r->label_ptrs);
    if (!r->labels || !r->label_ptrs)
        return WEFT_ENOMEM;
    uint32_t s = 0, cut = 0;
    char first_cut[96] = "";
    for (uint32_t k = 0; k < r->n_in; k++) {
        if (strlen(r->stage[k]) > EDF_LABEL_CHARS - 3) {
            r->host->error(r->host, "stage name '%s' leaves no room for channel names in EDF's "
                           "16-character labels ('<stage>.<channel>'); rename the stage to at "
                           "most 13 characters", r->stage[k]);
            return WEFT_EINVAL;
        }
        for (uint32_t c = 0; c < r->channels[k]; c++, s++) {
            char full[256], number[16];
            snprintf(number, sizeof number, "%u", c + 1);
            const char *ch = in[k].labels && in[k].labels[c] ? in[k].labels[c] : number;
            snprintf(full, sizeof full, "%s.%s", r->stage[k], ch);
            for (char *q = full; *q; q++)
                if ((unsigned char)*q < 32 || (unsigned char)*q > 126)
                    *q = '_';
            size_t len = strlen(full);
            memcpy(r->labels[s], full, len > EDF_LABEL_CHARS ? EDF_LABEL_CHARS : len);
            if (len > EDF_LABEL_CHARS) {
                if (!cut++)
                    snprintf(first_cut, sizeof first_cut, "'%.48s' -> '%.16s'", full,
                             r->labels[s]);
                for (uint32_t j = 0; j < s; j++) {
                    if (strcmp(r->labels[j], r->labels[s]) != 0)
                        continue;
                    /* EDF labels hold 16 characters: keep the first 16 of this one */
                    char numbered[40];
                    snprintf(numbered, sizeof numbered, "%.13s.%.15s", r->stage[k], number);
                    snprintf(r->labels[s], sizeof r->labels[s], "%.16s", numbered);
                }
            }
            r->label_ptrs[s] = r->labels[s];
        }
    }
    if (cut)
        r->host->log(r->host, WEFT_LOG_INFO, "%u channel labels cut to EDF's 16 characters "
                     "(e.g. %s)", cut, first_cut);
    return WEFT_OK;
}

static size_t queue_bytes(const recorder *r, double seconds)
{
    /* Blocks may be as small as one frame when paced: count a head per frame. */
    double bytes = 65536;
    for (uint32_t k = 0; k < r->n_in; k++)
        bytes += seconds * r->rate[k] * (48.0 + 4.0 * r->channels[k]);
    if (bytes < QUEUE_MIN_BYTES)
        bytes = QUEUE_MIN_BYTES;
    return bytes > 4e9 ? (size_t)4e9 : (size_t)bytes;
}

static void free_recorder(recorder *r)
{
    item_queue_free(&r->q);
    free(r->labels);
    free(r->label_ptrs);
    free(r);
}

static int open_file(recorder *r, const weft_params *p, int bdf)
{
    edf_writer_input_spec specs[MAX_INPUTS];
    uint32_t s = 0;
    for (uint32_t k = 0; k < r->n_in; k++) {
        specs[k] = (edf_writer_input_spec){ r->channels[k], r->rate[k], r->range[k],
                                            r->label_ptrs + s, r->stage[k] };
        s += r->channels[k];
    }
    double record = r->record_seconds;
    edf_writer_spec spec = {
        .bdf = bdf,
        .record_seconds = record,
        .drift_seconds = weft_param_number(p, "buffer"),
        .markers_per_record = record * 8 > 8 ? (uint32_t)ceil(record * 8) : 8,
        .unit = r->unit,
        .overwrite = weft_param_number(p, "overwrite") != 0,
        .sync = weft_param_number(p, "sync") != 0,
        .n_inputs = r->n_in,
        .inputs = specs,
    };
    char why[512];
    if (edf_writer_open(&r->w, r->path, &spec, why, sizeof why)) {
        r->host->param_error(r->host, "path", "%s", why);
        return WEFT_EIO;
    }
    return WEFT_OK;
}

static int init(const weft_host *host, const weft_params *p, const weft_layout *in,
                uint32_t n_in, weft_layout *out, void **self)
{
    (void)out;
    recorder *r = calloc(1, sizeof *r);
    if (!r) {
        host->error(host, "out of memory");
        return WEFT_ENOMEM;
    }
    r->host = host;
    r->n_in = n_in;
    r->record_seconds = weft_param_number(p, "record");
    snprintf(r->unit, sizeof r->unit, "%s", weft_param_text(p, "unit"));
    int bdf = 1;
    if (expand_path(r, weft_param_text(p, "path"))) {
        host->param_error(host, "path", "the path is empty or longer than %d bytes",
                          PATH_MAX_BYTES - 1);
        free_recorder(r);
        return WEFT_EINVAL;
    }
    if (strlen(weft_param_text(p, "unit")) > 8) {
        host->param_error(host, "unit", "unit '%s' is longer than EDF's 8 characters",
                          weft_param_text(p, "unit"));
        free_recorder(r);
        return WEFT_EINVAL;
    }
    if (choose_format(r, p, &bdf) || check_inputs(r, in, n_in) || choose_ranges(r, p, bdf)) {
        free_recorder(r);
        return WEFT_EINVAL;
    }
    int rc = make_labels(r, in);
    if (rc == WEFT_OK && item_queue_init(&r->q, queue_bytes(r, weft_param_number(p, "buffer"))))
        rc = WEFT_ENOMEM;
    if (rc == WEFT_ENOMEM)
        host->error(host, "out of memory for the recorder's queue");
    if (rc == WEFT_OK)
        rc = open_file(r, p, bdf);
    if (rc != WEFT_OK) {
        free_recorder(r);
        return rc;
    }
    atomic_init(&r->stopping, 0);
    atomic_init(&r->failed, 0);
    if (pthread_create(&r->thread, NULL, writer_main, r)) {
        host->error(host, "cannot start the writer thread");
        edf_writer_close(&r->w);
        edf_writer_free(&r->w);
        free_recorder(r);
        return WEFT_ENOMEM;
    }
    r->thread_running = 1;
    *self = r;
    return WEFT_OK;
}

/* ---- the run loop's side ----------------------------------------------------------------- */

static double mono_seconds(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

/* More stream than wall time has passed: the run is not paced, nothing live waits on it. */
static int offline(const recorder *r)
{
    double stream = 0;
    for (uint32_t k = 0; k < r->n_in; k++)
        if ((double)r->received[k] / r->rate[k] > stream)
            stream = (double)r->received[k] / r->rate[k];
    return stream - (mono_seconds() - r->first_call) > AHEAD_SECONDS;
}

/* Room for an item: at once when live; offline, after waiting for the writer if need be. */
static void *reserve(recorder *r, size_t size)
{
    void *it = item_queue_reserve(&r->q, size);
    while (!it && offline(r) && !atomic_load(&r->failed)) {
        struct timespec pause = { 0, 1000000L };
        nanosleep(&pause, NULL);
        it = item_queue_reserve(&r->q, size);
    }
    return it;
}

static int push_marker(recorder *r, uint32_t k, const weft_marker *m)
{
    item *it = reserve(r, sizeof *it);
    if (!it) {
        r->markers_dropped++;
        return -1;
    }
    *it = (item){ .kind = ITEM_MARKER, .input = k, .index = m->index, .duration = m->duration };
    snprintf(it->label, sizeof it->label, "%s", m->label ? m->label : "");
    item_queue_commit(&r->q);
    return 0;
}

/* Report frames lost earlier before any new frame of the input, so the writer keeps them in
 * place. Returns 0 when nothing is outstanding. */
static int push_lost(recorder *r, uint32_t k)
{
    if (!r->lost[k])
        return 0;
    item *it = reserve(r, sizeof *it);
    if (!it)
        return -1;
    *it = (item){ .kind = ITEM_LOST, .input = k, .index = r->lost[k] };
    item_queue_commit(&r->q);
    r->lost[k] = 0;
    return 0;
}

static void push_block(recorder *r, uint32_t k, const weft_block *b)
{
    for (uint32_t m = 0; m < b->n_markers; m++)
        push_marker(r, k, &b->markers[m]);
    uint32_t done = 0, ch = r->channels[k];
    r->frames_in += b->frames;
    r->received[k] += b->frames;
    while (done < b->frames) {
        uint32_t n = b->frames - done;
        if (n > r->chunk_frames[k])
            n = r->chunk_frames[k];
        uint8_t *it = NULL;
        if (push_lost(r, k) == 0)
            it = reserve(r, SAMPLES_OFFSET + (size_t)n * ch * sizeof(float));
        if (!it) {
            r->lost[k] += b->frames - done;
            r->lost_total += b->frames - done;
            return;
        }
        *(item *)it = (item){ .kind = ITEM_SAMPLES, .input = k, .frames = n };
        memcpy(it + SAMPLES_OFFSET, b->data + (size_t)done * ch, (size_t)n * ch * sizeof(float));
        item_queue_commit(&r->q);
        done += n;
    }
}

static int process(void *self, const weft_block *in, uint32_t n_in, weft_block *out)
{
    (void)out;
    recorder *r = self;
    if (r->first_call == 0)
        r->first_call = mono_seconds();
    if (atomic_load(&r->failed)) {
        r->host->error(r->host, "recording to '%s' failed: %s", r->path, r->w.error);
        return WEFT_EIO;
    }
    for (uint32_t k = 0; k < n_in && k < r->n_in; k++)
        if (in[k].frames || in[k].n_markers)
            push_block(r, k, &in[k]);
    return WEFT_OK;
}

/* ---- the end ----------------------------------------------------------------------------- */

static void report(recorder *r)
{
    const weft_host *h = r->host;
    uint64_t records = r->w.records, markers_written = r->w.markers_written;
    uint64_t markers_lost = r->w.markers_lost;
    h->log(h, WEFT_LOG_INFO, "recorded %.3f s in %llu data records of %u stream%s to '%s' "
           "(%llu markers)", (double)records * r->record_seconds, (unsigned long long)records,
           r->n_in, r->n_in == 1 ? "" : "s", r->path, (unsigned long long)markers_written);
    for (uint32_t k = 0; k < r->n_in; k++) {
        const edf_writer_input *in = &r->w.in[k];
        if (in->clipped)
            h->log(h, WEFT_LOG_WARN, "%llu samples of '%s' were outside +-%g %s and were "
                   "clipped; raise range_uv", (unsigned long long)in->clipped, r->stage[k],
                   r->range[k], r->unit);
        if (in->late)
            h->log(h, WEFT_LOG_WARN, "%llu samples of '%s' came more than `buffer` seconds "
                   "after the other inputs and were dropped (marked \"pad %s\")",
                   (unsigned long long)in->late, r->stage[k], r->stage[k]);
    }
    if (r->lost_total)
        h->log(h, WEFT_LOG_WARN, "%llu frames could not be queued (the disk fell behind by more "
               "than `buffer` seconds) and were marked \"lost STAGE\"",
               (unsigned long long)r->lost_total);
    if (r->markers_dropped || markers_lost)
        h->log(h, WEFT_LOG_WARN, "%llu markers could not be written",
               (unsigned long long)(r->markers_dropped + markers_lost));
}

static void destroy(void *self)
{
    recorder *r = self;
    if (!r)
        return;
    if (r->thread_running) {
        atomic_store(&r->stopping, 1);
        pthread_join(r->thread, NULL);
    }
    /* Losses not yet reported to the writer go in now that its thread is gone. */
    for (uint32_t k = 0; k < r->n_in; k++)
        if (r->lost[k] && !atomic_load(&r->failed) && edf_writer_fill(&r->w, k, r->lost[k]))
            atomic_store(&r->failed, 1);
    int failed = atomic_load(&r->failed);
    char error[256];
    snprintf(error, sizeof error, "%s", r->w.error);
    int rc = edf_writer_close(&r->w);
    if (failed || rc)
        r->host->log(r->host, WEFT_LOG_WARN, "recording to '%s' is incomplete: %s", r->path,
                     failed ? error : r->w.error);
    if (r->frames_in)
        report(r);
    else
        r->host->log(r->host, WEFT_LOG_DEBUG, "no samples came; '%s' was not created", r->path);
    edf_writer_free(&r->w);
    free_recorder(r);
}

static const weft_stage_api api = {
    WEFT_API_HEADER,
    .roles = WEFT_ROLE_SINK,
    .name = "recorder",
    .version = "0.1.0",
    .summary = "writes sample streams and markers to BDF+ or EDF+, crash-safe, never blocking",
    .params = params,
    .min_inputs = 1,
    .max_inputs = MAX_INPUTS,
    .init = init,
    .process = process,
    .destroy = destroy,
};

WEFT_STAGE(api)
