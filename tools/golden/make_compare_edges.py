#!/usr/bin/env python3
"""Golden values for `compare` on edge cases (query module's CompareEdgesGoldenTest).

Each case is a pair of code samples (CASE_a.npy, CASE_b.npy, bool, one row per example). Reference
values, from NumPy and SciPy only:
  - MMD^2 unbiased estimator (Gretton et al., JMLR 2012, eq. 3) from full kernel matrices built with
    scipy.spatial.distance.cdist (hamming), agreement kernel 1 - d/L and exponential kernel
    exp(-d/sigma), sigma = np.median of the pooled pairwise distances, 1 when that median is 0;
  - exact W2 with Hamming ground cost: scipy.optimize.linear_sum_assignment for equal sizes, the
    transport linear program (scipy.optimize.linprog, HiGHS) for unequal sizes; for 1-bit codes
    also scipy.stats.wasserstein_distance (on {0, 1}, d^2 = d, so W2^2 = W1), asserted equal here;
  - two-proportion z tests with scipy.stats.norm.sf (z = 0 for a neuron constant in both samples),
    Benjamini-Hochberg q-values with scipy.stats.false_discovery_control.
Cases: 1-bit codes of equal and unequal sizes, 12-bit codes of unequal sizes, the smallest samples
(2 and 2 rows), every code identical (median distance 0), neurons constant in one or both samples.

Usage: python3 tools/golden/make_compare_edges.py query/src/test/resources/golden/compare_edges
Expected values go to expected.txt as `name value` lines (repr of float64).
"""
import os
import sys

import numpy as np
import scipy
from scipy import stats
from scipy.spatial import distance
from reference_stats import exact_w2, mmd2_unbiased

out = sys.argv[1] if len(sys.argv) > 1 else "compare_edges"
os.makedirs(out, exist_ok=True)
rng = np.random.default_rng(20261204)
lines = [f"# made by tools/golden/make_compare_edges.py with numpy {np.__version__}, scipy {scipy.__version__}"]


def put(name, value):
    lines.append(f"{name} {float(value)!r}")


def case(name, a, b):
    a, b = a.astype(bool), b.astype(bool)
    np.save(os.path.join(out, f"{name}_a.npy"), a)
    np.save(os.path.join(out, f"{name}_b.npy"), b)
    m, n, L = len(a), len(b), a.shape[1]
    X = np.vstack([a, b]).astype(np.uint8)
    D = distance.cdist(X, X, "hamming") * L
    put(f"{name}.agreement.mmd2", mmd2_unbiased(1 - D / L, m))
    med = np.median(D[np.triu_indices(m + n, 1)])
    sigma = med if med > 0 else 1.0
    put(f"{name}.exponential.sigma", sigma)
    put(f"{name}.exponential.mmd2", mmd2_unbiased(np.exp(-D / sigma), m))
    w2 = exact_w2(a.astype(np.uint8), b.astype(np.uint8))
    if L == 1:
        w1 = stats.wasserstein_distance(a[:, 0].astype(float), b[:, 0].astype(float))
        assert abs(w2 * w2 - w1) < 1e-9, (w2, w1)
    put(f"{name}.w2", w2)
    pa, pb = a.mean(0), b.mean(0)
    p = (a.sum(0) + b.sum(0)) / (m + n)
    se = np.sqrt(p * (1 - p) * (1 / m + 1 / n))
    z = np.divide(pa - pb, se, out=np.zeros(L), where=se > 0)
    pv = 2 * stats.norm.sf(np.abs(z))
    q = stats.false_discovery_control(pv)
    for i in range(L):
        put(f"{name}.neuron.{i}.z", z[i])
        put(f"{name}.neuron.{i}.p", pv[i])
        put(f"{name}.neuron.{i}.q", q[i])


case("bit_equal", rng.random((30, 1)) < 0.3, rng.random((30, 1)) < 0.7)
case("bit_unequal", rng.random((30, 1)) < 0.3, rng.random((45, 1)) < 0.7)
case("wide_unequal", rng.random((9, 12)) < 0.4, rng.random((14, 12)) < 0.6)
case("two_rows", rng.random((2, 6)) < 0.5, rng.random((2, 6)) < 0.5)
one = rng.random(8) < 0.5
case("identical", np.tile(one, (5, 1)), np.tile(one, (6, 1)))
const_a = np.hstack([np.ones((20, 1)), np.zeros((20, 1)), np.ones((20, 1)), rng.random((20, 3)) < 0.5])
const_b = np.hstack([np.ones((25, 1)), np.zeros((25, 1)), np.zeros((25, 1)), rng.random((25, 3)) < 0.5])
case("constant_neurons", const_a, const_b)

with open(os.path.join(out, "expected.txt"), "w") as f:
    f.write("\n".join(lines) + "\n")
