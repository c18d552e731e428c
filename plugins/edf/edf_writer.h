/* edf_writer: assembles streams of different rates and markers into the data records of an
 * EDF+ or BDF+ file, and keeps the file readable at every moment: a record is appended as
 * soon as every input has filled it, and the header's record count is rewritten right after,
 * so a process killed at any point leaves a valid file of all records written so far. Used by
 * the recorder's writer thread only; it allocates in edf_writer_open and nowhere else. */
#ifndef WEFT_EDF_WRITER_H
#define WEFT_EDF_WRITER_H

#include <stdint.h>

#include "edf_header.h"

#define EDF_WRITER_LABEL_MAX 64

typedef struct edf_writer_input_spec {
    uint32_t channels;
    double rate;
    double range;                   /* physical range is -range .. +range */
    const char *const *labels;      /* `channels` EDF labels, at most 16 characters */
    const char *name;               /* the stream's name, for "pad NAME" / "lost NAME" */
} edf_writer_input_spec;

typedef struct edf_writer_spec {
    int bdf;                        /* BDF+ (24-bit) rather than EDF+ (16-bit) */
    double record_seconds;          /* every rate times this must be a whole number */
    double drift_seconds;           /* how far one input may run ahead before the others are
                                     * padded to let records out */
    uint32_t markers_per_record;    /* room in each record's annotation signal */
    const char *unit;               /* physical dimension of every signal, e.g. "uV" */
    const char *recording;          /* the recording identification field */
    int overwrite;                  /* replace an existing file instead of refusing */
    int sync;                       /* fdatasync after each record (power-loss safety) */
    uint32_t n_inputs;
    const edf_writer_input_spec *inputs;
} edf_writer_spec;

typedef struct edf_writer_input {
    char name[EDF_WRITER_LABEL_MAX - 8];
    uint32_t channels, spr, first_signal;
    double rate;
    float *stage;                   /* ring of stage_frames frames not yet in a record */
    uint64_t stage_frames;
    uint64_t have;                  /* frames staged so far, padding included */
    uint64_t arrived;               /* frames that came in (samples or lost-and-filled) */
    float *last;                    /* the newest frame, for padding */
    uint64_t clipped, padded, late;
} edf_writer_input;

typedef struct edf_writer_marker {
    double onset, duration;
    char label[EDF_WRITER_LABEL_MAX];
} edf_writer_marker;

typedef struct edf_writer {
    int fd;
    edf_header h;
    uint32_t n_inputs;
    edf_writer_input *in;
    uint8_t *record;                /* one data record being encoded */
    uint32_t annotation_bytes;
    uint64_t records;               /* written to the file */
    edf_writer_marker *pending;     /* markers not yet written, in arrival order */
    uint32_t n_pending, cap_pending;
    edf_writer_marker recent[16];   /* for dropping the same marker seen on two inputs */
    uint32_t n_recent, recent_next;
    uint64_t markers_written, markers_lost;
    int sync, overwrite;
    char path[4096];
    uint8_t *header;                /* formatted in open, written by create */
    char error[256];                /* the first I/O error */
} edf_writer;

/* Prepare everything and check that the file can be created (it must not exist unless
 * overwrite is set; its folder must be writable), without touching the disk: `weft check`
 * opens every stage, and must neither leave an empty recording behind nor clear an old one.
 * Returns 0, or -1 with the reason (an existing file, a range that does not fit the header)
 * in err. */
int edf_writer_open(edf_writer *w, const char *path, const edf_writer_spec *spec, char *err,
                    size_t err_size);

/* Create the file and write its header with zero records; done by the first samples. Returns
 * 0 or -1 (w->error). */
int edf_writer_create(edf_writer *w);

/* Append frames of one input; writes every record that becomes complete. Frames for a span
 * that was already padded (the input was too late) are dropped and counted. Returns 0 or -1
 * after an I/O error (w->error). */
int edf_writer_samples(edf_writer *w, uint32_t input, const float *frames, uint64_t n);

/* `n` frames of an input were lost before reaching the writer: hold its last value over them
 * and mark the span "lost NAME", so the other inputs stay aligned. Padding (the last record's
 * tail, an input far behind the others) is marked "pad NAME" the same way. */
int edf_writer_fill(edf_writer *w, uint32_t input, uint64_t n);

/* A marker at `index` on input `input`'s stream. */
void edf_writer_marker_at(edf_writer *w, uint32_t input, uint64_t index, double duration,
                          const char *label);

/* Pad the last record, write it and every pending marker, update the count, close. Returns 0
 * or -1 (w->error). Frees the buffers either way; the counters (w->records, w->in[k].clipped
 * ...) stay readable until edf_writer_free. */
int edf_writer_close(edf_writer *w);
void edf_writer_free(edf_writer *w);

#endif
