"""`weft replay` metrics against scikit-learn (Debian's python3-sklearn): accuracy_score,
balanced_accuracy_score, roc_auc_score and confusion_matrix on the very predictions weft scored
(written in its JSON), per result and per trial; the information transfer rate against the
formula of Wolpaw et al. 2002 (eq. 1), computed here independently. The session is made hard
(weak mu modulation, no EMG) so that the figures are far from 0 and 1."""
import json
import math
import os
import subprocess
import sys
import tempfile

import numpy as np
from sklearn.metrics import (accuracy_score, balanced_accuracy_score, confusion_matrix,
                             roc_auc_score)

WEFT = os.environ["WEFT"]
ENV = dict(os.environ, WEFT_PLUGIN_PATH=os.environ["WEFT_PLUGINS"])
failures = 0


def check(ok, what):
    global failures
    print(("ok: " if ok else "FAIL: ") + what)
    failures += not ok


def run(*args):
    subprocess.run([WEFT, *args], check=True, env=ENV, capture_output=True)


def graph(tmp, name, seed, trials, erd, query, extra=""):
    text = f"""weft: 1
stages:
  eeg: {{ plugin: synthetic, params: {{ channels: 8, rate: 250, seed: {seed}, subject: 9, trials: {trials}, erd: {erd}, noise: 6 }} }}
  eeg_csp: {{ plugin: csp, input: eeg, params: {{ pairs: 1 }} }}
  intent:
    plugin: logvar_lda
    input: [ {{ from: eeg_csp, window: 0.5 }} ]
    query: {query}
    fit: {{ classes: {{ rest: [rest], grip: [grip] }}, after: 1.0 }}
    params: {{ classes: [rest, grip] }}
{extra}"""
    path = f"{tmp}/{name}.yaml"
    open(path, "w").write(text)
    return path


def close(a, b):
    return (a is None and b is None) or (a is not None and b is not None and abs(a - b) < 1e-12)


def check_level(level, ours, truth, pred, score, what):
    check(ours["n"] == len(truth) and len(truth) > 10, f"{what}: {len(truth)} scored")
    acc, bal = accuracy_score(truth, pred), balanced_accuracy_score(truth, pred)
    auc = roc_auc_score(truth, score)
    cm = confusion_matrix(truth, pred, labels=[0, 1]).tolist()
    check(close(ours["accuracy"], acc), f"{what}: accuracy {ours['accuracy']} = sklearn {acc}")
    check(close(ours["balanced_accuracy"], bal),
          f"{what}: balanced accuracy {ours['balanced_accuracy']} = sklearn {bal}")
    check(close(ours["auc"], auc), f"{what}: ROC AUC {ours['auc']} = sklearn {auc}")
    check(ours["confusion"] == cm, f"{what}: confusion {ours['confusion']} = sklearn {cm}")
    check(0.55 < acc < 0.98, f"{what}: the session is neither trivial nor chance ({acc:.3f})")


def wolpaw_bits(n, p):
    if p <= 1.0 / n:
        return 0.0
    if p >= 1:
        return math.log2(n)
    return math.log2(n) + p * math.log2(p) + (1 - p) * math.log2((1 - p) / (n - 1))


with tempfile.TemporaryDirectory() as tmp:
    calib = graph(tmp, "calib", 31, 40, 0.6, "{ every: 0.25 }")
    run("fit", calib, "-o", f"{tmp}/fitted.yaml", "--quiet")
    rec = f"  rec: {{ plugin: recorder, input: [eeg], params: {{ path: '{tmp}/s.bdf' }} }}\n"
    session = graph(tmp, "session", 32, 60, 0.75, "{ every: 0.25 }", rec)
    # The fitted values go into the session graph: same stages, only seed, trials, erd differ.
    fitted = open(f"{tmp}/fitted.yaml").read()
    for old, new in (("seed: 31", "seed: 32"), ("trials: 40", "trials: 60"), ("erd: 0.6", "erd: 0.75")):
        fitted = fitted.replace(old, new)
    open(f"{tmp}/live.yaml", "w").write(fitted + rec)
    run("run", f"{tmp}/live.yaml", "--quiet")
    run("replay", f"{tmp}/fitted.yaml", "--data", f"{tmp}/s.bdf", "--json", f"{tmp}/m.json",
        "--quiet")
    ro = json.load(open(f"{tmp}/m.json"))["readouts"][0]
    res = ro["scored_results"]
    truth = np.array([r["truth"] for r in res])
    values = np.array([r["values"] for r in res])
    pred = np.array([r["predicted"] for r in res])
    check(np.array_equal(pred, values.argmax(axis=1)), "predicted = argmax of the values")
    check_level("per_result", ro["per_result"], truth, pred, values[:, 1], "results")
    trials = ro["trials"]
    ttruth = [t["truth"] for t in trials]
    tpred = [t["predicted"] for t in trials]
    check_level("per_trial", ro["per_trial"], ttruth, tpred, [t["score"] for t in trials],
                "trials")
    pt = ro["per_trial"]
    bits = wolpaw_bits(2, pt["accuracy"])
    check(close(pt["itr_bits_per_trial"], bits),
          f"ITR {pt['itr_bits_per_trial']} bits per trial = Wolpaw eq. 1 {bits}")
    times = [t["time"] for t in trials]
    per_minute = bits * 60 / pt["seconds_per_trial"]
    check(abs(pt["itr_bits_per_minute"] - per_minute) < 1e-9,
          f"ITR {pt['itr_bits_per_minute']:.4f} bits/min at a trial every "
          f"{pt['seconds_per_trial']:.3f} s")
print("all passed" if not failures else f"{failures} failed")
sys.exit(1 if failures else 0)
