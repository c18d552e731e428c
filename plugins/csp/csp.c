/* csp: common spatial patterns, a fittable spatial filter for two classes. Fit finds the
 * filters w that maximise the variance of one class relative to the other -- the generalized
 * eigenvectors of Ca w = lambda (Ca + Cb) w -- and keeps `pairs` from each end of the
 * spectrum (Ramoser, Mueller-Gerking and Pfurtscheller 2000, IEEE Trans. Rehab. Eng.
 * 8:441-446; Blankertz et al. 2008, IEEE Signal Proc. Magazine 25:41-56). Once fitted it is a
 * fixed matrix whose rows are the learned `filters`, applied per block like `spatial`. */
#include <lapacke.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <weft/stage.h>

#include "../common_spatial/spatial_matrix.h"

#define LABEL_LEN 16
/* Below this reciprocal condition of Ca + Cb some direction carries no variance beyond
 * float32 rounding (a common average reference removes one, a bridged electrode another);
 * its eigenvalue would be a ratio of rounding noise (common practice for float64 solves). */
#define CSP_MIN_RCOND 1e-10

static const weft_param_spec params[] = {
    { "pairs", WEFT_PARAM_INTEGER, 0, "2", 1, 64, "", NULL,
      "filters from each end of the spectrum: 2 x pairs output channels" },
    { "shrinkage", WEFT_PARAM_NUMBER, 0, "0", 0, 1, "", NULL,
      "class covariances (1 - a) C + a tr(C)/n I before the eigenproblem; raise it if fit "
      "reports a singular covariance" },
    { "filters", WEFT_PARAM_MATRIX, WEFT_PARAM_LEARNED, NULL, WEFT_NO_RANGE, "", NULL,
      "learned: one row per output channel, one column per input channel" },
    { "eigenvalues", WEFT_PARAM_NUMBERS, WEFT_PARAM_LEARNED, NULL, WEFT_NO_RANGE, "", NULL,
      "learned: each filter's share of the first class's variance, from 0 to 1" },
    { "patterns", WEFT_PARAM_MATRIX, WEFT_PARAM_LEARNED, NULL, WEFT_NO_RANGE, "", NULL,
      "learned: one row per filter, the scalp pattern it picks up (for inspection)" },
    WEFT_PARAMS_END,
};

typedef struct csp {
    const weft_host *host;
    uint32_t in_ch, out_ch, pairs;
    double shrinkage;
    spatial_matrix m;
    int fitted;
    char (*label_text)[LABEL_LEN];
    const char **labels;
} csp;

static void destroy(void *self)
{
    csp *s = self;
    if (!s)
        return;
    spatial_matrix_free(&s->m);
    free(s->label_text);
    free(s->labels);
    free(s);
}

static int take_filters(csp *s, const weft_params *p)
{
    const weft_param *f = weft_param_get(p, "filters");
    if (!f->given)
        return WEFT_OK; /* unfitted: zeros pass until fit */
    if (f->rows != s->out_ch || f->cols != s->in_ch) {
        s->host->param_error(s->host, "filters", "filters is %u x %u; with pairs %u on %u input "
                             "channels it must be %u x %u", f->rows, f->cols, s->pairs,
                             s->in_ch, s->out_ch, s->in_ch);
        return WEFT_EINVAL;
    }
    spatial_matrix_set(&s->m, f->values);
    s->fitted = 1;
    return WEFT_OK;
}

