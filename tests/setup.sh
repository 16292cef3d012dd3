#!/usr/bin/env bash
# Installs what the build and the tests need, skipping whatever is already
# there: the wasm target, the wasm-bindgen CLI at the version Cargo.toml pins,
# and, with --browser (everything the tests need): LibreOffice Calc and
# openpyxl (the export tests), Debian's Chromium and the Node packages in www/.
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

# The spreadsheet-formula test recalculates in LibreOffice, and the
# workbook test reads back with openpyxl.
apt_updated=0
apt_install() {
  export DEBIAN_FRONTEND=noninteractive
  if [ "$apt_updated" = 0 ]; then apt-get update -q; apt_updated=1; fi
  apt-get install -y -q --no-install-recommends "$@"
}

if [ "$want_browser" = 1 ]; then
  if ! command -v soffice >/dev/null 2>&1; then
    echo "setup: installing Debian's libreoffice-calc (for the formula test)"
    apt_install libreoffice-calc
  fi
  if ! python3 -c "import openpyxl" 2>/dev/null; then
    echo "setup: installing openpyxl (for the workbook test)"
    apt_install python3 python3-openpyxl
  fi
  if [ ! -x /usr/bin/chromium ]; then
    echo "setup: installing Debian's chromium"
    apt_install chromium chromium-driver
  fi
  if [ ! -d www/node_modules/playwright-core ] || [ www/package-lock.json -nt www/node_modules/.package-lock.json ]; then
    echo "setup: installing the Node packages of www/"
    (cd www && npm ci --no-audit --no-fund)
  fi
fi
