#!/usr/bin/env bash
# Runs the benchmarks and writes BENCHMARKS.md (with --quick, a smaller run
# written to target/bench/BENCHMARKS.quick.md). On demand only: CI does not
# run it and no test asserts a time.
#
#   bash tests/bench/run.sh [--quick] [--no-build] [--no-wasm]
#
# Builds the native release binary and the release wasm (wasm-bindgen
# --target nodejs into target/bench-node-pkg), then hands over to
# tests/bench/bench.py (numpy and openpyxl), which times everything and
# writes the file. Scratch files go to /tmp/plumbline-bench (or
# $PLUMBLINE_BENCH_TMP); the generated 100 MB CSV and 50 MB workbook are
# kept there and reused by the next run.
set -euo pipefail

root="$(cd "$(dirname "${BASH_SOURCE[0]}")/../.." && pwd)"
cd "$root"

quick=() build=1 wasm=1
for a in "$@"; do
  case "$a" in
    --quick) quick=(--quick) ;;
    --no-build) build=0 ;;
    --no-wasm) wasm=0 ;;
    *) echo "run.sh: unknown option $a (use --quick, --no-build, --no-wasm)" >&2; exit 2 ;;
  esac
done

python3 -c 'import numpy, openpyxl' 2>/dev/null || { echo "run.sh: needs python3 with numpy and openpyxl (pip install numpy openpyxl)" >&2; exit 1; }

if [[ $build == 1 ]]; then
  echo "== cargo build --release"
  cargo build --release
fi

pkg=() missing="skipped with --no-wasm"
if [[ $wasm == 1 ]]; then
  missing=""
  if ! command -v wasm-bindgen >/dev/null; then
    missing="the wasm-bindgen command is missing (bash tests/setup.sh installs the pinned version)"
  elif ! command -v node >/dev/null; then
    missing="node is missing"
  elif [[ $build == 1 ]] && ! cargo build --release --target wasm32-unknown-unknown --lib; then
    missing="cargo build --release --target wasm32-unknown-unknown --lib failed"
  elif [[ ! -f target/wasm32-unknown-unknown/release/plumbline.wasm ]]; then
    missing="target/wasm32-unknown-unknown/release/plumbline.wasm is not built"
  elif ! wasm-bindgen --target nodejs --no-typescript --out-dir target/bench-node-pkg target/wasm32-unknown-unknown/release/plumbline.wasm; then
    missing="wasm-bindgen --target nodejs failed"
  else
    pkg=(--node-pkg "$root/target/bench-node-pkg")
  fi
  [[ -n $missing ]] && echo "run.sh: no wasm figures: $missing" >&2
fi

exec python3 tests/bench/bench.py "${quick[@]}" "${pkg[@]}" ${missing:+--wasm-missing "$missing"}
