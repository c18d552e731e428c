"""Notch stage against scipy.signal.iirnotch (scipy 1.10; both follow Orfanidis 1996,
sec. 11.3), computed at test time: the section's coefficients to 1e-10 of the largest, and the
plugin's float32 output -- fundamental and harmonics as a cascade -- against
scipy.signal.sosfilt in float64 to 1e-6 of the reference's peak (float32 output rounding,
6e-8, plus double rounding differences between direct form I and transposed form II; see
check_filters_butterworth.py)."""
import numpy as np
import scipy.signal as ss

import filters_common as fc


def scipy_sos(freq, q, rate, harmonics):
    rows = []
    for h in range(1, harmonics + 1):
        b, a = ss.iirnotch(h * freq, q, fs=rate)
        rows.append(np.concatenate([b, a]))
    return np.array(rows)


def main():
    checks = 0
    rng = np.random.default_rng(7)
    for rate in (250.0, 500.0, 1000.0, 2000.0):
        for freq in (50.0, 60.0, 0.2 * rate):
            for q in (1.0, 10.0, 30.0, 100.0):
                ref = scipy_sos(freq, q, rate, 1)
                got = np.array([[float(v) for v in fc.tool_lines("notch", repr(freq), repr(q),
                                                                 repr(rate))[0].split()]])
                checks += 1
                err = np.max(np.abs(got - ref) / np.max(np.abs(ref)))
                if err > 1e-10:
                    fc.failures.append("notch %g Hz q %g at %g Hz: coefficients differ by %.3g"
                                       % (freq, q, rate, err))
        for freq, harmonics in ((50.0, 1), (50.0, int((rate / 2 - 1) // 50)), (60.0, 2)):
            if harmonics < 1 or harmonics * freq >= rate / 2:
                continue
            sos = scipy_sos(freq, 30.0, rate, harmonics)
            x = rng.standard_normal((int(3 * rate), 3)).astype(np.float32)
            t = np.arange(x.shape[0]) / rate
            x[:, 0] += (20 * np.sin(2 * np.pi * freq * t)).astype(np.float32)
            params = "{ freq: %r, q: 30, harmonics: %d }" % (freq, harmonics)
            got, _ = fc.run_stage("notch", params, x, rate, block=29)
            ref = ss.sosfilt(sos, x.astype(np.float64), axis=0)
            checks += 1
            fc.expect_close("notch %s at %g Hz" % (params, rate), got, ref, 1e-6)
    fc.finish(checks)


if __name__ == "__main__":
    main()
