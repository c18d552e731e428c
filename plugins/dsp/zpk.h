/* zpk: a filter as zeros, poles and gain, and its conversion to second-order sections.
 * Shared by the IIR design code of the temporal filter plugins. */
#ifndef DSP_ZPK_H
#define DSP_ZPK_H

#include <complex.h>

#include "sos.h"

/* Room for a band-pass or band-stop of order 10 (20 poles), plus the padding the pairing adds. */
#define ZPK_MAX 24

typedef struct zpk {
    double complex z[ZPK_MAX], p[ZPK_MAX];
    int nz, np;
    double k;
} zpk;

/* Group poles and zeros into second-order sections: each pole nearest the unit circle goes
 * with its nearest zeros, and those sections are run last, where their peak gain can no longer
 * overflow an earlier section ("nearest" pairing; the method of scipy.signal.zpk2sos, whose
 * documentation states it step by step). The gain goes into the first section's numerator.
 * `f` gets up to `max_sections` sections; returns how many, or -1 if there is no room or the
 * roots are not in conjugate pairs. */
int zpk_to_sos(const zpk *f, sos_coef *out, int max_sections);

#endif
