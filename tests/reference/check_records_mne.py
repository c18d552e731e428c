"""Recordings written by weft's recorder, read by an outside reader: Debian's python3-mne
(mne.io.read_raw_bdf / read_raw_edf, mne 1.3). The samples must equal what the source produced
within half a quantization step (2 R / (2^bits - 1), R the physical range; EDF spec, Kemp et al.
1992), weft's own reader must agree with mne, and the annotations must be the cues.

mne resamples signals of a lower rate to the highest rate of a file, so sample-exact checks use
one-rate files; the two-rate file is checked on its highest-rate signals and its annotations."""
import os
import subprocess
import sys
import tempfile

import mne
import numpy as np

WEFT = os.environ["WEFT"]
PLUGINS = os.environ["WEFT_PLUGINS"]
DUMP = os.path.join(os.environ["WEFT_BUILD_DIR"], "tests", "tools", "records_dump")
EEG = "{ channels: 8, rate: 250, seed: 4, trials: 6 }"
EMG = "{ signal: emg, channels: 2, rate: 1000, seed: 4, trials: 6, markers: false }"
failures = 0


def check(ok, what):
    global failures
    print(("ok: " if ok else "FAIL: ") + what)
    failures += not ok


def dump(plugin, params, frames, tmp, name):
    """Samples (frames x channels, float32) and markers of a source plugin, run by weft."""
    out = subprocess.run([DUMP, os.path.join(PLUGINS, plugin + ".so"), params, str(frames),
                          f"{tmp}/{name}.f32", f"{tmp}/{name}.txt"],
                         capture_output=True, text=True, check=True).stdout.split()
    channels = int(out[0])
    data = np.fromfile(f"{tmp}/{name}.f32", dtype="<f4").reshape(-1, channels)
    markers = []
    for line in open(f"{tmp}/{name}.txt"):
        index, duration, label = line.split(" ", 2)
        markers.append((int(index), float(duration), label.strip()))
    return data, markers


def record(tmp, name, stages, inputs, params=""):
    graph = f"{tmp}/{name}.yaml"
    with open(graph, "w") as f:
        f.write("weft: 1\nstages:\n" + stages +
                f"  rec: {{ plugin: recorder, input: [{inputs}], "
                f"params: {{ path: '{tmp}/{name}', overwrite: true {params} }} }}\n")
    subprocess.run([WEFT, "run", graph, "--quiet"], check=True,
                   env=dict(os.environ, WEFT_PLUGIN_PATH=PLUGINS))


def check_one_rate(tmp, fmt, bits, r_uv, extra):
    name = f"eeg.{fmt}"
    record(tmp, name, f"  eeg: {{ plugin: synthetic, params: {EEG} }}\n", "eeg", extra)
    orig, cues = dump("synthetic", EEG, 10**7, tmp, "eeg_source")
    read = mne.io.read_raw_bdf if fmt == "bdf" else mne.io.read_raw_edf
    raw = read(f"{tmp}/{name}", preload=True, verbose="error")
    check(raw.ch_names == ["eeg.C3", "eeg.C4", "eeg.Cz", "eeg.FC3", "eeg.FC4", "eeg.CP3",
                           "eeg.CP4", "eeg.Pz"], f"{fmt}: mne sees the labels <stage>.<channel>")
    check(raw.info["sfreq"] == 250, f"{fmt}: mne sees 250 Hz")
    got = raw.get_data().T * 1e6  # mne gives volts for "uV"
    n = orig.shape[0]
    check(got.shape[0] >= n and got.shape[0] - n < 250,
          f"{fmt}: {got.shape[0]} samples for the source's {n} (the last record padded)")
    step = 2 * r_uv / (2 ** bits - 1)
    worst = np.max(np.abs(got[:n] - orig))
    check(worst <= step / 2 * (1 + 1e-6) + 1e-5,
          f"{fmt}: samples within half a step of the source ({worst:.4g} uV, step {step:.4g})")
    mine, _ = dump("edf", f"{{ path: '{tmp}/{name}', stream: eeg }}", 10**7, tmp, "eeg_back")
    agree = np.max(np.abs(mine - got[:mine.shape[0]]))
    check(mine.shape[0] == n and agree <= 1e-6 * r_uv,
          f"{fmt}: weft's reader plays the source's {n} samples and agrees with mne "
          f"({agree:.3g} uV)")
    ours = [(i / 250.0, d, label) for i, d, label in cues]
    theirs = [(a["onset"], a["duration"], a["description"]) for a in raw.annotations
              if not a["description"].startswith("pad ")]
    same = len(ours) == len(theirs) and all(
        abs(a[0] - b[0]) < 1e-6 and abs(a[1] - b[1]) < 1e-6 and a[2] == b[2]
        for a, b in zip(ours, theirs))
    check(same and len(ours) == 6, f"{fmt}: mne reads the {len(ours)} cues as annotations "
                                   f"with onset, duration and label")


def check_two_rates(tmp):
    record(tmp, "both.bdf", f"  eeg: {{ plugin: synthetic, params: {EEG} }}\n"
                            f"  emg: {{ plugin: synthetic, params: {EMG} }}\n", "eeg, emg")
    orig, _ = dump("synthetic", EMG, 10**7, tmp, "emg_source")
    raw = mne.io.read_raw_bdf(f"{tmp}/both.bdf", preload=True, verbose="error")
    check(raw.info["sfreq"] == 1000 and len(raw.ch_names) == 10,
          "two rates: mne reads 10 signals at the highest rate")
    got = raw.get_data(picks=["emg.flexor", "emg.extensor"]).T * 1e6
    n = orig.shape[0]
    step = 2 * 262144.0 / (2 ** 24 - 1)
    worst = np.max(np.abs(got[:n] - orig))
    check(worst <= step / 2 * (1 + 1e-6) + 1e-5,
          f"two rates: the 1000 Hz signals within half a step ({worst:.4g} uV)")
    labels = sorted(a["description"] for a in raw.annotations
                    if not a["description"].startswith("pad "))
    check(labels == ["grip"] * 3 + ["rest"] * 3, f"two rates: the cues once each ({labels})")


with tempfile.TemporaryDirectory() as tmp:
    check_one_rate(tmp, "bdf", 24, 262144.0, "")
    check_one_rate(tmp, "edf", 16, 500.0, ", range_uv: [500]")
    check_two_rates(tmp)
print("all passed" if not failures else f"{failures} failed")
sys.exit(1 if failures else 0)
