#!/usr/bin/env bash
# Builds the browser bundle into www/pkg: the library for wasm32, the
# wasm-bindgen glue (ES module, --target web) and, when the npm tools are
# installed, a wasm-opt -O3 pass. Skips the work when www/pkg is newer than
# src/ and Cargo.toml (pass --force to rebuild anyway). Either way it then
# writes www/pkg/offline.js, the service worker's file list and version
# (pkg-config/offline-list.sh), so edits to the page make a new version.
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
repo="$(cd "$here/.." && pwd)"
cd "$repo"

force=0
[[ "${1:-}" == "--force" ]] && force=1

out="www/pkg"
stamp="$out/catoptric_bg.wasm"
if [[ "$force" == 0 && -f "$stamp" && -f "$out/catoptric.js" ]]; then
  newer="$(find src Cargo.toml Cargo.lock .cargo -newer "$stamp" -print -quit 2>/dev/null || true)"
  if [[ -z "$newer" ]]; then
    echo "build-web: $out is up to date"
    "$here/offline-list.sh" "$repo/www"
    exit 0
  fi
fi

target_dir="${CARGO_TARGET_DIR:-$repo/target}"
echo "build-web: compiling the library for wasm32"
cargo build --lib --release --target wasm32-unknown-unknown
wasm="$target_dir/wasm32-unknown-unknown/release/catoptric.wasm"

tmp="$out.tmp"
rm -rf "$tmp"
mkdir -p "$tmp"
wasm-bindgen --target web --out-dir "$tmp" --no-typescript "$wasm"

opt="$here/node_modules/.bin/wasm-opt"
if [[ -x "$opt" ]]; then
  echo "build-web: wasm-opt -O3"
  # -ocimfs: a function with one caller is inlined only when small. The
  # tracer's kernels are each called from one place; folded into one
  # huge function they ran 15-20 % slower under V8 (bench, same machine).
  "$opt" -O3 --one-caller-inline-max-function-size 100 \
    --enable-reference-types --enable-bulk-memory --enable-nontrapping-float-to-int \
    --enable-sign-ext --enable-mutable-globals --enable-multivalue --enable-simd \
    "$tmp/catoptric_bg.wasm" -o "$tmp/catoptric_bg.opt.wasm"
  mv "$tmp/catoptric_bg.opt.wasm" "$tmp/catoptric_bg.wasm"
else
  echo "build-web: wasm-opt not installed (run pkg-config/toolchain.sh); keeping the unoptimised module"
fi

# Swap in the new bundle in one step so a running server never sees half of it.
rm -rf "$out"
mv "$tmp" "$out"
touch "$stamp"
echo "build-web: $(du -h "$stamp" | cut -f1) $stamp"
"$here/offline-list.sh" "$repo/www"
