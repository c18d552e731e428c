/* stage_driver: one stage driven on its own, outside a graph -- open a plugin file, give it
 * parameters as graph text and input layouts, then feed it blocks, query it or fit it. Used by
 * the unit tests and the conformance checker; the run loop does not use it. */
#ifndef WEFT_STAGE_DRIVER_H
#define WEFT_STAGE_DRIVER_H

#include "pipeline.h"

typedef struct stage_driver {
    pipeline pl;                /* a one-node pipeline, so host services behave as in a run */
    graph g;
    node *n;
    weft_marker markers[NODE_MARKERS_MAX];
} stage_driver;

/* Open `plugin_file` and initialise it with `params_yaml` (a YAML map, e.g.
 * "{ low: 8, high: 30 }", or NULL) and the given input layouts. On failure d holds the
 * stage's message. */
int stage_driver_open(stage_driver *sd, const char *plugin_file, const char *params_yaml,
                      const weft_layout *in, uint32_t n_in, diag *d);
void stage_driver_close(stage_driver *sd);

/* Filter: push `frames` frames (interleaved) and receive the output in out (room for
 * out_capacity frames). Returns frames written or -1. Source: in == NULL, produces up to
 * `frames`; returns frames, or -2 at the end of the stream. */
long stage_driver_process(stage_driver *sd, const float *in, uint32_t frames, float *out,
                          uint32_t out_capacity, diag *d);

/* Readout: one query over n_in windows; values has room for the output's channels. */
int stage_driver_query(stage_driver *sd, const weft_window *win, uint32_t n_in, double *values,
                       diag *d);

/* Fittable: fit on the epochs, store the learned parameters and re-initialise with them. */
int stage_driver_fit(stage_driver *sd, const weft_epochs *ep, diag *d);

/* The output layout the stage stated. */
const weft_layout *stage_driver_out(const stage_driver *sd);

#endif
