/* lda: linear discriminant analysis with a shared, optionally shrunk covariance -- the fit
 * (float64, off the real-time path) and the allocation-free query (scores, softmax). Compiled
 * into every readout plugin that ends in an LDA (logvar_lda, winmean_lda, rms_lda). */
#ifndef COMMON_LDA_H
#define COMMON_LDA_H

#include <stdint.h>
#include <weft/stage.h>

/* How each class covariance is regularised before they are pooled. */
typedef enum lda_shrink_mode {
    LDA_SHRINK_NONE = 0,    /* the empirical covariance */
    LDA_SHRINK_FIXED,       /* (1 - a) S + a (tr S / p) I with a given a in [0, 1] */
    LDA_SHRINK_AUTO         /* a from the Ledoit-Wolf closed form, on standardised features */
} lda_shrink_mode;

typedef struct lda_shrinkage {
    lda_shrink_mode mode;
    double amount;          /* FIXED only */
} lda_shrinkage;

/* What a fit produced: row k of weights and bias[k] give the discriminant of class k. */
typedef struct lda_fit_result {
    double *weights;        /* n_classes x n_features, row-major; caller frees */
    double *bias;           /* n_classes; caller frees */
    double intensity[16];   /* shrinkage used per class (first 16 classes), for reports */
} lda_fit_result;

#define LDA_MAX_CLASSES 64
#define LDA_MIN_TRIALS 2    /* per class: a covariance needs two observations */

/* Read the `shrinkage` parameter: "auto", "none" or a number from 0 to 1. Reports through
 * host->param_error and returns WEFT_EINVAL if it is anything else. */
int lda_shrinkage_parse(const weft_host *host, const char *text, lda_shrinkage *out);

/* Ledoit-Wolf shrinkage intensity of the n x p row-major data x, which the function centres
 * itself (x is not changed). In [0, 1]. */
double lda_ledoit_wolf_intensity(const double *x, uint32_t n, uint32_t p);

/* Fit on n observations (rows of the n x p matrix x) with classes y[i] in 0 .. k-1. Priors are
 * the class frequencies. On failure reports through host->error (naming `stage_what`, e.g.
 * "log-variance features") and returns WEFT_EFIT or WEFT_ENOMEM. */
int lda_fit(const weft_host *host, const double *x, const uint32_t *y, uint32_t n, uint32_t p,
            uint32_t k, const lda_shrinkage *shrink, const char *const *class_names,
            lda_fit_result *out);
void lda_fit_result_free(lda_fit_result *r);

/* The model a readout holds: classes, weights and bias from its parameters, and scratch for
 * the query so that the query allocates nothing. */
typedef struct lda_model {
    uint32_t n_classes, n_features;
    int fitted;
    char **class_names;
    const char **labels;    /* class_names as the readout's output labels */
    double *weights;        /* n_classes x n_features */
    double *bias;
    double *scores;         /* scratch, n_classes */
    lda_shrinkage shrink;
} lda_model;

/* From the parameters `classes`, `weights`, `bias` and `shrinkage`. `features` describes what
 * the n_features columns are, for the shape message (e.g. "2 log-variances of 'eeg' + ..."). */
int lda_model_init(lda_model *m, const weft_host *host, const weft_params *params,
                   uint32_t n_features, const char *features);
void lda_model_free(lda_model *m);

/* Class probabilities (softmax of the discriminants) of feature vector x into out[n_classes].
 * No allocation. */
void lda_model_probabilities(lda_model *m, const double *x, double *out);

/* Fit the model's classes on features (n_epochs x n_features) of the epochs and write
 * `weights` and `bias` through the sink. The epochs' class names are matched to `classes` by
 * name, so the order of `fit: classes` does not matter. */
int lda_model_fit(const lda_model *m, const weft_host *host, const weft_epochs *ep,
                  const double *features, const weft_param_sink *learned);

#endif
