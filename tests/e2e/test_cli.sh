#!/bin/bash
# The weft command as a user meets it: exit codes, positioned errors, a runtime failure that
# names the stage and sample without losing results already produced, and a clean stop on
# SIGTERM that leaves complete output files.
set -u
fails=0
check() { # description, then a command that must succeed
    local what="$1"; shift
    if "$@"; then echo "ok: $what"; else echo "FAIL: $what"; fails=$((fails + 1)); fi
}
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT
export WEFT_PLUGIN_PATH="$WEFT_BUILD_DIR/tests/fixtures"

"$WEFT" >/dev/null 2>&1; check "no command is a usage error (2)" test $? -eq 2
"$WEFT" frobnicate >/dev/null 2>&1; check "unknown command is 2" test $? -eq 2
"$WEFT" run --help | grep -q -- "--duration"; check "run --help documents --duration" test $? -eq 0
"$WEFT" run g.yaml --speed 3 >/dev/null 2>&1; check "unknown option is 2" test $? -eq 2
"$WEFT" run g.yaml --duration -1 >/dev/null 2>&1; check "negative duration is 2" test $? -eq 2
"$WEFT" check --help | grep -q "Exit 0"; check "check --help documents exit codes" test $? -eq 0
"$WEFT" version | grep -q "stage ABI 1.0"; check "version names the ABI" test $? -eq 0

cat > "$tmp/bad.yaml" <<'G'
weft: 1
stages:
  eeg: { plugin: synthetic, params: { rate: 250 } }
  show: { plugin: jsonl, input: eg }
G
"$WEFT" check "$tmp/bad.yaml" >/dev/null 2>"$tmp/err"; rc=$?
check "invalid graph exits 3" test $rc -eq 3
check "error names file:line:column" grep -q "^weft: $tmp/bad.yaml:4:33: stage 'show': input 'eg'" "$tmp/err"

"$WEFT" stages > "$tmp/stages"
check "stages lists the synthetic source" grep -q "synthetic .* source" "$tmp/stages"
"$WEFT" stages --describe synthetic > "$tmp/describe"
check "describe shows a parameter with unit and range" grep -q "rate .*number, default 250, 10..100000 Hz" "$tmp/describe"
"$WEFT" stages --describe nosuch >/dev/null 2>&1; check "describing a missing plugin is 3" test $? -eq 3

# --set changes a parameter with the same checks as the file.
"$WEFT" check "$WEFT_SOURCE_DIR/tests/e2e/graphs/two-rates.yaml" --set eeg.seed=99 > "$tmp/set"
check "--set changes a parameter" grep -q "seed         99" "$tmp/set"
"$WEFT" check "$WEFT_SOURCE_DIR/tests/e2e/graphs/two-rates.yaml" --set eeg.sed=99 >/dev/null 2>"$tmp/err"
check "--set with an unknown parameter is refused with a suggestion" grep -q "did you mean 'seed'" "$tmp/err"
"$WEFT" check "$WEFT_SOURCE_DIR/tests/e2e/graphs/two-rates.yaml" --set nosuch.x=1 >/dev/null 2>"$tmp/err"
check "--set on an unknown stage is refused" grep -q "no stage 'nosuch'" "$tmp/err"

# A source that fails at sample 1000 (4 s at 250 Hz): the error names stage and sample, the
# results of the 4 s before are all written, and the exit code is 1.
cat > "$tmp/fail.yaml" <<G
weft: 1
stages:
  amp: { plugin: host_ramp, params: { rate: 250, fail_at: 1000 } }
  probe: { plugin: host_probe, input: amp, window: 0.5, query: { every: 0.5 } }
  out: { plugin: jsonl, input: probe, params: { path: "$tmp/fail.jsonl" } }
G
"$WEFT" check "$tmp/fail.yaml" >/dev/null; check "check passes the failing graph" test $? -eq 0
check "check creates no sink output file" test ! -e "$tmp/fail.jsonl"
"$WEFT" run "$tmp/fail.yaml" --block 7 2>"$tmp/err"; rc=$?
check "runtime failure exits 1" test $rc -eq 1
check "runtime failure names stage, sample and time" \
    grep -q "stage 'amp' failed at sample 1000 (4.000 s): the test amplifier stopped responding" "$tmp/err"
check "results before the failure are kept (0.5 .. 4.0 s = 8)" test "$(wc -l < "$tmp/fail.jsonl")" -eq 8

# The session log records every stage with its plugin file hash and the failure at the end.
"$WEFT" run "$tmp/fail.yaml" --session-log "$tmp/session.jsonl" 2>/dev/null
"$PYTHON" - "$tmp/session.jsonl" <<'PY'
import json, sys
records = [json.loads(line) for line in open(sys.argv[1])]
assert records[0]["event"] == "start" and len(records[0]["graph_fnv1a64"]) == 16, records[0]
stages = [r["name"] for r in records if r["event"] == "stage"]
assert stages == ["amp", "probe", "out"], stages
assert records[1]["params"]["fail_at"] == 1000, records[1]
end = records[-1]
assert end["event"] == "end" and end["status"] == "failed", end
assert "failed at sample 1000" in end["error"] and end["results"] == 8, end
PY
check "session log is JSON with stages, hashes, parameters and the failure" test $? -eq 0

# A paced run stopped by SIGTERM closes its outputs: every line complete, header first.
cat > "$tmp/paced.yaml" <<G
weft: 1
stages:
  amp: { plugin: host_ramp, params: { rate: 500 } }
  probe: { plugin: host_probe, input: amp, window: 0.1, query: { every: 0.05 } }
  out: { plugin: csv, input: probe, params: { path: "$tmp/paced.csv" } }
G
"$WEFT" run "$tmp/paced.yaml" 2>"$tmp/err" &
pid=$!
sleep 1.5
kill -TERM $pid
wait $pid; rc=$?
check "SIGTERM stops a paced run with exit 0" test $rc -eq 0
rows=$(($(wc -l < "$tmp/paced.csv") - 1))
check "a paced run of ~1.5 s produced at most ~30 rows, not a flood ($rows)" test $rows -ge 3 -a $rows -le 40
check "the csv file ends with a complete row" test "$(tail -c 1 "$tmp/paced.csv" | od -An -c | tr -d ' ')" = '\n'
check "summary says the run was paced" grep -q "(paced)" "$tmp/err"

echo "$fails failures"
[ $fails -eq 0 ]
