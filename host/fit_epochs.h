/* fit_epochs: from labelled markers to the epochs a readout is fitted on -- which class each
 * marker stands for, where its windows end, which windows lie inside the data -- and the
 * windows of those epochs cut from the streams a pass recorded. */
#ifndef WEFT_FIT_EPOCHS_H
#define WEFT_FIT_EPOCHS_H

#include "fit_pass.h"

typedef struct fit_epoch {
    double end_time;            /* marker time + fit.after, stream seconds */
    uint32_t cls;               /* index into the readout's `fit: classes` */
    double marker_time;
} fit_epoch;

typedef struct epoch_list {
    unsigned readout;           /* node index of the readout whose `fit:` cut them */
    fit_epoch *items;           /* chronological */
    unsigned n;
    unsigned dropped;           /* labelled markers whose windows leave the data */
    unsigned *per_class;
    unsigned n_classes;
} epoch_list;

/* The epochs of `readout` (which has `fit:`) from the survey's markers. `data_seconds` is the
 * length of the shortest source stream: every input window must end within it and start at
 * or after sample 0. Fails if a marker label is mapped by two classes. */
int epoch_list_build(epoch_list *el, const node *readout, const marker_rec *markers,
                     unsigned n_markers, double data_seconds, diag *d);
void epoch_list_free(epoch_list *el);

/* Is `label` one of the marker labels of the readout's `fit: classes`? */
int epoch_label_mapped(const node *readout, const char *label);

/* The epochs handed to a stage's fit: windows at each of the stage's inputs, pointing into
 * the recorded streams. */
typedef struct epoch_cut {
    weft_epochs ep;
    weft_window *windows;
    uint32_t *classes;
    const char **class_names;
} epoch_cut;

/* Cut the selected epochs (select == NULL: all) at the inputs of `target`, each window
 * frames[k] long at input k, from rec[] (indexed by node, as fit_pass recorded them). */
int epoch_cut_make(epoch_cut *c, const epoch_list *el, const uint8_t *select,
                   const node *target, const uint32_t *frames, const stream_rec *rec,
                   diag *d);
void epoch_cut_free(epoch_cut *c);

#endif
