/* edf: a source that plays back one stream of an EDF, EDF+, BDF or BDF+ recording, with the
 * file's annotations as markers.
 *
 * One source stage produces one stream, so a stage selects the signals it plays: `stream: eeg`
 * takes every signal labelled "eeg.*" (the labels the recorder writes) and names the channels
 * without the prefix; `signals: [...]` takes labels as written. The selected signals must
 * share one sample rate.
 *
 * I/O: init reads and checks the whole header and every record's annotations (so a malformed
 * file fails before the run, with the byte offset of the problem); samples are read in
 * process, whole data records at a time, about one second per pread() into a buffer allocated
 * in init. The kernel is told the reads are sequential, so its read-ahead has the next second
 * in memory before it is asked for; a recording on a slow network share can still stall a
 * --realtime replay for the length of one read. */
#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>
#include <weft/stage.h>

#include "edf_header.h"
#include "edf_tal.h"

#define MAX_CHANNELS 4096u
#define READ_SECONDS 1.0
#define MAX_BUFFER_BYTES (64u * 1024 * 1024)
#define GAP_LABEL "gap"

static const weft_param_spec params[] = {
    { "path", WEFT_PARAM_STRING, 0, NULL, WEFT_NO_RANGE, "", NULL,
      "the recording (.edf or .bdf, EDF+ and BDF+ included)" },
    { "stream", WEFT_PARAM_STRING, 0, "", WEFT_NO_RANGE, "", NULL,
      "play the signals labelled STREAM.* (channel names without the prefix)" },
    { "signals", WEFT_PARAM_STRINGS, 0, "[]", WEFT_NO_RANGE, "", NULL,
      "play these signals, by their labels in the file (instead of stream)" },
    { "markers", WEFT_PARAM_BOOLEAN, 0, "true", WEFT_NO_RANGE, "", NULL,
      "emit the file's annotations (and gaps of EDF+D files) as markers" },
    { .name = NULL },
};

typedef struct file_marker {
    uint64_t index;
    double duration;
    char *label;
    uint64_t order;             /* position in the file, to keep equal indices in order */
} file_marker;

typedef struct reader {
    const weft_host *host;
    const char *path;           /* as given; for messages */
    int fd;
    edf_header h;
    uint64_t n_records;         /* complete records that will be played */
    uint32_t *sel;              /* selected signal numbers */
    uint32_t n_sel;
    uint32_t spr;               /* samples per record of every selected signal */
    double rate;
    uint64_t total, pos;        /* frames in the file, next frame */
    uint8_t *buf;               /* buf_cap records starting at record buf_first */
    uint32_t buf_cap, buf_count;
    uint64_t buf_first;
    double *record_start;       /* seconds, per record (EDF+ files) */
    file_marker *markers;
    size_t n_markers, cap_markers, next_marker;
    char **labels;
    const char **label_ptrs;
} reader;

static void destroy(void *self)
{
    reader *r = self;
    if (!r)
        return;
    if (r->fd >= 0)
        close(r->fd);
    edf_header_free(&r->h);
    for (size_t i = 0; i < r->n_markers; i++)
        free(r->markers[i].label);
    free(r->markers);
    for (uint32_t c = 0; r->labels && c < r->n_sel; c++)
        free(r->labels[c]);
    free(r->labels);
    free(r->label_ptrs);
    free(r->sel);
    free(r->buf);
    free(r->record_start);
    free(r);
}

static int read_at(reader *r, void *into, size_t n, uint64_t at)
{
    size_t done = 0;
    while (done < n) {
        ssize_t k = pread(r->fd, (uint8_t *)into + done, n - done, (off_t)(at + done));
        if (k < 0 && errno == EINTR)
            continue;
        if (k <= 0)
            return -1;
        done += (size_t)k;
    }
    return 0;
}

