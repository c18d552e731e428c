#!/bin/bash
# The README demo end to end: fit configs/grip-demo.yaml on a calibration session, run the
# fitted graph for 60 s of a fresh session, and check what the study program would rely on:
# the number of results, probabilities in [0, 1] summing to 1, time order, alignment of each
# result's sample index with its time, and that the decoded class follows the cues. Then the
# same run with blocks of 1, 7 and 64 frames must give bit-identical output.
set -u
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT
cd "$WEFT_SOURCE_DIR"
"$WEFT" fit configs/grip-demo.yaml -o "$tmp/fitted.yaml" --quiet \
    --calibrate eeg.seed=11 --calibrate emg.seed=11 \
    --calibrate eeg.trials=40 --calibrate emg.trials=40 || exit 1
"$WEFT" run "$tmp/fitted.yaml" --duration 60 > "$tmp/run.jsonl" 2>"$tmp/err" || { cat "$tmp/err"; exit 1; }
for block in 1 7 64; do
    "$WEFT" run "$tmp/fitted.yaml" --duration 60 --block $block > "$tmp/run-$block.jsonl" 2>/dev/null || exit 1
    cmp -s "$tmp/run-$block.jsonl" "$tmp/run-1.jsonl" || { echo "FAIL: block $block changed the output"; exit 1; }
done
cmp -s "$tmp/run.jsonl" "$tmp/run-1.jsonl" || { echo "FAIL: default block differs from block 1"; exit 1; }
echo "ok: blocks of 1, 7, 64 and the default give byte-identical results"
"$PYTHON" - "$tmp/run.jsonl" <<'PY'
import json, math, sys
rows = [json.loads(l) for l in open(sys.argv[1])]
periodic = [r for r in rows if r["trigger"] is None]
cued = [r for r in rows if r["trigger"] is not None]
# Periodic queries every 0.1 s from the first full 1 s window (1.0 s) to 60.0 s: 591.
assert len(periodic) == 591, len(periodic)
assert periodic[0]["time"] == 1.0 and periodic[-1]["time"] == 60.0, (periodic[0], periodic[-1])
times = [r["time"] for r in rows]
assert all(b >= a for a, b in zip(times, times[1:])), "times must never decrease"
for r in rows:
    p = r["values"]
    assert set(p) == {"rest", "grip"}, p
    assert all(0.0 <= v <= 1.0 for v in p.values()), p
    assert abs(sum(p.values()) - 1.0) < 1e-12, p
    # index is the end (exclusive) of the first input's window: the 250 Hz EEG stream.
    assert r["index"] == math.floor(r["time"] * 250 + 1e-6), r
    assert r["top"] == max(p, key=p.get), r
# Each cue-triggered result (2 s after the cue) should name the cued class.
correct = sum(r["top"] == r["trigger"] for r in cued)
print(f"ok: {len(periodic)} periodic results, {len(cued)} after cues, {correct} of those decoded as cued")
assert len(cued) >= 8, len(cued)
assert correct / len(cued) >= 0.8, (correct, len(cued))
PY
