"""CSP filters and eigenvalues of weft's csp plugin against scipy.linalg.eigh on the same
covariances.

Sources: Ramoser, Mueller-Gerking and Pfurtscheller (2000), "Optimal spatial filtering of
single trial EEG during imagined hand movement", IEEE Trans. Rehab. Eng. 8:441-446 (eq. 1:
trace-normalised trial covariances, averaged per class); Blankertz et al. (2008), "Optimizing
spatial filters for robust EEG single-trial analysis", IEEE Signal Processing Magazine
25(1):41-56 (the generalized eigenproblem Ca w = lambda (Ca + Cb) w, filters from both ends).
Reference: scipy.linalg.eigh(Ca, Ca + Cb), computed here from the same float32 epochs, each
centred per channel. Filters are equal up to sign and scale (|cosine| > 1 - 1e-9), eigenvalues
to 1e-9 absolute (both in float64 from the same float32 data).
"""
import os
import subprocess
import sys
import tempfile

import numpy as np
import scipy.linalg

TOOL = os.path.join(os.environ.get("WEFT_BUILD_DIR", "build"), "tests", "tools",
                    "fit_reference_tool")
failures = []


def check(name, ok, detail=""):
    print(("ok   " if ok else "FAIL ") + name + (": " + detail if detail else ""))
    if not ok:
        failures.append(name)


def epochs(rng, n, ch, frames):
    """Sources with class-dependent variances, mixed into the channels, plus an offset."""
    mix = rng.normal(size=(ch, ch))
    cls = np.arange(n) % 2
    data = np.empty((n, frames, ch), dtype=np.float32)
    for e in range(n):
        sd = np.ones(ch)
        sd[0] = 3.0 if cls[e] == 0 else 1.0
        sd[1] = 1.0 if cls[e] == 0 else 2.5
        src = rng.normal(size=(frames, ch)) * sd
        data[e] = (src @ mix.T + 10.0).astype(np.float32)
    return data, cls


def class_covariances(data, cls, shrink):
    ch = data.shape[2]
    covs = []
    for k in (0, 1):
        acc = np.zeros((ch, ch))
        for x in data[cls == k].astype(np.float64):
            x = x - x.mean(axis=0)
            c = x.T @ x
            acc += c / np.trace(c)
        c = acc / np.sum(cls == k)
        c = (1 - shrink) * c + shrink * np.trace(c) / ch * np.eye(ch)
        covs.append(c)
    return covs


def run_case(tmp, rng, n, ch, frames, pairs, shrink):
    data, cls = epochs(rng, n, ch, frames)
    path = os.path.join(tmp, "csp.txt")
    with open(path, "w") as f:
        f.write("%d %d %d\n" % (n, ch, frames))
        for e in range(n):
            f.write("%d " % cls[e] + " ".join(repr(float(v)) for v in data[e].ravel()) + "\n")
    out = subprocess.run([TOOL, "csp", path, str(pairs), str(shrink)], capture_output=True,
                         text=True)
    if out.returncode != 0:
        sys.exit("fit_reference_tool failed: " + out.stderr)
    filters, lam = [], None
    for line in out.stdout.splitlines():
        key, values = line.split(":", 1)
        v = np.array([float(x) for x in values.split()])
        if key == "filter":
            filters.append(v)
        elif key == "eigenvalues":
            lam = v
    ca, cb = class_covariances(data, cls, shrink)
    ref_lam, ref_vec = scipy.linalg.eigh(ca, ca + cb)
    # Both ends of the spectrum, largest first, as the plugin orders them.
    pick = list(range(ch - 1, ch - 1 - pairs, -1)) + list(range(pairs - 1, -1, -1))
    tag = "n=%d channels=%d pairs=%d shrinkage=%g" % (n, ch, pairs, shrink)
    err = np.max(np.abs(lam - ref_lam[pick]))
    check("eigenvalues " + tag, err < 1e-9, "max error %.3g" % err)
    worst = 1.0
    for f, j in zip(filters, pick):
        v = ref_vec[:, j]
        worst = min(worst, abs(f @ v) / (np.linalg.norm(f) * np.linalg.norm(v)))
    check("filters equal up to sign and scale " + tag, worst > 1 - 1e-9,
          "worst |cosine| %.12f" % worst)
    # With W^T (Ca + Cb) W = I (dsygv's normalisation) each filter has unit variance in the
    # summed covariance.
    norm = [f @ (ca + cb) @ f for f in filters]
    check("filters normalised in Ca + Cb " + tag, np.allclose(norm, 1, atol=1e-9),
          "w^T (Ca+Cb) w = %s" % np.round(norm, 12))


def main():
    rng = np.random.default_rng(7)
    with tempfile.TemporaryDirectory() as tmp:
        run_case(tmp, rng, 30, 6, 200, 3, 0.0)
        run_case(tmp, rng, 24, 8, 125, 2, 0.0)
        run_case(tmp, rng, 20, 8, 125, 1, 0.1)
    if failures:
        sys.exit("%d check(s) failed" % len(failures))


main()
