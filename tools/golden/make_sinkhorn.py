#!/usr/bin/env python3
"""Golden values for the entropic (Sinkhorn) W2 of `compare` (query module's SinkhornGoldenTest).

Each case is a pair of code samples (CASE_a.npy, CASE_b.npy, bool, one row per example) of
unequal sizes and a relative regularisation `reg`. As `Wasserstein.sinkhorn` defines it: ground
cost C = Hamming distance squared, uniform marginals 1/m and 1/n, eps = reg * max(mean C, 1); the
value is the transport cost <P, C> of the entropic plan P (no entropy term) and w2 = sqrt(<P, C>).
P comes from POT (Python Optimal Transport), ot.sinkhorn(a, b, C, eps, method="sinkhorn_log")
run to a marginal violation of 1e-13, and is checked here against a plain NumPy log-domain
Sinkhorn loop written in this script (scipy.special.logsumexp): both must give <P, C> within 1e-9
relative. Cases: ReLU-like 64-bit codes at the default reg 0.05 and at 0.01; 256-bit codes;
codes with outlier rows so far from every code of the other sample that exp(-C/eps) underflows
for all of their pairs (the implementation's exact per-row path).

Usage: python3 tools/golden/make_sinkhorn.py query/src/test/resources/golden/sinkhorn
(numpy, scipy, POT: `pip install pot`; never a test dependency.) Expected values go to
expected.txt as `name value` lines (repr of float64).
"""
import os
import sys

import numpy as np
import ot
import scipy
from scipy.special import logsumexp

out = sys.argv[1] if len(sys.argv) > 1 else "sinkhorn"
os.makedirs(out, exist_ok=True)
rng = np.random.default_rng(20261205)
lines = [f"# made by tools/golden/make_sinkhorn.py with numpy {np.__version__}, scipy {scipy.__version__}, POT {ot.__version__}"]


def put(name, value):
    lines.append(f"{name} {float(value)!r}")


def numpy_sinkhorn(C, eps, iters=200_000, tol=1e-13):
    """Alternate exact row and column updates of the log potentials until the column marginals are within tol (L1)."""
    m, n = C.shape
    la, lb = np.full(m, -np.log(m)), np.full(n, -np.log(n))
    f, g = np.zeros(m), np.zeros(n)
    S = C / eps
    for _ in range(iters):
        f = la - logsumexp(g[None, :] - S, axis=1)
        lc = logsumexp(f[:, None] - S, axis=0)
        err = np.abs(np.exp(g + lc) - 1 / n).sum()
        g = lb - lc
        if err < tol:
            break
    P = np.exp(f[:, None] + g[None, :] - S)
    return (P * C).sum()


def case(name, a, b, reg, files=None):
    """files: the name the samples are saved under (another case's: the same codes again)."""
    a, b = a.astype(bool), b.astype(bool)
    np.save(os.path.join(out, f"{files or name}_a.npy"), a)
    np.save(os.path.join(out, f"{files or name}_b.npy"), b)
    m, n = len(a), len(b)
    d = (a[:, None, :] != b[None, :, :]).sum(2).astype(np.float64)
    C = d * d
    eps = reg * max(C.mean(), 1.0)
    P = ot.sinkhorn(np.full(m, 1 / m), np.full(n, 1 / n), C, eps, method="sinkhorn_log", numItermax=1_000_000, stopThr=1e-13)
    cost = (P * C).sum()
    mine = numpy_sinkhorn(C, eps)
    assert abs(cost - mine) <= 1e-9 * cost, (name, cost, mine)
    put(f"{name}.reg", reg)
    put(f"{name}.epsilon", eps)
    put(f"{name}.cost", cost)
    put(f"{name}.w2", np.sqrt(cost))


def relu_like(rows, rates):
    return rng.random((rows, len(rates))) < rates


rates_a = rng.beta(0.6, 0.9, 64)
rates_b = np.clip(rates_a + rng.normal(0, 0.15, 64), 0, 1)
a64, b64 = relu_like(300, rates_a), relu_like(200, rates_b)
case("relu64", a64, b64, 0.05)
case("relu64_small_reg", a64, b64, 0.01, files="relu64")
rates_w = rng.beta(0.5, 0.8, 256)
case("wide256", relu_like(150, rates_w), relu_like(120, np.clip(rates_w + 0.1, 0, 1)), 0.05)
near = relu_like(60, np.full(64, 0.1))
outliers = np.vstack([relu_like(40, np.full(64, 0.1)), np.ones((3, 64), bool)])
case("outliers", outliers, near, 0.01)

with open(os.path.join(out, "expected.txt"), "w") as f:
    f.write("\n".join(lines) + "\n")