static int init(const weft_host *host, const weft_params *p, const weft_layout *in,
                uint32_t n_in, weft_layout *out, void **self)
{
    (void)n_in;
    csp *s = calloc(1, sizeof *s);
    if (!s) {
        host->error(host, "out of memory");
        return WEFT_ENOMEM;
    }
    s->host = host;
    s->in_ch = in->channels;
    s->pairs = (uint32_t)weft_param_number(p, "pairs");
    s->out_ch = 2 * s->pairs;
    s->shrinkage = weft_param_number(p, "shrinkage");
    int rc = WEFT_OK;
    if (s->out_ch > s->in_ch) {
        host->param_error(host, "pairs", "pairs %u needs %u input channels; '%s' has %u", s->pairs,
                          s->out_ch, in->name ? in->name : "the input", s->in_ch);
        rc = WEFT_EINVAL;
    }
    if (rc == WEFT_OK && spatial_matrix_init(&s->m, s->out_ch, s->in_ch))
        rc = WEFT_ENOMEM;
    if (rc == WEFT_OK)
        rc = take_filters(s, p);
    s->label_text = calloc(s->out_ch, sizeof *s->label_text);
    s->labels = calloc(s->out_ch, sizeof *s->labels);
    if (rc == WEFT_OK && (!s->label_text || !s->labels))
        rc = WEFT_ENOMEM;
    if (rc != WEFT_OK) {
        if (rc == WEFT_ENOMEM)
            host->error(host, "out of memory for %u x %u filters", s->out_ch, s->in_ch);
        destroy(s);
        return rc;
    }
    for (uint32_t i = 0; i < s->out_ch; i++) {
        snprintf(s->label_text[i], LABEL_LEN, "csp%u", (unsigned)(i + 1));
        s->labels[i] = s->label_text[i];
    }
    out->kind = WEFT_STREAM_SAMPLES;
    out->channels = s->out_ch;
    out->rate = in->rate;
    out->labels = s->labels;
    *self = s;
    return WEFT_OK;
}

static int process(void *self, const weft_block *in, uint32_t n_in, weft_block *out)
{
    (void)n_in;
    csp *s = self;
    spatial_matrix_apply(&s->m, in->data, in->frames, out->data);
    out->frames = in->frames;
    return WEFT_OK;
}

/* ---- fit ------------------------------------------------------------------------------- */

/* Add the trace-normalised covariance of one epoch, X X^T / tr(X X^T) with X centred per
 * channel (Ramoser et al. 2000, eq. 1), to acc (n x n). Float64 throughout: float32 loses the
 * small eigenvalues that the filters at the low end of the spectrum are made of. */
static int add_epoch_covariance(const weft_window *w, double *acc, double *cov, double *mean)
{
    uint32_t n = w->channels;
    memset(mean, 0, n * sizeof *mean);
    memset(cov, 0, (size_t)n * n * sizeof *cov);
    for (uint32_t f = 0; f < w->frames; f++)
        for (uint32_t c = 0; c < n; c++)
            mean[c] += w->data[(size_t)f * n + c];
    for (uint32_t c = 0; c < n; c++)
        mean[c] /= w->frames;
    for (uint32_t f = 0; f < w->frames; f++) {
        const float *x = w->data + (size_t)f * n;
        for (uint32_t i = 0; i < n; i++) {
            double xi = x[i] - mean[i];
            for (uint32_t j = 0; j <= i; j++)
                cov[(size_t)i * n + j] += xi * (x[j] - mean[j]);
        }
    }
    double trace = 0;
    for (uint32_t i = 0; i < n; i++)
        trace += cov[(size_t)i * n + i];
    if (!(trace > 0))
        return -1;
    for (uint32_t i = 0; i < n; i++)
        for (uint32_t j = 0; j <= i; j++) {
            double v = cov[(size_t)i * n + j] / trace;
            acc[(size_t)i * n + j] += v;
            if (j != i)
                acc[(size_t)j * n + i] += v;
        }
    return 0;
}

static void shrink(double *c, uint32_t n, double a)
{
    double trace = 0;
    for (uint32_t i = 0; i < n; i++)
        trace += c[(size_t)i * n + i];
    for (size_t i = 0; i < (size_t)n * n; i++)
        c[i] *= 1 - a;
    for (uint32_t i = 0; i < n; i++)
        c[(size_t)i * n + i] += a * trace / n;
}

