#!/bin/bash
# `weft fit` end to end on the synthetic grip study, checked against its forward model: the
# top CSP pattern is the modulated source's mixing column, the fitted graph decodes a fresh
# session of the same subject, shuffled labels fall to chance, EEG + EMG windows of different
# lengths and rates feed one readout, and each user error is a sentence naming its cause.
set -u
fails=0
check() { # description, then a command that must succeed
    local what="$1"; shift
    if "$@"; then echo "ok: $what"; else echo "FAIL: $what"; fails=$((fails + 1)); fi
}
above() { # a > b, both numbers (an empty value, from a step that failed, is not)
    [[ "$1" =~ ^[0-9.]+$ && "$2" =~ ^[0-9.]+$ ]] && awk -v a="$1" -v b="$2" 'BEGIN { exit !(a > b) }'
}
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT
export WEFT_PLUGIN_PATH="$WEFT_PLUGINS"
helper="$WEFT_SOURCE_DIR/tests/e2e/fit_session.py"

# A known 8 x 4 mixing matrix; source 0 is the mu rhythm that drops during grip.
"$PYTHON" -c "
import json, numpy as np
m = np.random.default_rng(5).normal(size=(8, 4)).round(3)
json.dump(m.tolist(), open('$tmp/mixing.json', 'w'))" || exit 1
mixing="$(cat "$tmp/mixing.json")"

cat > "$tmp/eeg.yaml" <<G
weft: 1
name: fit-forward-model
stages:
  eeg: { plugin: synthetic, params: { channels: 8, rate: 250, seed: 21, subject: 5, trials: 40, mixing: $mixing } }
  eeg_csp: { plugin: csp, input: eeg, params: { pairs: 2 } }
  intent:
    plugin: logvar_lda
    input: [ { from: eeg_csp, window: 1.0 } ]
    query: { every: 0.1 }
    fit: { classes: { rest: [rest], grip: [grip] }, after: 1.5 }
    params: { classes: [rest, grip] }
G
"$WEFT" fit "$tmp/eeg.yaml" -o "$tmp/eeg-fitted.yaml" 2>"$tmp/err"; rc=$?
check "fit exits 0" test $rc -eq 0
[ $rc -eq 0 ] || cat "$tmp/err"
check "header names the data hash (not cryptographic)" \
    grep -q "^# Data: .*content hash fnv1a64:[0-9a-f]\{16\}" "$tmp/eeg-fitted.yaml"
check "header gives trials per class" grep -q "trials rest 20, grip 20" "$tmp/eeg-fitted.yaml"
check "the fitted graph passes check" "$WEFT" check "$tmp/eeg-fitted.yaml" >/dev/null
corr="$("$PYTHON" "$helper" pattern "$tmp/eeg-fitted.yaml" eeg_csp "$tmp/mixing.json")"
check "top CSP pattern matches the mu source's mixing column (|r| = $corr > 0.9)" above "$corr" 0.9
cv="$("$PYTHON" "$helper" cv "$tmp/eeg-fitted.yaml")"
check "cross-validated accuracy $cv > 0.9" above "$cv" 0.9

"$PYTHON" "$helper" fresh "$tmp/eeg-fitted.yaml" "$tmp/eeg-fresh.yaml" 22 "$tmp/eeg.jsonl"
"$WEFT" run "$tmp/eeg-fresh.yaml" --quiet; check "fitted graph runs on a fresh session" test $? -eq 0
read acc n < <("$PYTHON" "$helper" accuracy "$tmp/eeg.jsonl")
check "fresh-session accuracy $acc over $n cues > 0.9" above "$acc" 0.9

# Fitting twice on the same data gives the same file apart from the time stamp.
"$WEFT" fit "$tmp/eeg.yaml" -o "$tmp/again.yaml" --quiet --block 7
check "fitting is deterministic and independent of the block size" \
    cmp -s <(grep -v "^# Fitted" "$tmp/eeg-fitted.yaml") <(grep -v "^# Fitted" "$tmp/again.yaml")

