#!/usr/bin/env bash
# Runs gemmule's trainer benchmarks B1-B4 (fast learner, and the candle-autograd
# learner as the "before"), its conv/cell benchmarks B5-B6 (benches/cells.rs) and
# the PyTorch (B1-B5) and scikit-learn (B1-B4) references interleaved (ours,
# PyTorch, scikit-learn, repeated ROUNDS times), then prints, per benchmark, the
# median over rounds of each implementation's median seconds per epoch, wall and
# thread-CPU, and the ratios ours/theirs (below 1 means we are faster).
#
# Usage: bench/compare.sh [ROUNDS] [RUNS_PER_ROUND]   (defaults 3 and 5)
# Needs: a Python with torch, scikit-learn and numpy (see bench/reference/README.md),
# given as $PYTHON (default .venv-bench/bin/python). Run from the repository root.
set -euo pipefail

rounds="${1:-3}"
runs="${2:-5}"
python="${PYTHON:-.venv-bench/bin/python}"
out="target/bench-data/compare-$(date +%Y%m%d-%H%M%S).log"
mkdir -p target/bench-data

# One build, then the same binaries each round (they also write the data files).
bench_executable() {
  cargo bench --bench "$1" --no-run --message-format=json 2>/dev/null \
    | sed -n "s/.*\"executable\":\"\([^\"]*$1-[^\"]*\)\".*/\1/p" | tail -1
}
cargo bench --bench trainer --bench cells --no-run
bench_binary=$(bench_executable trainer)
cells_binary=$(bench_executable cells)
if [[ -z "$bench_binary" || -z "$cells_binary" ]]; then
  echo "could not find the benchmark executables" >&2
  exit 1
fi
# Write both data files before the first reference run reads them.
"$cells_binary" --runs 1 --only none > /dev/null

echo "# $(nproc) cpus, $(grep -m1 'model name' /proc/cpuinfo | cut -d: -f2 | xargs); load $(cut -d' ' -f1-3 /proc/loadavg)" | tee "$out"
for round in $(seq 1 "$rounds"); do
  echo "# round $round" | tee -a "$out"
  "$bench_binary" --runs "$runs" --engine both --no-matmul | tee -a "$out"
  "$cells_binary" --runs "$runs" | tee -a "$out"
  "$python" bench/reference/pytorch_bench.py --runs "$runs" --no-matmul | tee -a "$out"
  "$python" bench/reference/sklearn_bench.py --runs "$runs" --no-matmul | tee -a "$out"
done
"$bench_binary" --runs 1 --engine fast --only none | grep matmul | tee -a "$out"
"$python" bench/reference/pytorch_bench.py --runs 1 --only none | grep matmul | tee -a "$out"
"$python" bench/reference/sklearn_bench.py --runs 1 --only none | grep matmul | tee -a "$out"
echo "# load at end $(cut -d' ' -f1-3 /proc/loadavg)" | tee -a "$out"

echo
echo "median over $rounds rounds of each round's median s/epoch (log: $out)"
awk '
  /^result bench=B/ {
    for (i = 2; i <= NF; i++) { split($i, kv, "="); f[kv[1]] = kv[2] }
    key = f["bench"] SUBSEP f["impl"]
    n[key]++; wall[key, n[key]] = f["median_s"]; cpu[key, n[key]] = f["cpu_s"]; benches[f["bench"]] = 1
  }
  function med(values, key,   k, i, j, t, a) {
    k = n[key]; if (k == 0) return -1
    for (i = 1; i <= k; i++) a[i] = values[key, i]
    for (i = 1; i <= k; i++) for (j = i + 1; j <= k; j++) if (a[j] < a[i]) { t = a[i]; a[i] = a[j]; a[j] = t }
    return (k % 2) ? a[(k + 1) / 2] : (a[k / 2] + a[k / 2 + 1]) / 2
  }
  function ms(v) { return v < 0 ? "-" : sprintf("%.2f", v * 1000) }
  function ratio(a, b) { return (a < 0 || b <= 0) ? "-" : sprintf("%.3f", a / b) }
  function row(label, values,   b, name, o, a, p, s) {
    print label
    printf "%-4s %12s %12s %12s %12s %10s %10s %10s\n", "name", "ours ms/ep", "before", "pytorch", "sklearn", "ours/torch", "ours/skl", "ours/before"
    for (b = 1; b <= 6; b++) {
      name = "B" b; if (!(name in benches)) continue
      o = med(values, name SUBSEP "gemmule-fast"); a = med(values, name SUBSEP "gemmule-autograd")
      if (o < 0) o = med(values, name SUBSEP "gemmule")
      p = med(values, name SUBSEP "pytorch"); s = med(values, name SUBSEP "sklearn")
      printf "%-4s %12s %12s %12s %12s %10s %10s %10s\n", name, ms(o), ms(a), ms(p), ms(s), ratio(o, p), ratio(o, s), ratio(o, a)
    }
  }
  END {
    row("wall time (median over rounds of each round median):", wall)
    row("thread CPU time (same medians):", cpu)
  }' "$out"
