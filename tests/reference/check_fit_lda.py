"""Shrinkage LDA and the Ledoit-Wolf intensity of weft's fit (plugins/common_lda) against
sklearn 1.2 on the same features.

Sources: Ledoit and Wolf (2004), "A well-conditioned estimator for large-dimensional
covariance matrices", J. Multivariate Analysis 88:365-411 (the closed-form intensity, as
sklearn.covariance.ledoit_wolf computes it); Blankertz et al. (2011), "Single-trial analysis
and classification of ERP components -- a tutorial", NeuroImage 56:814-825 (shrinkage LDA).
Reference: sklearn.discriminant_analysis.LinearDiscriminantAnalysis(solver='lsqr',
shrinkage=...), whose lsqr solver pools prior-weighted class covariances (with 'auto', each
Ledoit-Wolf shrunk on standardised features) and solves for the coefficients.
Tolerance: both sides are float64; the solvers differ (Cholesky here, least squares there), so
coefficients and probabilities must agree to 1e-7 relative (the fitted covariances are well
conditioned), the intensities to 1e-10.
"""
import os
import subprocess
import sys
import tempfile

import numpy as np
from sklearn.covariance import ledoit_wolf
from sklearn.discriminant_analysis import LinearDiscriminantAnalysis
from sklearn.preprocessing import StandardScaler

TOOL = os.path.join(os.environ.get("WEFT_BUILD_DIR", "build"), "tests", "tools",
                    "fit_reference_tool")
failures = []


def check(name, ok, detail=""):
    print(("ok   " if ok else "FAIL ") + name + (": " + detail if detail else ""))
    if not ok:
        failures.append(name)


def run_tool(*args):
    out = subprocess.run([TOOL, *args], capture_output=True, text=True)
    if out.returncode != 0:
        sys.exit("fit_reference_tool failed: " + out.stderr)
    rows = {}
    for line in out.stdout.splitlines():
        key, values = line.split(":", 1)
        rows.setdefault(key, []).append([float(v) for v in values.split()])
    return rows


def features(rng, n_per_class, p, k):
    """Correlated features in different units, class means apart: a small-sample case
    (n comparable to p) where shrinkage matters."""
    mix = rng.normal(size=(p, p))
    scale = np.exp(rng.normal(scale=1.5, size=p))
    xs, ys = [], []
    for c in range(k):
        mean = rng.normal(scale=0.8, size=p)
        x = (rng.normal(size=(n_per_class[c], p)) @ mix + mean) * scale
        xs.append(x)
        ys.append(np.full(n_per_class[c], c))
    return np.vstack(xs), np.concatenate(ys)


def write(path, header, rows):
    with open(path, "w") as f:
        f.write(header + "\n")
        for r in rows:
            f.write(" ".join(repr(float(v)) for v in r) + "\n")


def close(a, b, rtol, atol=0.0):
    a, b = np.asarray(a), np.asarray(b)
    err = np.max(np.abs(a - b) / (atol + rtol * np.maximum(np.abs(b), 1e-300)))
    return err <= 1.0, "max scaled error %.3g" % err


def check_intensity(tmp, rng):
    for n, p in [(40, 10), (200, 5), (15, 30)]:
        x = rng.normal(size=(n, p)) @ rng.normal(size=(p, p)) + 3.0
        path = os.path.join(tmp, "lw.txt")
        write(path, "%d %d" % (n, p), x)
        ours = run_tool("lw", path)["intensity"][0][0]
        theirs = ledoit_wolf(x)[1]
        ok, why = close(ours, theirs, 1e-10)
        check("ledoit_wolf intensity n=%d p=%d (%.6f vs %.6f)" % (n, p, ours, theirs), ok, why)


def check_lda(tmp, rng, counts, p, shrink):
    k = len(counts)
    x, y = features(rng, counts, p, k)
    path = os.path.join(tmp, "lda.txt")
    write(path, "%d %d %d" % (len(y), p, k), np.column_stack([y, x]))
    rows = run_tool("lda", path, shrink)
    w, b = np.array(rows["weights"]), np.array(rows["bias"][0])
    proba = np.array(rows["proba"])
    sk_shrink = {"auto": "auto", "none": None}.get(shrink, None)
    if sk_shrink is None and shrink != "none":
        sk_shrink = float(shrink)
    lda = LinearDiscriminantAnalysis(solver="lsqr", shrinkage=sk_shrink).fit(x, y)
    tag = "k=%d p=%d n=%d shrinkage=%s" % (k, p, len(y), shrink)
    if k == 2:  # sklearn keeps the difference of the two discriminants
        coef, intercept = w[1] - w[0], b[1] - b[0]
        ok, why = close(coef, lda.coef_[0], 1e-7, 1e-9 * np.max(np.abs(coef)))
        check("coefficients " + tag, ok, why)
        ok, why = close(intercept, lda.intercept_[0], 1e-7, 1e-9)
        check("intercept " + tag, ok, why)
    else:
        ok, why = close(w, lda.coef_, 1e-7, 1e-9 * np.max(np.abs(w)))
        check("coefficients " + tag, ok, why)
        ok, why = close(b, lda.intercept_, 1e-7, 1e-9 * np.max(np.abs(b)))
        check("intercept " + tag, ok, why)
    ok, why = close(proba, lda.predict_proba(x), 0, 1e-7)
    check("predict_proba " + tag, ok, why)
    check("probabilities sum to 1 " + tag, np.allclose(proba.sum(axis=1), 1, atol=1e-12))
    if shrink == "auto":
        theirs = [ledoit_wolf(StandardScaler().fit_transform(x[y == c]))[1] for c in range(k)]
        ok, why = close(rows["intensity"][0], theirs, 1e-9, 1e-12)
        check("per-class intensity on standardised features " + tag, ok, why)


def main():
    rng = np.random.default_rng(20240611)
    with tempfile.TemporaryDirectory() as tmp:
        check_intensity(tmp, rng)
        check_lda(tmp, rng, [20, 25], 12, "auto")
        check_lda(tmp, rng, [60, 40], 6, "none")
        check_lda(tmp, rng, [30, 30], 8, "0.3")
        check_lda(tmp, rng, [15, 20, 25], 10, "auto")
        check_lda(tmp, rng, [12, 10], 30, "auto")  # more features than trials
    if failures:
        sys.exit("%d check(s) failed" % len(failures))


main()
