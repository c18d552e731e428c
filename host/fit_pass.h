/* fit_pass: one replay of the data through a pipeline for `weft fit` -- the stages a target
 * needs run, the rest are skipped -- recording the streams at the target's inputs and, when
 * asked, the markers and a content hash of what the sources produced. */
#ifndef WEFT_FIT_PASS_H
#define WEFT_FIT_PASS_H

#include <stdint.h>

#include "pipeline.h"

/* The whole stream one node produced in a pass, frame-major. */
typedef struct stream_rec {
    float *data;
    uint64_t frames, capacity;  /* in frames */
    uint32_t channels;
    double rate;
} stream_rec;

typedef struct marker_rec {
    char label[NODE_LABEL_MAX];
    double time;                /* stream seconds: index / rate of the source carrying it */
    unsigned source;            /* node index */
} marker_rec;

typedef struct fit_pass {
    pipeline *pl;
    const uint8_t *ancestors;   /* n x n: ancestors[i * n + j] != 0 if j feeds i */
    double duration;            /* 0: until the sources end */
    /* what the pass records */
    int survey;                 /* record markers and hash the sources */
    stream_rec *rec;            /* one per node that is an input of the target, else unused */
    int *recorded;              /* per node: 1 if rec[node] is being filled */
    marker_rec *markers;
    unsigned n_markers, markers_cap;
    uint64_t *hash;             /* per node (sources): its samples ... */
    uint64_t *marker_hash;      /* ... and its markers, apart, so block sizes do not matter */
    int failed_alloc;
} fit_pass;

int fit_pass_init(fit_pass *fp, pipeline *pl, const uint8_t *ancestors, double duration);
void fit_pass_free(fit_pass *fp);

/* Replay with only what `target` needs: the sources, and the stages `target` depends on.
 * target == UINT32_MAX runs the sources alone (the survey pass). The streams at the target's
 * inputs are left in fp->rec[input node]. Returns 0 or -1 with d set. */
int fit_pass_run(fit_pass *fp, unsigned target, diag *d);

/* The n x n ancestor relation of the graph (caller frees). */
uint8_t *fit_ancestors(const pipeline *pl);

#endif