typedef struct csp_work {
    double *ca, *cb, *sum, *cov, *mean, *lambda;
} csp_work;

static void work_free(csp_work *w)
{
    free(w->ca);
    free(w->cb);
    free(w->sum);
    free(w->cov);
    free(w->mean);
    free(w->lambda);
}

static int class_covariances(csp *s, const weft_epochs *ep, csp_work *w)
{
    uint32_t n = s->in_ch, count[2] = { 0, 0 };
    for (uint32_t e = 0; e < ep->n_epochs; e++) {
        uint32_t k = ep->classes[e];
        const weft_window *win = &ep->windows[(size_t)e * ep->n_in];
        if (add_epoch_covariance(win, k == 0 ? w->ca : w->cb, w->cov, w->mean)) {
            s->host->error(s->host, "the epoch %u (class '%s') is flat: all %u channels are "
                           "constant over its %u samples", e + 1, ep->class_names[k], n,
                           win->frames);
            return WEFT_EFIT;
        }
        count[k]++;
    }
    for (int k = 0; k < 2; k++)
        if (count[k] < 2) {
            s->host->error(s->host, "class '%s' has %u epoch%s; CSP needs at least 2 per class",
                           ep->class_names[k], count[k], count[k] == 1 ? "" : "s");
            return WEFT_EFIT;
        }
    for (size_t i = 0; i < (size_t)n * n; i++) {
        w->ca[i] /= count[0];
        w->cb[i] /= count[1];
    }
    if (s->shrinkage > 0) {
        shrink(w->ca, n, s->shrinkage);
        shrink(w->cb, n, s->shrinkage);
    }
    for (size_t i = 0; i < (size_t)n * n; i++)
        w->sum[i] = w->ca[i] + w->cb[i];
    return WEFT_OK;
}

/* Reciprocal 1-norm condition number of the symmetric positive matrix a (n x n), or 0 if it
 * is not positive definite. */
static double reciprocal_condition(const double *a, uint32_t n, double *scratch)
{
    memcpy(scratch, a, (size_t)n * n * sizeof *scratch);
    double anorm = LAPACKE_dlansy(LAPACK_ROW_MAJOR, '1', 'L', (lapack_int)n, scratch,
                                  (lapack_int)n);
    double rcond = 0;
    if (LAPACKE_dpotrf(LAPACK_ROW_MAJOR, 'L', (lapack_int)n, scratch, (lapack_int)n) != 0 ||
        LAPACKE_dpocon(LAPACK_ROW_MAJOR, 'L', (lapack_int)n, scratch, (lapack_int)n, anorm,
                       &rcond) != 0)
        return 0;
    return rcond;
}

/* The filter of eigenvector column `col` of the solved eigenproblem (stored in ca). */
static void filter_row(const double *vectors, uint32_t n, uint32_t col, double *row)
{
    for (uint32_t i = 0; i < n; i++)
        row[i] = vectors[(size_t)i * n + col];
}

