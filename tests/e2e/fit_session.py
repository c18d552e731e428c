"""Helpers for test_fit_cli.sh.

  fit_session.py fresh FITTED OUT SEED RESULTS   FITTED on a new session: every source gets
        seed SEED (same subject), the readouts are queried 1.5 s after each cue, results go to
        a jsonl sink writing RESULTS.
  fit_session.py accuracy RESULTS                 fraction of queries whose most probable
        class is the cue that triggered them.
  fit_session.py pattern FITTED STAGE MIXING      |correlation| between the first learned CSP
        pattern of STAGE and column 0 of the mixing matrix in the JSON file MIXING.
  fit_session.py cv FITTED                        the cross-validated accuracy in the header.
"""
import json
import re
import sys

import numpy as np
import yaml


def fresh(fitted, out, seed, results):
    g = yaml.safe_load(open(fitted))
    for stage in g["stages"].values():
        if stage.get("plugin") == "synthetic":
            stage["params"]["seed"] = int(seed)
        if "fit" in stage:
            stage["query"] = {"on_marker": ["rest", "grip"], "after": 1.5}
            readout = [name for name, s in g["stages"].items() if s is stage][0]
    g["stages"]["show"] = {"plugin": "jsonl", "input": readout, "params": {"path": results}}
    yaml.safe_dump(g, open(out, "w"), sort_keys=False)


def accuracy(results):
    rows = [json.loads(line) for line in open(results)]
    hits = sum(r["top"] == r["trigger"] for r in rows)
    print("%.4f %d" % (hits / len(rows), len(rows)))


def pattern(fitted, stage, mixing):
    g = yaml.safe_load(open(fitted))
    p = np.array(g["stages"][stage]["params"]["patterns"][0])
    a = np.array(json.load(open(mixing)))[:, 0]
    print("%.4f" % abs(np.corrcoef(p, a)[0, 1]))


def cv(fitted):
    m = re.search(r"cross-validated accuracy ([0-9.]+)", open(fitted).read())
    print(m.group(1) if m else "none")


{"fresh": fresh, "accuracy": accuracy, "pattern": pattern, "cv": cv}[sys.argv[1]](*sys.argv[2:])
