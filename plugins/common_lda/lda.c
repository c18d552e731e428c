/* lda: the shared-covariance Gaussian classifier -- fit by a Cholesky solve of the pooled
 * covariance, query as the softmax of the linear discriminants. */
#include "lda.h"

#include <lapacke.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "lda_internal.h"

/* Below this reciprocal condition number the pooled covariance is treated as singular: the
 * weights would be dominated by rounding (common practice for float64 solves). */
#define LDA_MIN_RCOND 1e-12

void lda_fit_result_free(lda_fit_result *r)
{
    free(r->weights);
    free(r->bias);
    r->weights = r->bias = NULL;
}

typedef struct fit_work {
    double *xk, *cov, *pooled, *scratch, *means, *rhs;
    uint32_t *count;
} fit_work;

static void work_free(fit_work *w)
{
    free(w->xk);
    free(w->cov);
    free(w->pooled);
    free(w->scratch);
    free(w->means);
    free(w->rhs);
    free(w->count);
}

static int work_alloc(fit_work *w, uint32_t n, uint32_t p, uint32_t k)
{
    memset(w, 0, sizeof *w);
    w->xk = malloc((size_t)n * p * sizeof *w->xk);
    w->cov = malloc((size_t)p * p * sizeof *w->cov);
    w->pooled = calloc((size_t)p * p, sizeof *w->pooled);
    w->scratch = malloc(((size_t)n * p + p) * sizeof *w->scratch);
    w->means = calloc((size_t)k * p, sizeof *w->means);
    w->rhs = malloc((size_t)k * p * sizeof *w->rhs);
    w->count = calloc(k, sizeof *w->count);
    return w->xk && w->cov && w->pooled && w->scratch && w->means && w->rhs && w->count ? 0 : -1;
}

static int check_counts(const weft_host *host, const fit_work *w, uint32_t k,
                        const char *const *names)
{
    for (uint32_t c = 0; c < k; c++) {
        if (w->count[c] >= LDA_MIN_TRIALS)
            continue;
        host->error(host, "class '%s' has %u trial%s; LDA needs at least %d per class -- "
                    "record more trials or check the marker labels in `fit: classes`",
                    names ? names[c] : "?", w->count[c], w->count[c] == 1 ? "" : "s",
                    LDA_MIN_TRIALS);
        return WEFT_EFIT;
    }
    return WEFT_OK;
}

/* Pool the class covariances, weighted by the priors (as sklearn's lsqr solver does). */
static void pool_covariances(fit_work *w, const double *x, const uint32_t *y, uint32_t n,
                             uint32_t p, uint32_t k, const lda_shrinkage *sh, lda_fit_result *out)
{
    for (uint32_t c = 0; c < k; c++) {
        uint32_t m = 0;
        for (uint32_t r = 0; r < n; r++)
            if (y[r] == c)
                memcpy(w->xk + (size_t)m++ * p, x + (size_t)r * p, p * sizeof *x);
        lda_center(w->xk, m, p, w->xk, w->means + (size_t)c * p);
        double a;
        lda_class_covariance(w->xk, m, p, sh, w->cov, w->scratch, &a);
        if (c < sizeof out->intensity / sizeof out->intensity[0])
            out->intensity[c] = a;
        double prior = (double)m / n;
        for (size_t i = 0; i < (size_t)p * p; i++)
            w->pooled[i] += prior * w->cov[i];
    }
}

/* weights = means * pooled^-1 (the covariance is symmetric, so solve for its transpose). */
static int solve_weights(const weft_host *host, fit_work *w, uint32_t p, uint32_t k,
                         const lda_shrinkage *sh, double *weights)
{
    double anorm = LAPACKE_dlansy(LAPACK_ROW_MAJOR, '1', 'L', (lapack_int)p, w->pooled,
                                  (lapack_int)p);
    lapack_int info = LAPACKE_dpotrf(LAPACK_ROW_MAJOR, 'L', (lapack_int)p, w->pooled,
                                     (lapack_int)p);
    double rcond = 0;
    if (info == 0)
        info = LAPACKE_dpocon(LAPACK_ROW_MAJOR, 'L', (lapack_int)p, w->pooled, (lapack_int)p,
                              anorm, &rcond);
    if (info != 0 || !(rcond >= LDA_MIN_RCOND)) {
        host->error(host, "the pooled covariance of the %u features is singular (reciprocal "
                    "condition %.3g): some features are constant or copies of others%s", p,
                    rcond, sh->mode == LDA_SHRINK_NONE
                               ? "; set `shrinkage: auto` (or a number such as 0.1)"
                               : "; check that every input carries signal during the epochs");
        return WEFT_EFIT;
    }
    for (uint32_t c = 0; c < k; c++)
        for (uint32_t j = 0; j < p; j++)
            w->rhs[(size_t)j * k + c] = w->means[(size_t)c * p + j];
    LAPACKE_dpotrs(LAPACK_ROW_MAJOR, 'L', (lapack_int)p, (lapack_int)k, w->pooled,
                   (lapack_int)p, w->rhs, (lapack_int)k);
    for (uint32_t c = 0; c < k; c++)
        for (uint32_t j = 0; j < p; j++)
            weights[(size_t)c * p + j] = w->rhs[(size_t)j * k + c];
    return WEFT_OK;
}

