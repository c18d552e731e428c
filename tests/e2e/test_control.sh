#!/bin/bash
# The control socket of a live (paced) run: status, a filter swap that is logged with its
# sample index, a refused swap that leaves the run going, and a clean stop.
set -u
fails=0
check() { local what="$1"; shift; if "$@"; then echo "ok: $what"; else echo "FAIL: $what"; fails=$((fails + 1)); fi; }
tmp="$(mktemp -d)"
trap 'kill $pid 2>/dev/null; rm -rf "$tmp"' EXIT
export WEFT_PLUGIN_PATH="$WEFT_BUILD_DIR/tests/fixtures"
sock="$tmp/ctl.sock"
cat > "$tmp/g.yaml" <<G
weft: 1
stages:
  amp: { plugin: host_ramp, params: { rate: 250 } }
  sum: { plugin: host_movsum, input: amp, params: { length: 10 } }
  probe: { plugin: host_probe, input: sum, window: 0.04, query: { every: 0.1 } }
  out: { plugin: jsonl, input: probe, params: { path: "$tmp/out.jsonl" } }
G
"$WEFT" run "$tmp/g.yaml" --control "$sock" --session-log "$tmp/session.jsonl" 2>"$tmp/err" &
pid=$!
for _ in $(seq 50); do [ -S "$sock" ] && break; sleep 0.1; done
check "the socket is owner-only" test "$(stat -c %a "$sock")" = 600
sleep 1
"$WEFT" status "$sock" > "$tmp/status"
check "status answers with the stages" grep -q '"ok":true.*"name":"sum","role":"filter","plugin":"host_movsum"' "$tmp/status"
"$WEFT" swap "$sock" sum length=20 > "$tmp/swap"
check "swap is accepted with its sample index" grep -q '"ok":true,"stage":"sum","index":[0-9]' "$tmp/swap"
"$WEFT" swap "$sock" sum lenght=20 > "$tmp/bad" 2>&1; rc=$?
check "a misspelt parameter is refused (exit 1)" test $rc -eq 1
check "the refusal suggests the right name" grep -q "did you mean 'length'" "$tmp/bad"
"$WEFT" swap "$sock" amp rate=500 >/dev/null 2>&1; check "a source swap is refused" test $? -eq 1
# A client pouring 200 commands in at once gets all 200 replies, whole lines, over several
# rounds (at most 16 commands per client per round), and the run keeps going meanwhile.
"$PYTHON" - "$sock" <<'PY'
import json, socket, sys
s = socket.socket(socket.AF_UNIX, socket.SOCK_STREAM)
s.connect(sys.argv[1])
s.sendall(b"status\n" * 200)
data = b""
while data.count(b"\n") < 200:
    chunk = s.recv(1 << 20)
    assert chunk, "connection closed early"
    data += chunk
replies = [json.loads(l) for l in data.split(b"\n")[:200]]
assert all(r["ok"] for r in replies)
assert replies[-1]["rounds"] > replies[0]["rounds"], "served over several rounds"
PY
check "200 commands at once: 200 whole replies over several rounds" test $? -eq 0
sleep 0.5
"$WEFT" stop "$sock" >/dev/null; check "stop is accepted" test $? -eq 0
wait $pid; rc=$?
check "the run ended with exit 0" test $rc -eq 0
check "the socket file is removed" test ! -e "$sock"
check "stderr logs the swap" grep -q "swapped stage 'sum' at sample" "$tmp/err"
"$PYTHON" - "$tmp/out.jsonl" "$tmp/session.jsonl" <<'PY'
import json, sys
results = [json.loads(l) for l in open(sys.argv[1])]
swap = [json.loads(l) for l in open(sys.argv[2]) if '"swap"' in l]
assert len(swap) == 1 and swap[0]["stage"] == "sum", swap
at = swap[0]["index"]
for r in results:  # every result is the old or the new moving sum, switching at `at`
    m = r["values"]["end0"] - 1
    want = 10 * m - 45 if m < at else 20 * m - 190
    assert r["values"]["last0"] == want, (r, at)
assert any(r["values"]["end0"] - 1 >= at for r in results), "results after the swap"
print(f"{len(results)} results consistent with a swap at sample {at}")
PY
check "results switch exactly at the logged sample, no gap, no transient" test $? -eq 0
echo "$fails failures"
[ $fails -eq 0 ]
