#!/bin/bash
# A run killed with SIGKILL while recording leaves a file that weft and mne both read, holding
# everything but (at most) the data record in progress: the recorder appends each record as
# soon as it is complete and rewrites the header's record count right after.
set -u
fails=0
check() { # description, then a command that must succeed
    local what="$1"; shift
    if "$@"; then echo "ok: $what"; else echo "FAIL: $what"; fails=$((fails + 1)); fi
}
atleast() { [[ "$1" =~ ^[0-9.]+$ ]] && awk -v a="$1" -v b="$2" 'BEGIN { exit !(a >= b) }'; }
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT
export WEFT_PLUGIN_PATH="$WEFT_PLUGINS"
helper="$WEFT_SOURCE_DIR/tests/e2e/records_session.py"
record=0.5

cat > "$tmp/live.yaml" <<G
weft: 1
stages:
  eeg: { plugin: synthetic, params: { channels: 8, rate: 250, seed: 3, lead: 0.5, gap: 0.5, trial: 1, jitter: 0 } }
  emg: { plugin: synthetic, params: { signal: emg, channels: 2, rate: 1000, seed: 3, markers: false } }
  rec: { plugin: recorder, input: [eeg, emg], params: { path: "$tmp/killed.bdf", record: $record } }
G
"$WEFT" run "$tmp/live.yaml" --realtime --quiet 2>"$tmp/err" &
pid=$!
# Time from the first samples (the recorder creates its file when they arrive), so a slow
# start (sanitizer build, loaded CI machine) is not counted as lost data.
for _ in $(seq 100); do [ -e "$tmp/killed.bdf" ] && break; sleep 0.05; done
start=$(date +%s.%N)
sleep 3
kill -9 $pid
killed=$(date +%s.%N)
wait $pid 2>/dev/null
elapsed=$(awk -v a="$start" -v b="$killed" 'BEGIN { printf "%.3f", b - a }')

read seconds annotations < <("$PYTHON" "$helper" mne_seconds "$tmp/killed.bdf" 2>"$tmp/mne")
check "mne reads the killed recording (${seconds:-?} s, ${annotations:-?} annotations)" \
    test -n "${seconds:-}"
[ -n "${seconds:-}" ] || cat "$tmp/mne"
# Start-up (loading plugins, opening the file) takes part of the elapsed time; allow 0.5 s
# for it besides the one record in progress.
want=$(awk -v e="$elapsed" -v r="$record" 'BEGIN { printf "%.3f", e - r - 0.5 }')
check "it holds ${seconds:-?} s of ${elapsed} s run, at least $want s" atleast "${seconds:-x}" "$want"
check "cues were recorded before the kill" atleast "${annotations:-0}" 1

# weft reads it back: replaying both streams into a second recording copies every sample.
cat > "$tmp/copy.yaml" <<G
weft: 1
stages:
  eeg: { plugin: edf, params: { path: "$tmp/killed.bdf", stream: eeg } }
  emg: { plugin: edf, params: { path: "$tmp/killed.bdf", stream: emg, markers: false } }
  rec: { plugin: recorder, input: [eeg, emg], params: { path: "$tmp/copy.bdf", record: $record } }
G
"$WEFT" run "$tmp/copy.yaml" --quiet 2>"$tmp/err"
check "weft plays the killed recording to its end" test $? -eq 0
[ -s "$tmp/copy.bdf" ] || cat "$tmp/err"
diff="$("$PYTHON" "$helper" same_samples "$tmp/killed.bdf" "$tmp/copy.bdf" 2>&1)"
check "weft's copy has the same samples and cues (largest difference $diff V)" \
    awk -v d="$diff" 'BEGIN { exit !(d + 0 == d && d < 1e-9) }'

[ $fails -eq 0 ] && echo "all passed" || echo "$fails failed"
exit $((fails > 0))
