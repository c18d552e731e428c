/* fit: learning the parameters of a graph's fittable stages from labelled data, by repeated
 * replay. Each fittable stage, in graph order, gets one pass of the data through the stages
 * fitted so far; the pass collects the epochs its readout would see at each labelled marker,
 * the stage's fit learns from them, and the stage is re-initialised with what it learned. A
 * chronological cross-validation repeats this on earlier trials and tests on later ones. */
#ifndef WEFT_FIT_H
#define WEFT_FIT_H

#include <stdint.h>
#include <stdio.h>

#include "pipeline.h"

#define FIT_MIN_TRIALS 5        /* per class, for the final fit */
#define FIT_DEFAULT_FOLDS 5

typedef struct fit_options {
    unsigned folds;             /* chronological blocks for the accuracy estimate (0: 5;
                                 * 1: no estimate) */
    double duration;            /* seconds of data to use; 0: until every source ends */
    FILE *log;                  /* progress and warnings; NULL for none */
    int shuffle;                /* permute the classes over the epochs (a chance-level check) */
    uint64_t shuffle_seed;
} fit_options;

/* What one readout with `fit:` was fitted on and how well it generalised. */
typedef struct fit_readout_summary {
    unsigned stage;             /* node index */
    unsigned n_classes;
    unsigned *trials;           /* epochs per fit class (graph order of `fit: classes`) */
    unsigned n_epochs;
    unsigned dropped;           /* labelled markers whose windows did not fit in the data */
    unsigned cv_folds;          /* folds evaluated */
    unsigned cv_tested, cv_correct;
    double *fold_accuracy;      /* cv_folds entries */
} fit_readout_summary;

typedef struct fit_summary {
    uint64_t data_hash;         /* FNV-1a (not cryptographic) of every source's samples and
                                 * marker labels, per source, combined in graph order */
    double data_seconds;        /* of the longest source stream */
    unsigned n_markers;
    unsigned n_fitted;          /* stages fitted */
    unsigned passes;
    fit_readout_summary *readouts;
    unsigned n_readouts;
} fit_summary;

/* Fit every fittable stage of `pl` (opened with for_fit) on the data of its own sources.
 * Learned values are left in each node's parameters, and each fitted stage is initialised
 * with them. Returns 0, or -1 with d naming the stage and what to change. */
int fit_pipeline(pipeline *pl, const fit_options *opt, fit_summary *sum, diag *d);
void fit_summary_free(fit_summary *sum);

#endif