# Permutation check: with the classes shuffled over the trials nothing can be learned, so the
# cross-validated accuracy (tested on held-out shuffled labels) falls to chance. A fresh
# session is no test here: a model fitted to noise still points somewhere in a space where
# the classes lie far apart, so its accuracy on true labels scatters anywhere from 0 to 1.
"$WEFT" fit "$tmp/eeg.yaml" -o "$tmp/shuffled.yaml" --shuffle 9 --quiet
check "a shuffled fit says so in its header" grep -q "CLASSES SHUFFLED" "$tmp/shuffled.yaml"
sum=0
for seed in 1 2 3 4 5 6; do
    "$WEFT" fit "$tmp/eeg.yaml" -o "$tmp/shuffled.yaml" --shuffle $seed --quiet
    cv="$("$PYTHON" "$helper" cv "$tmp/shuffled.yaml")"
    check "shuffled (seed $seed) cross-validated accuracy $cv < 0.8" above 0.8 "$cv"
    sum="$(awk -v a="$sum" -v b="$cv" 'BEGIN { print a + b }')"
done
mean="$(awk -v a="$sum" 'BEGIN { printf "%.3f", a / 6 }')"
check "mean shuffled accuracy $mean is near chance (0.35 .. 0.65)" \
    awk -v m="$mean" 'BEGIN { exit !(m > 0.35 && m < 0.65) }'

# The central use case: EEG 1.0 s at 250 Hz and EMG 0.2 s at 1 kHz into one readout.
cat > "$tmp/hybrid.yaml" <<G
weft: 1
name: fit-hybrid
stages:
  eeg: { plugin: synthetic, params: { channels: 8, rate: 250, seed: 31, subject: 5, trials: 30 } }
  emg: { plugin: synthetic, params: { signal: emg, channels: 2, rate: 1000, seed: 31, subject: 5, trials: 30, markers: false } }
  eeg_csp: { plugin: csp, input: eeg, params: { pairs: 2 } }
  intent:
    plugin: logvar_lda
    input: [ { from: eeg_csp, window: 1.0 }, { from: emg, window: 0.2 } ]
    query: { every: 0.25 }
    fit: { classes: { rest: [rest], grip: [grip] }, after: 1.5 }
    params: { classes: [rest, grip] }
G
"$WEFT" fit "$tmp/hybrid.yaml" -o "$tmp/hybrid-fitted.yaml" --quiet
check "hybrid fit exits 0" test $? -eq 0
check "hybrid weights are 2 classes x (4 CSP + 2 EMG) features" "$PYTHON" -c "
import yaml, sys
w = yaml.safe_load(open('$tmp/hybrid-fitted.yaml'))['stages']['intent']['params']['weights']
sys.exit(not (len(w) == 2 and all(len(r) == 6 for r in w)))"
"$PYTHON" "$helper" fresh "$tmp/hybrid-fitted.yaml" "$tmp/hybrid-fresh.yaml" 32 "$tmp/hybrid.jsonl"
"$WEFT" run "$tmp/hybrid-fresh.yaml" --quiet
read acc n < <("$PYTHON" "$helper" accuracy "$tmp/hybrid.jsonl")
check "hybrid fresh-session accuracy $acc over $n cues > 0.9" above "$acc" 0.9

# Fitting on a recording: the calibration session recorded to BDF+ (with its cues as
# annotations) and replayed by the edf source gives the same trials and accuracy.
cat > "$tmp/record.yaml" <<G
weft: 1
stages:
  eeg: { plugin: synthetic, params: { channels: 8, rate: 250, seed: 31, subject: 5, trials: 30 } }
  emg: { plugin: synthetic, params: { signal: emg, channels: 2, rate: 1000, seed: 31, subject: 5, trials: 30, markers: false } }
  rec: { plugin: recorder, input: [eeg, emg], params: { path: $tmp/calib.bdf } }
