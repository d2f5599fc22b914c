#!/usr/bin/env python3
"""Writes the golden files of the input-format corner cases the encode module's tests read.

Each file is written by the reference library itself, and its NAME.txt holds what that library
reads back (same layout as make_npy.py: `rows cols`, then one repr(float) per line, row-major):

- u8_high.npy, u8_high_F_be.npy: uint64 values above 2^63 whose low bits NumPy must round
  (np.save; expected: NumPy's astype(np.float64), round to nearest even).
- codes_packed_little.npy: 21-bit codes packed with np.packbits(bitorder='little'), the order
  actindex does not read (expected: the codes).
- decimal_comma.csv: one column of decimals as pandas writes it for a European spreadsheet,
  to_csv(sep=';', decimal=',', header=False, index=False); expected: what pandas reads back
  with read_csv(sep=';', decimal=',', header=None). Read as a comma-separated file it looks like
  two columns of whole numbers.

Usage: python3 tools/golden/make_formats.py encode/src/test/resources/golden/formats
"""
import os
import sys

import numpy as np
import pandas as pd

out = sys.argv[1] if len(sys.argv) > 1 else "formats"
os.makedirs(out, exist_ok=True)


def expected(arr, name):
    flat = np.asarray(arr).reshape(len(arr), -1)
    with open(os.path.join(out, name + ".txt"), "w") as f:
        f.write("%d %d\n" % flat.shape)
        for v in flat.astype(np.float64).ravel(order="C"):
            f.write(repr(float(v)) + "\n")


# Above 2^63 doubles are 2048 apart: 2^63 + 1025 is nearer 2^63 + 2048 than 2^63, and
# 2^63 + 3073 nearer 2^63 + 4096; halving first and rounding the half would make ties of both.
high = np.array([[2**63 + 1025, 2**63 + 3073, 2**64 - 1],
                 [2**63 + 1024, 2**63 + 1, 2**64 - 2047],
                 [0, 1, 2**53 + 1]], dtype="<u8")
np.save(os.path.join(out, "u8_high.npy"), high)
np.save(os.path.join(out, "u8_high_F_be.npy"), np.asfortranarray(high.astype(">u8")))
expected(high, "u8_high")

# Codes packed with bitorder='little' (least significant bit first): with 21 bits, bits 16-18 of a
# code land where NumPy's default order keeps the padding of the last byte.
bits = np.random.default_rng(20261205).random((9, 21)) > 0.5
np.save(os.path.join(out, "codes_packed_little.npy"), np.packbits(bits, axis=1, bitorder="little"))
expected(bits, "codes_packed_little")

values = pd.DataFrame({"v": [0.342, -5.103, 5.697, -18.473, 2.25, 0.05]})
path = os.path.join(out, "decimal_comma.csv")
values.to_csv(path, sep=";", decimal=",", header=False, index=False)
expected(pd.read_csv(path, sep=";", decimal=",", header=None).to_numpy(), "decimal_comma")

print("wrote", out, "with numpy", np.__version__, "and pandas", pd.__version__)
