"""Side-by-side throughput: weft's band-pass (bench_filters) against scipy.signal.sosfilt on
the same job -- Butterworth band-pass 8-30 Hz, order 4 (4 sections), 64 channels at 1 kHz.

    env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE /usr/bin/python3 \\
        tests/bench/bench_filters_scipy.py build/tests/bench/bench_filters
(`make -C build bench` runs exactly this). Prints figures and ratios for weft's double
(default) and single precision; it fails nothing.
Targets from the project brief: weft >= 10x scipy's whole-array float32 throughput and
>= 50x its 10-sample streaming throughput (sosfilt per block with the state carried in zi)."""
import os
import subprocess
import sys
import time

import numpy as np
import scipy.signal as ss

CHANNELS, RATE = 64, 1000.0


def best_of(fn, reps):
    best = float("inf")
    for _ in range(reps):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def scipy_figures():
    sos = ss.butter(4, [8, 30], "bandpass", fs=RATE, output="sos")
    rng = np.random.default_rng(1)
    x64 = rng.standard_normal((60000, CHANNELS)) * 50
    out = {}
    for name, dtype in (("float32", np.float32), ("float64", np.float64)):
        x = x64.astype(dtype)
        s = sos.astype(dtype)
        t = best_of(lambda: ss.sosfilt(s, x, axis=0), 5)
        out["whole_" + name] = x.size / t
    x = x64[:5000].astype(np.float32)
    s32 = sos.astype(np.float32)

    def stream():
        zi = np.zeros((s32.shape[0], 2, CHANNELS), np.float32)
        for i in range(0, x.shape[0], 10):
            _, zi = ss.sosfilt(s32, x[i:i + 10], axis=0, zi=zi)
    out["stream10_float32"] = x.size / best_of(stream, 3)
    return out


def weft_figures(binary):
    res = subprocess.run([binary, "iir"], capture_output=True, text=True, check=True)
    sys.stdout.write(res.stdout)
    figures = {}
    for line in res.stdout.splitlines():
        key, _, value = line.partition(" ")
        if key.startswith("iir_"):
            figures[key] = float(value)
    return figures


def main():
    binary = sys.argv[1] if len(sys.argv) > 1 else os.path.join(
        os.environ.get("WEFT_BUILD_DIR", "build"), "tests", "bench", "bench_filters")
    try:
        from threadpoolctl import threadpool_info
        kernels = sorted({i.get("internal_api", "?") + ":" + str(i.get("architecture"))
                          for i in threadpool_info()})
    except ImportError:
        kernels = ["threadpoolctl not installed"]
    print("numpy %s, scipy %s, BLAS %s; OPENBLAS_CORETYPE=%s" % (
        np.__version__, ss.__name__ and __import__("scipy").__version__, ", ".join(kernels),
        os.environ.get("OPENBLAS_CORETYPE", "(unset)")))
    w = weft_figures(binary)
    s = scipy_figures()
    print("\nscipy.signal.sosfilt, same filter and channels:")
    print("  whole array, float32           %8.1f M channel-samples/s" % (s["whole_float32"] / 1e6))
    print("  whole array, float64           %8.1f M channel-samples/s" % (s["whole_float64"] / 1e6))
    print("  10-sample blocks, zi, float32  %8.1f M channel-samples/s" % (s["stream10_float32"] / 1e6))
    print("\nratios (weft / scipy):")
    rows = (("weft warm / scipy whole float32", w["iir_warm"], s["whole_float32"], 10),
            ("weft long pass / scipy whole float32", w["iir_long"], s["whole_float32"], 10),
            ("weft warm / scipy whole float64", w["iir_warm"], s["whole_float64"], None),
            ("weft 10-frame blocks / scipy 10-sample blocks", w["iir_stream10"],
             s["stream10_float32"], 50),
            ("single: warm / scipy whole float32", w["iir_single_warm"], s["whole_float32"], 10),
            ("single: long pass / scipy whole float32", w["iir_single_long"],
             s["whole_float32"], 10),
            ("single: 10-frame blocks / scipy 10-sample", w["iir_single_stream10"],
             s["stream10_float32"], 50))
    for label, a, b, target in rows:
        note = "" if target is None else "  (target %dx: %s)" % (
            target, "met" if a / b >= target else "NOT met")
        print("  %-46s %7.1fx%s" % (label, a / b, note))


if __name__ == "__main__":
    main()