static int open_header(reader *r, uint64_t *file_size)
{
    const weft_host *host = r->host;
    r->fd = open(r->path, O_RDONLY | O_CLOEXEC);
    struct stat st;
    if (r->fd < 0 || fstat(r->fd, &st)) {
        host->param_error(host, "path", "cannot open recording '%s': %s", r->path,
                          strerror(errno));
        return WEFT_EIO;
    }
    *file_size = (uint64_t)st.st_size;
    uint8_t fixed[EDF_FIXED_BYTES];
    char why[EDF_ERROR_MAX];
    size_t got = *file_size < EDF_FIXED_BYTES ? (size_t)*file_size : EDF_FIXED_BYTES;
    if (read_at(r, fixed, got, 0)) {
        host->param_error(host, "path", "cannot read recording '%s': %s", r->path,
                          strerror(errno));
        return WEFT_EIO;
    }
    if (edf_header_parse_fixed(fixed, got, &r->h, why, sizeof why)) {
        host->param_error(host, "path", "recording '%s': %s", r->path, why);
        return WEFT_EINVAL;
    }
    uint32_t n = r->h.header_bytes;
    if (*file_size < n) {
        host->param_error(host, "path", "recording '%s': header byte %llu: the file ends "
                          "inside the header, which announces %u bytes for %u signals",
                          r->path, (unsigned long long)*file_size, n, r->h.n_signals);
        return WEFT_EINVAL;
    }
    uint8_t *all = malloc(n);
    if (!all) {
        host->error(host, "out of memory for a %u-byte header", n);
        return WEFT_ENOMEM;
    }
    int bad = read_at(r, all, n, 0) || edf_header_parse(all, n, &r->h, why, sizeof why);
    free(all);
    if (bad) {
        host->param_error(host, "path", "recording '%s': %s", r->path, why);
        return WEFT_EINVAL;
    }
    return WEFT_OK;
}

/* Say what a cut-short or still-open file means for what is played. */
static void settle_record_count(reader *r, uint64_t file_size)
{
    const edf_header *h = &r->h;
    uint64_t complete = edf_header_records_in(h, file_size);
    uint64_t body = file_size - h->header_bytes;
    uint64_t extra = body - complete * h->record_bytes;
    r->n_records = complete;
    if (h->n_records < 0) {
        r->host->log(r->host, WEFT_LOG_WARN, "'%s' says -1 data records (it was not closed); "
                     "playing the %llu complete records it holds", r->path,
                     (unsigned long long)complete);
    } else if ((uint64_t)h->n_records < complete) {
        r->n_records = (uint64_t)h->n_records;
        r->host->log(r->host, WEFT_LOG_WARN, "'%s' holds %llu data records, more than the %lld "
                     "its header announces; playing %lld", r->path,
                     (unsigned long long)complete, (long long)h->n_records,
                     (long long)h->n_records);
    } else if ((uint64_t)h->n_records > complete || extra) {
        r->host->log(r->host, WEFT_LOG_WARN, "'%s' is cut short: the header announces %lld data "
                     "records, the file holds %llu complete ones%s; playing those",
                     r->path, (long long)h->n_records, (unsigned long long)complete,
                     extra ? " and part of the next" : "");
    }
}

static int add_marker(reader *r, uint64_t index, double duration, const char *text, size_t len)
{
    if (r->n_markers == r->cap_markers) {
        size_t cap = r->cap_markers ? 2 * r->cap_markers : 64;
        file_marker *m = realloc(r->markers, cap * sizeof *m);
        if (!m)
            return -1;
        r->markers = m;
        r->cap_markers = cap;
    }
    char *label = malloc(len + 1);
    if (!label)
        return -1;
    memcpy(label, text, len);
    label[len] = 0;
    r->markers[r->n_markers] = (file_marker){ index, duration, label, r->n_markers };
    r->n_markers++;
    return 0;
}

/* Until all record starts are known, an annotation keeps its onset in .index's place. */
typedef struct pending_annotation {
    double onset, duration;
} pending_annotation;

typedef struct scan {
    reader *r;
    pending_annotation *onsets;
    size_t n, cap;
} scan;

