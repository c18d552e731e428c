/* The EMG envelope of a steady sine, whose envelope is known in closed form. */
#include "filters_util.h"

#define RATE 1000.0

static float *envelope_of_sine(const char *params, double amplitude, double freq, size_t frames)
{
    float *x = malloc(frames * sizeof *x);
    cr_assert(x != NULL);
    for (size_t n = 0; n < frames; n++)
        x[n] = (float)(amplitude * sin(2 * WEFT_PI * freq * (double)n / RATE));
    size_t got;
    float *y = filters_run("envelope", params, 1, RATE, x, frames, 50, &got);
    cr_assert_eq(got, frames);
    free(x);
    return y;
}

/* RMS of A sin: A / sqrt(2). A 0.1 s window holds whole periods of 100 Hz. */
Test(filters_envelope, moving_rms_of_a_sine_is_amplitude_over_root_two)
{
    float *y = envelope_of_sine("{ smooth: rms, window: 0.1 }", 30, 100, 4000);
    double want = 30 / sqrt(2.0);
    /* The band filter's gain at 100 Hz (inside 20 Hz - no upper edge) is 1 to 1e-6. */
    for (size_t n = 2000; n < 4000; n += 97)
        cr_expect(fabs(y[n] - want) < 1e-3 * want, "%.6f at %zu, want %.6f", y[n], n, want);
    free(y);
}

/* Mean of |A sin|: 2 A / pi; the low-pass passes that mean and removes the ripple at twice
 * the frequency. The sine is not a divisor of the rate: otherwise a harmonic of the rectified
 * sine aliases onto 0 Hz and the sampled mean depends on the phase. */
Test(filters_envelope, rectified_envelope_of_a_sine_is_two_over_pi_of_amplitude)
{
    float *y = envelope_of_sine("{ low: 20, high: 450, smooth: lowpass, cutoff: 6 }", 10, 97.3,
                                6000);
    double want = 2 * 10 / WEFT_PI;
    for (size_t n = 4000; n < 6000; n += 89)
        cr_expect(fabs(y[n] - want) < 5e-3 * want, "%.6f at %zu, want %.6f", y[n], n, want);
    free(y);
}

/* Squared then smoothed then rooted: the RMS again, A / sqrt(2). */
Test(filters_envelope, squared_envelope_of_a_sine_is_its_rms)
{
    float *y = envelope_of_sine("{ detector: square, cutoff: 6 }", 10, 100, 6000);
    double want = 10 / sqrt(2.0);
    for (size_t n = 4000; n < 6000; n += 89)
        cr_expect(fabs(y[n] - want) < 5e-3 * want, "%.6f at %zu, want %.6f", y[n], n, want);
    free(y);
}
