/* edf_writer: record assembly, digital scaling and crash-safe appending for EDF+/BDF+. */
#include "edf_writer.h"

#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "edf_tal.h"

#define PENDING_MAX 4096u
/* Bytes one marker may take in a TAL: onset, duration, label and the separators. */
#define TAL_BYTES_PER_MARKER (24 + 20 + EDF_WRITER_LABEL_MAX + 3)
#define TIMEKEEPING_BYTES 32

static int set_error(edf_writer *w, const char *what)
{
    if (!w->error[0])
        snprintf(w->error, sizeof w->error, "%s: %s", what, strerror(errno));
    return -1;
}

static int write_all(edf_writer *w, const uint8_t *p, size_t n, const char *what)
{
    while (n > 0) {
        ssize_t k = write(w->fd, p, n);
        if (k < 0 && errno == EINTR)
            continue;
        if (k <= 0) {
            if (k == 0)
                errno = EIO;
            return set_error(w, what);
        }
        p += k;
        n -= (size_t)k;
    }
    return 0;
}

/* The count goes in after the record it counts, so a reader never sees a record promised
 * that is not there yet. */
static int write_count(edf_writer *w)
{
    char field[8];
    edf_format_records((int64_t)w->records, field);
    if (pwrite(w->fd, field, sizeof field, EDF_AT_N_RECORDS) != (ssize_t)sizeof field)
        return set_error(w, "cannot update the record count");
    if (w->sync && fdatasync(w->fd))
        return set_error(w, "cannot sync the recording to disk");
    return 0;
}

static void fill_identity(edf_header *h)
{
    static const char *const months[] = { "JAN", "FEB", "MAR", "APR", "MAY", "JUN",
                                          "JUL", "AUG", "SEP", "OCT", "NOV", "DEC" };
    time_t now = time(NULL);
    struct tm t;
    localtime_r(&now, &t);
    /* Unknown patient and recording subfields are "X" (Kemp and Olivan 2003, 2.1.3). */
    snprintf(h->patient, sizeof h->patient, "X X X X");
    snprintf(h->recording, sizeof h->recording, "Startdate %02d-%s-%04d X X weft", t.tm_mday,
             months[t.tm_mon], t.tm_year + 1900);
    char text[64];
    snprintf(text, sizeof text, "%02d.%02d.%02d", t.tm_mday, t.tm_mon + 1, t.tm_year % 100);
    memcpy(h->start_date, text, 8);
    snprintf(text, sizeof text, "%02d.%02d.%02d", t.tm_hour, t.tm_min, t.tm_sec % 60);
    memcpy(h->start_time, text, 8);
}

static int fail(char *err, size_t size, const char *msg)
{
    snprintf(err, size, "%s", msg);
    return -1;
}

