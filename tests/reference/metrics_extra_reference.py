"""Extra check values for src/metrics beyond tests/fixtures/metrics_fixture.json.

Run:  python3 tests/reference/metrics_extra_reference.py
(NumPy, SciPy and scikit-learn; the versions used are printed first.)
Its output is pasted into tests/metrics_reference.rs, next to the checks.

1. Exact McNemar p-values for large discordant counts (up to 10^5), with
   scipy.stats.binomtest(min(b, c), b + c, 0.5, alternative="two-sided").pvalue,
   the definition the shared fixture uses, and the same tail summed exactly in
   rational arithmetic (Python's fractions) and rounded once to a double.
2. StratifiedKFold(n_splits=k) held-out class counts per fold for labels whose
   classes first appear in an order other than their index order (2, 0, 1).
   scikit-learn numbers classes by first appearance before allocating, so the
   per-fold counts differ from those of a label-sorted allocation for k = 4, 5.
"""
from fractions import Fraction

import numpy as np
import scipy
import sklearn
from scipy.stats import binomtest
from sklearn.model_selection import StratifiedKFold

print(f"numpy {np.__version__}, scipy {scipy.__version__}, scikit-learn {sklearn.__version__}")

def exact_mcnemar(b, c):
    """min(1, 2 * P(X <= min(b, c))) for X ~ Binomial(b + c, 1/2), as an exact fraction."""
    n, m = b + c, min(b, c)
    total, term = 0, 1
    for k in range(m + 1):
        if k > 0:
            term = term * (n - k + 1) // k
        total += term
    return min(Fraction(1), Fraction(2 * total, 2 ** n))


print("# McNemar: (b, c, SciPy p, exact p rounded to a double)")
for b, c in ((50_000, 49_000), (60_000, 40_000), (5_000, 4_800), (100, 60), (1, 99_999),
             (20_000, 19_990), (700, 400), (3_000, 2_000)):
    p = binomtest(min(b, c), b + c, 0.5, alternative="two-sided").pvalue
    print(f"({b}, {c}, {float(p)!r}, {float(exact_mcnemar(b, c))!r}),")

print("# StratifiedKFold: k, held-out counts per fold")
y = np.array([2, 0, 1, 0, 2, 2, 1, 0, 0, 2, 1, 0, 2, 0, 1, 2, 0, 1])
print("y =", y.tolist(), "class counts", np.bincount(y).tolist())
for k in (3, 4, 5):
    folds = [np.bincount(y[te], minlength=3).tolist()
             for _, te in StratifiedKFold(n_splits=k).split(np.zeros(len(y)), y)]
    print(k, folds)
