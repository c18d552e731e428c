"""`weft response` against scipy.signal (scipy 1.10), computed at test time: the table it
prints for a Butterworth band-pass, a notch and a FIR in a graph, vs scipy.signal.sosfreqz /
freqz (magnitude, phase) and scipy.signal.group_delay, at the table's frequencies.
Tolerances: 0.02 dB in magnitude and 0.5 degrees in phase where the magnitude is above -60 dB;
0.05 samples of group delay where it is above -40 dB. weft measures the float32 impulse
response (rounding ~1e-7) and interpolates linearly between FFT bins 1/65536 of the rate apart,
which is where the slack goes."""
import os
import subprocess
import tempfile
import warnings

import numpy as np
import scipy.signal as ss

import filters_common as fc

WEFT = os.environ.get("WEFT", os.path.join(fc.BUILD, "weft"))

GRAPH = """weft: 1
name: response-check
stages:
  eeg:  { plugin: synthetic, params: { signal: eeg, channels: 3, rate: %(rate)s } }
  line: { plugin: notch, input: eeg, params: { freq: 50, q: 25 } }
  mu:   { plugin: butterworth, input: line, params: { kind: bandpass, low: 8, high: 30, order: 4 } }
  lin:  { plugin: fir, input: mu, params: { high: 40, taps: 101, window: hamming } }
"""


def table(graph, *args):
    res = subprocess.run([WEFT, "response", graph] + list(args), capture_output=True, text=True)
    if res.returncode != 0:
        raise RuntimeError("weft response failed: " + res.stderr)
    rows = []
    for line in res.stdout.splitlines():
        if line.startswith("#"):
            continue
        f = line.split()
        rows.append([float(v) if v != "-" else np.nan for v in f])
    return np.array(rows)


def compare(what, rows, rate, b_a_list):
    f = rows[:, 0]
    w = 2 * np.pi * f / rate
    h = np.ones_like(w, dtype=complex)
    delay = np.zeros_like(w)
    with warnings.catch_warnings(), np.errstate(divide="ignore", invalid="ignore"):
        # scipy warns at the zeros on the unit circle (Nyquist), masked out below anyway.
        warnings.simplefilter("ignore")
        for b, a in b_a_list:
            h *= ss.freqz(b, a, worN=w)[1]
            delay += ss.group_delay((b, a), w=w)[1]
        mag = 20 * np.log10(np.abs(h))
    checks = 0
    loud, audible = mag > -60, mag > -40
    for name, got, ref, tol, mask in (
            ("magnitude (dB)", rows[:, 1], mag, 0.02, loud),
            ("phase (deg)", rows[:, 2], np.degrees(np.angle(h)), 0.5, loud),
            ("group delay (samples)", rows[:, 3], delay, 0.05, audible)):
        err = np.abs(got[mask] - ref[mask])
        if name.startswith("phase"):
            err = np.minimum(err, 360 - err)
        checks += 1
        if not mask.any() or np.max(err) > tol:
            fc.failures.append("%s: %s differs by %.3g (allowed %g) at %s Hz" % (
                what, name, np.max(err) if mask.any() else np.nan, tol,
                f[mask][np.argmax(err)] if mask.any() else "-"))
    return checks


def main():
    checks = 0
    with tempfile.TemporaryDirectory() as tmp:
        for rate in (250, 1000):
            graph = os.path.join(tmp, "g%d.yaml" % rate)
            with open(graph, "w") as out:
                out.write(GRAPH % {"rate": rate})
            notch = ss.iirnotch(50, 25, fs=rate)
            sos = ss.butter(4, [8, 30], "bandpass", fs=rate, output="sos")
            butter = [(s[:3], s[3:]) for s in sos]
            fir = (ss.firwin(101, 40, fs=rate), [1.0])
            checks += compare("notch at %d Hz" % rate, table(graph, "line", "--points", "60"),
                              rate, [notch])
            checks += compare("butterworth at %d Hz" % rate, table(graph, "mu", "--points", "60"),
                              rate, butter)
            checks += compare("fir at %d Hz" % rate, table(graph, "lin", "--points", "60"), rate,
                              [fir])
            checks += compare("chain at %d Hz" % rate,
                              table(graph, "line", "--to", "lin", "--points", "60"), rate,
                              [notch] + butter + [fir])
    fc.finish(checks)


if __name__ == "__main__":
    main()