G
"$WEFT" run "$tmp/record.yaml" --quiet 2>/dev/null
check "the calibration session is recorded" test -s "$tmp/calib.bdf"
sed -e "s|eeg: { plugin: synthetic.*|eeg: { plugin: edf, params: { path: $tmp/calib.bdf, stream: eeg } }|" \
    -e "s|emg: { plugin: synthetic.*|emg: { plugin: edf, params: { path: $tmp/calib.bdf, stream: emg, markers: false } }|" \
    "$tmp/hybrid.yaml" > "$tmp/from-recording.yaml"
"$WEFT" fit "$tmp/from-recording.yaml" -o "$tmp/from-recording-fitted.yaml" 2>"$tmp/err"
check "fitting on the recording exits 0" test $? -eq 0
check "... finds the recorded cues" grep -q "trials rest 15, grip 15" "$tmp/from-recording-fitted.yaml"
cv="$("$PYTHON" "$helper" cv "$tmp/from-recording-fitted.yaml")"
check "... with cross-validated accuracy $cv > 0.9" above "$cv" 0.9

# The same with --data: the graph's own sources are replaced by the recording while fitting,
# and the fitted graph keeps them.
"$WEFT" fit "$tmp/hybrid.yaml" --data "$tmp/calib.bdf" -o "$tmp/via-data.yaml" --quiet
check "fit --data on the recording exits 0" test $? -eq 0
check "... names the recording in the header" grep -q "^# Data: .* from the recording .*calib.bdf" "$tmp/via-data.yaml"
check "... finds its cues" grep -q "trials rest 15, grip 15" "$tmp/via-data.yaml"
check "... and writes the graph's own synthetic sources" \
    "$PYTHON" -c "import yaml, sys; g = yaml.safe_load(open('$tmp/via-data.yaml')); sys.exit(g['stages']['eeg']['plugin'] != 'synthetic')"
check "... learning what the edf-source graph learned" cmp -s \
    <("$PYTHON" -c "import yaml; print(yaml.safe_load(open('$tmp/via-data.yaml'))['stages']['intent']['params'])") \
    <("$PYTHON" -c "import yaml; print(yaml.safe_load(open('$tmp/from-recording-fitted.yaml'))['stages']['intent']['params'])")

# Sinks never run while fitting, and are not even opened: a recorder in the graph creates no
# file (and so the fitted graph, opened once to check it, does not trip over one).
cp "$tmp/hybrid.yaml" "$tmp/with-sink.yaml"
echo "  rec: { plugin: recorder, input: [eeg, emg], params: { path: $tmp/never.bdf } }" >> "$tmp/with-sink.yaml"
"$WEFT" fit "$tmp/with-sink.yaml" -o "$tmp/with-sink-fitted.yaml" --quiet
check "a graph with a recorder fits" test $? -eq 0
check "... and fitting recorded nothing" test ! -e "$tmp/never.bdf"

# The shipped calibration graph fits and decodes a fresh session of the same subject.
"$WEFT" fit "$WEFT_SOURCE_DIR/configs/grip-fit.yaml" -o "$tmp/grip-fitted.yaml" --quiet
check "configs/grip-fit.yaml fits" test $? -eq 0
"$WEFT" run "$tmp/grip-fitted.yaml" --set eeg.seed=12 --set emg.seed=12 --quiet > "$tmp/grip.jsonl"
read acc n < <("$PYTHON" "$helper" accuracy "$tmp/grip.jsonl")
check "... and decodes a fresh session: accuracy $acc over $n cues > 0.9" above "$acc" 0.9

# Errors a user can act on.
sed 's/trials: 40, //' "$tmp/eeg.yaml" > "$tmp/endless.yaml"
"$WEFT" fit "$tmp/endless.yaml" -o "$tmp/x.yaml" 2>"$tmp/err"; rc=$?
check "an endless source is refused (exit 1)" test $rc -eq 1
check "... saying how to bound it" grep -q "streams without end.*trials: N.*--duration" "$tmp/err"
"$WEFT" fit "$tmp/endless.yaml" -o "$tmp/x.yaml" --duration 120 --quiet
check "--duration bounds an endless source" test $? -eq 0