static int collect(void *ctx, const edf_annotation *a)
{
    scan *s = ctx;
    if (s->n == s->cap) {
        size_t cap = s->cap ? 2 * s->cap : 64;
        pending_annotation *p = realloc(s->onsets, cap * sizeof *p);
        if (!p)
            return WEFT_ENOMEM;
        s->onsets = p;
        s->cap = cap;
    }
    s->onsets[s->n++] = (pending_annotation){ a->onset, a->duration };
    return add_marker(s->r, 0, a->duration, a->text, a->text_len) ? WEFT_ENOMEM : 0;
}

/* Read every record's annotation signals: the time-keeping TAL gives each record's start,
 * the others become markers. */
static int scan_annotations(reader *r, scan *s)
{
    const edf_header *h = &r->h;
    const weft_host *host = r->host;
    r->record_start = calloc(r->n_records ? r->n_records : 1, sizeof *r->record_start);
    if (!r->record_start)
        return WEFT_ENOMEM;
    uint32_t max_bytes = 0;
    for (uint32_t i = 0; i < h->n_signals; i++)
        if (h->signals[i].annotations &&
            h->signals[i].samples_per_record * h->sample_bytes > max_bytes)
            max_bytes = h->signals[i].samples_per_record * h->sample_bytes;
    uint8_t *bytes = malloc(max_bytes ? max_bytes : 1);
    if (!bytes)
        return WEFT_ENOMEM;
    int warned = 0, rc = WEFT_OK;
    for (uint64_t rec = 0; rec < r->n_records && rc == WEFT_OK; rec++) {
        int first_signal = 1;
        r->record_start[rec] = rec ? r->record_start[rec - 1] + h->record_seconds : 0;
        for (uint32_t i = 0; i < h->n_signals && rc == WEFT_OK; i++) {
            const edf_signal *sig = &h->signals[i];
            if (!sig->annotations)
                continue;
            size_t n = (size_t)sig->samples_per_record * h->sample_bytes;
            uint64_t at = h->header_bytes + rec * h->record_bytes + sig->record_offset;
            double start;
            size_t bad_at = 0;
            char why[EDF_ERROR_MAX];
            if (read_at(r, bytes, n, at)) {
                host->error(host, "cannot read '%s' at byte %llu: %s", r->path,
                            (unsigned long long)at, strerror(errno));
                rc = WEFT_EIO;
                break;
            }
            int bad = edf_tal_parse(bytes, n, &start, collect, s, &bad_at, why, sizeof why);
            if (bad == WEFT_ENOMEM) {
                rc = WEFT_ENOMEM;
            } else if (bad) {
                host->param_error(host, "path", "recording '%s': byte %llu (data record %llu, "
                                  "signal %u '%s'): %s", r->path,
                                  (unsigned long long)(at + bad_at), (unsigned long long)rec,
                                  i + 1, sig->label, why);
                rc = WEFT_EINVAL;
            } else if (first_signal && !isnan(start)) {
                r->record_start[rec] = start;
            } else if (first_signal && !warned) {
                host->log(host, WEFT_LOG_WARN, "'%s': data record %llu has no time-keeping "
                          "annotation; assuming it follows the previous one", r->path,
                          (unsigned long long)rec);
                warned = 1;
            }
            first_signal = 0;
        }
    }
    free(bytes);
    return rc;
}

/* The frame an onset falls on: the nearest sample of the record it lies in, or the first
 * sample after it when it lies in a gap between records. */
static uint64_t onset_index(const reader *r, double onset)
{
    if (!r->record_start || r->n_records == 0)
        return onset <= 0 ? 0 : (uint64_t)llround(onset * r->rate);
    uint64_t lo = 0, hi = r->n_records; /* last record starting at or before onset */
    while (hi - lo > 1) {
        uint64_t mid = lo + (hi - lo) / 2;
        if (r->record_start[mid] <= onset)
            lo = mid;
        else
            hi = mid;
    }
    double into = onset - r->record_start[lo];
    if (into <= 0)
        return lo * r->spr;
    double k = round(into * r->rate);
    if (k >= r->spr)
        return (lo + 1) * r->spr;
    return lo * r->spr + (uint64_t)k;
}

