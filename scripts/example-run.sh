#!/usr/bin/env bash
# The main job on the shipped example table: search architectures with aging
# evolution, show what was found, then open the sealed test split once.
set -euo pipefail
cd "$(dirname "$0")/.."
run=${1:-runs/example-wine}
cargo build --release --quiet
bin=target/release/gemmule
if [[ -f "$run/journal.jsonl" ]]; then
  echo "== resuming $run"
  "$bin" resume "$run"
else
  echo "== searching (aging evolution, 30 candidates)"
  "$bin" search --data data/examples/wine.csv --out "$run" --budget 30 --epochs 40 --seed 1
fi
echo "== what was found"
"$bin" show "$run"
echo "== final evaluation on the sealed test split"
if ! "$bin" finalize "$run"; then
  echo "(the test split of $run was opened before; pass a new folder to start over)"
fi
echo "== report"
"$bin" report "$run"
echo "open $run/report.html in a browser"