# One graph, fitted on a calibration variant of itself: the fitted file keeps its own values.
"$WEFT" fit "$tmp/endless.yaml" -o "$tmp/cal.yaml" --quiet --calibrate eeg.trials=40 \
    --calibrate eeg.seed=21
check "--calibrate makes an endless graph fittable" test $? -eq 0
check "... the fitted graph keeps its own (endless) source" \
    "$PYTHON" -c "import yaml, sys; p = yaml.safe_load(open('$tmp/cal.yaml'))['stages']['eeg']['params']; sys.exit('trials' in p)"
check "... and its header names the calibration values" \
    grep -q "^# Fitted with --calibrate eeg.trials=40, eeg.seed=21" "$tmp/cal.yaml"
check "... whose learned values equal a fit of the bounded graph" cmp -s \
    <("$PYTHON" -c "import yaml; print(yaml.safe_load(open('$tmp/cal.yaml'))['stages']['intent']['params'])") \
    <("$PYTHON" -c "import yaml; print(yaml.safe_load(open('$tmp/eeg-fitted.yaml'))['stages']['intent']['params'])")
"$WEFT" fit "$tmp/endless.yaml" -o "$tmp/x.yaml" --calibrate egg.trials=40 2>"$tmp/err"
check "--calibrate on a missing stage is a usage error naming it" grep -q "no stage 'egg'" "$tmp/err"
"$WEFT" fit "$tmp/endless.yaml" -o "$tmp/x.yaml" --calibrate eeg.trials 2>"$tmp/err"; rc=$?
check "--calibrate without a value fails, saying how to write it" \
    grep -q "write STAGE.PARAM=VALUE" "$tmp/err"

sed 's/grip: \[grip\] }/grip: [squeeze] }/' "$tmp/eeg.yaml" > "$tmp/nolabel.yaml"
"$WEFT" fit "$tmp/nolabel.yaml" -o "$tmp/x.yaml" 2>"$tmp/err"; rc=$?
check "a class without trials fails (exit 1)" test $rc -eq 1
check "... naming the class, its markers and the file position" \
    grep -q "nolabel.yaml:[0-9]*:[0-9]*: stage 'intent': class 'grip' has 0 trials (markers 'squeeze')" "$tmp/err"
check "... and warning about the labels no class maps" \
    grep -q "20 markers 'grip' in the data belong to no class" "$tmp/err"

sed 's/trials: 40/trials: 6/' "$tmp/eeg.yaml" > "$tmp/few.yaml"
"$WEFT" fit "$tmp/few.yaml" -o "$tmp/x.yaml" 2>"$tmp/err"
check "too few trials per class is an error" grep -q "class 'rest' has 3 trials.*at least 5" "$tmp/err"

# Common average reference leaves 7 independent channels of 8: CSP's covariance is singular.
sed 's/eeg_csp: { plugin: csp, input: eeg,/eeg_car: { plugin: spatial, input: eeg, params: { mode: car } }\n  eeg_csp: { plugin: csp, input: eeg_car,/' \
    "$tmp/eeg.yaml" > "$tmp/singular.yaml"
"$WEFT" fit "$tmp/singular.yaml" -o "$tmp/x.yaml" 2>"$tmp/err"; rc=$?
check "a singular covariance fails (exit 1)" test $rc -eq 1
check "... naming the stage and suggesting shrinkage" \
    grep -q "stage 'eeg_csp' failed to fit: .*singular.*shrinkage" "$tmp/err"
sed 's/params: { pairs: 2 }/params: { pairs: 2, shrinkage: 0.05 }/' "$tmp/singular.yaml" > "$tmp/shrunk.yaml"
"$WEFT" fit "$tmp/shrunk.yaml" -o "$tmp/x.yaml" --quiet
check "... and shrinkage makes it fit" test $? -eq 0

"$WEFT" run "$tmp/eeg.yaml" --duration 5 2>"$tmp/err"; rc=$?
check "running an unfitted graph is refused (exit 3)" test $rc -eq 3
check "... pointing to weft fit" grep -q "is not fitted.*weft fit" "$tmp/err"

echo "$fails failure(s)"
[ $fails -eq 0 ]
