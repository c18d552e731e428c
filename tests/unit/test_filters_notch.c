/* Handbook facts about the notch stage, measured on its impulse response. */
#include "filters_util.h"

static float *impulse_response(const char *params, double rate, size_t frames)
{
    float *x = calloc(frames, sizeof *x);
    cr_assert(x != NULL);
    x[0] = 1;
    size_t got;
    float *h = filters_run("notch", params, 1, rate, x, frames, 1024, &got);
    free(x);
    return h;
}

/* The zeros sit on the unit circle at the notch frequency, so the response there is zero:
 * what float32 output leaves of it is rounding, well below -80 dB (Orfanidis 1996, 11.3). */
Test(filters_notch, response_vanishes_at_the_notch_frequency)
{
    const double rates[] = { 250, 500, 1000, 2000 };
    for (int r = 0; r < 4; r++) {
        float *h = impulse_response("{ freq: 50, q: 30 }", rates[r], 16384);
        double db = filters_db(filters_magnitude(h, 16384, 1, 50, rates[r]));
        cr_expect(db < -80, "%.1f dB at 50 Hz for rate %g", db, rates[r]);
        free(h);
    }
}

/* Both numerator and denominator equal 2 g (1 - cos w0) at z = 1 and 2 g (1 + cos w0) at
 * z = -1: unit gain at DC and at half the rate. */
Test(filters_notch, unit_gain_at_dc_and_half_the_rate)
{
    float *h = impulse_response("{ freq: 50, q: 10 }", 500, 8192);
    double dc = filters_magnitude(h, 8192, 1, 0, 500);
    double top = filters_magnitude(h, 8192, 1, 250, 500);
    cr_expect(fabs(dc - 1) < 1e-6, "DC gain %.9f", dc);
    cr_expect(fabs(top - 1) < 1e-6, "gain at 250 Hz %.9f", top);
    free(h);
}

/* Each harmonic gets its own notch; between them the signal passes. */
Test(filters_notch, harmonics_are_each_removed)
{
    float *h = impulse_response("{ freq: 50, q: 30, harmonics: 4 }", 1000, 16384);
    for (int k = 1; k <= 4; k++) {
        double db = filters_db(filters_magnitude(h, 16384, 1, 50.0 * k, 1000));
        cr_expect(db < -80, "%.1f dB at %d Hz", db, 50 * k);
    }
    double between = filters_db(filters_magnitude(h, 16384, 1, 75, 1000));
    cr_expect(fabs(between) < 0.1, "%.3f dB at 75 Hz, between the notches", between);
    cr_expect(filters_db(filters_magnitude(h, 16384, 1, 250, 1000)) > -0.1,
              "the fifth harmonic was not asked for");
    free(h);
}

/* -3 dB width = freq / q, by the definition of q: near the notch the response is above -3 dB
 * half a width away only beyond the band edges. */
Test(filters_notch, width_follows_the_quality_factor)
{
    float *h = impulse_response("{ freq: 50, q: 5 }", 1000, 16384);
    double inside = filters_db(filters_magnitude(h, 16384, 1, 50 + 0.4 * 10, 1000));
    double outside = filters_db(filters_magnitude(h, 16384, 1, 50 + 0.6 * 10, 1000));
    cr_expect(inside < -3.0103 && outside > -3.0103,
              "q 5 at 50 Hz: %.2f dB at 54 Hz, %.2f dB at 56 Hz; the -3 dB edges are 10 Hz "
              "apart", inside, outside);
    free(h);
}
