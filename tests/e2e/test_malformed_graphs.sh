#!/bin/bash
# A malformed graph never crashes the host: 600 mutants of real graph files all end with exit
# 0 (still valid) or 3 (invalid, with a message naming the file), never a signal or a hang.
set -u
shopt -s nullglob
here="$(cd "$(dirname "$0")" && pwd)"
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT
export WEFT_PLUGIN_PATH="$WEFT_BUILD_DIR/tests/fixtures"
graphs=("$here"/graphs/*.yaml "$WEFT_SOURCE_DIR"/configs/*.yaml)
"$PYTHON" "$here/mutate_graph.py" "$tmp" 600 20261201 "${graphs[@]}" || exit 1
valid=0 invalid=0 bad=0
for m in "$tmp"/m*.yaml; do
    timeout 20 "$WEFT" check "$m" >/dev/null 2>"$tmp/err"
    rc=$?
    if [ $rc -eq 0 ]; then
        valid=$((valid + 1))
    elif [ $rc -eq 3 ] && grep -q "^weft: $m" "$tmp/err"; then
        invalid=$((invalid + 1))
    else
        bad=$((bad + 1))
        echo "FAIL: exit $rc for $(basename "$m"): $(head -c 300 "$tmp/err")"
        cp "$m" "/tmp/weft-mutant-$(basename "$m")"
    fi
done
echo "mutants: $valid still valid, $invalid rejected with a positioned message, $bad failures"
[ $bad -eq 0 ] && [ $invalid -gt 300 ]
