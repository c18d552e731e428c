/* Handbook facts about the fir stage, measured on its impulse response. */
#include "filters_util.h"

static float *impulse_response(const char *params, double rate, size_t frames)
{
    float *x = calloc(frames, sizeof *x);
    cr_assert(x != NULL);
    x[0] = 1;
    size_t got;
    float *h = filters_run("fir", params, 1, rate, x, frames, 100, &got);
    free(x);
    return h;
}

/* A window design is symmetric about its middle: linear phase, a constant group delay of
 * (N - 1) / 2 samples (Oppenheim and Schafer 2010, sec. 5.7.3). The impulse response is the
 * taps, for direct and FFT-partitioned runs alike. */
Test(filters_fir, designed_taps_are_symmetric_for_both_engines)
{
    const char *engines[] = { "direct", "fft" };
    for (int e = 0; e < 2; e++) {
        char params[160];
        snprintf(params, sizeof params,
                 "{ kind: bandpass, low: 8, high: 30, taps: 301, engine: %s }", engines[e]);
        float *h = impulse_response(params, 250, 400);
        for (int k = 0; k < 150; k++)
            cr_expect(fabsf(h[k] - h[300 - k]) <= 1e-6f * fabsf(h[150]),
                      "%s: tap %d is %g, its mirror %g", engines[e], k, h[k], h[300 - k]);
        /* After the kernel: exactly nothing directly, FFT rounding (1e-9) otherwise. */
        for (int k = 301; k < 400; k++)
            cr_expect(e ? fabsf(h[k]) < 1e-6f * fabsf(h[150]) : h[k] == 0,
                      "%s: output %d after the kernel is %g", engines[e], k, h[k]);
        free(h);
    }
}

/* Kaiser (1974): the formulas for length and beta meet the asked attenuation in the stop band,
 * which starts half a transition width beyond the cutoff. 1 dB of slack: the formulas are
 * fitted approximations. */
Test(filters_fir, kaiser_design_meets_its_stop_band_attenuation)
{
    const double ripples[] = { 40, 60, 80 };
    for (int r = 0; r < 3; r++) {
        char params[160];
        snprintf(params, sizeof params,
                 "{ window: kaiser, high: 100, transition: 20, ripple: %g }", ripples[r]);
        float *h = impulse_response(params, 1000, 2048);
        double worst = -1000;
        for (double f = 110; f <= 500; f += 0.5) {
            double db = filters_db(filters_magnitude(h, 2048, 1, f, 1000));
            if (db > worst)
                worst = db;
        }
        cr_expect(worst < -ripples[r] + 1, "ripple %g dB: stop band reaches %.1f dB",
                  ripples[r], worst);
        double pass = filters_db(filters_magnitude(h, 2048, 1, 50, 1000));
        cr_expect(fabs(pass) < 0.1, "ripple %g dB: %.3f dB at 50 Hz in the pass band",
                  ripples[r], pass);
        free(h);
    }
}

/* The window method puts the cutoff at the middle of the transition, half the amplitude:
 * -6.02 dB (Oppenheim and Schafer 2010, sec. 7.5). */
Test(filters_fir, cutoff_is_6db_down)
{
    float *h = impulse_response("{ high: 40, taps: 501, window: blackman }", 1000, 1024);
    double db = filters_db(filters_magnitude(h, 1024, 1, 40, 1000));
    cr_expect(fabs(db + 6.0206) < 0.05, "%.3f dB at the 40 Hz cutoff", db);
    free(h);
}
