/* notch_design: the second-order notch of Orfanidis, Introduction to Signal Processing (1996),
 * sec. 11.3 (from memory; the same design as scipy.signal.iirnotch, which cites it): bilinear
 * transform of the analog notch, with the bandwidth prewarped, beta = tan(bw / 2) for the
 * -3 dB band edges, and
 *   H(z) = g (1 - 2 cos w0 z^-1 + z^-2) / (1 - 2 g cos w0 z^-1 + (2 g - 1) z^-2),
 *   g = 1 / (1 + beta). */
#include "notch_design.h"

#include <math.h>

#define PI 3.14159265358979323846

sos_coef notch_design(double freq, double q, double rate)
{
    double w0 = 2 * freq / rate;           /* as a fraction of half the rate */
    double bw = w0 / q;
    bw *= PI;
    w0 *= PI;
    double gb = 1 / sqrt(2.0);             /* gain at the band edges: -3 dB */
    double beta = (sqrt(1.0 - gb * gb) / gb) * tan(bw / 2.0);
    double gain = 1.0 / (1.0 + beta);
    return (sos_coef){ gain, gain * (-2.0 * cos(w0)), gain, -2.0 * gain * cos(w0),
                       2.0 * gain - 1.0 };
}
