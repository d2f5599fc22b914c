"""Golden values for io.actindex.query.SpearmanTest: scipy.stats.spearmanr on samples with ties.

Run: python3 tools/golden/make_spearman.py query/src/test/resources/golden/spearman.csv
Each output line: name;x values (space separated);y values;rho (repr of the float64 scipy returns).
The samples are fixed below (no randomness), chosen to have ties in x, in y, in both, and
Hamming-like integer distances against cosine-like reals.
"""
import sys

import numpy as np
from scipy import stats

SAMPLES = {
    "ties_in_x": ([1, 2, 2, 3, 4, 4, 4, 5], [2.0, 1.0, 4.0, 3.0, 6.0, 5.0, 8.0, 7.0]),
    "ties_in_both": ([3, 1, 4, 1, 5, 9, 2, 6, 5, 3, 5], [2, 7, 1, 8, 2, 8, 1, 8, 2, 8, 4]),
    "hamming_vs_cosine": (
        [0, 1, 1, 2, 2, 2, 3, 3, 4, 5, 5, 6, 8, 8, 9],
        [0.01, 0.05, 0.02, 0.10, 0.08, 0.30, 0.12, 0.11, 0.25, 0.40, 0.22, 0.35, 0.60, 0.55, 0.70],
    ),
    "negative_with_ties": ([1, 1, 2, 2, 3, 3, 4, 4], [9, 8, 8, 6, 5, 5, 2, 1]),
}


def main(out):
    with open(out, "w") as f:
        f.write("# scipy.stats.spearmanr (scipy %s, numpy %s); written by tools/golden/make_spearman.py\n"
                % (__import__("scipy").__version__, np.__version__))
        for name, (x, y) in SAMPLES.items():
            rho = stats.spearmanr(np.array(x, dtype=float), np.array(y, dtype=float)).statistic
            f.write("%s;%s;%s;%r\n" % (name, " ".join(repr(float(v)) for v in x), " ".join(repr(float(v)) for v in y), float(rho)))


if __name__ == "__main__":
    main(sys.argv[1])
