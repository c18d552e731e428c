"""FIR stage against scipy.signal (scipy 1.10), computed at test time:
  1. windowed-sinc taps vs scipy.signal.firwin(numtaps, cutoff, window, pass_zero=kind, fs)
     for Hamming, Blackman and Kaiser windows, every kind, rates 250-2000 Hz: 1e-10 of the
     largest tap (both compute in double from the same formulas);
  2. Kaiser (1974) length and beta vs scipy.signal.kaiserord: taps equal, beta to 1e-12;
  3. the plugin's float32 output, direct and FFT-partitioned, vs scipy.signal.lfilter(h, 1, x)
     in float64 on noise and impulses, kernels of 16-4096 taps, streamed in odd blocks.
     Tolerance 1e-5 of the reference's peak: weft accumulates each output in float32, N
     products whose rounding adds up like a random walk, ~sqrt(N) 2^-24 of the partial sums
     (4e-6 for 4096 taps); the FFT part rounds ~log2(N) times per value. A wrong tap, a lost
     history frame or a misplaced FFT block gives errors of 1e-2 or more;
  4. the group delay logged at init: (N - 1) / 2 samples for the designed (symmetric) taps."""
import numpy as np
import scipy.signal as ss

import filters_common as fc

RATES = [250.0, 500.0, 1000.0, 2000.0]


def cutoff(kind, rate):
    nyq = rate / 2
    if kind in ("lowpass", "highpass"):
        return [0.2 * nyq]
    return [0.1 * nyq, 0.45 * nyq]


def scipy_window(window, beta):
    return ("kaiser", beta) if window == "kaiser" else window


def check_design():
    checks = 0
    for kind in ("lowpass", "highpass", "bandpass", "bandstop"):
        for window in ("hamming", "blackman", "kaiser"):
            for taps in (15, 16, 101, 256, 1025):
                if kind in ("highpass", "bandstop") and taps % 2 == 0:
                    continue
                for rate in RATES:
                    e = cutoff(kind, rate)
                    beta = 5.65
                    ref = ss.firwin(taps, e if len(e) > 1 else e[0],
                                    window=scipy_window(window, beta), pass_zero=kind, fs=rate)
                    got = np.array([float(v) for v in fc.tool_lines(
                        "fir", kind, window, taps, repr(rate), beta, *[repr(v) for v in e]) if v])
                    checks += 1
                    err = np.max(np.abs(got - ref)) / np.max(np.abs(ref))
                    if got.shape != ref.shape or err > 1e-10:
                        fc.failures.append("firwin %s %s %d taps at %g Hz: differs by %.3g"
                                           % (kind, window, taps, rate, err))
    for ripple in (21.0, 40.0, 60.0, 80.0, 120.0):
        for width, rate in ((2.0, 250.0), (10.0, 1000.0), (50.0, 2000.0)):
            taps, beta = ss.kaiserord(ripple, width / (rate / 2))
            got = fc.tool_lines("kaiser", ripple, width, rate)[0].split()
            checks += 1
            if int(float(got[0])) != taps or abs(float(got[1]) - beta) > 1e-12 * max(beta, 1):
                fc.failures.append("kaiserord %g dB %g Hz at %g Hz: weft %s, scipy %d %.17g"
                                   % (ripple, width, rate, got, taps, beta))
    return checks


def check_output():
    rng = np.random.default_rng(5)
    checks = 0
    cases = [("lowpass", "hamming", 16, 250.0), ("lowpass", "blackman", 63, 500.0),
             ("highpass", "kaiser", 95, 1000.0), ("bandpass", "hamming", 97, 1000.0),
             ("bandstop", "blackman", 255, 2000.0), ("lowpass", "kaiser", 1024, 1000.0),
             ("bandpass", "hamming", 4096, 2000.0), ("highpass", "hamming", 4095, 250.0)]
    for kind, window, taps, rate in cases:
        e = cutoff(kind, rate)
        edges = ", ".join("%s: %r" % kv for kv in zip(
            ["high"] if kind == "lowpass" else ["low", "high"][:len(e)], e))
        beta = ss.kaiser_beta(60.0)
        h = ss.firwin(taps, e if len(e) > 1 else e[0], window=scipy_window(window, beta),
                      pass_zero=kind, fs=rate)
        frames = max(3 * taps, int(2 * rate))
        noise = (rng.standard_normal((frames, 3)) * [1, 50, 0.01]).astype(np.float32)
        impulse = np.zeros((frames, 1), np.float32)
        impulse[taps // 3, 0] = 1.0
        for engine in ("direct", "fft"):
            params = "{ kind: %s, %s, window: %s, taps: %d, engine: %s }" % (
                kind, edges, window, taps, engine)
            for name, x in (("noise", noise), ("impulse", impulse)):
                log = []
                got, _ = fc.run_stage("fir", params, x, rate, block=53, log=log)
                ref = ss.lfilter(h, 1.0, x.astype(np.float64), axis=0)
                checks += 1
                fc.expect_close("fir %s at %g Hz, %s" % (params, rate, name), got, ref, 1e-5)
                want = "group delay %g samples" % ((taps - 1) / 2)
                checks += 1
                if not any(want in line for line in log):
                    fc.failures.append("fir %s: no '%s' in the log %s" % (params, want, log))
    # Explicit, asymmetric taps: a plain convolution, and the log says the phase is not linear.
    taps = rng.standard_normal(300)
    x = rng.standard_normal((2000, 2)).astype(np.float32)
    params = "{ coefficients: [%s] }" % ", ".join("%.17g" % v for v in taps)
    log = []
    got, _ = fc.run_stage("fir", params, x, 500.0, block=64, log=log)
    checks += 2
    fc.expect_close("fir with 300 explicit taps", got,
                    ss.lfilter(taps, 1.0, x.astype(np.float64), axis=0), 1e-5)
    if not any("not symmetric" in line for line in log):
        fc.failures.append("fir with asymmetric taps: log %s" % log)
    return checks


if __name__ == "__main__":
    fc.finish(check_design() + check_output())