/* The discriminant of class k under a shared covariance S (Hastie, Tibshirani and Friedman,
 * The Elements of Statistical Learning, 2009, eq. 4.10): d_k(x) = x^T S^-1 mu_k
 * - mu_k^T S^-1 mu_k / 2 + log pi_k; the posterior is the softmax of the d_k. */
int lda_fit(const weft_host *host, const double *x, const uint32_t *y, uint32_t n, uint32_t p,
            uint32_t k, const lda_shrinkage *shrink, const char *const *class_names,
            lda_fit_result *out)
{
    memset(out, 0, sizeof *out);
    if (p == 0 || k < 2 || n == 0) {
        host->error(host, "cannot fit LDA on %u epochs of %u features for %u classes", n, p, k);
        return WEFT_EFIT;
    }
    fit_work w;
    if (work_alloc(&w, n, p, k)) {
        work_free(&w);
        host->error(host, "out of memory fitting LDA on %u epochs of %u features", n, p);
        return WEFT_ENOMEM;
    }
    for (uint32_t r = 0; r < n; r++)
        w.count[y[r]]++;
    int rc = check_counts(host, &w, k, class_names);
    out->weights = malloc((size_t)k * p * sizeof *out->weights);
    out->bias = malloc(k * sizeof *out->bias);
    if (rc == WEFT_OK && (!out->weights || !out->bias)) {
        host->error(host, "out of memory fitting LDA on %u features", p);
        rc = WEFT_ENOMEM;
    }
    if (rc == WEFT_OK) {
        pool_covariances(&w, x, y, n, p, k, shrink, out);
        rc = solve_weights(host, &w, p, k, shrink, out->weights);
    }
    for (uint32_t c = 0; rc == WEFT_OK && c < k; c++) {
        double quad = 0;
        for (uint32_t j = 0; j < p; j++)
            quad += w.means[(size_t)c * p + j] * out->weights[(size_t)c * p + j];
        out->bias[c] = -0.5 * quad + log((double)w.count[c] / n);
    }
    work_free(&w);
    if (rc != WEFT_OK)
        lda_fit_result_free(out);
    return rc;
}

/* ---- the model a readout holds ------------------------------------------------------------ */

void lda_model_free(lda_model *m)
{
    for (uint32_t c = 0; m->class_names && c < m->n_classes; c++)
        free(m->class_names[c]);
    free(m->class_names);
    free(m->labels);
    free(m->weights);
    free(m->bias);
    free(m->scores);
    memset(m, 0, sizeof *m);
}

static int copy_classes(lda_model *m, const weft_host *host, const weft_param *classes)
{
    if (classes->n_strings < 2 || classes->n_strings > LDA_MAX_CLASSES) {
        host->param_error(host, "classes", "classes lists %u names; give 2 to %d class names, "
                          "e.g. [rest, grip]", classes->n_strings, LDA_MAX_CLASSES);
        return WEFT_EINVAL;
    }
    m->n_classes = classes->n_strings;
    m->class_names = calloc(m->n_classes, sizeof *m->class_names);
    m->labels = calloc(m->n_classes, sizeof *m->labels);
    if (!m->class_names || !m->labels)
        return WEFT_ENOMEM;
    for (uint32_t c = 0; c < m->n_classes; c++) {
        for (uint32_t d = 0; d < c; d++)
            if (!strcmp(classes->strings[c], classes->strings[d])) {
                host->param_error(host, "classes", "class '%s' is listed twice",
                                  classes->strings[c]);
                return WEFT_EINVAL;
            }
        if (!(m->class_names[c] = strdup(classes->strings[c])))
            return WEFT_ENOMEM;
        m->labels[c] = m->class_names[c];
    }
    return WEFT_OK;
}

static int copy_learned(lda_model *m, const weft_host *host, const weft_param *weights,
                        const weft_param *bias, const char *features)
{
    if (!weights->given && !bias->given)
        return WEFT_OK;
    if (!weights->given || !bias->given) {
        host->param_error(host, weights->given ? "weights" : "bias",
                          "weights and bias are learned together; give both (run `weft fit`) "
                          "or neither");
        return WEFT_EINVAL;
    }
    if (weights->rows != m->n_classes || weights->cols != m->n_features) {
        host->param_error(host, "weights", "weights is %u x %u; it must be classes x features "
                          "= %u x %u (%s)", weights->rows, weights->cols, m->n_classes,
                          m->n_features, features);
        return WEFT_EINVAL;
    }
    if (bias->cols != m->n_classes) {
        host->param_error(host, "bias", "bias has %u values; it must have one per class (%u)",
                          bias->cols, m->n_classes);
        return WEFT_EINVAL;
    }
    memcpy(m->weights, weights->values, (size_t)m->n_classes * m->n_features * sizeof(double));
    memcpy(m->bias, bias->values, m->n_classes * sizeof(double));
    m->fitted = 1;
    return WEFT_OK;
}