static int build_header(edf_writer *w, const edf_writer_spec *spec, char *err, size_t size)
{
    edf_header *h = &w->h;
    memset(h, 0, sizeof *h);
    h->bdf = spec->bdf;
    h->plus = 1;
    h->sample_bytes = spec->bdf ? 3 : 2;
    h->record_seconds = spec->record_seconds;
    fill_identity(h);
    uint64_t n = 1;
    for (uint32_t k = 0; k < spec->n_inputs; k++)
        n += spec->inputs[k].channels;
    if (n > EDF_MAX_SIGNALS)
        return fail(err, size, "more than 9999 signals do not fit an EDF header");
    h->n_signals = (uint32_t)n;
    h->header_bytes = EDF_SIGNAL_BYTES * (h->n_signals + 1);
    h->signals = calloc(n, sizeof *h->signals);
    if (!h->signals)
        return fail(err, size, "out of memory");
    int32_t dmin = spec->bdf ? -8388608 : -32768, dmax = spec->bdf ? 8388607 : 32767;
    uint32_t s = 0;
    for (uint32_t k = 0; k < spec->n_inputs; k++) {
        const edf_writer_input_spec *in = &spec->inputs[k];
        char text[9];
        double lo, hi;
        if (edf_format_number(-in->range, text, &lo) || edf_format_number(in->range, text, &hi))
            return fail(err, size, "the physical range does not fit the 8-character header "
                        "field; choose a range below 10000000");
        double spr = round(in->rate * spec->record_seconds);
        w->in[k].spr = (uint32_t)spr;
        w->in[k].channels = in->channels;
        w->in[k].rate = in->rate;
        w->in[k].first_signal = s;
        snprintf(w->in[k].name, sizeof w->in[k].name, "%s", in->name ? in->name : "?");
        for (uint32_t c = 0; c < in->channels; c++, s++) {
            edf_signal *sig = &h->signals[s];
            snprintf(sig->label, sizeof sig->label, "%s", in->labels[c]);
            snprintf(sig->unit, sizeof sig->unit, "%s", spec->unit);
            sig->phys_min = lo;
            sig->phys_max = hi;
            sig->dig_min = dmin;
            sig->dig_max = dmax;
            sig->samples_per_record = (uint32_t)spr;
            sig->record_offset = h->record_bytes;
            edf_signal_scaling(sig);
            h->record_bytes += (uint64_t)sig->samples_per_record * h->sample_bytes;
        }
    }
    edf_signal *a = &h->signals[s];
    snprintf(a->label, sizeof a->label, spec->bdf ? "BDF Annotations" : "EDF Annotations");
    a->annotations = 1;
    a->phys_min = -1;
    a->phys_max = 1;
    a->dig_min = dmin;
    a->dig_max = dmax;
    a->samples_per_record = (w->annotation_bytes + h->sample_bytes - 1) / h->sample_bytes;
    w->annotation_bytes = a->samples_per_record * h->sample_bytes;
    a->record_offset = h->record_bytes;
    h->record_bytes += w->annotation_bytes;
    return 0;
}

static int alloc_inputs(edf_writer *w, const edf_writer_spec *spec, char *err, size_t size)
{
    double records = ceil(spec->drift_seconds / spec->record_seconds) + 2;
    for (uint32_t k = 0; k < w->n_inputs; k++) {
        edf_writer_input *in = &w->in[k];
        in->stage_frames = (uint64_t)records * in->spr;
        in->stage = calloc((size_t)in->stage_frames * in->channels, sizeof *in->stage);
        in->last = calloc(in->channels, sizeof *in->last);
        if (!in->stage || !in->last)
            return fail(err, size, "out of memory for the recorder's staging buffers");
    }
    w->record = calloc(1, (size_t)w->h.record_bytes);
    w->cap_pending = PENDING_MAX;
    w->pending = calloc(w->cap_pending, sizeof *w->pending);
    if (!w->record || !w->pending)
        return fail(err, size, "out of memory for the recorder");
    return 0;
}

/* Everything but the inputs' counters, which stay readable after close. */
static void free_buffers(edf_writer *w)
{
    for (uint32_t k = 0; w->in && k < w->n_inputs; k++) {
        free(w->in[k].stage);
        free(w->in[k].last);
        w->in[k].stage = w->in[k].last = NULL;
    }
    free(w->record);
    free(w->pending);
    free(w->header);
    edf_header_free(&w->h);
    w->record = NULL;
    w->pending = NULL;
    w->header = NULL;
}

void edf_writer_free(edf_writer *w)
{
    free_buffers(w);
    free(w->in);
    w->in = NULL;
}

static void dir_of(const char *path, char *dir, size_t size)
{
    const char *slash = strrchr(path, '/');
    if (!slash)
        snprintf(dir, size, ".");
    else if (slash == path)
        snprintf(dir, size, "/");
    else
        snprintf(dir, size, "%.*s", (int)(slash - path), path);
}

