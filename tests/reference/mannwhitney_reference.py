"""Reference values for gemmule's statistics (src/stats), computed with SciPy and NumPy.

Run:  python3 tests/reference/mannwhitney_reference.py
Its output is pasted into tests/stats_reference.rs, next to the checks.

Prints, for fixed input pairs (with and without ties, small and large
samples), the Mann-Whitney U of the first sample and the p-value for each
alternative with scipy.stats.mannwhitneyu(method="auto") and, where useful,
method="exact" or "asymptotic"; then NumPy's linear-interpolation quartiles,
means, ddof=1 standard deviations and medians of a few samples.
"""

import numpy as np
import scipy
from scipy.stats import mannwhitneyu

PAIRS = {
    # 5 vs 5, no ties: auto -> exact.
    "small_distinct": (
        [0.91, 0.87, 0.95, 0.89, 0.93],
        [0.84, 0.90, 0.86, 0.88, 0.82],
    ),
    # 6 vs 7 with ties (within and across samples): auto -> asymptotic.
    "small_ties": (
        [0.9, 0.9, 0.95, 0.85, 1.0, 0.95],
        [0.85, 0.9, 0.8, 0.85, 0.75, 0.9, 0.95],
    ),
    # 4 vs 30, no ties: one side <= 8, so auto -> exact.
    "unbalanced_distinct": (
        [3.5, 12.25, 7.75, 20.5],
        [float(v) for v in range(1, 31)],
    ),
    # 12 vs 15, no ties: both > 8, auto -> asymptotic.
    "large_distinct": (
        [0.12 * k + 0.05 * (k % 3) for k in range(12)],
        [0.1 * k - 0.031 * (k % 4) + 0.2 for k in range(15)],
    ),
    # 25 vs 20 with many ties (values on a 0.05 grid): auto -> asymptotic.
    "large_ties": (
        [round(0.05 * ((7 * k) % 11), 2) for k in range(25)],
        [round(0.05 * ((5 * k) % 9), 2) for k in range(20)],
    ),
    # 8 vs 8 completely separated: the smallest exact p-value.
    "separated": (
        [float(v) for v in range(10, 18)],
        [float(v) for v in range(0, 8)],
    ),
}

# Extra (pair, method) combinations beside "auto".
EXTRA_METHODS = [
    ("small_distinct", "asymptotic"),
    ("large_distinct", "exact"),
]

SAMPLES = {
    "four": [4.0, 1.0, 3.0, 2.0],
    "seven": [0.81, 0.93, 0.77, 0.93, 0.88, 0.91, 0.79],
    "ten": [float(v) ** 1.5 for v in range(10)],
}


def show_pair(name, method):
    x, y = PAIRS[name]
    for alternative in ("greater", "less", "two-sided"):
        result = mannwhitneyu(x, y, alternative=alternative, method=method)
        print(f"{name} {method} {alternative}: U={float(result.statistic)!r} p={float(result.pvalue)!r}")


def main():
    print(f"scipy {scipy.__version__}, numpy {np.__version__}")
    for name, (x, y) in PAIRS.items():
        print(f"{name}: x={x!r}")
        print(f"{name}: y={y!r}")
    for name in PAIRS:
        show_pair(name, "auto")
    for name, method in EXTRA_METHODS:
        show_pair(name, method)
    for name, values in SAMPLES.items():
        quartiles = [float(q) for q in np.percentile(values, [25, 50, 75])]
        print(
            f"{name}: quartiles={quartiles!r} mean={float(np.mean(values))!r} "
            f"sd={float(np.std(values, ddof=1))!r} median={float(np.median(values))!r}"
        )


if __name__ == "__main__":
    main()
