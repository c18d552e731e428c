"""Helpers for the recording e2e tests: compare two JSON-lines result streams, read a
recording with mne (Debian's python3-mne), and pull figures out of replay JSON."""
import json
import sys


def compare(live_path, replay_path):
    """Same results, in the same order, at the same sample index and trigger; values within
    what 24-bit quantization of the inputs can move them. Prints n and the largest difference."""
    live = [json.loads(l) for l in open(live_path)]
    again = [json.loads(l) for l in open(replay_path)]
    if len(live) != len(again) or not live:
        sys.exit(f"{len(live)} live results, {len(again)} replayed")
    worst, top_differs = 0.0, 0
    for a, b in zip(live, again):
        for key in ("stage", "seq", "time", "index", "trigger"):
            if a[key] != b[key]:
                sys.exit(f"result {a['seq']}: {key} {a[key]!r} live, {b[key]!r} replayed")
        top_differs += a["top"] != b["top"]
        for name, value in a["values"].items():
            worst = max(worst, abs(value - b["values"][name]))
    print(len(live), f"{worst:.3g}", top_differs)


def mne_seconds(path):
    """Duration of a recording as mne reads it, and its sample rate."""
    import mne
    raw = mne.io.read_raw_bdf(path, preload=True, verbose="error")
    print(f"{raw.n_times / raw.info['sfreq']:.3f}", len(raw.annotations))


def same_samples(a_path, b_path):
    """Two recordings hold the same samples (to 1e-6 of the range) and annotations."""
    import mne
    import numpy as np
    a = mne.io.read_raw_bdf(a_path, preload=True, verbose="error")
    b = mne.io.read_raw_bdf(b_path, preload=True, verbose="error")
    n = min(a.n_times, b.n_times)
    if a.ch_names != b.ch_names or abs(a.n_times - b.n_times) > a.info["sfreq"]:
        sys.exit(f"channels {a.ch_names} / {b.ch_names}, samples {a.n_times} / {b.n_times}")
    diff = np.max(np.abs(a.get_data()[:, :n] - b.get_data()[:, :n]))
    labels = lambda r: [(round(x["onset"], 4), x["description"]) for x in r.annotations
                        if x["description"] not in ("pad",)]
    if labels(a) != labels(b):
        sys.exit(f"annotations differ: {labels(a)} / {labels(b)}")
    print(f"{diff:.3g}")


def figure(path, readout, level, key):
    data = json.load(open(path))
    ro = next(r for r in data["readouts"] if r["stage"] == readout)
    print(ro[level][key])


if __name__ == "__main__":
    {"compare": compare, "mne_seconds": mne_seconds, "same_samples": same_samples,
     "figure": figure}[sys.argv[1]](*sys.argv[2:])
