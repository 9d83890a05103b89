#!/usr/bin/env bash
# Builds the browser bundle when needed and serves the page on
# 127.0.0.1:${PORT:-8000}.
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
cd "$here/.."
"$here/build-web.sh"
port="${PORT:-8000}"
echo "serve: starting the server on 127.0.0.1, port $port (0 = any free port; the real address follows)"
exec cargo run --release --quiet -- serve --port "$port" --root www "$@"
