#!/usr/bin/env python3
"""Golden ROC metrics for actindex's RocMetrics test, computed by scikit-learn.

Each case is a pair of score samples (in-distribution, out-of-distribution; higher score = more
out). For each, scikit-learn gives:
  auroc     roc_auc_score(y, s) with out = 1
  aupr_out  average_precision_score(y, s) with out = 1
  aupr_in   average_precision_score(1 - y, -s) (in positive, lower score = more in)
  fpr95     from roc_curve(1 - y, -s, drop_intermediate=False): the FPR at the first point whose TPR >= 0.95
  roc       roc_curve(y, s, drop_intermediate=False): every point as threshold:fpr:tpr, space-separated
            (the first threshold is inf)
Cases mix continuous scores and integer scores with many ties (like Hamming distances), one input on
one side against many on the other, a constant in-sample against spread out scores, and in-sample
sizes where 95% of them is a whole number (20, 40, 60).

Usage: python3 tools/golden/make_ood_metrics.py query/src/test/resources/golden/ood_metrics.csv
"""
import sys

import numpy as np
import sklearn
from sklearn.metrics import average_precision_score, roc_auc_score, roc_curve


def cases():
    rng = np.random.default_rng(20261203)
    yield "continuous-small", rng.normal(0, 1, 7), rng.normal(1, 1, 5)
    yield "continuous", rng.normal(0, 1, 200), rng.normal(1.2, 1, 150)
    yield "integer-ties", rng.integers(0, 6, 120).astype(float), rng.integers(2, 9, 90).astype(float)
    yield "hamming-like", rng.binomial(40, 0.1, 300).astype(float), rng.binomial(40, 0.2, 100).astype(float)
    yield "all-tied", np.full(10, 3.0), np.full(4, 3.0)
    yield "separated", np.arange(20, dtype=float), np.arange(20, 30, dtype=float)
    yield "reversed", np.arange(10, 20, dtype=float), np.arange(0, 10, dtype=float)
    yield "one-each", np.array([1.0]), np.array([2.0])
    yield "one-in", np.array([3.0]), rng.integers(0, 7, 25).astype(float)
    yield "one-out", rng.integers(0, 7, 25).astype(float), np.array([3.0])
    yield "constant-in", np.full(30, 2.0), rng.integers(0, 5, 20).astype(float)
    yield "in-20", rng.integers(0, 10, 20).astype(float), rng.integers(3, 14, 33).astype(float)
    yield "in-40", rng.integers(0, 10, 40).astype(float), rng.integers(3, 14, 17).astype(float)
    yield "in-60", rng.normal(0, 1, 60).round(1), rng.normal(0.8, 1, 45).round(1)


def main(out):
    with open(out, "w") as f:
        f.write(f"# made by tools/golden/make_ood_metrics.py with scikit-learn {sklearn.__version__}, numpy {np.__version__}\n")
        f.write("case;in;out;auroc;aupr_in;aupr_out;fpr95;roc\n")
        for name, a, b in cases():
            s = np.concatenate([a, b])
            y = np.concatenate([np.zeros(len(a)), np.ones(len(b))])
            auroc = roc_auc_score(y, s)
            ap_out = average_precision_score(y, s)
            ap_in = average_precision_score(1 - y, -s)
            fpr, tpr, _ = roc_curve(1 - y, -s, drop_intermediate=False)
            fpr95 = fpr[np.argmax(tpr >= 0.95 - 1e-12)]
            fmt = lambda v: " ".join(repr(float(x)) for x in v)
            rf, rt, th = roc_curve(y, s, drop_intermediate=False)
            roc = " ".join(f"{float(t)!r}:{float(x)!r}:{float(z)!r}" for t, x, z in zip(th, rf, rt))
            f.write(f"{name};{fmt(a)};{fmt(b)};{auroc!r};{ap_in!r};{ap_out!r};{float(fpr95)!r};{roc}\n")


if __name__ == "__main__":
    main(sys.argv[1])
