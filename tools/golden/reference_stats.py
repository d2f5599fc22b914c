"""Reference formulas the golden scripts and the cross-check share (numpy/scipy only).

mmd2_unbiased: the unbiased MMD^2 estimate from a kernel matrix whose first m rows are sample A
(Gretton et al., "A Kernel Two-Sample Test", JMLR 13, 2012, eq. 3).
exact_w2: Wasserstein-2 between two samples of bit rows with Hamming ground cost, by the assignment
problem for equal sizes and the transport linear program otherwise (scipy.optimize).
"""
import numpy as np
from scipy import optimize
from scipy.spatial import distance


def mmd2_unbiased(K, m):
    n = K.shape[0] - m
    kxx, kyy, kxy = K[:m, :m], K[m:, m:], K[:m, m:]
    return ((kxx.sum() - np.trace(kxx)) / (m * (m - 1)) + (kyy.sum() - np.trace(kyy)) / (n * (n - 1))
            - 2 * kxy.sum() / (m * n))


def exact_w2(a, b):
    m, n, L = len(a), len(b), a.shape[1]
    C = (distance.cdist(a, b, "hamming") * L) ** 2
    if m == n:
        r, c = optimize.linear_sum_assignment(C)
        return np.sqrt(C[r, c].mean())
    rows = [np.kron(np.eye(m)[i], np.ones(n)) for i in range(m)] + [np.kron(np.ones(m), np.eye(n)[j]) for j in range(n)]
    res = optimize.linprog(C.ravel(), A_eq=np.array(rows), b_eq=np.r_[np.full(m, 1 / m), np.full(n, 1 / n)],
                           bounds=(0, None), method="highs")
    assert res.status == 0
    return np.sqrt(max(res.fun, 0.0))
