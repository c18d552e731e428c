/* Bad parameters of the temporal filter stages: each init error names the parameter, the
 * value and what would be right. */
#include "filters_util.h"

static void expect_error(const char *plugin, const char *params, double rate,
                         const char *wanted)
{
    const char *msg = filters_init_error(plugin, params, 4, rate);
    cr_expect(strstr(msg, wanted) != NULL, "%s %s at %g Hz: expected \"%s\", got \"%s\"",
              plugin, params, rate, wanted, msg);
}

Test(filters_errors, band_edge_above_half_the_rate_names_edge_and_limit)
{
    expect_error("butterworth", "{ low: 8, high: 140 }", 250,
                 "high (140 Hz) must be below half the input rate (125 Hz)");
    expect_error("fir", "{ kind: bandpass, low: 8, high: 140, taps: 31 }", 250,
                 "high (140 Hz) must be below half the input rate (125 Hz)");
    expect_error("butterworth", "{ kind: highpass, low: 600 }", 1000,
                 "low (600 Hz) must be below half the input rate (500 Hz)");
    expect_error("butterworth", "{ kind: lowpass, high: 125 }", 250,
                 "high (125 Hz) must be below half the input rate (125 Hz)");
}

Test(filters_errors, butterworth_edges_must_fit_the_kind)
{
    expect_error("butterworth", "{ low: 30, high: 8 }", 250,
                 "low (30 Hz) must be below high (8 Hz)");
    expect_error("butterworth", "{ kind: bandstop, low: 45 }", 250,
                 "low (45 Hz) must be below high (30 Hz)");
    expect_error("butterworth", "{ kind: highpass, low: 0 }", 250,
                 "low (0 Hz) must be above 0 Hz");
    expect_error("butterworth", "{ low: 8, high: 30, order: 11 }", 250, "order");
}

Test(filters_errors, messages_point_at_the_parameter_in_the_file)
{
    /* The stage driver parses the params as a one-line file called "params": the error
     * carries the line and column of the offending value. */
    const char *msg = filters_init_error("butterworth", "{ low: 8, high: 140 }", 4, 250);
    cr_expect(strncmp(msg, "params:1:", 9) == 0, "no position in \"%s\"", msg);
}

Test(filters_errors, notch_frequencies_must_lie_below_half_the_rate)
{
    expect_error("notch", "{ freq: 150 }", 250,
                 "freq (150 Hz) must be below half the input rate (125 Hz)");
    expect_error("notch", "{ freq: 50, harmonics: 3 }", 250,
                 "harmonic 3 (150 Hz) must be below half the input rate (125 Hz); use "
                 "harmonics: 2");
    expect_error("notch", "{ freq: 0 }", 250, "freq (0 Hz) must be above 0 Hz");
}

Test(filters_errors, fir_length_must_be_given_or_derivable)
{
    expect_error("fir", "{ high: 30, transition: 0 }", 250,
                 "give taps, or transition (the width of the transition band in Hz");
    expect_error("fir", "{ kind: highpass, low: 30, taps: 64 }", 250,
                 "taps (64) must be odd for a highpass");
    expect_error("fir", "{ high: 30, transition: 0.001 }", 250, "widen the transition");
}

Test(filters_errors, envelope_band_window_and_detector_are_checked)
{
    expect_error("envelope", "{ low: 20, high: 450 }", 500,
                 "high (450 Hz) must be below half the input rate (250 Hz)");
    expect_error("envelope", "{ smooth: rms, window: 0.0001 }", 1000,
                 "window (0.0001 s) must span 1 to 2^24 samples at 1000 Hz");
    expect_error("envelope", "{ smooth: rms, detector: rectify }", 1000,
                 "a moving RMS squares by definition");
    expect_error("envelope", "{ cutoff: 600 }", 1000,
                 "cutoff (600 Hz) must be below half the input rate (500 Hz)");
}

Test(filters_errors, resample_factors_are_checked)
{
    expect_error("resample", "{ rate: 250 }", 250, "up and down are both 1: nothing to resample");
    expect_error("resample", "{ down: 1 }", 250, "up and down are both 1: nothing to resample");
    expect_error("resample", "{ rate: 333.3 }", 1000,
                 "rate 333.3 Hz from 1000 Hz is not a ratio of whole rates");
    expect_error("resample", "{ rate: 250, down: 4 }", 1000, "give rate, or up and down");
    expect_error("resample", "{ rate: 1001 }", 1000, "needs up 1001 / down 1000");
}

Test(filters_errors, reref_and_detrend_parameters_are_checked)
{
    expect_error("reref", "{ reference: Cz }", 250,
                 "reference 'Cz' is not a channel of the input; give average, a channel label "
                 "or a number from 1 to 4");
    expect_error("reref", "{ reference: '5' }", 250, "reference '5' is not a channel");
    expect_error("detrend", "{ cutoff: 200 }", 250,
                 "cutoff (200 Hz) must be above 0 Hz and below half the input rate (125 Hz)");
    expect_error("detrend", "{ method: mean, window: 0.001 }", 250,
                 "window (0.001 s) must span 2 to 2^26 samples at 250 Hz");
}
