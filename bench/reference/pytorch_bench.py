"""PyTorch reference for gemmule's trainer benchmarks B1-B4 (benches/trainer.rs)
and B5 (benches/cells.rs).

Same data files (written by `cargo bench --bench trainer` and
`cargo bench --bench cells`), same networks (relu MLPs; B5: conv 3x3 1->8
pad 1 -> ReLU -> conv 3x3 8->16 pad 1 -> ReLU -> global average pool ->
linear 16->10; PyTorch default init), batch sizes, 10 epochs, Adam lr 1e-3,
mean softmax cross-entropy, a fresh random row order each epoch, no
validation, one thread. Prints median/min/max seconds per epoch, samples/s,
the forward/backward/optimizer split, the 1024^3 f32 matmul rate, and one
`result ...` line per benchmark for bench/compare.sh.

Usage: python pytorch_bench.py [--data target/bench-data/bench_4000x32.csv]
       [--images target/bench-data/bench_images_2000x8x8.csv]
       [--runs 5] [--only B1,B3,B5] [--no-matmul]
"""

import argparse
import os
import statistics
import time

import numpy as np
import torch

BENCHES = {
    "B1": ((64, 64), 64),
    "B2": ((256, 256), 64),
    "B3": ((256, 256), 256),
    "B4": ((64, 64), 8),
    "B5": ("conv", 64),
}
EPOCHS = 10
IMAGE_SIDE = 8


def load(path):
    table = np.loadtxt(path, delimiter=",", skiprows=1, dtype=np.float32)
    x = torch.from_numpy(np.ascontiguousarray(table[:, :-1]))
    y = torch.from_numpy(table[:, -1].astype(np.int64))
    return x, y


def network(n_inputs, hidden, n_classes):
    layers, width = [], n_inputs
    for units in hidden:
        layers += [torch.nn.Linear(width, units), torch.nn.ReLU()]
        width = units
    layers.append(torch.nn.Linear(width, n_classes))
    return torch.nn.Sequential(*layers)


def conv_network(n_classes):
    """B5: two 3x3 convs (padding 1, with bias) and ReLUs, global average pool, linear head."""
    return torch.nn.Sequential(
        torch.nn.Unflatten(1, (1, IMAGE_SIDE, IMAGE_SIDE)),
        torch.nn.Conv2d(1, 8, 3, padding=1),
        torch.nn.ReLU(),
        torch.nn.Conv2d(8, 16, 3, padding=1),
        torch.nn.ReLU(),
        torch.nn.AdaptiveAvgPool2d(1),
        torch.nn.Flatten(),
        torch.nn.Linear(16, n_classes),
    )


def run_once(x, y, hidden, batch, seed):
    """Wall seconds, thread CPU seconds and (forward, backward, optimizer) seconds for 10 epochs."""
    torch.manual_seed(seed)
    if hidden == "conv":
        model = conv_network(int(y.max()) + 1)
    else:
        model = network(x.shape[1], hidden, int(y.max()) + 1)
    optimizer = torch.optim.Adam(model.parameters(), lr=1e-3)
    loss_fn = torch.nn.CrossEntropyLoss()
    split = [0.0, 0.0, 0.0]
    clock = time.perf_counter
    cpu_start, start = time.thread_time(), clock()
    for _ in range(EPOCHS):
        order = torch.randperm(x.shape[0])
        for first in range(0, x.shape[0], batch):
            rows = order[first:first + batch]
            xb, yb = x[rows], y[rows]
            t0 = clock()
            loss = loss_fn(model(xb), yb)
            t1 = clock()
            optimizer.zero_grad(set_to_none=True)
            loss.backward()
            t2 = clock()
            optimizer.step()
            t3 = clock()
            split[0] += t1 - t0
            split[1] += t2 - t1
            split[2] += t3 - t2
    return clock() - start, time.thread_time() - cpu_start, split


def matmul_rate():
    n = 1024
    a, b = torch.rand(n, n), torch.rand(n, n)
    rates = []
    for run in range(6):
        start = time.perf_counter()
        torch.mm(a, b)
        seconds = time.perf_counter() - start
        if run > 0:
            rates.append(2 * n**3 / seconds / 1e9)
    return statistics.median(rates)


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--data", default="target/bench-data/bench_4000x32.csv")
    parser.add_argument("--images", default="target/bench-data/bench_images_2000x8x8.csv")
    parser.add_argument("--runs", type=int, default=5)
    parser.add_argument("--only", default=None)
    parser.add_argument("--no-matmul", action="store_true")
    args = parser.parse_args()
    torch.set_num_threads(1)
    only = set(args.only.split(",")) if args.only else None
    tables = {}
    if only is None or only & {"B1", "B2", "B3", "B4"}:
        tables["table"] = load(args.data)
    if only is None or "B5" in only:
        tables["images"] = load(args.images)
    load_avg = " ".join(f"{v:.2f}" for v in os.getloadavg())
    sizes = ", ".join(f"{name} {x.shape[0]}x{x.shape[1]}" for name, (x, _) in tables.items())
    print(f"# PyTorch {torch.__version__}, 1 thread, {sizes}, {EPOCHS} epochs, Adam lr 1e-3; load average at start: {load_avg}")
    print(f"{'name':<4} {'impl':<9} {'median s/ep':>11} {'min':>9} {'max':>9} {'cpu s/ep':>11} {'samples/s':>10} {'fwd ms/ep':>9} {'bwd ms/ep':>9} {'opt ms/ep':>9}")
    for name, (hidden, batch) in BENCHES.items():
        if only and name not in only:
            continue
        x, y = tables["images" if hidden == "conv" else "table"]
        run_once(x, y, hidden, batch, 0)
        walls, cpus, split = [], [], [0.0, 0.0, 0.0]
        for run in range(max(args.runs, 1)):
            wall, cpu, parts = run_once(x, y, hidden, batch, 1 + run)
            walls.append(wall / EPOCHS)
            cpus.append(cpu / EPOCHS)
            split = [s + p for s, p in zip(split, parts)]
        med, cpu = statistics.median(walls), statistics.median(cpus)
        per_epoch_ms = [s * 1e3 / (EPOCHS * len(walls)) for s in split]
        print(f"{name:<4} {'pytorch':<9} {med:>11.5f} {min(walls):>9.5f} {max(walls):>9.5f} {cpu:>11.5f} {x.shape[0] / med:>10.0f} "
              f"{per_epoch_ms[0]:>9.2f} {per_epoch_ms[1]:>9.2f} {per_epoch_ms[2]:>9.2f}")
        print(f"result bench={name} impl=pytorch median_s={med:.6f} min_s={min(walls):.6f} max_s={max(walls):.6f} "
              f"cpu_s={cpu:.6f} samples_per_s={x.shape[0] / med:.0f}")
    if not args.no_matmul:
        rate = matmul_rate()
        print(f"matmul 1024^3 f32, torch.mm (1 thread): {rate:.1f} GFLOP/s")
        print(f"result bench=matmul1024 impl=pytorch gflops={rate:.1f}")
    print("# load average at end: " + " ".join(f"{v:.2f}" for v in os.getloadavg()))


if __name__ == "__main__":
    main()
