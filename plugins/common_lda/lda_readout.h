/* lda_readout: the parts every "features + LDA" readout shares -- inputs, feature scratch, the
 * LDA model, query and fit -- so that each readout plugin only says how it turns one input
 * window into features (log-variance, sub-window means, RMS ...). */
#ifndef COMMON_LDA_READOUT_H
#define COMMON_LDA_READOUT_H

#include "lda.h"

#define LDA_READOUT_MAX_INPUTS 16

typedef struct lda_readout lda_readout;

/* How a readout makes features. */
typedef struct lda_features {
    const char *what;           /* "log-variances", for messages: "4 log-variances of 'eeg'" */
    /* Features per channel, from the parameters (1, or e.g. the number of sub-windows). */
    uint32_t (*per_channel)(const weft_params *p);
    /* Write per_channel x channels features of one input window to out. Must not allocate;
     * `scratch` holds 2 x the widest input's channels doubles. Return WEFT_OK, or
     * WEFT_EINVAL after host->error (e.g. a window too short). */
    int (*compute)(const lda_readout *r, const weft_window *w, double *scratch, double *out);
    /* Optional: read the plugin's own parameters into r->option. */
    void (*configure)(lda_readout *r, const weft_params *p);
} lda_features;

struct lda_readout {
    const weft_host *host;      /* valid until destroy */
    const lda_features *kind;
    uint32_t n_in, per_channel;
    uint32_t channels[LDA_READOUT_MAX_INPUTS];
    uint32_t n_features;
    double *features;           /* scratch: n_features */
    double *scratch;            /* scratch: 2 x widest input */
    double option;              /* a plugin's own setting, from kind->configure */
    lda_model model;
};

/* The callbacks of a readout plugin built on lda_readout. */
int lda_readout_init(const lda_features *kind, const weft_host *host, const weft_params *p,
                     const weft_layout *in, uint32_t n_in, weft_layout *out, void **self);
int lda_readout_query(void *self, const weft_window *win, uint32_t n_in, weft_result *out);
int lda_readout_fit(void *self, const weft_epochs *ep, const weft_param_sink *learned);
void lda_readout_destroy(void *self);

/* The parameters every LDA readout declares (classes, shrinkage, weights, bias), to be
 * listed first in its parameter array. */
#define LDA_READOUT_PARAMS                                                                      \
    { "classes", WEFT_PARAM_STRINGS, 0, NULL, WEFT_NO_RANGE, "", NULL,                          \
      "class names, in the order of the output probabilities, e.g. [rest, grip]" },             \
    { "shrinkage", WEFT_PARAM_STRING, 0, "auto", WEFT_NO_RANGE, "", NULL,                      \
      "covariance shrinkage for fit: auto (Ledoit-Wolf), none, or a number from 0 to 1" },     \
    { "weights", WEFT_PARAM_MATRIX, WEFT_PARAM_LEARNED, NULL, WEFT_NO_RANGE, "", NULL,          \
      "learned: one row per class, one column per feature of all inputs in order" },            \
    { "bias", WEFT_PARAM_NUMBERS, WEFT_PARAM_LEARNED, NULL, WEFT_NO_RANGE, "", NULL,            \
      "learned: one value per class" }

#endif
