"""EMG envelope stage against a scipy.signal composition (scipy 1.10), computed at test time:
band = sosfilt(butter(order, [low, high], 'bandpass', fs, output='sos'), x), then
  * lowpass smoothing: sosfilt(butter(2, cutoff, fs=fs, output='sos'), |band|) (or of band^2,
    then the square root);
  * moving RMS: sqrt(lfilter(ones(W) / W, 1, band^2)), W = round(window * fs).
Tolerance 1e-6 of the reference's peak: weft rounds to float32 between the band filter and the
detector and at the output (6e-8 relative each), with double arithmetic inside the filters and
the running sums (see check_filters_butterworth.py)."""
import numpy as np
import scipy.signal as ss

import filters_common as fc


def reference(x, rate, low, high, order, smooth, detector, cutoff, window):
    if high:
        band_sos = ss.butter(order, [low, high], "bandpass", fs=rate, output="sos")
    else:
        band_sos = ss.butter(order, low, "highpass", fs=rate, output="sos")
    band = ss.sosfilt(band_sos, x.astype(np.float64), axis=0)
    if smooth == "rms":
        w = int(round(window * rate))
        return np.sqrt(np.maximum(ss.lfilter(np.ones(w) / w, 1.0, band ** 2, axis=0), 0))
    lp = ss.butter(2, cutoff, fs=rate, output="sos")
    if detector == "square":
        return np.sqrt(np.maximum(ss.sosfilt(lp, band ** 2, axis=0), 0))
    return ss.sosfilt(lp, np.abs(band), axis=0)


def main():
    rng = np.random.default_rng(11)
    checks = 0
    cases = [(1000.0, 20.0, 450.0, 4, "lowpass", "rectify", 6.0, 0.1),
             (2000.0, 20.0, 500.0, 4, "lowpass", "square", 10.0, 0.1),
             (1000.0, 30.0, 0.0, 2, "lowpass", "rectify", 4.0, 0.1),
             (1000.0, 20.0, 450.0, 4, "rms", "square", 6.0, 0.1),
             (500.0, 10.0, 200.0, 3, "rms", "square", 6.0, 0.25),
             (2000.0, 20.0, 450.0, 6, "rms", "square", 6.0, 0.05)]
    for rate, low, high, order, smooth, detector, cutoff, window in cases:
        frames = int(4 * rate)
        t = np.arange(frames) / rate
        # EMG-like: noise whose amplitude follows a slow contraction profile.
        level = 0.2 + np.clip(np.sin(2 * np.pi * 0.5 * t), 0, None)
        x = (rng.standard_normal((frames, 2)) * level[:, None] * [40, 15]).astype(np.float32)
        params = "{ low: %r, high: %r, order: %d, smooth: %s, cutoff: %r, window: %r%s }" % (
            low, high, order, smooth, cutoff, window,
            ", detector: %s" % detector if smooth == "lowpass" else "")
        got, out_rate = fc.run_stage("envelope", params, x, rate, block=41)
        ref = reference(x, rate, low, high, order, smooth, detector, cutoff, window)
        checks += 1
        fc.expect_close("envelope %s at %g Hz" % (params, rate), got, ref, 1e-6)
        if out_rate != rate:
            fc.failures.append("envelope changed the rate to %g" % out_rate)
    fc.finish(checks)


if __name__ == "__main__":
    main()
