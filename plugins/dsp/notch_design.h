/* notch_design: the second-order IIR notch -- zeros on the unit circle at the notch frequency,
 * poles just inside them -- for a given centre frequency and quality factor. */
#ifndef DSP_NOTCH_DESIGN_H
#define DSP_NOTCH_DESIGN_H

#include "sos.h"

/* Notch at `freq` Hz (0 < freq < rate / 2) with quality factor q = freq / bandwidth, the
 * bandwidth measured between the -3 dB points. Unit gain at 0 Hz and at half the rate. */
sos_coef notch_design(double freq, double q, double rate);

#endif
