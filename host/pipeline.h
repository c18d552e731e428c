/* pipeline: a graph made runnable -- plugins opened, parameters resolved, stages initialised
 * in topological order with their input layouts, output buffers and readout rings allocated.
 * Everything the run loop touches is allocated here, before the first sample. */
#ifndef WEFT_PIPELINE_H
#define WEFT_PIPELINE_H

#include <weft/stage.h>

#include "diag.h"
#include "graph.h"
#include "params.h"
#include "plugin.h"
#include "query_plan.h"
#include "ring.h"

#define NODE_MARKERS_MAX 256
#define PIPELINE_WATCH_MAX 32
#define NODE_LABEL_MAX 64
#define NODE_ERROR_MAX 768

typedef struct pipeline pipeline;

typedef struct node {
    pipeline *pl;
    const graph_stage *def;
    unsigned index;             /* in the graph and in pl->nodes */
    plugin plug;
    const weft_stage_api *api;
    uint32_t role;              /* the primary WEFT_ROLE_* bit */
    param_set params;
    void *self;
    int initialised;
    int skip;                   /* the loop leaves this stage out (fit passes: stages not yet
                                 * fitted, what depends on them, sinks) */
    weft_host host;
    char error[NODE_ERROR_MAX]; /* what the stage reported with host->error() */
    const char *error_param;    /* ... and the parameter it named, if any */
    unsigned log_count;

    unsigned n_in;
    unsigned *in_node;          /* node index of each input */
    weft_layout *in_layouts;
    weft_block *in_blocks;      /* scratch: this round's view of each input */

    weft_layout out;            /* what the stage produces */
    char **labels;              /* host copies of out.labels: downstream stages keep pointers
                                 * to them, and they must outlive a re-initialised stage */
    uint32_t label_count;
    float *out_data;            /* out.max_frames * out.channels */
    weft_marker *out_markers;
    char (*marker_text)[NODE_LABEL_MAX]; /* sources: labels copied out of the plugin */
    weft_block out_block;       /* this round's output; frames == 0 if none */
    uint64_t produced;          /* frames produced so far = next output sample index */
    int ended;

    ring history;               /* filters, when swappable: recent input for warm-up */

    /* readouts */
    ring *rings;
    uint32_t *win_frames;
    weft_window *windows;
    query_plan plan;
    double *values;
    uint64_t seq;
} node;

typedef struct pipeline_options {
    uint32_t block;             /* frames per source request (0: 20 ms of stream) */
    int for_fit;                /* fittable stages may be unfitted */
    int check_only;             /* init with WEFT_HOST_CHECK_ONLY: validate, open nothing */
    int idle_sinks;             /* sinks are checked but not initialised, so they open no
                                 * files; the loop must skip them (fit passes do) */
    double swap_warmup;         /* > 0: keep this many seconds of each filter's input, so a
                                 * swapped-in filter can be warmed up on it */
} pipeline_options;

struct pipeline {
    graph *g;
    node *nodes;
    unsigned n;
    unsigned *order;            /* topological */
    plugin_path path;
    pipeline_options opt;
    double max_skew;            /* seconds sources may drift apart between rounds */
    int watched_fd[PIPELINE_WATCH_MAX];  /* descriptors sources asked the loop to poll */
    uint32_t watched_events[PIPELINE_WATCH_MAX];
    unsigned n_watched;
};

/* Open plugins, resolve parameters and initialise every stage. On failure everything is
 * released and d says which stage, where in the file, and why. */
int pipeline_open(pipeline *pl, graph *g, const pipeline_options *opt, diag *d);
void pipeline_close(pipeline *pl);

/* Re-initialise one stage with new parameter values (after fit). The layouts must not change
 * the stage's output channels or rate. */
int pipeline_reinit(pipeline *pl, unsigned node_index, diag *d);

/* Start every stream again from sample 0, as if just opened: each stage is re-initialised
 * with its current parameters (so learned values written since take effect) and the loop's
 * counters, rings and query plans are reset. Stages with `skip` set are not re-initialised
 * (they do not run until a later rewind without skip). Used by `weft fit` between replay passes. */
int pipeline_rewind(pipeline *pl, diag *d);

/* The reason a stage gave, prefixed with its name and, when known, its place in the file. */
int node_fail(node *n, diag *d, const char *when);

/* Pieces of pipeline_open, for drivers that build a node by hand (stage_driver): initialise
 * the plugin of a node whose api, params and input layouts are set; allocate its output
 * buffers; destroy and free everything the node holds. */
int node_init(node *n, diag *d);
int node_alloc_output(node *n, diag *d);
void node_close(node *n);

const char *role_name(uint32_t role);

#endif
