"""reref and detrend stages against numpy/scipy.signal (numpy 1.24, scipy 1.10), computed at
test time:
  * common average reference: x - x.mean(axis=1); a reference channel: x - x[:, k];
  * detrend, high-pass: scipy.signal.lfilter([1, -1], [1, -R], x), R = exp(-2 pi fc / fs);
  * detrend, running mean: x minus the mean of the last W samples (of the n + 1 so far at the
    start), from a float64 cumulative sum.
Tolerance 1e-6 of the reference's peak: weft computes in double and rounds the output to
float32 (6e-8 relative); the inputs carry a large DC offset, so a mistake in the mean or the
state shows as an error of the offset's size."""
import numpy as np
import scipy.signal as ss

import filters_common as fc


def main():
    rng = np.random.default_rng(17)
    checks = 0
    for rate in (250.0, 1000.0):
        frames = int(20 * rate)
        x = (rng.standard_normal((frames, 6)) * 10 + np.arange(6) * 100 - 150).astype(np.float32)
        x64 = x.astype(np.float64)
        got, _ = fc.run_stage("reref", "{ reference: average }", x, rate, block=33)
        checks += 1
        fc.expect_close("reref average at %g Hz" % rate, got,
                        x64 - x64.mean(axis=1, keepdims=True), 1e-6)
        got, _ = fc.run_stage("reref", "{ reference: '3' }", x, rate, block=33)
        checks += 1
        fc.expect_close("reref channel 3 at %g Hz" % rate, got, x64 - x64[:, 2:3], 1e-6)
        for fc_hz in (0.1, 1.0, 5.0):
            got, _ = fc.run_stage("detrend", "{ method: highpass, cutoff: %r }" % fc_hz, x, rate,
                                  block=71)
            r = np.exp(-2 * np.pi * fc_hz / rate)
            checks += 1
            fc.expect_close("detrend highpass %g Hz at %g Hz" % (fc_hz, rate), got,
                            ss.lfilter([1.0, -1.0], [1.0, -r], x64, axis=0), 1e-6)
        for window in (0.5, 4.0):
            got, _ = fc.run_stage("detrend", "{ method: mean, window: %r }" % window, x, rate,
                                  block=71)
            w = int(round(window * rate))
            cs = np.cumsum(np.vstack([np.zeros((1, x.shape[1])), x64]), axis=0)
            n = np.arange(1, frames + 1)
            lo = np.maximum(n - w, 0)
            mean = (cs[n] - cs[lo]) / np.minimum(n, w)[:, None]
            checks += 1
            fc.expect_close("detrend mean %g s at %g Hz" % (window, rate), got, x64 - mean, 1e-6)
    fc.finish(checks)


if __name__ == "__main__":
    main()
