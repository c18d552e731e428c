/* butter_design: digital Butterworth filters (low-pass, high-pass, band-pass, band-stop) as
 * second-order sections, designed from the analog prototype by the bilinear transform. */
#ifndef DSP_BUTTER_DESIGN_H
#define DSP_BUTTER_DESIGN_H

#include "sos.h"

#define BUTTER_MAX_ORDER 10
/* A band-pass or band-stop of order N has 2N poles: N sections. */
#define BUTTER_MAX_SECTIONS BUTTER_MAX_ORDER

typedef enum butter_kind {
    BUTTER_LOWPASS,
    BUTTER_HIGHPASS,
    BUTTER_BANDPASS,
    BUTTER_BANDSTOP
} butter_kind;

/* Design an order-`order` filter (1 .. BUTTER_MAX_ORDER) for sample rate `rate`. Low-pass
 * and high-pass use edge `f1` (their -3 dB cutoff); band-pass and band-stop use f1 < f2.
 * Edges must lie strictly between 0 and rate / 2 (the caller reports which one does not).
 * Writes the sections to `out` (room for BUTTER_MAX_SECTIONS) and returns their number, or
 * -1 for arguments out of range. */
int butter_design(butter_kind kind, int order, double rate, double f1, double f2,
                  sos_coef *out);

/* Number of sections butter_design makes. */
int butter_sections(butter_kind kind, int order);

#endif
