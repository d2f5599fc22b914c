#!/usr/bin/env python3
"""Writes the golden NumPy files the encode module's tests read.

Every .npy/.npz file is written by NumPy itself (np.save / np.savez / np.savez_compressed /
np.lib.format.write_array), so the Java readers are checked against the reference writer.
The safetensors files are built byte by byte from the published format description
(8-byte little-endian header length, JSON header with dtype/shape/data_offsets, raw
little-endian data), because the reference `safetensors` package is not installable here.

Usage: python3 tools/golden/make_npy.py encode/src/test/resources/golden
The expected values are written beside the files as plain text (repr of float64 values,
one per line, row-major after reshape(n, -1)), so the tests compare against NumPy's own
conversion of each dtype to float64.
"""
import json
import os
import struct
import sys

import numpy as np

out = sys.argv[1] if len(sys.argv) > 1 else "golden"
os.makedirs(out, exist_ok=True)


def base_values(n, d):
    # A mix of negative, zero, positive and fractional values; deterministic.
    a = np.arange(n * d, dtype=np.float64).reshape(n, d)
    return (a - n * d / 2) * 0.75


def expected(arr, name):
    flat = arr.reshape(arr.shape[0], -1)
    with open(os.path.join(out, name + ".txt"), "w") as f:
        f.write("%d %d\n" % flat.shape)
        for v in flat.astype(np.float64).ravel(order="C"):
            f.write(repr(float(v)) + "\n")


dtypes = {
    "f4": np.float32, "f8": np.float64, "f2": np.float16,
    "i1": np.int8, "u1": np.uint8, "i2": np.int16, "i4": np.int32, "i8": np.int64,
    "b1": np.bool_,
}
n, d = 5, 7
for code, t in dtypes.items():
    vals = base_values(n, d)
    if code == "b1":
        arr = (vals > 0)
    elif code == "u1":
        arr = (np.abs(vals) % 256).astype(t)
    else:
        arr = vals.astype(t)
    for order in ("C", "F"):
        for endian in ("<", ">"):
            if code in ("b1", "i1", "u1") and endian == ">":
                continue  # single-byte types have no byte order ('|')
            a = arr.astype(arr.dtype.newbyteorder(endian)) if code not in ("b1", "i1", "u1") else arr
            a = np.asfortranarray(a) if order == "F" else np.ascontiguousarray(a)
            name = "%s_%s_%s" % (code, order, "le" if endian == "<" else "be")
            np.save(os.path.join(out, name + ".npy"), a)
            expected(a, name)

# Special float values (inf/nan are bad input; the reader must find them by row and column).
bad = np.array([[1.0, 2.0, 3.0], [4.0, np.nan, 6.0]], dtype=np.float32)
np.save(os.path.join(out, "nan_f4.npy"), bad)
bad = np.array([[1.0, 2.0], [3.0, 4.0], [np.inf, 0.0]], dtype=np.float64)
np.save(os.path.join(out, "inf_f8.npy"), bad)

# Three-dimensional array: rows flattened as reshape(n, -1) (C order), in both memory orders.
cube = base_values(4, 6).reshape(4, 2, 3).astype(np.float32)
np.save(os.path.join(out, "cube_f4_C_le.npy"), np.ascontiguousarray(cube))
np.save(os.path.join(out, "cube_f4_F_le.npy"), np.asfortranarray(cube))
expected(cube, "cube_f4")

# Format versions 2.0 and 3.0, written by NumPy's own writer with an explicit version.
v = base_values(3, 4).astype(np.float32)
for ver in ((1, 0), (2, 0), (3, 0)):
    with open(os.path.join(out, "version_%d_%d.npy" % ver), "wb") as f:
        np.lib.format.write_array(f, v, version=ver)
expected(v, "version")

# npz archives: stored and deflated, two "layers".
l1 = base_values(6, 5).astype(np.float32)
l2 = (base_values(6, 3) * -1).astype(np.float64)
np.savez(os.path.join(out, "layers_stored.npz"), first=l1, second=l2)
np.savez_compressed(os.path.join(out, "layers_deflated.npz"), first=l1, second=np.asfortranarray(l2))
expected(l1, "layers_first")
expected(l2, "layers_second")

# One-dimensional arrays: refused by the matrix readers (one example saved without its batch axis,
# or a flat vector), as a file and as an .npz member beside a good one.
vec = base_values(1, 6).ravel().astype(np.float32)
np.save(os.path.join(out, "vector_f4.npy"), vec)
np.save(os.path.join(out, "vector_u1.npy"), (vec > 0).astype(np.uint8))
np.savez(os.path.join(out, "vector_member.npz"), first=base_values(6, 5).astype(np.float32), flat=vec)

