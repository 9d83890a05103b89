#!/usr/bin/env bash
# Installs what building and testing Catoptric needs, and only what is
# missing: the wasm32 target, wasm-bindgen-cli at the exact version pinned
# in Cargo.toml, the npm tools in pkg-config/ (wasm-opt from the `binaryen`
# package, `playwright-core`) and, with --browser, Debian's chromium.
# Safe to run again: each step checks first.
#
# Usage: pkg-config/toolchain.sh [--browser]
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
repo="$(cd "$here/.." && pwd)"

browser=0
for arg in "$@"; do
  case "$arg" in
    --browser) browser=1 ;;
    *) echo "toolchain.sh: unknown option $arg (expected --browser)" >&2; exit 2 ;;
  esac
done

say() { echo "toolchain: $*"; }

# 1. wasm target.
if ! rustup target list --installed | grep -qx 'wasm32-unknown-unknown'; then
  say "adding rust target wasm32-unknown-unknown"
  rustup target add wasm32-unknown-unknown
fi

# Clippy is part of the test command.
if ! cargo clippy --version >/dev/null 2>&1; then
  say "adding rust component clippy"
  rustup component add clippy
fi

# 2. wasm-bindgen-cli, same version as the crate pin `wasm-bindgen = "=X"`.
pin="$(sed -nE 's/^[[:space:]]*wasm-bindgen[[:space:]]*=[[:space:]]*"=([0-9][0-9.]*)".*/\1/p' "$repo/Cargo.toml" | head -n1)"
if [[ -z "$pin" ]]; then
  echo "toolchain.sh: Cargo.toml has no exact pin wasm-bindgen = \"=X.Y.Z\"" >&2
  exit 1
fi
have="$(wasm-bindgen --version 2>/dev/null | awk '{print $2}' || true)"
if [[ "$have" != "$pin" ]]; then
  say "installing wasm-bindgen-cli $pin (found: ${have:-none})"
  # The CLI's own lockfile can pin a crate version the registry no longer
  # serves; then resolve afresh.
  if ! cargo install wasm-bindgen-cli --version "$pin" --locked; then
    say "--locked install failed; retrying without --locked"
    cargo install wasm-bindgen-cli --version "$pin"
  fi
fi

# 3. Headless browser for the page tests (system package, never a download).
if [[ "$browser" == 1 && ! -x /usr/bin/chromium ]]; then
  say "installing chromium from apt"
  sudo_cmd=()
  if [[ "$(id -u)" != 0 ]]; then sudo_cmd=(sudo); fi
  "${sudo_cmd[@]}" apt-get update
  "${sudo_cmd[@]}" env DEBIAN_FRONTEND=noninteractive apt-get install -y chromium
fi

# 4. npm tools (wasm-opt, playwright-core); playwright must not fetch browsers.
if [[ ! -d "$here/node_modules/binaryen" || ! -d "$here/node_modules/playwright-core" ]]; then
  say "installing npm tools in pkg-config/"
  export PLAYWRIGHT_SKIP_BROWSER_DOWNLOAD=1
  if [[ -f "$here/package-lock.json" ]]; then
    (cd "$here" && npm ci --no-audit --no-fund)
  else
    (cd "$here" && npm install --no-audit --no-fund)
  fi
fi
say "ready (wasm-bindgen $pin)"
