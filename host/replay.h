/* replay: a graph run on a recording exactly as it runs live (same pipeline, same loop, same
 * sinks), with every marker and readout result kept, then scored against the cues.
 *
 * Which result belongs to which cue:
 *   - A cue is a marker whose label names one of the readout's classes: through the readout's
 *     `fit: classes:` map (class -> marker labels) when it has one, else by equal name.
 *   - A result triggered by a marker (query `on_marker`) belongs to the latest cue with that
 *     label at or before it: one result per trial.
 *   - A periodic result (query `every`) at time t belongs to the latest cue c at or before t
 *     if c + from <= t <= c + to. `from` defaults to the readout's longest input window (the
 *     whole window then lies after the cue); `to` defaults to the cue's duration, or the next
 *     cue when the marker has no duration. Results outside every trial are shown, not scored.
 *   - The predicted class is the one with the largest value; two-class ROC AUC uses the value
 *     of the second class as the score. Per trial, the mean of its results' values decides.
 *   - The information transfer rate counts one selection per trial; its time is the mean
 *     interval between consecutive cues (Wolpaw et al. 2002). */
#ifndef WEFT_REPLAY_H
#define WEFT_REPLAY_H

#include "loop.h"
#include "metrics.h"

#define REPLAY_LABEL_MAX 64
#define REPLAY_FOLDS_MAX 64

typedef struct replay_options {
    const char *data;               /* the recording */
    uint32_t block;                 /* frames per source request; 0: default */
    int realtime;                   /* pace as live */
    int progress;                   /* draw a progress bar on stderr */
    double score_from, score_to;    /* seconds after a cue; NAN: the defaults above */
} replay_options;

typedef struct replay_cue {
    double time, duration;
    char label[REPLAY_LABEL_MAX];
} replay_cue;

typedef struct replay_result {
    double time;
    uint64_t index;
    int triggered;
    long cue;                       /* index into replay.cues, or -1: not scored */
} replay_result;

typedef struct replay_trial {
    long cue;
    unsigned truth, predicted;
    double score;                   /* mean value of class 1 */
    unsigned results;
} replay_trial;

typedef struct replay_readout {
    unsigned node;                  /* index in the pipeline */
    const graph_stage *def;         /* its stage in the graph (lives as long as the replay) */
    char name[REPLAY_LABEL_MAX + 1];
    unsigned n_classes;
    char (*class_names)[REPLAY_LABEL_MAX];
    double score_from, score_to;    /* as used (to < 0: the cue's duration or the next cue) */
    replay_result *results;
    double *values;                 /* n_results x n_classes */
    size_t n_results, cap_results;
    replay_trial *trials;
    size_t n_trials;
    double seconds_per_trial;       /* mean interval between consecutive cues; NAN if < 2 */
    metrics per_result, per_trial;
} replay_readout;

/* One block of a chronological cross-validation: fitted on [0, from), tested on [from, to). */
typedef struct replay_fold {
    double from, to;
    int tested;
    char skipped[DIAG_MAX];         /* why it could not be fitted, if it was not */
} replay_fold;

typedef struct replay {
    graph g;
    pipeline pl;
    int opened;
    replay_options opt;
    double recording_seconds;       /* from the file's header */
    replay_cue *cues;
    size_t n_cues, cap_cues;
    replay_readout *readouts;
    unsigned n_readouts;
    loop_stats stats;
    int have_stats;
    double progress_shown;          /* wall time of the last progress bar */
    int out_of_memory;
    double keep_from, keep_to;      /* only cues and results in this span are kept */
    unsigned folds;                 /* 0: a plain replay */
    replay_fold fold[REPLAY_FOLDS_MAX];
} replay;

/* Load the graph, substitute its sources by the recording, run it to the end and score every
 * readout. Returns 0, or -1 with d saying what failed (the graph, the recording, a stage). */
int replay_run(replay *r, const char *graph_path, const replay_options *opt, diag *d);
void replay_free(replay *r);

/* Chronological block cross-validation of fit plus replay: the recording is cut into `folds`
 * blocks of equal duration; for each block k >= 1 the graph is fitted (weft fit's passes) on
 * the data before the block and replayed through it, and only the block's own cues and
 * results are kept. The metrics are those of all tested blocks together; block 0, with nothing
 * before it, is never tested, and a block whose earlier data cannot be fitted is skipped and
 * says why. Returns 0 or -1 with d. */
int replay_folds(replay *r, const char *graph_path, const replay_options *opt, unsigned folds,
                 diag *d);

/* The class a cue label stands for in a readout, or -1. */
int replay_cue_class(const replay *r, const replay_readout *ro, const char *label);

#endif
