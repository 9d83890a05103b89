#!/usr/bin/env bash
# The one test command: toolchain check, every Rust test, clippy with
# warnings as errors, the web bundle, then the headless-browser tests.
# Exits non-zero on the first failure.
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
repo="$(cd "$here/.." && pwd)"
cd "$repo"

step() { echo; echo "=== $* ==="; }
t0=$SECONDS

step "toolchain"
"$here/toolchain.sh" --browser

step "cargo test"
cargo test

step "cargo clippy"
cargo clippy --all-targets -- -D warnings
cargo clippy --lib --target wasm32-unknown-unknown -- -D warnings

step "web bundle"
"$here/build-web.sh"

shopt -s nullglob
browser_tests=(tests/browser/*.test.mjs)
shopt -u nullglob
if (( ${#browser_tests[@]} > 0 )); then
  step "browser tests (${#browser_tests[@]} files)"
  # The page server is the debug binary `cargo test` just built.
  target_dir="${CARGO_TARGET_DIR:-$repo/target}"
  export CATOPTRIC_BIN="$target_dir/debug/catoptric"
  # Browser profiles and temporary files stay inside the build tree.
  tmp="$here/.tmp"
  rm -rf "$tmp"
  mkdir -p "$tmp"
  trap 'rm -rf "$tmp"' EXIT
  TMPDIR="$tmp" timeout 900 node --test "${browser_tests[@]}"
else
  step "browser tests: none in tests/browser/"
fi

echo
echo "all checks passed in $((SECONDS - t0)) s"
