#!/usr/bin/env python3
"""Golden inputs and outputs for the `compare` statistics (query module tests).

Reference values come from NumPy and SciPy only:
  - MMD^2 unbiased estimator (Gretton et al., JMLR 2012, eq. 3) from full kernel matrices built
    with scipy.spatial.distance (hamming / euclidean);
  - the median heuristic with np.median over scipy.spatial.distance.pdist;
  - permutation p-values (1 + #{null >= observed}) / (1 + P) over a fixed list of permutations
    written here (perms.npy), so the Java test relabels with exactly the same permutations;
  - exact W2 with scipy.optimize.linear_sum_assignment on squared Hamming distances;
  - the Frechet distance with scipy.linalg.sqrtm(S1 @ S2) and np.cov;
  - two-proportion z tests with scipy.stats.norm.sf, BH q-values with
    scipy.stats.false_discovery_control.

Usage: python3 tools/golden/make_compare.py query/src/test/resources/golden/compare
Expected values go to expected.txt as `name value` lines (repr of float64).
"""
import os
import sys

import numpy as np
from scipy import linalg, optimize, stats
from scipy.spatial import distance
from reference_stats import mmd2_unbiased

out = sys.argv[1] if len(sys.argv) > 1 else "compare"
os.makedirs(out, exist_ok=True)
rng = np.random.default_rng(20261203)
lines = []


def put(name, value):
    lines.append(f"{name} {float(value)!r}")


def p_value(K, m, perms):
    obs = mmd2_unbiased(K, m)
    count = 0
    for p in perms:
        t = mmd2_unbiased(K[np.ix_(p, p)], m)
        if t >= obs - 1e-12 * max(1.0, abs(t), abs(obs)):
            count += 1
    return obs, (1 + count) / (1 + len(perms))


# codes: A 40 rows, B 30 rows, 70 bits (not a multiple of 64); B's rates shifted on some bits
L, m, n = 70, 40, 30
rates = rng.uniform(0.1, 0.9, L)
A = (rng.random((m, L)) < rates).astype(np.uint8)
rates_b = rates.copy()
rates_b[:10] = np.clip(rates_b[:10] + 0.3, 0, 0.95)
B = (rng.random((n, L)) < rates_b).astype(np.uint8)
np.save(os.path.join(out, "codes_a.npy"), A)
np.save(os.path.join(out, "codes_b.npy"), B)
Z = np.vstack([A, B]).astype(bool)
D = distance.squareform(distance.pdist(Z, "hamming")) * L  # Hamming counts
D = np.rint(D)
perms = np.array([rng.permutation(m + n) for _ in range(200)], dtype=np.int32)
np.save(os.path.join(out, "perms.npy"), perms)

K_agree = 1 - D / L
obs, p = p_value(K_agree, m, perms)
put("agreement.mmd2", obs)
put("agreement.p", p)
sigma = np.median(distance.pdist(Z, "hamming") * L)
put("exponential.sigma", sigma)
K_exp = np.exp(-D / sigma)
obs, p = p_value(K_exp, m, perms)
put("exponential.mmd2", obs)
put("exponential.p", p)

# a third sample C from A's rates: the p-values of A vs C fall inside (0, 1), not at the floor
C3 = (rng.random((n, L)) < rates).astype(np.uint8)
np.save(os.path.join(out, "codes_c.npy"), C3)
Zc = np.vstack([A, C3]).astype(bool)
Dc = np.rint(distance.squareform(distance.pdist(Zc, "hamming")) * L)
obs, p = p_value(1 - Dc / L, m, perms)
put("null.agreement.mmd2", obs)
put("null.agreement.p", p)
sc = np.median(distance.pdist(Zc, "hamming") * L)
put("null.exponential.sigma", sc)
obs, p = p_value(np.exp(-Dc / sc), m, perms)
put("null.exponential.mmd2", obs)
put("null.exponential.p", p)

# firing-rate z tests and BH
ra, rb = A.mean(0), B.mean(0)
pooled = (A.sum(0) + B.sum(0)) / (m + n)
se = np.sqrt(pooled * (1 - pooled) * (1 / m + 1 / n))
z = np.where(se > 0, (ra - rb) / np.where(se > 0, se, 1), 0.0)
pz = 2 * stats.norm.sf(np.abs(z))
q = stats.false_discovery_control(pz, method="bh")
for i in range(L):
    put(f"neuron.{i}.z", z[i])
    put(f"neuron.{i}.p", pz[i])
    put(f"neuron.{i}.q", q[i])

# floats: A 40 x 5, B 30 x 5 (B shifted and scaled)
FA = rng.normal(0, 1, (m, 5)) @ rng.normal(0, 1, (5, 5))
FB = rng.normal(0.3, 1.2, (n, 5)) @ rng.normal(0, 1, (5, 5))
np.save(os.path.join(out, "floats_a.npy"), FA)
np.save(os.path.join(out, "floats_b.npy"), FB)
F = np.vstack([FA, FB])
sig = np.median(distance.pdist(F, "euclidean"))
put("gaussian.sigma", sig)
Kg = np.exp(-distance.squareform(distance.pdist(F, "sqeuclidean")) / (2 * sig * sig))
obs, p = p_value(Kg, m, perms)
put("gaussian.mmd2", obs)
put("gaussian.p", p)
m1, m2 = FA.mean(0), FB.mean(0)
S1, S2 = np.cov(FA, rowvar=False), np.cov(FB, rowvar=False)
covmean = linalg.sqrtm(S1 @ S2).real
put("frechet", ((m1 - m2) ** 2).sum() + np.trace(S1) + np.trace(S2) - 2 * np.trace(covmean))

# exact W2: equal sizes, 25 vs 25 codes of 70 bits, and 60 vs 60 codes of 130 bits
for name, size, bits in (("w_small", 25, 70), ("w_large", 60, 130)):
    r = rng.uniform(0.2, 0.8, bits)
    WA = (rng.random((size, bits)) < r).astype(np.uint8)
    WB = (rng.random((size, bits)) < np.clip(r + rng.normal(0, 0.15, bits), 0.02, 0.98)).astype(np.uint8)
    np.save(os.path.join(out, f"{name}_a.npy"), WA)
    np.save(os.path.join(out, f"{name}_b.npy"), WB)
    C = np.rint(distance.cdist(WA.astype(bool), WB.astype(bool), "hamming") * bits) ** 2
    rows, cols = optimize.linear_sum_assignment(C)
    put(f"{name}.w2", np.sqrt(C[rows, cols].mean()))

# the normal tail against scipy
for zz in (0.0, 0.5, 1.0, 1.959963984540054, 3.0, 5.0, 8.0):
    put(f"normal.two_sided.{zz!r}", 2 * stats.norm.sf(zz))

with open(os.path.join(out, "expected.txt"), "w") as f:
    f.write("\n".join(lines) + "\n")
print(f"wrote {len(lines)} expected values to {out}")
