"""Butterworth stage against scipy.signal (the outside reference; scipy 1.10, Debian's
python3-scipy), computed at test time:
  1. designed sections vs scipy.signal.butter(N, Wn, btype, fs=rate, output='sos'),
     coefficient by coefficient, over kinds x orders 1-10 x rates 250/500/1000/2000 Hz x edges;
  2. the plugin's float32 output vs scipy.signal.sosfilt in float64 on the same input (random
     noise and impulses), streamed in odd-sized blocks so the carried state is exercised, for
     precision: double and precision: single.

Tolerances, and why:
  * coefficients: 1e-10 of the largest coefficient of the same section. Both sides compute in
    double from the same formulas; differences are a few rounding steps (1e-15), and the
    pairing of poles with zeros must agree exactly, or whole coefficients differ by O(1).
  * output: 1e-6 of the reference's peak. weft's output is float32, so it carries up to half an
    ulp (6e-8 relative) of rounding; its internal arithmetic is double (direct form I, gain
    applied at the input) against scipy's double (transposed form II), whose rounding differs
    by ~1e-16 amplified by up to 1 / (1 - |pole|)^2 ~ 1e7 for the lowest cutoffs. A wrong
    coefficient, a lost state or a float32 state all give errors above 1e-5.
  * output in precision: single: see tolerance() -- held to float32 sosfilt's own error."""
import numpy as np
import scipy.signal as ss

import filters_common as fc

RATES = [250.0, 500.0, 1000.0, 2000.0]


def edges(kind, rate):
    nyq = rate / 2
    if kind in ("lowpass", "highpass"):
        return [(0.5,), (4.0,), (30.0,), (0.4 * nyq,), (0.9 * nyq,)]
    # Bands whose edges do not sum to half the rate: there a pole pair lies on the imaginary
    # axis, equally near z = 1 and z = -1, and which zeros it takes is decided by rounding.
    return [(8.0, 30.0), (0.5, 40.0), (1.0, 0.45 * nyq), (0.3 * nyq, 0.6 * nyq),
            (0.8 * nyq, 0.95 * nyq)]


def check_coefficients():
    checks = 0
    for kind in ("lowpass", "highpass", "bandpass", "bandstop"):
        for order in range(1, 11):
            for rate in RATES:
                for e in edges(kind, rate):
                    ref = ss.butter(order, list(e) if len(e) > 1 else e[0], kind, fs=rate,
                                    output="sos")
                    lines = [l for l in fc.tool_lines("butter", kind, order, repr(rate),
                                                      *[repr(v) for v in e]) if l]
                    got = np.array([[float(v) for v in l.split()] for l in lines])
                    checks += 1
                    what = "butter %s order %d rate %g edges %s" % (kind, order, rate, e)
                    if got.shape != ref.shape:
                        fc.failures.append("%s: %s sections, scipy %s" % (what, got.shape,
                                                                           ref.shape))
                        continue
                    scale = np.max(np.abs(ref), axis=1, keepdims=True)
                    err = np.max(np.abs(got - ref) / scale)
                    if err > 1e-10:
                        fc.failures.append("%s: coefficients differ by %.3g (relative)"
                                           % (what, err))
    return checks


def params(kind, order, e, precision):
    if kind == "lowpass":
        return "{ kind: lowpass, order: %d, high: %r, precision: %s }" % (order, e[0], precision)
    if kind == "highpass":
        return "{ kind: highpass, order: %d, low: %r, precision: %s }" % (order, e[0], precision)
    return "{ kind: %s, order: %d, low: %r, high: %r, precision: %s }" % (kind, order, e[0],
                                                                        e[1], precision)


def tolerance(precision, sos, x, ref):
    """Double: 1e-6 of the peak (module docstring). Single: float32 state has no fixed bound --
    its rounding (6e-8) is amplified by up to 1 / (1 - |pole|)^2, from ~1e-5 of the peak for
    8-30 Hz at 1 kHz to more than the signal itself for a 0.5-40 Hz band-stop at 2 kHz -- so
    it is held to the same arithmetic done elsewhere: scipy's sosfilt on float32 sections and
    data (transposed form II), no more than 10 times its error (measured: up to 5 times, for
    impulses through band-stops whose rounding differs in form), and never held tighter than
    1e-5 of the peak (~150 float32 roundings). A wrong coefficient or lost state is off by
    O(1) where float32 sosfilt is accurate."""
    if precision == "double":
        return 1e-6
    r32 = ss.sosfilt(sos.astype(np.float32), x, axis=0).astype(np.float64)
    return max(1e-5, 10 * float(np.max(np.abs(r32 - ref)) / np.max(np.abs(ref))))


def check_output(precision):
    rng = np.random.default_rng(20240611)
    checks = 0
    worst = [0.0, 0.0]
    for kind in ("lowpass", "highpass", "bandpass", "bandstop"):
        for order in (1, 2, 3, 4, 6, 8):
            for rate in RATES:
                e = edges(kind, rate)[(order + int(rate)) % 5]
                sos = ss.butter(order, list(e) if len(e) > 1 else e[0], kind, fs=rate,
                                output="sos")
                frames = int(4 * rate)
                noise = rng.standard_normal((frames, 3)).astype(np.float32)
                noise[:, 1] *= 100.0  # a channel at EEG-like microvolt scale
                impulse = np.zeros((frames, 2), np.float32)
                impulse[0, 0] = 1.0
                impulse[frames // 3, 1] = -2.5
                for name, x in (("noise", noise), ("impulse", impulse)):
                    got, out_rate = fc.run_stage("butterworth", params(kind, order, e, precision),
                                                 x, rate, block=37)
                    ref = ss.sosfilt(sos, x.astype(np.float64), axis=0)
                    checks += 1
                    tol = tolerance(precision, sos, x, ref)
                    fc.expect_close("butterworth %s order %d rate %g edges %s, %s, %s"
                                    % (kind, order, rate, e, name, precision), got, ref, tol)
                    err = float(np.max(np.abs(got - ref)) / np.max(np.abs(ref)))
                    worst[0] = max(worst[0], err)
                    worst[1] = max(worst[1], err / tol)
                    if out_rate != rate:
                        fc.failures.append("butterworth changed the rate to %g" % out_rate)
    print("precision %s: largest error %.3g of the peak; largest error / allowed %.2f"
          % (precision, worst[0], worst[1]))
    return checks


if __name__ == "__main__":
    fc.finish(check_coefficients() + check_output("double") + check_output("single"))
