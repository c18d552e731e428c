#!/bin/bash
# The weft command misused as users do: an output file that is one of the inputs, an output in
# a folder that does not exist or that is a folder, a folder given as the graph. Each is a
# one-line error with exit 2 (3 for the folder graph) before any work, and no input is touched.
set -u
fails=0
check() { # description, then a command that must succeed
    local what="$1"; shift
    if "$@"; then echo "ok: $what"; else echo "FAIL: $what"; fails=$((fails + 1)); fi
}
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT

cat > "$tmp/rec.yaml" <<G
weft: 1
stages:
  eeg: { plugin: synthetic, params: { channels: 4, rate: 250, seed: 5, trials: 12 } }
  rec: { plugin: recorder, input: eeg, params: { path: $tmp/s.bdf } }
G
"$WEFT" run "$tmp/rec.yaml" --quiet 2>/dev/null
check "a short session is recorded" test -s "$tmp/s.bdf"
cat > "$tmp/g.yaml" <<'G'
weft: 1
stages:
  eeg: { plugin: synthetic, params: { channels: 4, rate: 250, seed: 5, trials: 12 } }
  eeg_mu: { plugin: butterworth, input: eeg, params: { kind: bandpass, low: 8, high: 30, order: 4 } }
  intent:
    plugin: logvar_lda
    input: [ { from: eeg_mu, window: 1.0 } ]
    query: { on_marker: [rest, grip], after: 1.5 }
    fit: { classes: { rest: [rest], grip: [grip] }, after: 1.5 }
    params: { classes: [rest, grip] }
  show: { plugin: jsonl, input: intent, params: { path: "-" } }
G
cp "$tmp/g.yaml" "$tmp/g.orig"
cp "$tmp/s.bdf" "$tmp/s.orig"

refused() { # description, then a weft command that must exit 2 with one "weft: ... FRAGMENT" line
    local what="$1" fragment="$2"; shift 2
    "$WEFT" "$@" >/dev/null 2>"$tmp/err"; local rc=$?
    check "$what exits 2 (got $rc)" test $rc -eq 2
    check "... says '$fragment' in one line" \
        test "$(wc -l < "$tmp/err")" -eq 1 -a -n "$(grep "^weft: .*$fragment" "$tmp/err")"
}
refused "fit -o the graph itself" "is the input" fit "$tmp/g.yaml" -o "$tmp/g.yaml"
refused "fit -o the recording of --data" "is the input" \
    fit "$tmp/g.yaml" --data "$tmp/s.bdf" -o "$tmp/s.bdf"
refused "fit -o a folder" "that is a folder" fit "$tmp/g.yaml" -o "$tmp"
refused "fit -o into a missing folder" "does not exist" fit "$tmp/g.yaml" -o "$tmp/no/f.yaml"
refused "replay --json the recording" "is the input" \
    replay "$tmp/g.yaml" --data "$tmp/s.bdf" --json "$tmp/s.bdf"
refused "replay --report the graph (another spelling)" "is the input" \
    replay "$tmp/g.yaml" --data "$tmp/s.bdf" --report "$tmp/./g.yaml"
refused "replay --json into a missing folder" "does not exist" \
    replay "$tmp/g.yaml" --data "$tmp/s.bdf" --json "$tmp/no/m.json"
refused "run --session-log the graph" "is the input" \
    run "$tmp/g.yaml" --duration 1 --session-log "$tmp/g.yaml"
refused "response --svg the graph" "is the input" response "$tmp/g.yaml" eeg_mu --svg "$tmp/g.yaml"
check "no refused command touched the graph" cmp -s "$tmp/g.yaml" "$tmp/g.orig"
check "no refused command touched the recording" cmp -s "$tmp/s.bdf" "$tmp/s.orig"
check "no refused command left a file behind" test ! -e "$tmp/no"

"$WEFT" check "$tmp" >/dev/null 2>"$tmp/err"; rc=$?
check "a folder given as the graph exits 3" test $rc -eq 3
check "... and says it is a folder" grep -q "^weft: $tmp: is a folder, not a graph file$" "$tmp/err"

# The same outputs, given properly, still work (and "-" is standard output, never refused).
"$WEFT" fit "$tmp/g.yaml" --data "$tmp/s.bdf" -o "$tmp/fitted.yaml" --quiet --folds 1
check "fit -o a new file in an existing folder works" test -s "$tmp/fitted.yaml"
"$WEFT" replay "$tmp/fitted.yaml" --data "$tmp/s.bdf" --json - --quiet >"$tmp/m.json" 2>"$tmp/err"
check "replay --json - writes to standard output" grep -q '"readouts"' "$tmp/m.json"

# An empty scoring window is a usage error, not a report of nothing.
"$WEFT" replay "$tmp/fitted.yaml" --data "$tmp/s.bdf" --from 5 --to 1 >/dev/null 2>"$tmp/err"
check "replay --from after --to is a usage error (2)" test $? -eq 2
check "... that says why" grep -q "must be before --to" "$tmp/err"

echo "$fails failed"
test $fails -eq 0
