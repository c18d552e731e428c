/* metrics: how well predicted classes match true ones -- accuracy, balanced accuracy,
 * confusion matrix, ROC AUC for two classes, and the information transfer rate -- computed
 * from plain arrays, with the published definitions named beside each. */
#ifndef WEFT_METRICS_H
#define WEFT_METRICS_H

#include <stddef.h>

#define METRICS_MAX_CLASSES 64

typedef struct metrics {
    unsigned n_classes;
    size_t n;                       /* predictions scored */
    double accuracy;                /* NAN if n == 0 */
    double balanced_accuracy;       /* mean recall over the classes that occur */
    unsigned *confusion;            /* n_classes x n_classes, [true * n_classes + predicted] */
    double auc;                     /* two classes only, else NAN */
    double itr_bits;                /* per selection, from the accuracy (Wolpaw et al. 2002) */
    double itr_bits_per_minute;     /* NAN without a selection time */
} metrics;

/* truth and predicted in 0 .. n_classes-1; score (may be NULL) the score of class 1 for AUC;
 * seconds_per_selection for ITR (<= 0: not computed). Returns 0 or -1 (out of memory or
 * a class outside the range). */
int metrics_compute(const unsigned *truth, const unsigned *predicted, const double *score,
                    size_t n, unsigned n_classes, double seconds_per_selection, metrics *m);
void metrics_free(metrics *m);

/* Area under the ROC curve of `score` for positive[i] != 0 against the rest: the
 * Mann-Whitney U statistic over n_pos * n_neg pairs, ties counting one half (Hanley and
 * McNeil 1982). NAN if either class is empty. */
double metrics_auc(const double *score, const unsigned char *positive, size_t n);

/* Bits per selection among n_classes equally likely classes at accuracy p (Wolpaw et al.
 * 2002, eq. 1): log2 N + p log2 p + (1 - p) log2((1 - p) / (N - 1)); 0 at or below chance. */
double metrics_itr_bits(unsigned n_classes, double p);

#endif
