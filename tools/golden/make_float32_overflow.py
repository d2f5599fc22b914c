"""Golden float64 -> float32 casts at and past float32's range, for io.actindex.encode.FarActivationsTest.

Run: python3 tools/golden/make_float32_overflow.py encode/src/test/resources/golden/float32_overflow.csv
Writes comma-separated lines (# starts a comment): the float64 value as repr(), then
numpy.float64(x).astype(numpy.float32) as repr() of the float32 ('inf', '-inf' or a number).
NumPy casts with the IEEE 754 default rounding (round to nearest, ties to even): a value whose
rounding exceeds the largest float32 (2^128 * (1 - 2^-24), about 3.4028235e38) overflows to an
infinity of its sign (IEEE 754-2019, section 4.3.1 and section 7.4, overflow); one within half a
unit in the last place of the largest float32 (2^103 here) rounds to it; the tie itself goes to
even, which is 2^128, so to infinity. The values are fixed below (no randomness).
"""
import sys
import warnings

import numpy as np

MAX = float(np.finfo(np.float32).max)
VALUES = [1.0, 3.0e38, MAX, -MAX, MAX + 2.0 ** 102, MAX + 2.0 ** 103 - 2.0 ** 75, MAX + 2.0 ** 103, -(MAX + 2.0 ** 103),
          3.5e38, -3.5e38, 1e39, -5e38, 1e160, 1.7976931348623157e308, -1.7976931348623157e308]


def main(out):
    lines = ["# float64, numpy.float64(x).astype(numpy.float32) (NumPy " + np.__version__ + ")"]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # NumPy warns "overflow encountered in cast"
        for x in VALUES:
            f = np.float64(x).astype(np.float32)
            lines.append(repr(float(x)) + "," + repr(float(f)))
    with open(out, "w") as fh:
        fh.write("\n".join(lines) + "\n")


if __name__ == "__main__":
    main(sys.argv[1])
