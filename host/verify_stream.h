/* verify_stream: drives one stage through a made-up but realistic stream for the conformance
 * checker -- generated inputs (noise, a 10 Hz rhythm, spikes, a flat stretch, markers), blocks
 * of a chosen size, periodic queries, fitting on synthetic two-class epochs -- and keeps what
 * the stage produced so runs can be compared. */
#ifndef WEFT_VERIFY_STREAM_H
#define WEFT_VERIFY_STREAM_H

#include "alloc_watch.h"
#include "stage_driver.h"

#define VERIFY_MAX_INPUTS 8
#define VERIFY_LABEL_MAX 32

/* What every instance of the stage under test is given. */
typedef struct verify_setup {
    const char *file;
    const weft_stage_api *api;
    uint32_t role;                      /* primary WEFT_ROLE_* */
    const char *params;                 /* YAML map of parameter values, or NULL */
    weft_layout in[VERIFY_MAX_INPUTS];
    uint32_t n_in;
    double window;                      /* readouts: seconds of every input window */
    double seconds;                     /* length of the test stream */
    int fit;                            /* fit a fittable stage before streaming */
} verify_setup;

typedef struct verify_marker {
    char label[VERIFY_LABEL_MAX];
    uint64_t index;
} verify_marker;

typedef struct vrun {
    stage_driver sd;
    int is_open;
    const verify_setup *s;
    uint32_t block;                     /* frames per call (sources: per request) */
    float *input[VERIFY_MAX_INPUTS];
    uint64_t in_frames[VERIFY_MAX_INPUTS];
    uint64_t pos[VERIFY_MAX_INPUTS];    /* next input frame of each input */
    uint64_t rounds;
    int done;
    float *call_out;                    /* one call's output, then a guard zone */
    size_t call_cap;                    /* frames */
    /* everything produced so far */
    float *out;
    size_t out_frames, out_cap;
    uint32_t out_channels;
    verify_marker *markers;
    size_t n_markers, markers_cap;
    double *values;                     /* readouts: every query's values, in order */
    size_t n_values, values_cap;
    uint64_t n_queries;
    alloc_counts in_calls;              /* allocations inside process and query */
    uint64_t calls;
} vrun;

/* Initialise a stage (and fit it if asked) and generate its inputs. */
int vrun_open(vrun *r, const verify_setup *s, uint32_t block, diag *d);
/* One call of the streaming path: a block, a source request, a round of queries. Returns 1
 * while there is more, 0 when the stream is over, -1 with d set when the stage returned an
 * error, VRUN_BROKE with d set when it broke the ABI's contract (wrote past its output, a
 * wrong frame count) -- which no input excuses. */
#define VRUN_BROKE (-2)
int vrun_step(vrun *r, diag *d);
int vrun_all(vrun *r, diag *d);
void vrun_close(vrun *r);


#endif