# Codes: booleans, 0/1 uint8 and packbits (most significant bit first in each byte).
rng = np.random.default_rng(20261202)
bits = rng.random((9, 21)) > 0.5
np.save(os.path.join(out, "codes_bool.npy"), bits)
np.save(os.path.join(out, "codes_u8.npy"), bits.astype(np.uint8))
np.save(os.path.join(out, "codes_packed.npy"), np.packbits(bits, axis=1))
expected(bits, "codes")
# The same codes as people often save them: (acts > 0).astype(int) (int64), as floats, and as
# big-endian int32 in Fortran order; and 0/1 with one stray value each, which must be refused.
np.save(os.path.join(out, "codes_i8.npy"), bits.astype(int))
np.save(os.path.join(out, "codes_f4.npy"), bits.astype(np.float32))
np.save(os.path.join(out, "codes_i4_F_be.npy"), np.asfortranarray(bits.astype(">i4")))
stray = bits.astype(np.int16)
stray[4, 7] = -1
np.save(os.path.join(out, "codes_i2_stray.npy"), stray)
stray = bits.astype(np.float64)
stray[2, 20] = 0.5
np.save(os.path.join(out, "codes_f8_stray.npy"), stray)


# safetensors, byte by byte from the published format description.
def safetensors(path, tensors, metadata=None):
    header = {}
    blobs = []
    off = 0
    for name, (dtype, shape, raw) in tensors.items():
        header[name] = {"dtype": dtype, "shape": list(shape), "data_offsets": [off, off + len(raw)]}
        blobs.append(raw)
        off += len(raw)
    if metadata is not None:
        header["__metadata__"] = metadata
    h = json.dumps(header, separators=(",", ":")).encode("utf-8")
    h += b" " * ((8 - len(h) % 8) % 8)  # pad with spaces to 8-byte alignment
    with open(path, "wb") as f:
        f.write(struct.pack("<Q", len(h)))
        f.write(h)
        for b in blobs:
            f.write(b)


w = base_values(3, 2) / 8  # shape [3, 2]
b = np.array([0.5, -0.25, 1.5])


def bf16(a):
    # bfloat16: the upper 16 bits of float32 (values here are exactly representable).
    return (np.asarray(a, dtype="<f4").view("<u4") >> 16).astype("<u2").tobytes()


safetensors(os.path.join(out, "tensors.safetensors"), {
    "w_f32": ("F32", w.shape, w.astype("<f4").tobytes()),
    "w_f64": ("F64", w.shape, w.astype("<f8").tobytes()),
    "w_f16": ("F16", w.shape, w.astype("<f2").tobytes()),
    "w_bf16": ("BF16", w.shape, bf16(w)),
    "b": ("F32", b.shape, b.astype("<f4").tobytes()),
}, metadata={"format": "pt"})
expected(w, "tensors_w")
expected(b.reshape(3, 1), "tensors_b")

# The XOR network of Goodfellow, Bengio & Courville, "Deep Learning" (2016), section 6.1,
# stored with PyTorch naming (weight [out, in]).
safetensors(os.path.join(out, "xor.safetensors"), {
    "0.weight": ("F32", (2, 2), np.array([[1, 1], [1, 1]], dtype="<f4").tobytes()),
    "0.bias": ("F32", (2,), np.array([0, -1], dtype="<f4").tobytes()),
    "2.weight": ("F32", (1, 2), np.array([[1, -2]], dtype="<f4").tobytes()),
    "2.bias": ("F32", (1,), np.array([0], dtype="<f4").tobytes()),
})
np.save(os.path.join(out, "xor_inputs.npy"), np.array([[0, 0], [0, 1], [1, 0], [1, 1]], dtype=np.float32))
# Per-neuron medians (np.median over rows, computed in float64), odd and even row counts.
med_rng = np.random.default_rng(7)
for rows in (11, 12):
    m = np.round(med_rng.normal(size=(rows, 6)), 2).astype(np.float32)
    m[:, 5] = 0.0  # a constant column: median 0, never above it (a dead neuron)
    np.save(os.path.join(out, "median_%d.npy" % rows), m)
    with open(os.path.join(out, "median_%d.txt" % rows), "w") as f:
        for v in np.median(m.astype(np.float64), axis=0):
            f.write(repr(float(v)) + "\n")

print("wrote", out)
