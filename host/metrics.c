/* metrics: classification figures for replay reports. */
#include "metrics.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

double metrics_itr_bits(unsigned n_classes, double p)
{
    double n = n_classes;
    if (n_classes < 2 || !(p > 1.0 / n))
        return 0; /* at or below chance the formula is not meaningful; common practice is 0 */
    if (p >= 1)
        return log2(n);
    return log2(n) + p * log2(p) + (1 - p) * log2((1 - p) / (n - 1));
}

typedef struct ranked {
    double score;
    unsigned char positive;
} ranked;

static int by_score(const void *a, const void *b)
{
    double x = ((const ranked *)a)->score, y = ((const ranked *)b)->score;
    return (x > y) - (x < y);
}

double metrics_auc(const double *score, const unsigned char *positive, size_t n)
{
    ranked *r = malloc((n ? n : 1) * sizeof *r);
    if (!r)
        return NAN;
    size_t n_pos = 0;
    for (size_t i = 0; i < n; i++) {
        r[i] = (ranked){ score[i], positive[i] != 0 };
        n_pos += r[i].positive;
    }
    size_t n_neg = n - n_pos;
    if (!n_pos || !n_neg) {
        free(r);
        return NAN;
    }
    qsort(r, n, sizeof *r, by_score);
    /* U = sum of the positives' ranks (ties get the mean rank) - n_pos (n_pos + 1) / 2. */
    double rank_sum = 0;
    for (size_t i = 0; i < n;) {
        size_t j = i;
        while (j < n && r[j].score == r[i].score)
            j++;
        double mean_rank = (double)(i + 1 + j) / 2.0; /* ranks i+1 .. j */
        for (size_t k = i; k < j; k++)
            if (r[k].positive)
                rank_sum += mean_rank;
        i = j;
    }
    free(r);
    double u = rank_sum - (double)n_pos * ((double)n_pos + 1) / 2.0;
    return u / ((double)n_pos * (double)n_neg);
}

int metrics_compute(const unsigned *truth, const unsigned *predicted, const double *score,
                    size_t n, unsigned n_classes, double seconds_per_selection, metrics *m)
{
    memset(m, 0, sizeof *m);
    m->n_classes = n_classes;
    m->n = n;
    m->accuracy = m->balanced_accuracy = m->auc = m->itr_bits_per_minute = NAN;
    if (n_classes == 0 || n_classes > METRICS_MAX_CLASSES)
        return -1;
    m->confusion = calloc((size_t)n_classes * n_classes, sizeof *m->confusion);
    if (!m->confusion)
        return -1;
    size_t correct = 0;
    for (size_t i = 0; i < n; i++) {
        if (truth[i] >= n_classes || predicted[i] >= n_classes)
            return -1;
        m->confusion[truth[i] * n_classes + predicted[i]]++;
        correct += truth[i] == predicted[i];
    }
    if (n == 0)
        return 0;
    m->accuracy = (double)correct / (double)n;
    /* Balanced accuracy: the mean over classes of recall = hits / trials of that class,
     * over the classes present in truth (as sklearn's balanced_accuracy_score). */
    double recall_sum = 0;
    unsigned present = 0;
    for (unsigned c = 0; c < n_classes; c++) {
        unsigned row = 0;
        for (unsigned p = 0; p < n_classes; p++)
            row += m->confusion[c * n_classes + p];
        if (!row)
            continue;
        recall_sum += (double)m->confusion[c * n_classes + c] / row;
        present++;
    }
    m->balanced_accuracy = recall_sum / present;
    if (n_classes == 2 && score) {
        unsigned char *positive = malloc(n);
        if (!positive)
            return -1;
        for (size_t i = 0; i < n; i++)
            positive[i] = truth[i] == 1;
        m->auc = metrics_auc(score, positive, n);
        free(positive);
    }
    m->itr_bits = metrics_itr_bits(n_classes, m->accuracy);
    if (seconds_per_selection > 0)
        m->itr_bits_per_minute = m->itr_bits * 60.0 / seconds_per_selection;
    return 0;
}

void metrics_free(metrics *m)
{
    free(m->confusion);
    m->confusion = NULL;
}
