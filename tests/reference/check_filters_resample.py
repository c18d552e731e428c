"""Resample stage against scipy.signal (scipy 1.10), computed at test time. The anti-aliasing
filter is scipy.signal.resample_poly's: firwin(2 * 10 * max(up, down) + 1, 1 / max(up, down),
window=('kaiser', 5.0)) * up. weft is causal, so
  * its output equals scipy.signal.upfirdn(h, x, up, down) (the same polyphase sum), first
    ceil(N up / down) samples;
  * and scipy.signal.resample_poly(x, up, down), which removes the filter's delay, shifted by
    that delay, half / down output samples (whole for every case here).
Tolerance 1e-5 of the reference's peak: each output is a float32 sum of up to 2 * 10 * max /
up + 1 products (see check_filters_fir.py), against float64 references."""
import numpy as np
import scipy.signal as ss

import filters_common as fc


def main():
    rng = np.random.default_rng(13)
    checks = 0
    cases = [(1, 2, 1000.0), (1, 4, 2000.0), (1, 8, 2000.0), (2, 3, 1000.0), (3, 2, 500.0),
             (5, 1, 250.0), (1, 2, 250.0), (4, 5, 500.0)]
    for up, down, rate in cases:
        frames = 4000
        x = (rng.standard_normal((frames, 3)) * [1, 20, 0.05]).astype(np.float32)
        x[frames // 2, 0] += 50  # an impulse
        for params in ("{ up: %d, down: %d }" % (up, down),
                       "{ rate: %r }" % (rate * up / down) if (rate * up) % down == 0 else None):
            if params is None:
                continue
            got, out_rate = fc.run_stage("resample", params, x, rate, block=37)
            m = max(up, down)
            half = 10 * m
            h = ss.firwin(2 * half + 1, 1.0 / m, window=("kaiser", 5.0)) * up
            n = -(-frames * up // down)
            checks += 2
            if got.shape[0] != n or abs(out_rate - rate * up / down) > 1e-9 * rate:
                fc.failures.append("resample %s at %g Hz: %d frames at %g Hz, want %d at %g"
                                   % (params, rate, got.shape[0], out_rate, n, rate * up / down))
                continue
            ref = ss.upfirdn(h, x.astype(np.float64), up, down, axis=0)[:n]
            fc.expect_close("resample %s at %g Hz vs upfirdn" % (params, rate), got, ref, 1e-5)
            shift = half // down
            poly = ss.resample_poly(x.astype(np.float64), up, down, axis=0)
            fc.expect_close("resample %s at %g Hz vs resample_poly delayed %d" % (
                params, rate, shift), got[shift:], poly[:n - shift], 1e-5)
    fc.finish(checks)


if __name__ == "__main__":
    main()