int lda_model_init(lda_model *m, const weft_host *host, const weft_params *params,
                   uint32_t n_features, const char *features)
{
    memset(m, 0, sizeof *m);
    m->n_features = n_features;
    int rc = copy_classes(m, host, weft_param_get(params, "classes"));
    if (rc == WEFT_OK)
        rc = lda_shrinkage_parse(host, weft_param_text(params, "shrinkage"), &m->shrink);
    if (rc == WEFT_OK) {
        m->weights = calloc((size_t)m->n_classes * n_features, sizeof *m->weights);
        m->bias = calloc(m->n_classes, sizeof *m->bias);
        m->scores = calloc(m->n_classes, sizeof *m->scores);
        if (!m->weights || !m->bias || !m->scores)
            rc = WEFT_ENOMEM;
    }
    if (rc == WEFT_OK)
        rc = copy_learned(m, host, weft_param_get(params, "weights"),
                          weft_param_get(params, "bias"), features);
    if (rc == WEFT_ENOMEM)
        host->error(host, "out of memory for %u classes x %u features", m->n_classes,
                    n_features);
    if (rc != WEFT_OK)
        lda_model_free(m);
    return rc;
}

void lda_model_probabilities(lda_model *m, const double *x, double *out)
{
    uint32_t k = m->n_classes, p = m->n_features;
    double top = -INFINITY, sum = 0;
    for (uint32_t c = 0; c < k; c++) {
        double s = m->bias[c];
        const double *w = m->weights + (size_t)c * p;
        for (uint32_t j = 0; j < p; j++)
            s += w[j] * x[j];
        m->scores[c] = s;
        if (s > top)
            top = s;
    }
    /* Subtracting the largest score keeps exp() from overflowing; the ratio is unchanged. */
    for (uint32_t c = 0; c < k; c++) {
        out[c] = exp(m->scores[c] - top);
        sum += out[c];
    }
    for (uint32_t c = 0; c < k; c++)
        out[c] /= sum;
}

/* Map the epochs' classes (named by the graph's `fit: classes`) onto the readout's order. */
static int map_classes(const lda_model *m, const weft_host *host, const weft_epochs *ep,
                       uint32_t *map)
{
    for (uint32_t e = 0; e < ep->n_classes; e++) {
        map[e] = UINT32_MAX;
        for (uint32_t c = 0; c < m->n_classes; c++)
            if (!strcmp(ep->class_names[e], m->class_names[c]))
                map[e] = c;
        if (map[e] == UINT32_MAX) {
            host->error(host, "the fit class '%s' is not one of this readout's classes; name "
                        "the classes of `fit: classes` as in `classes`", ep->class_names[e]);
            return WEFT_EFIT;
        }
    }
    for (uint32_t c = 0; c < m->n_classes; c++) {
        int found = 0;
        for (uint32_t e = 0; e < ep->n_classes; e++)
            found |= map[e] == c;
        if (!found) {
            host->error(host, "class '%s' has no marker labels in `fit: classes`, so it has "
                        "no trials; map it, e.g. `%s: [%s]`", m->class_names[c],
                        m->class_names[c], m->class_names[c]);
            return WEFT_EFIT;
        }
    }
    return WEFT_OK;
}

int lda_model_fit(const lda_model *m, const weft_host *host, const weft_epochs *ep,
                  const double *features, const weft_param_sink *learned)
{
    if (ep->n_classes > LDA_MAX_CLASSES) {
        host->error(host, "%u fit classes; at most %d", ep->n_classes, LDA_MAX_CLASSES);
        return WEFT_EFIT;
    }
    uint32_t map[LDA_MAX_CLASSES];
    uint32_t *y = malloc((ep->n_epochs + 1) * sizeof *y);
    if (!y) {
        host->error(host, "out of memory for %u epochs", ep->n_epochs);
        return WEFT_ENOMEM;
    }
    int rc = map_classes(m, host, ep, map);
    for (uint32_t e = 0; rc == WEFT_OK && e < ep->n_epochs; e++)
        y[e] = map[ep->classes[e]];
    lda_fit_result res;
    if (rc == WEFT_OK)
        rc = lda_fit(host, features, y, ep->n_epochs, m->n_features, m->n_classes, &m->shrink,
                     (const char *const *)m->class_names, &res);
    free(y);
    if (rc != WEFT_OK)
        return rc;
    if (learned->matrix(learned->ctx, "weights", res.weights, m->n_classes, m->n_features) ||
        learned->numbers(learned->ctx, "bias", res.bias, m->n_classes)) {
        host->error(host, "the host refused the learned weights or bias");
        rc = WEFT_EFIT;
    }
    lda_fit_result_free(&res);
    return rc;
}