static int cmp_marker(const void *a, const void *b)
{
    const file_marker *x = a, *y = b;
    if (x->index != y->index)
        return x->index < y->index ? -1 : 1;
    return x->order < y->order ? -1 : x->order > y->order;
}

/* Gaps between records of an EDF+D file become markers at the first sample after them. */
static int mark_gaps(reader *r)
{
    double tolerance = 0.5 / r->rate;
    int warned = 0;
    for (uint64_t rec = 1; rec < r->n_records; rec++) {
        double gap = r->record_start[rec] - (r->record_start[rec - 1] + r->h.record_seconds);
        if (gap < -tolerance && !warned) {
            r->host->log(r->host, WEFT_LOG_WARN, "'%s': data record %llu starts %.6f s before "
                         "the previous one ends; playing the records one after the other",
                         r->path, (unsigned long long)rec, -gap);
            warned = 1;
        }
        if (gap <= tolerance)
            continue;
        if (!r->h.discontinuous && !warned) {
            r->host->log(r->host, WEFT_LOG_WARN, "'%s' says it is continuous (+C) but data "
                         "record %llu starts %.6f s after the previous one ends; marking the "
                         "gap", r->path, (unsigned long long)rec, gap);
            warned = 1;
        }
        if (add_marker(r, rec * r->spr, gap, GAP_LABEL, strlen(GAP_LABEL)))
            return WEFT_ENOMEM;
    }
    return WEFT_OK;
}

static void drop_markers(reader *r)
{
    for (size_t i = 0; i < r->n_markers; i++)
        free(r->markers[i].label);
    r->n_markers = 0;
}

/* The recorder fills the tail of its last data record and marks it "pad STREAM"; the stream
 * is played as it was recorded, without the filler. */
static void trim_trailing_pad(reader *r, const char *stream)
{
    char label[EDF_LABEL_CHARS + 80];
    snprintf(label, sizeof label, "pad %s", stream);
    for (size_t i = 0; stream[0] && i < r->n_markers; i++) {
        const file_marker *m = &r->markers[i];
        uint64_t end = m->index + (uint64_t)llround(m->duration * r->rate);
        if (strcmp(m->label, label) || m->index >= r->total || end < r->total ||
            r->total - m->index > r->spr)
            continue;
        r->host->log(r->host, WEFT_LOG_DEBUG, "'%s': the last %llu samples of '%s' fill the "
                     "last record and are not played", r->path,
                     (unsigned long long)(r->total - m->index), stream);
        r->total = m->index;
        free(r->markers[i].label);
        memmove(&r->markers[i], &r->markers[i + 1], (r->n_markers - i - 1) * sizeof *m);
        r->n_markers--;
        return;
    }
}

static int load_markers(reader *r, const char *stream)
{
    if (!r->h.plus)
        return WEFT_OK;
    scan s = { r, NULL, 0, 0 };
    int rc = scan_annotations(r, &s);
    if (rc == WEFT_OK) {
        for (size_t i = 0; i < s.n; i++)
            r->markers[i].index = onset_index(r, s.onsets[i].onset);
        rc = mark_gaps(r);
    }
    free(s.onsets);
    if (rc == WEFT_ENOMEM)
        r->host->error(r->host, "out of memory for the annotations of '%s'", r->path);
    if (rc)
        return rc;
    trim_trailing_pad(r, stream);
    size_t kept = 0, late = 0;
    for (size_t i = 0; i < r->n_markers; i++) {
        if (r->markers[i].index < r->total)
            r->markers[kept++] = r->markers[i];
        else
            late += strncmp(r->markers[i].label, "pad ", 4) != 0, free(r->markers[i].label);
    }
    r->n_markers = kept;
    if (late)
        r->host->log(r->host, WEFT_LOG_WARN, "'%s': %zu annotations lie after the last sample "
                     "played and are not delivered", r->path, late);
    if (r->n_markers > 1)
        qsort(r->markers, r->n_markers, sizeof *r->markers, cmp_marker);
    return WEFT_OK;
}

