"""Golden 95% upper bounds of a rate never seen in n examples, for io.actindex.query.stats.NeverSeenBoundTest.

Run: python3 tools/golden/make_never_seen_bound.py query/src/test/resources/golden/never-seen-bound.csv
Writes lines n,scipy.stats.beta.ppf(0.95, 1, n) (# starts a comment): the Clopper-Pearson upper
limit for 0 successes in n trials is the 0.95 quantile of Beta(1, n), which is 1 - 0.05^(1/n).
Values are repr() of float64 values. The n are fixed below (no randomness).
"""
import sys

import scipy
from scipy import stats

N = [1, 2, 3, 5, 10, 19, 20, 30, 50, 58, 59, 60, 100, 300, 1000, 5000, 19800, 100_000, 1_000_000, 10_000_000]

with open(sys.argv[1], "w") as f:
    f.write("# n,scipy.stats.beta.ppf(0.95, 1, n); scipy %s\n" % scipy.__version__)
    for n in N:
        f.write("%d,%r\n" % (n, float(stats.beta.ppf(0.95, 1, n))))
