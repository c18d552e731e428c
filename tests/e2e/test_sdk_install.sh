#!/bin/bash
# The SDK as a third party gets it: install weft into a fresh prefix, build the example stage
# (docs/examples/rectify_smooth) out of tree against that prefix only -- with CMake's
# find_package(weft) and with pkg-config -- then run the installed weft on a graph that loads
# it from the graph's own folder and by `path:`, and check it with the installed checker.
set -eu
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
prefix="$work/prefix"
example="$WEFT_SOURCE_DIR/docs/examples/rectify_smooth"

cmake --install "$WEFT_BUILD_DIR" --prefix "$prefix" >"$work/install.log"
for f in bin/weft include/weft/stage.h cmake/weft/weftConfig.cmake pkgconfig/weft-sdk.pc \
         weft/plugins/synthetic.so; do
    [ -n "$(find "$prefix" -path "*/$f")" ] ||
        { echo "FAILED: the install has no $f"; find "$prefix"; exit 1; }
done
weft="$prefix/bin/weft"

# CMake package, nothing from the source tree: CMAKE_PREFIX_PATH is the only hint.
cmake -S "$example" -B "$work/build" -DCMAKE_PREFIX_PATH="$prefix" \
      -DCMAKE_EXPORT_COMPILE_COMMANDS=ON >"$work/configure.log"
cmake --build "$work/build" >"$work/build.log"
so="$work/build/rectify_smooth.so"
[ -f "$so" ] || { echo "FAILED: the example did not build"; cat "$work/build.log"; exit 1; }
grep -q -- "$prefix/include" "$work/build/compile_commands.json" ||
    { echo "FAILED: the example was not compiled against the installed header"; exit 1; }
if grep -q -- "$WEFT_SOURCE_DIR/sdk" "$work/build/compile_commands.json"; then
    echo "FAILED: the example saw the source tree's SDK"; exit 1
fi
nm -D --defined-only "$so" | grep -q ' T weft_stage_entry$' ||
    { echo "FAILED: weft_stage_entry is not exported"; exit 1; }
if nm -D --defined-only "$so" | grep -E ' T ' | grep -qv weft_stage_entry; then
    echo "FAILED: the stage exports more than its entry:"; nm -D --defined-only "$so"; exit 1
fi
echo "ok: the example builds against the installed CMake package, exporting only its entry"

# pkg-config, by hand, the way a Makefile would.
PKG_CONFIG_PATH=$(dirname "$(find "$prefix" -name weft-sdk.pc)")
export PKG_CONFIG_PATH
cc -std=c11 -shared -fPIC $(pkg-config --cflags weft-sdk) -o "$work/by_pkgconfig.so" \
   "$example/rectify_smooth.c" -lm
[ "$(pkg-config --variable=abi_major weft-sdk)" = 1 ]
echo "ok: the example builds with pkg-config --cflags weft-sdk"

# The installed weft finds its own plugins, and the graph's folder.
mkdir "$work/study"
cp "$so" "$work/study/"
cp "$example/emg-envelope.yaml" "$work/study/"
"$weft" stages | grep -q "^$prefix/lib.*/weft/plugins:" ||
    { echo "FAILED: the installed weft does not list its own plugin folder"; "$weft" stages; exit 1; }
"$weft" check "$work/study/emg-envelope.yaml" >"$work/check.txt"
grep -q "rectify_smooth 1.0.0 ($work/study/rectify_smooth.so)" "$work/check.txt" ||
    { echo "FAILED: not loaded from the graph's folder"; cat "$work/check.txt"; exit 1; }
grep -q "synthetic 0.1.0 ($prefix/lib" "$work/check.txt" ||
    { echo "FAILED: synthetic not loaded from the installed plugins"; cat "$work/check.txt"; exit 1; }
"$weft" run "$work/study/emg-envelope.yaml" --duration 2 --quiet
echo "ok: the installed weft runs a graph loading the example from the graph's folder"

sed 's|plugin: rectify_smooth|path: ../build/rectify_smooth.so|' "$example/emg-envelope.yaml" \
    >"$work/study/by-path.yaml"
rm "$work/study/rectify_smooth.so"
"$weft" check "$work/study/by-path.yaml" | grep -q "($work/study/../build/rectify_smooth.so)" ||
    { echo "FAILED: path: did not load the example"; exit 1; }
"$weft" run "$work/study/by-path.yaml" --duration 2 --quiet
echo "ok: the installed weft loads the example by path:"

# A moved install still finds its own plugins.
mv "$prefix" "$work/moved"
"$work/moved/bin/weft" stages | grep -q "^$work/moved/lib.*/weft/plugins:" ||
    { echo "FAILED: a moved install lost its plugins"; exit 1; }
mv "$work/moved" "$prefix"
echo "ok: a moved install finds its plugins"

"$weft" stages --verify "$so" >"$work/verify.md"
grep -q '^PASS: ' "$work/verify.md" || { echo "FAILED: checker:"; cat "$work/verify.md"; exit 1; }
ctest --test-dir "$work/build" --output-on-failure >"$work/ctest.log" ||
    { echo "FAILED: the example's own conformance test"; cat "$work/ctest.log"; exit 1; }
echo "ok: the installed checker passes the example, also as the example's own ctest"
echo "6 passed, 0 failed"