/* "eeg.C3" -> stream "eeg"; for the list of streams a file holds. */
static void list_streams(const edf_header *h, char *out, size_t size)
{
    size_t len = 0;
    out[0] = 0;
    for (uint32_t i = 0; i < h->n_signals; i++) {
        const char *label = h->signals[i].label, *dot = strchr(label, '.');
        if (h->signals[i].annotations || !dot)
            continue;
        int seen = 0;
        for (uint32_t j = 0; j < i && !seen; j++) {
            const char *other = h->signals[j].label, *d2 = strchr(other, '.');
            seen = !h->signals[j].annotations && d2 && d2 - other == dot - label &&
                   !strncmp(other, label, (size_t)(dot - label));
        }
        if (!seen && len + (size_t)(dot - label) + 40 < size)
            len += (size_t)snprintf(out + len, size - len, "%s%.*s %g Hz", len ? ", " : "",
                                    (int)(dot - label), label, edf_signal_rate(h, i));
    }
    if (!len)
        snprintf(out, size, "none (no label has the form STREAM.CHANNEL)");
}

static void list_signals(const edf_header *h, char *out, size_t size)
{
    size_t len = 0;
    out[0] = 0;
    for (uint32_t i = 0; i < h->n_signals && len + 40 < size; i++)
        if (!h->signals[i].annotations)
            len += (size_t)snprintf(out + len, size - len, "%s'%s' %g Hz", len ? ", " : "",
                                    h->signals[i].label, edf_signal_rate(h, i));
}

static int add_selected(reader *r, uint32_t i, const char *name)
{
    r->labels[r->n_sel] = strdup(name);
    if (!r->labels[r->n_sel])
        return WEFT_ENOMEM;
    r->label_ptrs[r->n_sel] = r->labels[r->n_sel];
    r->sel[r->n_sel++] = i;
    return WEFT_OK;
}

static int select_signals(reader *r, const weft_params *p)
{
    const edf_header *h = &r->h;
    const weft_host *host = r->host;
    const weft_param *names = weft_param_get(p, "signals");
    const char *stream = weft_param_text(p, "stream");
    char list[768];
    if (names->n_strings && stream[0]) {
        host->param_error(host, "signals", "give `stream:` or `signals:`, not both");
        return WEFT_EINVAL;
    }
    r->sel = calloc(h->n_signals, sizeof *r->sel);
    r->labels = calloc(h->n_signals, sizeof *r->labels);
    r->label_ptrs = calloc(h->n_signals, sizeof *r->label_ptrs);
    if (!r->sel || !r->labels || !r->label_ptrs)
        return WEFT_ENOMEM;
    size_t prefix = strlen(stream);
    for (uint32_t k = 0; k < names->n_strings; k++) {
        uint32_t i = 0;
        while (i < h->n_signals &&
               (h->signals[i].annotations || strcmp(h->signals[i].label, names->strings[k])))
            i++;
        if (i == h->n_signals) {
            list_signals(h, list, sizeof list);
            host->param_error(host, "signals", "recording '%s' has no signal labelled '%s'; "
                              "it has %s", r->path, names->strings[k], list);
            return WEFT_EINVAL;
        }
        if (add_selected(r, i, h->signals[i].label))
            return WEFT_ENOMEM;
    }
    for (uint32_t i = 0; !names->n_strings && i < h->n_signals; i++) {
        const char *label = h->signals[i].label;
        if (h->signals[i].annotations)
            continue;
        if (prefix && (strncmp(label, stream, prefix) || label[prefix] != '.'))
            continue;
        if (add_selected(r, i, prefix ? label + prefix + 1 : label))
            return WEFT_ENOMEM;
    }
    if (r->n_sel == 0) {
        list_streams(h, list, sizeof list);
        if (prefix)
            host->param_error(host, "stream", "recording '%s' has no signals labelled "
                              "'%s.*'; its streams are: %s", r->path, stream, list);
        else
            host->param_error(host, "path", "recording '%s' holds annotations only, no "
                              "signal to play", r->path);
        return WEFT_EINVAL;
    }
    if (r->n_sel > MAX_CHANNELS) {
        host->param_error(host, prefix ? "stream" : "signals", "%u signals selected; a stream "
                          "has at most %u channels", r->n_sel, MAX_CHANNELS);
        return WEFT_EINVAL;
    }
    return WEFT_OK;
}

