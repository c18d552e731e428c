#!/bin/bash
# The conformance checker (weft stages --verify) passes every sample plugin that is built and
# the correct fixtures, and fails each deliberately broken fixture on exactly its check.
set -u
fixtures="$WEFT_BUILD_DIR/tests/fixtures"
out=$(mktemp -d)
trap 'rm -rf "$out"' EXIT
failures=0
passed=0

ok() {
    echo "ok: $*"
    passed=$((passed + 1))
}

fail() {
    echo "FAILED: $*"
    failures=$((failures + 1))
}

# The names of the checks a report marks **FAIL**, space-separated.
failed_checks() {
    awk -F'|' '$3 ~ /\*\*FAIL\*\*/ { gsub(/ /, "", $2); printf "%s ", $2 }' "$1" | sed 's/ $//'
}

verify() { # NAME FILE [OPTIONS...] -> report in $out/NAME.md, exit status in $rc
    local name=$1 file=$2
    shift 2
    "$WEFT" stages --verify "$file" "$@" >"$out/$name.md" 2>"$out/$name.err"
    rc=$?
}

expect_pass() {
    verify "$@"
    local got
    got=$(failed_checks "$out/$1.md")
    if [ "$rc" -ne 0 ] || [ -n "$got" ] || ! grep -q '^PASS: ' "$out/$1.md"; then
        fail "$1 should pass the checker (exit $rc, failed: ${got:-none})"
        cat "$out/$1.md" "$out/$1.err"
    else
        ok "$1 passes"
    fi
}

expect_fail_on() { # CHECK NAME FILE
    local check=$1
    shift
    verify "$@"
    local got
    got=$(failed_checks "$out/$1.md")
    if [ "$check" = no-alloc ] && grep -q '| no-alloc | skip | skipped (sanitizer build' "$out/$1.md"; then
        [ "$rc" -eq 0 ] && ok "$1 -- no-alloc skipped in the sanitizer build" ||
            fail "$1: sanitizer build should skip no-alloc and pass the rest (failed: $got)"
        return
    fi
    if [ "$rc" -ne 1 ] || [ "$got" != "$check" ]; then
        fail "$1 should fail exactly '$check' (exit $rc, failed: ${got:-none})"
        cat "$out/$1.md" "$out/$1.err"
    else
        ok "$1 fails $check"
    fi
}

# Every sample plugin built in this tree, whatever plugins/ holds today.
n_samples=0
for so in "$WEFT_PLUGINS"/*.so; do
    [ -e "$so" ] || continue
    expect_pass "sample_$(basename "$so" .so)" "$so"
    n_samples=$((n_samples + 1))
done
[ "$n_samples" -gt 0 ] || fail "no sample plugins found in $WEFT_PLUGINS"

# Sample plugins with required parameters skip most checks above; run those known here with
# values, when they are built.
if [ -e "$WEFT_PLUGINS/logvar_lda.so" ]; then
    expect_pass sample_logvar_lda_fitted "$WEFT_PLUGINS/logvar_lda.so" --params '{ classes: [rest, grip] }'
fi

# A plugin is also found by name on the search path.
expect_pass by_name synthetic

expect_pass abi_v1_scale "$fixtures/abi_v1_scale.so"
expect_pass good_readout "$fixtures/good_readout.so"
expect_pass good_readout_two_inputs "$fixtures/good_readout.so" --inputs 4@250,2@1000 --window 0.5

expect_fail_on load no_entry "$fixtures/no_entry.so"
expect_fail_on load unresolved_symbol "$fixtures/unresolved_symbol.so"
expect_fail_on abi abi_major2 "$fixtures/abi_major2.so"
expect_fail_on params bad_param_default "$fixtures/bad_param_default.so"
expect_fail_on bad-params bad_param_crash "$fixtures/bad_param_crash.so"
expect_fail_on bad-layouts bad_layout_crash "$fixtures/bad_layout_crash.so"
expect_fail_on chunking bad_block_dependent "$fixtures/bad_block_dependent.so"
expect_fail_on determinism bad_shared_state "$fixtures/bad_shared_state.so"
expect_fail_on no-alloc bad_alloc_in_process "$fixtures/bad_alloc_in_process.so"
expect_fail_on finite bad_nan_output "$fixtures/bad_nan_output.so"
expect_fail_on readout-values bad_probabilities "$fixtures/bad_probabilities.so"
expect_fail_on destroy bad_leak "$fixtures/bad_leak.so"

# The messages a third party acts on.
grep -q 'built for stage ABI 2.0, this host speaks 1.0' "$out/abi_major2.md" ||
    fail "abi_major2: the report names both ABI versions"
grep -q 'with step = 0: ' "$out/bad_param_crash.md" ||
    fail "bad_param_crash: the report names the parameter value that crashed"
grep -q 'labels = NULL' "$out/bad_layout_crash.md" ||
    fail "bad_layout_crash: the report names the layout that crashed"

# Usage errors are not reports.
"$WEFT" stages --verify "$fixtures/good_readout.so" --inputs 4x250 >/dev/null 2>"$out/usage.err"
[ $? -eq 2 ] && grep -q 'CHANNELS@RATE' "$out/usage.err" || fail "--inputs 4x250 is a usage error"
"$WEFT" stages --verify no_plugin_by_this_name >/dev/null 2>"$out/missing.err"
[ $? -eq 3 ] && grep -q "no plugin 'no_plugin_by_this_name'" "$out/missing.err" ||
    fail "an unknown plugin name says where it looked"
"$WEFT" stages --verify "$fixtures/abi_v1_scale.so" --params '{ nonsense: 1 }' >/dev/null \
    2>"$out/params.err"
[ $? -eq 2 ] && grep -q "no parameter 'nonsense'" "$out/params.err" ||
    fail "--params with an unknown parameter is a usage error naming it"

# --describe prints integer ranges as whole numbers.
if "$WEFT" stages --describe synthetic | grep -q 'seed .*0\.\.2147483647$'; then
    ok "describe prints integer ranges whole"
else
    fail "weft stages --describe synthetic should print the seed range as 0..2147483647"
fi

echo "$passed passed, $failures failed"
[ "$failures" -eq 0 ]
