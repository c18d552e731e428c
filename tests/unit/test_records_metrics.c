/* Replay metrics against published definitions and hand-computed values. */
#include <criterion/criterion.h>
#include <math.h>

#include "metrics.h"

Test(records_metrics, itr_follows_wolpaw_2002)
{
    /* B = log2 N + P log2 P + (1 - P) log2((1 - P) / (N - 1)) (Wolpaw et al. 2002, eq. 1),
     * worked by hand: N 2, P 0.9 -> 1 - 0.13680 - 0.33219 = 0.53101;
     * N 4, P 0.8 -> 2 - 0.25754 - 0.78138 = 0.96108. */
    cr_expect_float_eq(metrics_itr_bits(2, 0.9), 0.531004, 1e-5);
    cr_expect_float_eq(metrics_itr_bits(4, 0.8), 0.961079, 1e-5);
    cr_expect_float_eq(metrics_itr_bits(2, 1.0), 1.0, 1e-12);
    cr_expect_float_eq(metrics_itr_bits(2, 0.5), 0.0, 0); /* chance: no information */
    cr_expect_float_eq(metrics_itr_bits(3, 0.2), 0.0, 0);
}

Test(records_metrics, auc_is_the_mann_whitney_statistic)
{
    /* The example of scikit-learn's roc_auc_score documentation (from memory): 0.75. */
    const double score[4] = { 0.1, 0.4, 0.35, 0.8 };
    const unsigned char positive[4] = { 0, 0, 1, 1 };
    cr_expect_float_eq(metrics_auc(score, positive, 4), 0.75, 1e-12);
    /* Ties count one half (Hanley and McNeil 1982). */
    const double tied[2] = { 0.5, 0.5 };
    const unsigned char one_each[2] = { 0, 1 };
    cr_expect_float_eq(metrics_auc(tied, one_each, 2), 0.5, 1e-12);
    cr_expect(isnan(metrics_auc(tied, (const unsigned char[]){ 1, 1 }, 2)));
}

Test(records_metrics, balanced_accuracy_averages_recall_over_present_classes)
{
    /* Truth 0 0 0 0 1 1, predicted 0 0 0 1 1 0: recall 3/4 and 1/2, balanced 0.625,
     * accuracy 4/6; confusion [[3, 1], [1, 1]]. */
    const unsigned truth[6] = { 0, 0, 0, 0, 1, 1 }, pred[6] = { 0, 0, 0, 1, 1, 0 };
    metrics m;
    cr_assert_eq(metrics_compute(truth, pred, NULL, 6, 3, 6.0, &m), 0);
    cr_expect_float_eq(m.accuracy, 4.0 / 6.0, 1e-12);
    cr_expect_float_eq(m.balanced_accuracy, 0.625, 1e-12);
    cr_expect_eq(m.confusion[0 * 3 + 0], 3);
    cr_expect_eq(m.confusion[0 * 3 + 1], 1);
    cr_expect_eq(m.confusion[1 * 3 + 0], 1);
    cr_expect(isnan(m.auc)); /* three classes declared: no two-class AUC */
    cr_expect_float_eq(m.itr_bits_per_minute, metrics_itr_bits(3, 4.0 / 6.0) * 10, 1e-12);
    metrics_free(&m);
    const unsigned bad[1] = { 7 };
    cr_expect_eq(metrics_compute(bad, bad, NULL, 1, 2, 0, &m), -1);
    metrics_free(&m);
}