static int check_rates(reader *r)
{
    const edf_header *h = &r->h;
    r->spr = h->signals[r->sel[0]].samples_per_record;
    r->rate = edf_signal_rate(h, r->sel[0]);
    for (uint32_t c = 1; c < r->n_sel; c++) {
        const edf_signal *s = &h->signals[r->sel[c]];
        if (s->samples_per_record == r->spr)
            continue;
        char streams[512];
        list_streams(h, streams, sizeof streams);
        r->host->param_error(r->host, "stream", "the selected signals of '%s' have different "
                             "rates ('%s' %g Hz, '%s' %g Hz); one stage plays one rate, so "
                             "select signals of one rate with `stream:` (streams: %s) or "
                             "`signals:`", r->path, h->signals[r->sel[0]].label, r->rate,
                             s->label, edf_signal_rate(h, r->sel[c]), streams);
        return WEFT_EINVAL;
    }
    if (!(r->rate > 0)) {
        r->host->param_error(r->host, "path", "recording '%s' has no sample rate (record "
                             "duration %g s)", r->path, h->record_seconds);
        return WEFT_EINVAL;
    }
    return WEFT_OK;
}

static int alloc_buffer(reader *r)
{
    double per_second = ceil(READ_SECONDS / r->h.record_seconds);
    uint64_t cap = per_second < 1 ? 1 : (uint64_t)per_second;
    if (cap * r->h.record_bytes > MAX_BUFFER_BYTES)
        cap = MAX_BUFFER_BYTES / r->h.record_bytes;
    if (cap < 1)
        cap = 1;
    r->buf_cap = (uint32_t)cap;
    r->buf = malloc((size_t)(cap * r->h.record_bytes));
    return r->buf ? WEFT_OK : WEFT_ENOMEM;
}

static int init(const weft_host *host, const weft_params *p, const weft_layout *in,
                uint32_t n_in, weft_layout *out, void **self)
{
    (void)in;
    (void)n_in;
    reader *r = calloc(1, sizeof *r);
    if (!r) {
        host->error(host, "out of memory");
        return WEFT_ENOMEM;
    }
    r->host = host;
    r->fd = -1;
    r->path = weft_param_text(p, "path");
    uint64_t file_size = 0;
    int rc = open_header(r, &file_size);
    if (rc == WEFT_OK)
        rc = select_signals(r, p);
    if (rc == WEFT_OK)
        rc = check_rates(r);
    if (rc == WEFT_OK) {
        settle_record_count(r, file_size);
        if (r->n_records > UINT64_MAX / r->spr)
            r->n_records = UINT64_MAX / r->spr;
        r->total = r->n_records * r->spr;
        rc = alloc_buffer(r);
    }
    if (rc == WEFT_OK)
        rc = load_markers(r, weft_param_text(p, "stream"));
    if (rc == WEFT_OK && weft_param_number(p, "markers") == 0)
        drop_markers(r);
    if (rc == WEFT_ENOMEM)
        host->error(host, "out of memory reading '%s'", r->path);
    r->path = NULL; /* the parameter text is only valid during init */
    if (rc != WEFT_OK) {
        destroy(r);
        return rc;
    }
#ifdef POSIX_FADV_SEQUENTIAL
    posix_fadvise(r->fd, 0, 0, POSIX_FADV_SEQUENTIAL);
#endif
    out->kind = WEFT_STREAM_SAMPLES;
    out->channels = r->n_sel;
    out->rate = r->rate;
    out->labels = r->label_ptrs;
    out->bounded = 1;
    *self = r;
    return WEFT_OK;
}

