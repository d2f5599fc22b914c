#!/usr/bin/env python3
"""Writes .npy files with hand-made headers and records what NumPy's own reader does with each.

NumPy's writer always puts a byte-order character in 'descr' and writes 'shape' as a tuple, so
the header variants the format allows (and the ones it forbids) are written here byte by byte,
then loaded with np.load, whose verdict is the reference: read_array_header in
numpy/lib/format.py (shape must be a tuple of ints, fortran_order a bool, the keys exactly
descr/fortran_order/shape; a descr without a byte order such as 'f4' is native order), as
described in "A Simple File Format for NumPy Arrays" (NEP 1, Kern, 2007).

Usage: python3 tools/golden/make_npy_headers.py encode/src/test/resources/golden/headers
Writes NAME.npy for every case, NAME.txt (NumPy's values, as make_npy.py writes them) for each
file NumPy reads, and cases.txt: one line per case, "NAME read" or "NAME refused <NumPy's message>".
"""
import os
import sys
import warnings

import numpy as np

out = sys.argv[1] if len(sys.argv) > 1 else "headers"
os.makedirs(out, exist_ok=True)

vals = (np.arange(12, dtype=np.float64).reshape(3, 4) - 6) * 0.75


def npy(name, header, data):
    """A version 1.0 file: magic, version, length, header padded to 64 bytes, newline, data."""
    pre = 10
    text = header + " " * ((64 - (pre + len(header) + 1) % 64) % 64) + "\n"
    with open(os.path.join(out, name + ".npy"), "wb") as f:
        f.write(b"\x93NUMPY\x01\x00" + len(text).to_bytes(2, "little") + text.encode("latin1") + data)


def hdr(descr, shape, fortran="False", extra=""):
    return "{'descr': %s, 'fortran_order': %s, 'shape': %s, %s}" % (descr, fortran, shape, extra)


cases = [
    # a descr without a byte-order character: native order for NumPy, little-endian on every target
    ("noorder_f4", hdr("'f4'", "(3, 4)"), vals.astype("<f4")),
    ("noorder_f8", hdr("'f8'", "(3, 4)"), vals.astype("<f8")),
    ("noorder_i2", hdr("'i2'", "(3, 4)"), vals.astype("<i2")),
    ("noorder_u1", hdr("'u1'", "(3, 4)"), np.abs(vals).astype("u1")),
    ("noorder_b1", hdr("'b1'", "(3, 4)"), vals > 0),
    ("pipe_u1", hdr("'|u1'", "(3, 4)"), np.abs(vals).astype("u1")),
    ("big_u1", hdr("'>u1'", "(3, 4)"), np.abs(vals).astype("u1")),
    ("big_f4", hdr("'>f4'", "(3, 4)"), vals.astype(">f4")),
    # tuple forms Python accepts: trailing commas, a parenthesised int; Fortran order
    ("trailing_comma", hdr("'<f4'", "(3, 4,)"), vals.astype("<f4")),
    ("trailing_comma_3d", hdr("'<f4'", "(3, 2, 2,)"), vals.astype("<f4")),
    ("fortran_true", hdr("'<f4'", "(3, 4)", "True"), vals.astype("<f4")),
    ("grouped_int", hdr("'<f4'", "((3), 4)"), vals.astype("<f4")),
    ("python2_long", hdr("'<f4'", "(3L, 4L)"), vals.astype("<f4")),
    ("double_quotes", '{"descr": "<f4", "fortran_order": False, "shape": (3, 4)}', vals.astype("<f4")),
    # refused by NumPy
    ("shape_list", hdr("'<f4'", "[3, 4]"), vals.astype("<f4")),
    ("shape_int", hdr("'<f4'", "(12)"), vals.astype("<f4")),
    ("shape_str", hdr("'<f4'", "'3, 4'"), vals.astype("<f4")),
    ("fortran_int", hdr("'<f4'", "(3, 4)", "0"), vals.astype("<f4")),
    ("fortran_none", hdr("'<f4'", "(3, 4)", "None"), vals.astype("<f4")),
    ("extra_key", hdr("'<f4'", "(3, 4)", extra="'extra': 1, "), vals.astype("<f4")),
    ("missing_key", "{'descr': '<f4', 'shape': (3, 4), }", vals.astype("<f4")),
]

lines = []
for name, header, arr in cases:
    order = "F" if "'fortran_order': True" in header else "C"
    npy(name, header, arr.tobytes(order=order))
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # the Python 2 'L' suffix warns
            got = np.load(os.path.join(out, name + ".npy"))
    except ValueError as e:
        lines.append("%s refused %s" % (name, str(e).replace("\n", " ")))
        continue
    lines.append("%s read" % name)
    flat = got.reshape(got.shape[0], -1)
    with open(os.path.join(out, name + ".txt"), "w") as f:
        f.write("%d %d\n" % flat.shape)
        for v in flat.astype(np.float64).ravel(order="C"):
            f.write(repr(float(v)) + "\n")

with open(os.path.join(out, "cases.txt"), "w") as f:
    f.write("# made by tools/golden/make_npy_headers.py with NumPy %s\n" % np.__version__)
    f.write("\n".join(lines) + "\n")
print("wrote", out)