/* What creating the file would run into, found without creating it. */
static int check_path(const char *path, int overwrite, char *err, size_t size)
{
    char dir[4096];
    dir_of(path, dir, sizeof dir);
    if (access(path, F_OK) == 0) {
        if (!overwrite) {
            snprintf(err, size, "'%s' exists already; a recorder never overwrites a recording "
                     "unless told to: choose another path or set overwrite: true", path);
            return -1;
        }
        if (access(path, W_OK)) {
            snprintf(err, size, "cannot overwrite '%s': %s", path, strerror(errno));
            return -1;
        }
    } else if (access(dir, W_OK)) {
        snprintf(err, size, "cannot create '%s' in '%s': %s", path, dir, strerror(errno));
        return -1;
    }
    return 0;
}

int edf_writer_open(edf_writer *w, const char *path, const edf_writer_spec *spec, char *err,
                    size_t err_size)
{
    memset(w, 0, sizeof *w);
    w->fd = -1;
    w->sync = spec->sync;
    w->overwrite = spec->overwrite;
    w->n_inputs = spec->n_inputs;
    uint32_t room = spec->markers_per_record ? spec->markers_per_record : 1;
    w->annotation_bytes = TIMEKEEPING_BYTES + room * TAL_BYTES_PER_MARKER;
    w->in = calloc(spec->n_inputs ? spec->n_inputs : 1, sizeof *w->in);
    if (!w->in)
        return fail(err, err_size, "out of memory");
    if (strlen(path) >= sizeof w->path) {
        fail(err, err_size, "the path is too long");
        goto failed;
    }
    strcpy(w->path, path);
    if (build_header(w, spec, err, err_size) || alloc_inputs(w, spec, err, err_size))
        goto failed;
    w->header = malloc(w->h.header_bytes);
    if (!w->header) {
        fail(err, err_size, "out of memory");
        goto failed;
    }
    if (edf_header_format(&w->h, w->header, w->h.header_bytes, err, err_size) ||
        check_path(path, spec->overwrite, err, err_size))
        goto failed;
    return 0;
failed:
    edf_writer_free(w);
    return -1;
}

int edf_writer_create(edf_writer *w)
{
    if (w->fd >= 0)
        return 0;
    int flags = O_WRONLY | O_CREAT | O_CLOEXEC | (w->overwrite ? O_TRUNC : O_EXCL);
    w->fd = open(w->path, flags, 0644);
    if (w->fd < 0) {
        if (errno == EEXIST)
            snprintf(w->error, sizeof w->error, "'%.180s' appeared after the run started and "
                     "is not overwritten", w->path);
        else
            set_error(w, "cannot create the recording");
        return -1;
    }
    return write_all(w, w->header, w->h.header_bytes, "cannot write the header");
}

/* physical -> digital, the inverse of physical = gain * digital + offset, clipped. */
static int32_t to_digital(const edf_signal *s, float x, uint64_t *clipped)
{
    double d = ((double)x - s->offset) / s->gain;
    if (!(d >= s->dig_min)) { /* also NaN */
        (*clipped)++;
        return isnan(d) ? (int32_t)lround(-s->offset / s->gain) : s->dig_min;
    }
    if (d > s->dig_max) {
        (*clipped)++;
        return s->dig_max;
    }
    return (int32_t)lround(d);
}

static void put_digital(uint8_t *p, int32_t v, int bdf)
{
    uint32_t u = (uint32_t)v;
    p[0] = (uint8_t)(u & 0xFF);
    p[1] = (uint8_t)((u >> 8) & 0xFF);
    if (bdf)
        p[2] = (uint8_t)((u >> 16) & 0xFF);
}

