/* fir_design: linear-phase FIR filters by the window method -- an ideal (sinc) response
 * truncated by a Hamming, Blackman or Kaiser window -- and Kaiser's formulas for the window's
 * length and shape from a wanted ripple and transition width. */
#ifndef DSP_FIR_DESIGN_H
#define DSP_FIR_DESIGN_H

typedef enum fir_kind { FIR_LOWPASS, FIR_HIGHPASS, FIR_BANDPASS, FIR_BANDSTOP } fir_kind;
typedef enum fir_window { FIR_HAMMING, FIR_BLACKMAN, FIR_KAISER } fir_window;

/* Kaiser (1974): beta for a stop-band attenuation / pass-band ripple of `atten_db` dB. */
double fir_kaiser_beta(double atten_db);

/* Kaiser (1974): taps for `atten_db` dB and a transition `width_hz` wide at `rate`. */
double fir_kaiser_taps(double atten_db, double width_hz, double rate);

/* Fill h[0 .. taps-1] with the windowed-sinc filter: low-pass and high-pass use cutoff f1,
 * band-pass and band-stop f1 < f2 (Hz, strictly between 0 and rate / 2), scaled to unit gain
 * at the centre of the first pass band (0 Hz, rate / 2 or the band's middle). `beta` is the
 * Kaiser window's shape (ignored by the others). High-pass and band-stop need an odd number
 * of taps (an even one puts a zero at rate / 2). Returns 0, or -1 for bad arguments. */
int fir_windowed_sinc(fir_kind kind, double f1, double f2, double rate, fir_window window,
                      double beta, int taps, double *h);

#endif
