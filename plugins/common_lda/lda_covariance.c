/* lda_covariance: class covariances for LDA -- empirical, with a fixed shrinkage, or with the
 * Ledoit-Wolf intensity -- all in float64. */
#include <cblas.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "lda.h"
#include "lda_internal.h"

int lda_shrinkage_parse(const weft_host *host, const char *text, lda_shrinkage *out)
{
    if (!strcmp(text, "auto")) {
        *out = (lda_shrinkage){ LDA_SHRINK_AUTO, 0 };
        return WEFT_OK;
    }
    if (!strcmp(text, "none")) {
        *out = (lda_shrinkage){ LDA_SHRINK_NONE, 0 };
        return WEFT_OK;
    }
    char *end = NULL;
    double a = strtod(text, &end);
    if (!*text || *end || !(a >= 0 && a <= 1)) {
        host->param_error(host, "shrinkage",
                          "shrinkage '%s' must be auto, none, or a number from 0 to 1", text);
        return WEFT_EINVAL;
    }
    *out = (lda_shrinkage){ a == 0 ? LDA_SHRINK_NONE : LDA_SHRINK_FIXED, a };
    return WEFT_OK;
}

/* S = xc^T xc / n for centred rows xc (n x p); only S's lower triangle is computed by dsyrk,
 * so mirror it. */
static void empirical_covariance(const double *xc, uint32_t n, uint32_t p, double *s)
{
    cblas_dsyrk(CblasRowMajor, CblasLower, CblasTrans, (int)p, (int)n, 1.0 / n, xc, (int)p, 0.0,
                s, (int)p);
    for (uint32_t i = 0; i < p; i++)
        for (uint32_t j = 0; j < i; j++)
            s[(size_t)j * p + i] = s[(size_t)i * p + j];
}

/* Ledoit and Wolf (2004), "A well-conditioned estimator for large-dimensional covariance
 * matrices", J. Multivariate Analysis 88:365-411, Lemmas 3.2-3.4: with S the empirical
 * covariance of centred rows x_s, m = tr(S)/p, d^2 = ||S - m I||^2, and
 * b^2 = min(d^2, n^-2 sum_s ||x_s x_s^T - S||^2), the intensity is b^2 / d^2 (norms are
 * Frobenius divided by p). sum_s ||x_s x_s^T - S||^2 = sum_s ||x_s||^4 - n ||S||^2. */
static double intensity_of_centred(const double *xc, uint32_t n, uint32_t p, const double *s)
{
    if (p < 2)
        return 0.0;
    double trace = 0, frob2 = 0, quart = 0;
    for (uint32_t i = 0; i < p; i++)
        trace += s[(size_t)i * p + i];
    for (size_t i = 0; i < (size_t)p * p; i++)
        frob2 += s[i] * s[i];
    for (uint32_t r = 0; r < n; r++) {
        double norm2 = 0;
        for (uint32_t j = 0; j < p; j++)
            norm2 += xc[(size_t)r * p + j] * xc[(size_t)r * p + j];
        quart += norm2 * norm2;
    }
    double m = trace / p;
    double d2 = (frob2 - 2 * m * trace + p * m * m) / p;
    double b2 = (quart / n - frob2) / ((double)p * n);
    if (b2 > d2)
        b2 = d2;
    return b2 <= 0 || d2 <= 0 ? 0.0 : b2 / d2;
}

double lda_ledoit_wolf_intensity(const double *x, uint32_t n, uint32_t p)
{
    double *xc = malloc((size_t)n * p * sizeof *xc), *s = malloc((size_t)p * p * sizeof *s);
    double *mean = calloc(p, sizeof *mean);
    double a = -1;
    if (xc && s && mean && n > 0) {
        lda_center(x, n, p, xc, mean);
        empirical_covariance(xc, n, p, s);
        a = intensity_of_centred(xc, n, p, s);
    }
    free(xc);
    free(s);
    free(mean);
    return a;
}

void lda_center(const double *x, uint32_t n, uint32_t p, double *xc, double *mean)
{
    memset(mean, 0, p * sizeof *mean);
    for (uint32_t r = 0; r < n; r++)
        for (uint32_t j = 0; j < p; j++)
            mean[j] += x[(size_t)r * p + j];
    for (uint32_t j = 0; j < p; j++)
        mean[j] /= n;
    for (uint32_t r = 0; r < n; r++)
        for (uint32_t j = 0; j < p; j++)
            xc[(size_t)r * p + j] = x[(size_t)r * p + j] - mean[j];
}

/* With `auto`, each feature is first scaled to unit variance and the shrunk covariance scaled
 * back, so features in different units (log-variances of EEG and EMG) are shrunk alike. This
 * follows sklearn's LinearDiscriminantAnalysis(shrinkage='auto'), the reference the tests use;
 * Blankertz et al. (2011, NeuroImage 56:814-825, Sec. 2.3) shrink the raw covariance. */
int lda_class_covariance(const double *xc, uint32_t n, uint32_t p, const lda_shrinkage *sh,
                         double *cov, double *scratch, double *intensity)
{
    double *scale = scratch;                 /* p */
    double *z = scratch + p;                 /* n x p */
    *intensity = 0;
    if (sh->mode != LDA_SHRINK_AUTO) {
        empirical_covariance(xc, n, p, cov);
        if (sh->mode == LDA_SHRINK_FIXED) {
            double trace = 0;
            for (uint32_t i = 0; i < p; i++)
                trace += cov[(size_t)i * p + i];
            for (size_t i = 0; i < (size_t)p * p; i++)
                cov[i] *= 1 - sh->amount;
            for (uint32_t i = 0; i < p; i++)
                cov[(size_t)i * p + i] += sh->amount * trace / p;
            *intensity = sh->amount;
        }
        return 0;
    }
    for (uint32_t j = 0; j < p; j++) {
        double v = 0;
        for (uint32_t r = 0; r < n; r++)
            v += xc[(size_t)r * p + j] * xc[(size_t)r * p + j];
        v /= n;
        /* A constant feature keeps scale 1 rather than dividing by zero (as sklearn does). */
        scale[j] = v > 1e-300 ? sqrt(v) : 1.0;
    }
    for (uint32_t r = 0; r < n; r++)
        for (uint32_t j = 0; j < p; j++)
            z[(size_t)r * p + j] = xc[(size_t)r * p + j] / scale[j];
    empirical_covariance(z, n, p, cov);
    double a = intensity_of_centred(z, n, p, cov), trace = 0;
    for (uint32_t i = 0; i < p; i++)
        trace += cov[(size_t)i * p + i];
    for (uint32_t i = 0; i < p; i++)
        for (uint32_t j = 0; j < p; j++) {
            double v = (1 - a) * cov[(size_t)i * p + j] + (i == j ? a * trace / p : 0);
            cov[(size_t)i * p + j] = v * scale[i] * scale[j];
        }
    *intensity = a;
    return 0;
}
