#!/usr/bin/env bash
# Runs every test: the Rust unit, integration, property and doc tests, then
# the browser tests on the built page. Installs what is missing first.
set -euo pipefail
root="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
cd "$root"

bash tests/setup.sh --browser

echo "== Rust tests"
cargo test --no-fail-fast

echo "== NIST StRD accuracy (minimum LRE digits per set)"
cat target/nist-lre.md

echo "== Browser tests"
cargo build --release
bash www/build.sh
node tests/browser/run.mjs
