#!/usr/bin/env python3
"""Writes the golden files of export-codes' test (cli: ExportCodesEndToEndTest): what NumPy itself
writes for a small set of codes, so that the test can compare export-codes' bytes with them.

References: NumPy's documentation of the .npy format (numpy.lib.format: magic, version, header dict
with 'descr', 'fortran_order', 'shape', then the data in C order) and of numpy.packbits (axis=1,
default bitorder='big': the first bit of each group of eight goes to the byte's most significant
bit; a row whose width is not a multiple of 8 is padded with zero bits at the end).

Usage: python3 tools/golden/make_export_codes.py cli/src/test/resources/golden/export_codes
Writes:
  codes.npy              uint8 0/1, shape (7, 13): the codes, layout a:5,b:8 (np.save)
  packed.npy             np.packbits(codes, axis=1), shape (7, 2)
  packed_b_a.npy         np.packbits of columns b then a (layers b,a), shape (7, 2)
  unpacked_b_a.npy       the same columns unpacked, shape (7, 13)
"""
import os
import sys

import numpy as np

out = sys.argv[1] if len(sys.argv) > 1 else "export_codes"
os.makedirs(out, exist_ok=True)

rng = np.random.default_rng(20261205)
codes = (rng.random((7, 13)) < 0.5).astype(np.uint8)
codes[0, :] = 1  # every bit on: the padding bits of the packed last byte must stay 0
codes[1, :] = 0
b_a = np.concatenate([codes[:, 5:], codes[:, :5]], axis=1)

np.save(os.path.join(out, "codes.npy"), codes)
np.save(os.path.join(out, "packed.npy"), np.packbits(codes, axis=1))
np.save(os.path.join(out, "packed_b_a.npy"), np.packbits(b_a, axis=1))
np.save(os.path.join(out, "unpacked_b_a.npy"), b_a)
