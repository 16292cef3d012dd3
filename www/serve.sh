#!/usr/bin/env bash
# Builds the page, then serves dist/ on 127.0.0.1 (port $PORT, default 8080).
set -euo pipefail

root="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
# On a fresh machine this installs the wasm target and wasm-bindgen first.
bash "$root/tests/setup.sh"
bash "$root/www/build.sh"
export PORT="${PORT:-8080}"
exec node "$root/www/tools/serve.mjs"