static int fill_buffer(reader *r, uint64_t record)
{
    uint64_t count = r->n_records - record;
    if (count > r->buf_cap)
        count = r->buf_cap;
    uint64_t at = r->h.header_bytes + record * r->h.record_bytes;
    if (read_at(r, r->buf, (size_t)(count * r->h.record_bytes), at)) {
        r->host->error(r->host, "cannot read data record %llu at byte %llu: %s (did the file "
                       "shrink during the run?)", (unsigned long long)record,
                       (unsigned long long)at, errno ? strerror(errno) : "end of file");
        return WEFT_EIO;
    }
    r->buf_first = record;
    r->buf_count = (uint32_t)count;
    return WEFT_OK;
}

static inline int32_t digital_at(const uint8_t *p, int bdf)
{
    if (bdf) {
        int32_t v = (int32_t)((uint32_t)p[0] | (uint32_t)p[1] << 8 | (uint32_t)p[2] << 16);
        return v & 0x800000 ? v - 0x1000000 : v;
    }
    return (int16_t)(uint16_t)((uint32_t)p[0] | (uint32_t)p[1] << 8);
}

/* Decode frames [pos, pos + n) that lie in one record held by the buffer. */
static void decode(reader *r, uint64_t record, uint32_t from, uint32_t n, float *out)
{
    const edf_header *h = &r->h;
    const uint8_t *rec = r->buf + (size_t)((record - r->buf_first) * h->record_bytes);
    for (uint32_t c = 0; c < r->n_sel; c++) {
        const edf_signal *s = &h->signals[r->sel[c]];
        const uint8_t *p = rec + s->record_offset + (size_t)from * h->sample_bytes;
        for (uint32_t k = 0; k < n; k++, p += h->sample_bytes)
            out[(size_t)k * r->n_sel + c] = (float)(s->gain * digital_at(p, h->bdf) + s->offset);
    }
}

/* Markers due in [pos, pos + frames): as many as the block holds; the rest wait for the next
 * block, which then cannot go past the first of them. */
static uint32_t attach_markers(reader *r, weft_block *out, uint32_t frames)
{
    out->n_markers = 0;
    while (r->next_marker < r->n_markers) {
        const file_marker *m = &r->markers[r->next_marker];
        if (m->index >= r->pos + frames)
            break;
        if (out->n_markers == out->marker_capacity) {
            if (m->index > r->pos)
                frames = (uint32_t)(m->index - r->pos);
            break;
        }
        out->markers[out->n_markers++] = (weft_marker){ m->label, m->index, m->duration };
        r->next_marker++;
    }
    return frames;
}

static int process(void *self, const weft_block *in, uint32_t n_in, weft_block *out)
{
    (void)in;
    (void)n_in;
    reader *r = self;
    out->frames = 0;
    out->n_markers = 0;
    if (r->pos >= r->total)
        return WEFT_END;
    uint64_t left = r->total - r->pos;
    uint32_t frames = left < out->capacity ? (uint32_t)left : out->capacity;
    frames = attach_markers(r, out, frames);
    uint32_t done = 0;
    while (done < frames) {
        uint64_t record = r->pos / r->spr;
        uint32_t from = (uint32_t)(r->pos % r->spr);
        if (record < r->buf_first || record >= r->buf_first + r->buf_count) {
            int rc = fill_buffer(r, record);
            if (rc)
                return rc;
        }
        uint32_t n = r->spr - from;
        if (n > frames - done)
            n = frames - done;
        decode(r, record, from, n, out->data + (size_t)done * r->n_sel);
        done += n;
        r->pos += n;
    }
    out->frames = frames;
    return WEFT_OK;
}

static const weft_stage_api api = {
    WEFT_API_HEADER,
    .roles = WEFT_ROLE_SOURCE,
    .name = "edf",
    .version = "0.1.0",
    .summary = "plays one stream of an EDF/EDF+/BDF/BDF+ recording, annotations as markers",
    .params = params,
    .init = init,
    .process = process,
    .destroy = destroy,
};

WEFT_STAGE(api)
