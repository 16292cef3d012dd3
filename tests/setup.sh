#!/usr/bin/env bash
# Installs what the build and the tests need, skipping whatever is already
# there: the wasm target, the wasm-bindgen CLI at the version Cargo.toml pins,
# Debian's Chromium (browser tests only) and the Node packages in www/.
# Usage: bash tests/setup.sh [--browser]
set -euo pipefail
root="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
cd "$root"

want_browser=0
[ "${1:-}" = "--browser" ] && want_browser=1

if ! rustup target list --installed 2>/dev/null | grep -qx wasm32-unknown-unknown; then
  echo "setup: adding the wasm32-unknown-unknown target"
  rustup target add wasm32-unknown-unknown
fi

wb_version="$(sed -n 's/^wasm-bindgen = "=\([0-9.]*\)".*/\1/p' Cargo.toml)"
if [ -z "$wb_version" ]; then
  echo "setup: could not find the pinned wasm-bindgen version in Cargo.toml" >&2
  exit 1
fi
if ! wasm-bindgen --version 2>/dev/null | grep -q " $wb_version\$"; then
  echo "setup: installing wasm-bindgen-cli $wb_version (about 3 minutes)"
  cargo install wasm-bindgen-cli --version "$wb_version"
fi

if [ "$want_browser" = 1 ]; then
  if [ ! -x /usr/bin/chromium ]; then
    echo "setup: installing Debian's chromium"
    export DEBIAN_FRONTEND=noninteractive
    apt-get update -q
    apt-get install -y -q chromium chromium-driver
  fi
  if [ ! -d www/node_modules/playwright-core ] || [ www/package-lock.json -nt www/node_modules/.package-lock.json ]; then
    echo "setup: installing the Node packages of www/"
    (cd www && npm ci --no-audit --no-fund)
  fi
fi
