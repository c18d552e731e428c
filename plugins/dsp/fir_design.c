/* fir_design: windowed-sinc FIR design.
 *
 * Sources: the window method, Oppenheim and Schafer, Discrete-Time Signal Processing (2010),
 * sec. 7.5; Hamming (0.54, 0.46) and Blackman (0.42, 0.5, 0.08) windows as tabulated by
 * Harris (1978), "On the use of windows for harmonic analysis with the discrete Fourier
 * transform", Proc. IEEE 66(1); the Kaiser window and its design formulas, Kaiser (1974),
 * "Nonrecursive digital filter design using the I0-sinh window function", Proc. IEEE ISCAS
 * (as given by Oppenheim and Schafer, eqs. 7.62-7.63, from memory). The band bookkeeping and
 * the gain normalisation follow scipy.signal.firwin, the outside reference of
 * tests/reference/check_filters_fir.py. */
#include "fir_design.h"

#include <math.h>

#define PI 3.14159265358979323846

double fir_kaiser_beta(double a)
{
    if (a > 50)
        return 0.1102 * (a - 8.7);
    if (a > 21)
        return 0.5842 * pow(a - 21, 0.4) + 0.07886 * (a - 21);
    return 0.0;
}

double fir_kaiser_taps(double a, double width_hz, double rate)
{
    /* The formula gives the order; one more tap. Width as a fraction of half the rate. */
    double width = width_hz / (rate / 2);
    return ceil((a - 7.95) / 2.285 / (PI * width) + 1);
}

/* Modified Bessel function of the first kind, order 0, by its power series
 * sum ((x/2)^k / k!)^2, which converges for every x (Abramowitz and Stegun 9.6.12). */
static double bessel_i0(double x)
{
    double sum = 1, term = 1, q = x * x / 4;
    for (int k = 1; k < 500; k++) {
        term *= q / ((double)k * k);
        sum += term;
        if (term < 1e-17 * sum)
            break;
    }
    return sum;
}

static double window_at(fir_window w, double beta, int n, int taps)
{
    if (taps == 1)
        return 1.0;
    double fac = -PI + n * (2 * PI / (taps - 1));
    switch (w) {
    case FIR_HAMMING: return 0.54 + 0.46 * cos(fac);
    case FIR_BLACKMAN: return 0.42 + 0.5 * cos(fac) + 0.08 * cos(2 * fac);
    case FIR_KAISER: {
        double alpha = (taps - 1) / 2.0, r = (n - alpha) / alpha;
        return bessel_i0(beta * sqrt(1 - r * r)) / bessel_i0(beta);
    }
    }
    return 1.0;
}

static double sinc(double x) { return x == 0 ? 1.0 : sin(PI * x) / (PI * x); }

int fir_windowed_sinc(fir_kind kind, double f1, double f2, double rate, fir_window window,
                      double beta, int taps, double *h)
{
    int band = kind == FIR_BANDPASS || kind == FIR_BANDSTOP;
    double nyq = rate / 2;
    if (taps < 1 || !(f1 > 0) || !(f1 < nyq) || (band && !(f2 > f1 && f2 < nyq)))
        return -1;
    /* Band edges as fractions of half the rate; a pass band reaching 0 or rate / 2 is one
     * ideal low-pass minus another. */
    double edges[4];
    int n_edges = 0, pass_zero = kind == FIR_LOWPASS || kind == FIR_BANDSTOP;
    int pass_nyquist = kind == FIR_HIGHPASS || kind == FIR_BANDSTOP;
    if (pass_nyquist && taps % 2 == 0)
        return -1;
    if (pass_zero)
        edges[n_edges++] = 0;
    edges[n_edges++] = f1 / nyq;
    if (band)
        edges[n_edges++] = f2 / nyq;
    if (pass_nyquist)
        edges[n_edges++] = 1;
    double alpha = 0.5 * (taps - 1);
    for (int n = 0; n < taps; n++) {
        double m = n - alpha, v = 0;
        for (int b = 0; b < n_edges; b += 2) {
            v += edges[b + 1] * sinc(edges[b + 1] * m);
            v -= edges[b] * sinc(edges[b] * m);
        }
        h[n] = v * window_at(window, beta, n, taps);
    }
    double left = edges[0], right = edges[1];
    double centre = left == 0 ? 0.0 : right == 1 ? 1.0 : 0.5 * (left + right);
    double gain = 0;
    for (int n = 0; n < taps; n++)
        gain += h[n] * cos(PI * (n - alpha) * centre);
    /* Mirror images differ by rounding only; make them equal, so the phase is exactly linear. */
    for (int n = 0; n < taps / 2; n++) {
        double v = (h[n] + h[taps - 1 - n]) / 2 / gain;
        h[n] = h[taps - 1 - n] = v;
    }
    if (taps % 2)
        h[taps / 2] /= gain;
    return 0;
}
