/* lda_internal: pieces shared by the LDA source files, not by the plugins. */
#ifndef COMMON_LDA_INTERNAL_H
#define COMMON_LDA_INTERNAL_H

#include "lda.h"

/* xc = x minus its column means (written to mean[p]). */
void lda_center(const double *x, uint32_t n, uint32_t p, double *xc, double *mean);

/* Covariance (p x p) of centred rows xc (n x p), shrunk as `sh` says; scratch holds
 * p + n * p doubles. *intensity is the shrinkage used. */
int lda_class_covariance(const double *xc, uint32_t n, uint32_t p, const lda_shrinkage *sh,
                         double *cov, double *scratch, double *intensity);

#endif
