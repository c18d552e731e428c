#!/bin/bash
# `weft response`: the SVG is written and readable, and bad requests are refused with a
# message naming the stage.
set -u
dir=$(mktemp -d)
trap 'rm -rf "$dir"' EXIT
fail=0
check() { # description, then a command that must succeed
    local what=$1
    shift
    if "$@"; then echo "ok: $what"; else echo "FAIL: $what"; fail=$((fail + 1)); fi
}
cat > "$dir/g.yaml" <<'YAML'
weft: 1
name: response-e2e
stages:
  eeg:  { plugin: synthetic, params: { signal: eeg, channels: 2, rate: 500 } }
  mu:   { plugin: butterworth, input: eeg, params: { kind: bandpass, low: 8, high: 30 } }
  env:  { plugin: envelope, input: mu, params: { low: 20, high: 200 } }
  half: { plugin: resample, input: mu, params: { down: 2 } }
YAML
"$WEFT" response "$dir/g.yaml" mu --svg "$dir/mu.svg" --points 7 > "$dir/table.txt" 2> "$dir/err.txt"
check "response exits 0" test $? -eq 0
check "the table has 7 rows" test "$(grep -vc '^#' "$dir/table.txt")" -eq 7
check "the SVG is an SVG" grep -q "<svg xmlns='http://www.w3.org/2000/svg'" "$dir/mu.svg"
check "the SVG has three panels with curves" test "$(grep -c '<polyline' "$dir/mu.svg")" -ge 3
check "the SVG labels its axes" grep -q "frequency (Hz, logarithmic)" "$dir/mu.svg"
"$WEFT" response "$dir/g.yaml" eeg > /dev/null 2> "$dir/err.txt"
check "a source is refused with exit 3" test $? -eq 3
check "... and the reason" grep -q "stage 'eeg' is a source" "$dir/err.txt"
"$WEFT" response "$dir/g.yaml" env --to mu > /dev/null 2> "$dir/err.txt"
check "a reversed chain is refused" grep -q "stage 'env' is not upstream of 'mu'" "$dir/err.txt"
"$WEFT" response "$dir/g.yaml" nosuch > /dev/null 2> "$dir/err.txt"
check "an unknown stage is named" grep -q "no stage called 'nosuch'" "$dir/err.txt"
"$WEFT" response "$dir/g.yaml" > /dev/null 2>&1
check "a missing stage argument is a usage error" test $? -eq 2
passed=$((10 - fail))
echo "$passed passed, $fail failed"
exit $((fail > 0))
