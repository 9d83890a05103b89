#!/usr/bin/env bash
# Writes <www>/pkg/offline.js for the page's service worker (www/sw.js):
# the files it keeps for offline use (the page, its styles and modules, the
# wasm bundle, the presets) and a version that is a hash of their contents,
# so any change to any of them makes a new cache. The worker checks the
# files it fetched against the same hash before it switches to them.
#
# Hash: SHA-256 of the lines "<path> <sha256 of the file>\n", paths sorted
# bytewise; the version is its first 16 hex digits.
#
# Usage: pkg-config/offline-list.sh [WWW_DIR]   (default: the repo's www)
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
www="${1:-$here/../www}"
cd "$www"
[[ -f pkg/catoptric.js && -f pkg/catoptric_bg.wasm ]] || { echo "offline-list: no wasm bundle in $www/pkg" >&2; exit 1; }

mapfile -t files < <(
  { printf '%s\n' index.html manifest.webmanifest icon.svg *.css pkg/catoptric.js pkg/catoptric_bg.wasm
    find js presets -type f \( -name '*.js' -o -name '*.json' \); } | LC_ALL=C sort -u)

lines=""
json=""
for f in "${files[@]}"; do
  [[ -f "$f" ]] || { echo "offline-list: missing $www/$f" >&2; exit 1; }
  lines+="$f $(sha256sum "$f" | cut -c1-64)"$'\n'
  json+="${json:+, }\"$f\""
done
version="$(printf '%s' "$lines" | sha256sum | cut -c1-16)"

tmp="pkg/offline.js.tmp"
cat > "$tmp" <<JS
// Written by pkg-config/offline-list.sh: what www/sw.js keeps offline.
self.CATOPTRIC_OFFLINE = { version: "$version", files: [$json] };
JS
mv "$tmp" pkg/offline.js
echo "offline-list: version $version, ${#files[@]} files"
