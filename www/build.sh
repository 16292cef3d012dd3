#!/usr/bin/env bash
# Builds dist/plumbline.html: the wasm (release), its wasm-bindgen glue, and
# one self-contained page with everything inlined. Runs from any directory.
set -euo pipefail

root="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
cd "$root"

want_bindgen="$(sed -n 's/^wasm-bindgen = "=\(.*\)"$/\1/p' Cargo.toml)"
if ! command -v wasm-bindgen >/dev/null 2>&1; then
  echo "build.sh: the wasm-bindgen command is missing; run bash tests/setup.sh (it installs wasm-bindgen-cli ${want_bindgen:-at the version in Cargo.toml})" >&2
  exit 1
fi
have_bindgen="$(wasm-bindgen --version | awk '{print $2}')"
if [[ -n "$want_bindgen" && "$have_bindgen" != "$want_bindgen" ]]; then
  echo "build.sh: wasm-bindgen $have_bindgen is installed, but the crate pins $want_bindgen; run bash tests/setup.sh to install the pinned version" >&2
  exit 1
fi
if ! command -v node >/dev/null 2>&1; then
  echo "build.sh: node is needed to assemble the page" >&2
  exit 1
fi

echo "== cargo build --release --target wasm32-unknown-unknown --lib"
cargo build --release --target wasm32-unknown-unknown --lib

echo "== wasm-bindgen --target web into target/www-pkg"
rm -rf target/www-pkg
wasm-bindgen --target web --no-typescript --out-dir target/www-pkg \
  target/wasm32-unknown-unknown/release/plumbline.wasm

echo "== inline into dist/plumbline.html"
node www/tools/inline.mjs --pkg target/www-pkg --out dist/plumbline.html

size="$(wc -c < dist/plumbline.html | tr -d ' ')"
echo "dist/plumbline.html: $size bytes"
