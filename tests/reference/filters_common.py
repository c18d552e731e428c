"""Shared helpers of the check_filters_*.py reference checks: run weft's filter_tool on a
signal and read its output, and compare arrays with a stated tolerance."""
import os
import subprocess
import sys

import numpy as np

BUILD = os.environ.get("WEFT_BUILD_DIR", "build")
PLUGINS = os.environ.get("WEFT_PLUGINS", os.path.join(BUILD, "plugins"))
TOOL = os.path.join(BUILD, "tests", "tools", "filter_tool")

failures = []


def plugin(name):
    return os.path.join(PLUGINS, name + ".so")


def run_stage(name, params, x, rate, block, log=None):
    """Filter x (frames x channels, float32) with plugin `name`; returns (output, out rate).
    The stage's log lines (stderr) are appended to the list `log` if one is given."""
    x = np.ascontiguousarray(x, dtype=np.float32)
    res = subprocess.run([TOOL, "run", plugin(name), params, str(x.shape[1]), repr(rate),
                          str(block)], input=x.tobytes(), capture_output=True, check=False)
    if res.returncode != 0:
        raise RuntimeError("filter_tool failed for %s %s: %s" % (name, params,
                                                                 res.stderr.decode()))
    layout = [l for l in res.stderr.decode().splitlines() if l.startswith("layout:")][0]
    fields = layout.split()
    out_rate, channels = float(fields[2]), int(fields[4])
    if log is not None:
        log.extend(l for l in res.stderr.decode().splitlines() if not l.startswith("layout:"))
    return np.frombuffer(res.stdout, dtype=np.float32).reshape(-1, channels), out_rate


def tool_lines(*args):
    res = subprocess.run([TOOL] + [str(a) for a in args], capture_output=True, check=True)
    return res.stdout.decode().split("\n")


def expect_close(what, got, ref, rel):
    """Fail unless max |got - ref| <= rel * max |ref| (and shapes agree)."""
    got = np.asarray(got, dtype=np.float64)
    ref = np.asarray(ref, dtype=np.float64)
    if got.shape != ref.shape:
        failures.append("%s: shape %s, reference %s" % (what, got.shape, ref.shape))
        return
    scale = np.max(np.abs(ref)) if ref.size else 0.0
    err = np.max(np.abs(got - ref)) if ref.size else 0.0
    if not np.all(np.isfinite(got)) or err > rel * scale:
        failures.append("%s: max error %.3g = %.3g of the reference's peak %.3g (allowed %.1g)"
                        % (what, err, err / scale if scale else err, scale, rel))


def finish(checks):
    for f in failures[:40]:
        print("FAIL", f)
    print("%d passed, %d failed" % (checks - len(failures), len(failures)))
    sys.exit(1 if failures else 0)
