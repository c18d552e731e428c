#!/bin/bash
# A session recorded live and replayed gives the live results again: same results at the same
# sample indices and triggers, values within what 24-bit quantization moves them. The replay
# then scores the fitted readout and writes its reports; any block size gives the same figures.
set -u
fails=0
check() { # description, then a command that must succeed
    local what="$1"; shift
    if "$@"; then echo "ok: $what"; else echo "FAIL: $what"; fails=$((fails + 1)); fi
}
below() { [[ "$1" =~ ^[0-9.e+-]+$ ]] && awk -v a="$1" -v b="$2" 'BEGIN { exit !(a < b) }'; }
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT
export WEFT_PLUGIN_PATH="$WEFT_PLUGINS"
helper="$WEFT_SOURCE_DIR/tests/e2e/records_session.py"

cat > "$tmp/calib.yaml" <<G
weft: 1
name: grip
stages:
  eeg: { plugin: synthetic, params: { channels: 8, rate: 250, seed: 21, subject: 5, trials: 30 } }
  emg: { plugin: synthetic, params: { signal: emg, channels: 2, rate: 1000, seed: 21, subject: 5, trials: 30, markers: false } }
  eeg_csp: { plugin: csp, input: eeg, params: { pairs: 2 } }
  intent:
    plugin: logvar_lda
    input: [ { from: eeg_csp, window: 1.0 }, { from: emg, window: 0.2 } ]
    query: { every: 0.25, on_marker: [rest, grip], after: 1.5 }
    fit: { classes: { rest: [rest], grip: [grip] }, after: 1.5 }
    params: { classes: [rest, grip] }
  show: { plugin: jsonl, input: intent, params: { path: "$tmp/live.jsonl" } }
G
"$WEFT" fit "$tmp/calib.yaml" -o "$tmp/fitted.yaml" --quiet 2>"$tmp/err"
check "the calibration session fits" test $? -eq 0 || cat "$tmp/err"

# Live: a fresh session (seed 22) through the fitted graph, recorded as it runs.
cp "$tmp/fitted.yaml" "$tmp/live.yaml"
echo "  rec: { plugin: recorder, input: [eeg, emg], params: { path: \"$tmp/session.bdf\" } }" \
    >> "$tmp/live.yaml"
"$WEFT" run "$tmp/live.yaml" --set eeg.seed=22 --set emg.seed=22 --set eeg.trials=24 \
    --set emg.trials=24 --quiet 2>"$tmp/err"
check "the live session runs and records" test $? -eq 0 -a -s "$tmp/session.bdf" ||
    cat "$tmp/err"

# Replay: the same fitted graph, its jsonl sink writing elsewhere, on the recording.
sed "s|$tmp/live.jsonl|$tmp/replay.jsonl|" "$tmp/fitted.yaml" > "$tmp/replay.yaml"
"$WEFT" replay "$tmp/replay.yaml" --data "$tmp/session.bdf" --json "$tmp/m.json" \
    --report "$tmp/report.html" > "$tmp/summary" 2>"$tmp/err"
check "replay exits 0" test $? -eq 0 || cat "$tmp/err"
read n worst top < <("$PYTHON" "$helper" compare "$tmp/live.jsonl" "$tmp/replay.jsonl")
check "replay gives the $n live results at the same indices and triggers" test -n "${n:-}"
check "values within 1e-3 of live (largest difference $worst)" below "${worst:-x}" 1e-3
check "the same class wins in every result ($top differ)" test "${top:-x}" = 0

acc="$("$PYTHON" "$helper" figure "$tmp/m.json" intent per_trial accuracy)"
check "trial accuracy of the fresh session $acc > 0.8" below 0.8 "${acc:-0}"
check "summary names the readout" grep -q "readout 'intent'" "$tmp/summary"
check "report is one self-contained HTML page with plots" \
    bash -c "grep -q '<svg' '$tmp/report.html' && ! grep -q '<script src\|<link ' '$tmp/report.html'"

"$WEFT" replay "$tmp/replay.yaml" --data "$tmp/session.bdf" --json "$tmp/m7.json" --block 7 \
    --quiet
check "--block 7 gives the same figures" \
    cmp -s <(grep -v latency "$tmp/m.json" | sed 's/"stream_seconds.*//') \
           <(grep -v latency "$tmp/m7.json" | sed 's/"stream_seconds.*//')

"$WEFT" replay "$tmp/replay.yaml" --data "$tmp/missing.bdf" 2>"$tmp/err" >/dev/null
check "a missing recording is named" grep -q "recording '$tmp/missing.bdf': No such file" \
    "$tmp/err"
sed 's/^  emg:/  eye:/; s/from: emg/from: eye/' "$tmp/replay.yaml" > "$tmp/eye.yaml"
"$WEFT" replay "$tmp/eye.yaml" --data "$tmp/session.bdf" 2>"$tmp/err" >/dev/null
check "a source without a stream in the file is named with the file's streams" \
    grep -q "stage 'eye'.*no signals labelled 'eye\.\*'; its streams are: eeg 250 Hz, emg 1000 Hz" \
    "$tmp/err"

# Chronological cross-validation on the session: 4 blocks of 6 trials; block 2 (fitted on 6
# trials, 3 per class) cannot be fitted and says so, blocks 3 and 4 are tested.
"$WEFT" replay "$tmp/replay.yaml" --data "$tmp/session.bdf" --folds 4 --json "$tmp/f.json" \
    > "$tmp/folds" 2>"$tmp/err"
check "replay --folds 4 exits 0" test $? -eq 0 || cat "$tmp/err"
check "fold 2 is skipped with the reason" grep -q "fold 2: .*skipped.*fitting needs at least" \
    "$tmp/folds"
check "folds 3 and 4 are fitted on earlier data only" \
    grep -q "fold 4: fitted on 0-1[0-9.]* s, tested on" "$tmp/folds"
read cv_n cv_acc < <("$PYTHON" -c "
import json; ro = json.load(open('$tmp/f.json'))['readouts'][0]['per_trial']
print(ro['n'], ro['accuracy'])")
check "cross-validated trials $cv_n (about 12) with accuracy $cv_acc > 0.8" \
    bash -c "[ ${cv_n:-0} -ge 10 ] && [ ${cv_n:-0} -le 14 ]"
check "cross-validated accuracy above 0.8" below 0.8 "${cv_acc:-0}"

[ $fails -eq 0 ] && echo "all passed" || echo "$fails failed"
exit $((fails > 0))
