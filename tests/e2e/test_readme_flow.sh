#!/bin/bash
# The README's "From a calibration recording to an online session" commands, as written there
# (steps 1-3): record two sessions, fit on the first, replay on the second. Guards the README
# against drifting from what weft does.
set -u
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT
readme="$WEFT_SOURCE_DIR/README.md"
# The sh block after the heading, up to step 4 (a live run that does not end by itself).
"$PYTHON" - "$readme" > "$tmp/flow.sh" <<'PY'
import re, sys
text = open(sys.argv[1]).read()
section = text.split("## From a calibration recording to an online session", 1)[1]
block = re.search(r"```sh\n(.*?)```", section, re.S).group(1)
lines = [l for l in block.split("\n") if not l.startswith("xdg-open")]
print("set -e")
print("\n".join(lines).split("# 4.")[0])
PY
grep -q 'replay fitted.yaml' "$tmp/flow.sh" || { echo "FAIL: README flow not found"; exit 1; }
mkdir "$tmp/work" && cd "$tmp/work"
ln -s "$WEFT_SOURCE_DIR/configs" configs
mkdir build && ln -s "$WEFT" build/weft
bash "$tmp/flow.sh" 2>"$tmp/err" || { echo "FAIL: the README commands failed"; tail -5 "$tmp/err"; exit 1; }
for f in calib.bdf session2.bdf fitted.yaml report.html metrics.json results.jsonl; do
    [ -s "$f" ] || { echo "FAIL: $f was not written"; exit 1; }
done
"$PYTHON" - <<'PY'
import json
m = json.load(open("metrics.json"))
r = m["readouts"][0]
trials = r["per_trial"]
assert trials["n"] == 40, trials["n"]
assert trials["accuracy"] >= 0.9, trials["accuracy"]
print(f"ok: README flow: replay scored {trials['n']} trials, accuracy {trials['accuracy']:.3f}")
PY