static void encode_input(edf_writer *w, edf_writer_input *in, uint64_t record)
{
    uint64_t base = record * in->spr;
    for (uint32_t c = 0; c < in->channels; c++) {
        const edf_signal *s = &w->h.signals[in->first_signal + c];
        uint8_t *p = w->record + s->record_offset;
        for (uint32_t j = 0; j < in->spr; j++, p += w->h.sample_bytes) {
            uint64_t f = (base + j) % in->stage_frames;
            put_digital(p, to_digital(s, in->stage[f * in->channels + c], &in->clipped),
                        w->h.bdf);
        }
    }
}

static void queue_marker(edf_writer *w, double onset, double duration, const char *label)
{
    if (w->n_pending == w->cap_pending) {
        w->markers_lost++;
        return;
    }
    edf_writer_marker *m = &w->pending[w->n_pending++];
    m->onset = onset;
    m->duration = duration;
    snprintf(m->label, sizeof m->label, "%s", label);
}

/* The record's annotation signal: its time-keeping TAL, then the markers due by its end (all
 * of them in the last record) that fit; the rest wait for the next record. */
static void encode_annotations(edf_writer *w, uint64_t record, int last)
{
    const edf_signal *a = &w->h.signals[w->h.n_signals - 1];
    uint8_t *p = w->record + a->record_offset;
    memset(p, 0, w->annotation_bytes);
    double start = (double)record * w->h.record_seconds, end = start + w->h.record_seconds;
    size_t used = edf_tal_format(p, w->annotation_bytes, start, 0, "");
    uint32_t kept = 0;
    for (uint32_t i = 0; i < w->n_pending; i++) {
        edf_writer_marker *m = &w->pending[i];
        size_t n = 0;
        if (last || m->onset < end)
            n = edf_tal_format(p + used, w->annotation_bytes - used - 1, m->onset, m->duration,
                               m->label);
        if (n) {
            used += n;
            w->markers_written++;
        } else if (last) {
            w->markers_lost++;
        } else {
            w->pending[kept++] = *m;
        }
    }
    w->n_pending = kept;
}

static void pad_input(edf_writer *w, edf_writer_input *in, uint64_t end)
{
    if (in->have >= end)
        return;
    char label[EDF_WRITER_LABEL_MAX];
    snprintf(label, sizeof label, "pad %s", in->name);
    queue_marker(w, (double)in->have / in->rate, (double)(end - in->have) / in->rate, label);
    for (uint64_t f = in->have; f < end; f++)
        memcpy(in->stage + (f % in->stage_frames) * in->channels, in->last,
               in->channels * sizeof *in->last);
    in->padded += end - in->have;
    in->have = end;
}

static int write_record(edf_writer *w, int last)
{
    uint64_t r = w->records;
    for (uint32_t k = 0; k < w->n_inputs; k++) {
        pad_input(w, &w->in[k], (r + 1) * w->in[k].spr);
        encode_input(w, &w->in[k], r);
    }
    encode_annotations(w, r, last);
    if (write_all(w, w->record, (size_t)w->h.record_bytes, "cannot write a data record"))
        return -1;
    w->records++;
    return write_count(w);
}

static int record_complete(const edf_writer *w)
{
    for (uint32_t k = 0; k < w->n_inputs; k++)
        if (w->in[k].have < (w->records + 1) * w->in[k].spr)
            return 0;
    return 1;
}

static int write_complete_records(edf_writer *w)
{
    while (record_complete(w))
        if (write_record(w, 0))
            return -1;
    return 0;
}

/* Frames an input can still stage before the record in progress must go out. */
static uint64_t stage_room(const edf_writer *w, const edf_writer_input *in)
{
    return in->stage_frames - (in->have - w->records * in->spr);
}

