"""scikit-learn reference for gemmule's trainer benchmarks B1-B4 (benches/trainer.rs).

MLPClassifier with the same data file, relu hidden layers, batch sizes,
10 epochs (max_iter=10, no early stopping, no tolerance stop), Adam lr 1e-3,
no L2 (alpha=0), shuffled each epoch; BLAS limited to one thread. It does
not expose a forward/backward/optimizer split, so those columns are "-".
Also prints NumPy's 1024^3 f32 matmul rate. One `result ...` line per
benchmark for bench/compare.sh.

Usage: python sklearn_bench.py [--data target/bench-data/bench_4000x32.csv]
       [--runs 5] [--only B1,B3] [--no-matmul]
"""

import os

# One BLAS thread, set before NumPy loads its BLAS.
for variable in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[variable] = "1"

import argparse  # noqa: E402
import statistics  # noqa: E402
import time  # noqa: E402
import warnings  # noqa: E402

import numpy as np  # noqa: E402
import sklearn  # noqa: E402
from sklearn.exceptions import ConvergenceWarning  # noqa: E402
from sklearn.neural_network import MLPClassifier  # noqa: E402

BENCHES = {
    "B1": ((64, 64), 64),
    "B2": ((256, 256), 64),
    "B3": ((256, 256), 256),
    "B4": ((64, 64), 8),
}
EPOCHS = 10


def run_once(x, y, hidden, batch, seed):
    model = MLPClassifier(
        hidden_layer_sizes=hidden, activation="relu", solver="adam", alpha=0.0,
        batch_size=batch, learning_rate_init=1e-3, max_iter=EPOCHS, shuffle=True,
        tol=0.0, n_iter_no_change=EPOCHS + 1, early_stopping=False, random_state=seed,
    )
    cpu_start, start = time.thread_time(), time.perf_counter()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ConvergenceWarning)
        model.fit(x, y)
    return time.perf_counter() - start, time.thread_time() - cpu_start


def matmul_rate():
    n = 1024
    rng = np.random.default_rng(1)
    a, b = rng.random((n, n), dtype=np.float32), rng.random((n, n), dtype=np.float32)
    rates = []
    for run in range(6):
        start = time.perf_counter()
        a @ b
        seconds = time.perf_counter() - start
        if run > 0:
            rates.append(2 * n**3 / seconds / 1e9)
    return statistics.median(rates)


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--data", default="target/bench-data/bench_4000x32.csv")
    parser.add_argument("--runs", type=int, default=5)
    parser.add_argument("--only", default=None)
    parser.add_argument("--no-matmul", action="store_true")
    args = parser.parse_args()
    table = np.loadtxt(args.data, delimiter=",", skiprows=1, dtype=np.float32)
    x, y = table[:, :-1], table[:, -1].astype(np.int64)
    load_avg = " ".join(f"{v:.2f}" for v in os.getloadavg())
    print(f"# scikit-learn {sklearn.__version__} (NumPy {np.__version__}), 1 BLAS thread, {x.shape[0]}x{x.shape[1]}, "
          f"{EPOCHS} epochs, Adam lr 1e-3; load average at start: {load_avg}")
    print(f"{'name':<4} {'impl':<9} {'median s/ep':>11} {'min':>9} {'max':>9} {'cpu s/ep':>11} {'samples/s':>10} {'fwd ms/ep':>9} {'bwd ms/ep':>9} {'opt ms/ep':>9}")
    only = set(args.only.split(",")) if args.only else None
    for name, (hidden, batch) in BENCHES.items():
        if only and name not in only:
            continue
        run_once(x, y, hidden, batch, 0)
        walls, cpus = [], []
        for run in range(max(args.runs, 1)):
            wall, cpu = run_once(x, y, hidden, batch, 1 + run)
            walls.append(wall / EPOCHS)
            cpus.append(cpu / EPOCHS)
        med, cpu = statistics.median(walls), statistics.median(cpus)
        print(f"{name:<4} {'sklearn':<9} {med:>11.5f} {min(walls):>9.5f} {max(walls):>9.5f} {cpu:>11.5f} {x.shape[0] / med:>10.0f} "
              f"{'-':>9} {'-':>9} {'-':>9}")
        print(f"result bench={name} impl=sklearn median_s={med:.6f} min_s={min(walls):.6f} max_s={max(walls):.6f} "
              f"cpu_s={cpu:.6f} samples_per_s={x.shape[0] / med:.0f}")
    if not args.no_matmul:
        rate = matmul_rate()
        print(f"matmul 1024^3 f32, NumPy (1 BLAS thread): {rate:.1f} GFLOP/s")
        print(f"result bench=matmul1024 impl=numpy gflops={rate:.1f}")
    print("# load average at end: " + " ".join(f"{v:.2f}" for v in os.getloadavg()))


if __name__ == "__main__":
    main()
