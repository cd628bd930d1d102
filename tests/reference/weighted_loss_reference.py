"""Class-weighted cross-entropy and its gradients for the 4-3-2 network of
tests/fixtures/mlp_fixture.json (weights "params_0", its three rows and labels).

Run:  python3 tests/reference/weighted_loss_reference.py
(NumPy only, float64.) Its output is pasted into tests/trainer_reference.rs
next to the check (weighted_loss_and_gradients_match_numpy_reference).

Loss (the "mean" reduction of PyTorch's CrossEntropyLoss(weight=w), the
weighted average of scikit-learn's log_loss(sample_weight=...)):
    L = sum_i w[y_i] * CE_i / sum_i w[y_i],  CE_i = -log softmax(logits_i)[y_i]
Backprop by hand: dlogits_i = w[y_i] * (softmax_i - onehot_i) / sum_i w[y_i],
then the same chain as the unweighted fixture (make_fixture.py); checked here
against central finite differences (h = 1e-6).
"""
import json
import pathlib

import numpy as np

HERE = pathlib.Path(__file__).resolve().parent
FIXTURE = json.loads((HERE.parent / "fixtures" / "mlp_fixture.json").read_text())
X = np.array(FIXTURE["inputs"], dtype=np.float64)
Y = np.array(FIXTURE["labels"])
P = {k: np.array(v, dtype=np.float64) for k, v in FIXTURE["params_0"].items()}
W = np.array([0.6, 1.7])  # class weights
ORDER = ["W1", "b1", "W2", "b2"]


def forward(p):
    z1 = X @ p["W1"] + p["b1"]
    a1 = np.maximum(z1, 0.0)
    logits = a1 @ p["W2"] + p["b2"]
    s = logits - logits.max(axis=1, keepdims=True)
    logp = s - np.log(np.exp(s).sum(axis=1, keepdims=True))
    return z1, a1, logits, logp


def loss(p):
    logp = forward(p)[3]
    w = W[Y]
    return -(w * logp[np.arange(len(Y)), Y]).sum() / w.sum()


def grads(p):
    z1, a1, _, logp = forward(p)
    w = W[Y]
    onehot = np.eye(p["W2"].shape[1])[Y]
    dlogits = w[:, None] * (np.exp(logp) - onehot) / w.sum()
    g = {"W2": a1.T @ dlogits, "b2": dlogits.sum(0)}
    dz1 = (dlogits @ p["W2"].T) * (z1 > 0)
    g["W1"] = X.T @ dz1
    g["b1"] = dz1.sum(0)
    return g


def fd_grads(p, h=1e-6):
    out = {}
    for k in ORDER:
        gk = np.zeros_like(p[k])
        for idx in np.ndindex(p[k].shape):
            plus = {kk: vv.copy() for kk, vv in p.items()}
            minus = {kk: vv.copy() for kk, vv in p.items()}
            plus[k][idx] += h
            minus[k][idx] -= h
            gk[idx] = (loss(plus) - loss(minus)) / (2 * h)
        out[k] = gk
    return out


g = grads(P)
fd = fd_grads(P)
print(f"numpy {np.__version__}; class weights {W.tolist()}; labels {Y.tolist()}")
print(f"finite-difference max abs error: {max(np.abs(g[k] - fd[k]).max() for k in ORDER):.1e}")
print(f"loss = {float(loss(P))!r}")
for k in ORDER:
    print(f"{k} = {g[k].ravel().tolist()}")