static int stage_frames(edf_writer *w, uint32_t input, const float *frames, uint64_t n,
                        int repeat_last)
{
    edf_writer_input *in = &w->in[input];
    while (n > 0) {
        uint64_t room = stage_room(w, in);
        if (room == 0) { /* another input is far behind: let a record out, padding it */
            if (write_record(w, 0))
                return -1;
            continue;
        }
        uint64_t m = n < room ? n : room;
        for (uint64_t f = 0; f < m; f++) {
            const float *src = repeat_last ? in->last : frames + f * in->channels;
            memcpy(in->stage + ((in->have + f) % in->stage_frames) * in->channels, src,
                   in->channels * sizeof *src);
        }
        if (!repeat_last) {
            memcpy(in->last, frames + (m - 1) * in->channels, in->channels * sizeof *in->last);
            frames += m * in->channels;
        }
        in->have += m;
        n -= m;
        if (write_complete_records(w))
            return -1;
    }
    return 0;
}

/* Frames of an input that arrive for a span already padded over (the input fell behind the
 * others by more than the drift allowance) are dropped and counted. */
static uint64_t late_frames(edf_writer_input *in, uint64_t n)
{
    uint64_t skip = in->have > in->arrived ? in->have - in->arrived : 0;
    if (skip > n)
        skip = n;
    in->arrived += n;
    in->late += skip;
    return skip;
}

int edf_writer_samples(edf_writer *w, uint32_t input, const float *frames, uint64_t n)
{
    if (edf_writer_create(w))
        return -1;
    edf_writer_input *in = &w->in[input];
    uint64_t skip = late_frames(in, n);
    return stage_frames(w, input, frames + skip * in->channels, n - skip, 0);
}

int edf_writer_fill(edf_writer *w, uint32_t input, uint64_t n)
{
    if (edf_writer_create(w))
        return -1;
    edf_writer_input *in = &w->in[input];
    uint64_t skip = late_frames(in, n);
    if (n == skip)
        return 0;
    char label[EDF_WRITER_LABEL_MAX];
    snprintf(label, sizeof label, "lost %s", in->name);
    queue_marker(w, (double)in->have / in->rate, (double)(n - skip) / in->rate, label);
    return stage_frames(w, input, NULL, n - skip, 1);
}

void edf_writer_marker_at(edf_writer *w, uint32_t input, uint64_t index, double duration,
                          const char *label)
{
    double onset = (double)index / w->in[input].rate, tolerance = 0;
    for (uint32_t k = 0; k < w->n_inputs; k++)
        if (0.5 / w->in[k].rate > tolerance)
            tolerance = 0.5 / w->in[k].rate;
    /* A filter passes its input's markers on: recording both streams must not double them. */
    for (uint32_t i = 0; i < w->n_recent; i++)
        if (fabs(w->recent[i].onset - onset) < tolerance &&
            !strncmp(w->recent[i].label, label, EDF_WRITER_LABEL_MAX - 1))
            return;
    uint32_t slot = w->recent_next++ % 16;
    if (w->n_recent < 16)
        w->n_recent++;
    w->recent[slot].onset = onset;
    snprintf(w->recent[slot].label, sizeof w->recent[slot].label, "%s", label);
    queue_marker(w, onset, duration, label);
}

int edf_writer_close(edf_writer *w)
{
    int rc = w->error[0] ? -1 : 0;
    if (w->fd < 0 && rc == 0) { /* nothing ever came (weft check, a run that failed at once) */
        free_buffers(w);
        return 0;
    }
    uint64_t records = w->records;
    for (uint32_t k = 0; k < w->n_inputs; k++) {
        uint64_t need = (w->in[k].have + w->in[k].spr - 1) / w->in[k].spr;
        if (need > records)
            records = need;
    }
    if (w->n_pending && records == w->records)
        records++; /* markers after the last sample still get a record to live in */
    while (rc == 0 && w->records < records)
        rc = write_record(w, w->records + 1 == records);
    if (w->fd >= 0) {
        if (rc == 0 && (w->sync ? fsync(w->fd) : 0))
            rc = set_error(w, "cannot sync the recording to disk");
        if (close(w->fd) && rc == 0)
            rc = set_error(w, "cannot close the recording");
    }
    w->fd = -1;
    free_buffers(w);
    return rc;
}