static int write_learned(csp *s, const csp_work *w, const double *vectors,
                         const weft_param_sink *learned)
{
    uint32_t n = s->in_ch, m = s->out_ch;
    double *filters = malloc((size_t)m * n * sizeof *filters);
    double *patterns = malloc((size_t)m * n * sizeof *patterns);
    double *lambda = malloc(m * sizeof *lambda);
    int rc = filters && patterns && lambda ? WEFT_OK : WEFT_ENOMEM;
    for (uint32_t r = 0; rc == WEFT_OK && r < m; r++) {
        /* Largest eigenvalues first (most variance in the first class), then the smallest. */
        uint32_t col = r < s->pairs ? n - 1 - r : s->pairs * 2 - 1 - r;
        filter_row(vectors, n, col, filters + (size_t)r * n);
        lambda[r] = w->lambda[col];
        /* With W^T (Ca + Cb) W = I, the patterns are the columns of W^-T = (Ca + Cb) W
         * (Blankertz et al. 2008, Sec. "Spatial filters and patterns"). */
        for (uint32_t i = 0; i < n; i++) {
            double v = 0;
            for (uint32_t j = 0; j < n; j++)
                v += w->sum[(size_t)i * n + j] * vectors[(size_t)j * n + col];
            patterns[(size_t)r * n + i] = v;
        }
    }
    if (rc == WEFT_OK &&
        (learned->matrix(learned->ctx, "filters", filters, m, n) ||
         learned->numbers(learned->ctx, "eigenvalues", lambda, m) ||
         learned->matrix(learned->ctx, "patterns", patterns, m, n)))
        rc = WEFT_EFIT;
    if (rc != WEFT_OK)
        s->host->error(s->host, rc == WEFT_ENOMEM ? "out of memory writing the filters"
                                                  : "the host refused the learned filters");
    free(filters);
    free(patterns);
    free(lambda);
    return rc;
}

static int fit(void *self, const weft_epochs *ep, const weft_param_sink *learned)
{
    csp *s = self;
    uint32_t n = s->in_ch;
    if (ep->n_classes != 2) {
        s->host->error(s->host, "CSP separates two classes; `fit: classes` has %u",
                       ep->n_classes);
        return WEFT_EFIT;
    }
    csp_work w = {
        .ca = calloc((size_t)n * n, sizeof(double)), .cb = calloc((size_t)n * n, sizeof(double)),
        .sum = calloc((size_t)n * n, sizeof(double)), .cov = calloc((size_t)n * n, sizeof(double)),
        .mean = calloc(n, sizeof(double)), .lambda = calloc(n, sizeof(double)),
    };
    int rc = WEFT_OK;
    if (!w.ca || !w.cb || !w.sum || !w.cov || !w.mean || !w.lambda) {
        s->host->error(s->host, "out of memory for %u-channel covariances", n);
        rc = WEFT_ENOMEM;
    }
    if (rc == WEFT_OK)
        rc = class_covariances(s, ep, &w);
    if (rc == WEFT_OK) {
        /* dsygv overwrites A with the eigenvectors (B-orthonormal: W^T B W = I) and B with
         * its Cholesky factor, so it works on copies. */
        memcpy(w.cov, w.ca, (size_t)n * n * sizeof(double));
        double *b = malloc((size_t)n * n * sizeof *b);
        lapack_int info = -1;
        double rcond = b ? reciprocal_condition(w.sum, n, b) : 0;
        if (b && rcond >= CSP_MIN_RCOND) {
            memcpy(b, w.sum, (size_t)n * n * sizeof *b);
            info = LAPACKE_dsygv(LAPACK_ROW_MAJOR, 1, 'V', 'L', (lapack_int)n, w.cov,
                                 (lapack_int)n, b, (lapack_int)n, w.lambda);
            free(b);
        }
        if (info != 0) {
            s->host->error(s->host, "the summed class covariance of the %u channels is singular "
                           "(reciprocal condition %.2g): some combination of channels is "
                           "flat, as after a common average reference or with a bridged "
                           "electrode; set `shrinkage:` (e.g. 0.05) or drop a channel", n,
                           rcond);
            rc = WEFT_EFIT;
        }
    }
    if (rc == WEFT_OK)
        rc = write_learned(s, &w, w.cov, learned);
    work_free(&w);
    return rc;
}

static const weft_stage_api api = {
    WEFT_API_HEADER,
    .roles = WEFT_ROLE_FILTER | WEFT_ROLE_FITTABLE,
    .name = "csp",
    .version = "0.1.0",
    .summary = "common spatial patterns: fitted spatial filters that contrast two classes' "
               "variance",
    .params = params,
    .min_inputs = 1,
    .max_inputs = 1,
    .init = init,
    .process = process,
    .fit = fit,
    .destroy = destroy,
};

WEFT_STAGE(api)
