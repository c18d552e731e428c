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
    expect_error("butterworth", "{ kind: highpass, low: 600 }", 1000,
                 "low (600 Hz) must be below half the input rate (500 Hz)");
    expect_error("butterworth", "{ kind: lowpass, high: 125 }", 250,
                 "high (125 Hz) must be below half the input rate (125 Hz)");
}

Test(filters_errors, butterworth_edges_must_fit_the_kind)
{
    expect_error("butterworth", "{ low: 30, high: 8 }", 250,
                 "low (30 Hz) must be below high (8 Hz)");
    expect_error("butterworth", "{ kind: lowpass, low: 3, high: 30 }", 250,
                 "a lowpass has no low edge; give high (its cutoff) only");
    expect_error("butterworth", "{ kind: bandstop, low: 45 }", 250, "a bandstop needs low and high, its band edges in Hz");
    expect_error("butterworth", "{ kind: highpass, high: 45 }", 250,
                 "a highpass has no high edge");
    expect_error("butterworth", "{ kind: highpass }", 250, "a highpass needs low, its cutoff in Hz");
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
