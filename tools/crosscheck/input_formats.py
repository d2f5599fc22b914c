#!/usr/bin/env python3
"""Cross-check of how actindex reads input files, against the reference readers: every file is
written by NumPy, pandas, safetensors or PyTorch (or byte by byte where no library writes the
variant), and what actindex reads must be exactly what numpy.load, safetensors' load_file or a
correctly rounded CSV parser (np.loadtxt) reads, or a refusal: exit 2 from `actindex build`, with
the file named on stderr. A silent difference, a crash (exit 1) or a refusal of a file that must
be read prints DIFF.

Not a test dependency: a script to rerun by hand after a change to a reader. Values are read
through the shaded jar's readers (NpyReader, NpzReader, CsvMatrixReader, SafetensorsReader) by a
small Java program run from source, so every value is compared, not only its sign; refusals go
through the command line.

Usage: python3 tools/crosscheck/input_formats.py [bin/actindex]
Needs numpy, pandas, safetensors, torch (for bfloat16).
"""
import csv
import io
import json
import os
import struct
import subprocess
import sys
import tempfile
import zipfile

import numpy as np
import pandas as pd
import torch
from safetensors.numpy import load_file, save_file
from safetensors.torch import save_file as torch_save_file

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
CLI = sys.argv[1] if len(sys.argv) > 1 else os.path.join(ROOT, "bin", "actindex")
JAR = os.path.join(ROOT, "src-demo", "target", "actindex.jar")

DUMP = r"""
import io.actindex.encode.io.*;
import java.nio.file.*;
public class Dump {
  public static void main(String[] a) throws Exception {
    for (String f : a) {
      System.out.println("FILE " + f);
      try {
        if (f.endsWith(".safetensors")) {
          try (var r = SafetensorsReader.open(Path.of(f))) {
            for (var e : r.entries().values()) {
              System.out.println("MEMBER " + e.name());
              double[] v = r.read(e.name());
              StringBuilder sb = new StringBuilder("ROW");
              for (double x : v) sb.append(' ').append(x);
              System.out.println(sb);
            }
          }
        } else if (f.endsWith(".npz")) {
          try (var z = NpzReader.open(Path.of(f))) {
            for (String n : z.names()) {
              System.out.println("MEMBER " + n);
              try (var r = z.member(n)) { rows(r); }
            }
          }
        } else {
          try (MatrixReader r = f.endsWith(".csv") ? CsvMatrixReader.open(Path.of(f)) : NpyReader.open(Path.of(f))) { rows(r); }
        }
      } catch (io.actindex.core.BadInputException e) {
        System.out.println("REFUSED " + e.getMessage().replace('\n', ' '));
      }
    }
  }
  static void rows(MatrixReader r) throws Exception {
    int c = r.cols();
    double[] d = new double[c * 7];
    for (int n; (n = r.read(d, 7)) > 0; )
      for (int i = 0; i < n; i++) {
        StringBuilder sb = new StringBuilder("ROW");
        for (int j = 0; j < c; j++) sb.append(' ').append(d[i * c + j]);
        System.out.println(sb);
      }
  }
}
"""

cases = []  # (file, expected): expected is {member: float64 matrix} to be read, or "refuse"


def npy(tmp, name, arr, **kw):
    p = os.path.join(tmp, name + ".npy")
    np.save(p, arr, **kw)
    return p


def raw_npy(tmp, name, header, data, major=1, total=64, extra=b""):
    h = header.encode("latin1")
    pre = 10 if major == 1 else 12
    h += b" " * max(0, total - pre - len(h) - 1) + b"\n"
    size = struct.pack("<H", len(h)) if major == 1 else struct.pack("<I", len(h))
    p = os.path.join(tmp, name + ".npy")
    with open(p, "wb") as f:
        f.write(b"\x93NUMPY" + bytes([major, 0]) + size + h + data + extra)
    return p


def matrix(a):
    a = np.asarray(a)
    return a.reshape(a.shape[0], int(np.prod(a.shape[1:]))).astype(np.float64)


def expect_npy(p):
    cases.append((p, {"": matrix(np.load(p))}))


def make_npy(tmp):
    rng = np.random.default_rng(7)
    base = rng.normal(size=(4, 5)) * 3
    for dt in ["<f2", "<f4", "<f8", ">f2", ">f4", ">f8", "|i1", "<i2", "<i4", "<i8", ">i2", ">i4", ">i8",
               "|u1", "<u2", "<u4", "<u8", ">u2", ">u4", ">u8"]:
        a = base * (100 if dt[1] in "iu" else 1)
        a = np.abs(a) if dt[1] == "u" else a
        tag = dt.replace("<", "le_").replace(">", "be_").replace("|", "")
        expect_npy(npy(tmp, "dt_" + tag, a.astype(dt)))
        expect_npy(npy(tmp, "dt_F_" + tag, np.asfortranarray(a.astype(dt))))
    expect_npy(npy(tmp, "bool", base > 0))
    expect_npy(npy(tmp, "packbits", np.packbits(base > 0, axis=1)))
    expect_npy(npy(tmp, "i8_big", np.array([[2**53 + 1, -2**62, 2**63 - 1], [0, 1, -1]], dtype="<i8")))
    expect_npy(npy(tmp, "u8_high", np.array([[2**63 + 1025, 2**63 + 3073, 2**64 - 1], [2**63 + 1, 0, 2**53 + 1]], dtype="<u8")))
    expect_npy(npy(tmp, "f2_special", np.array([[65504, -65504, 6e-8, -0.0], [1e-5, 0.333, 2049, 1]], dtype=">f2")))
    cube = rng.normal(size=(3, 4, 2)).astype("<f4")
    expect_npy(npy(tmp, "c3d", cube))
    expect_npy(npy(tmp, "f3d", np.asfortranarray(cube)))
    expect_npy(npy(tmp, "f4d_be", np.asfortranarray(rng.normal(size=(2, 3, 2, 2)).astype(">f8"))))
    expect_npy(npy(tmp, "transposed_view", base.astype("<f4").T))
    expect_npy(npy(tmp, "zero_rows", np.zeros((0, 3), "<f4")))
    expect_npy(npy(tmp, "zero_rows_F3d", np.asfortranarray(np.zeros((0, 3, 2), "<f4"))))
    big = rng.normal(size=(40003, 7)).astype("<f4")  # several chunks and Fortran blocks
    expect_npy(npy(tmp, "big_F", np.asfortranarray(big)))
    for v in [(1, 0), (2, 0), (3, 0)]:
        p = os.path.join(tmp, "version_%d.npy" % v[0])
        with open(p, "wb") as f:
            np.lib.format.write_array(f, base.astype("<f4"), version=v)
        expect_npy(p)
    d = base.astype("<f4").tobytes()
    hdr = "{'descr': '<f4', 'fortran_order': False, 'shape': (4, 5), }"
    for name, header, total in [("hdr_nopad", hdr, 0), ("hdr_pad16", hdr, 80),
                                ("hdr_keyorder", "{'shape': (4, 5), 'fortran_order': False, 'descr': '<f4'}", 128),
                                ("hdr_dquotes", '{"descr": "<f4", "fortran_order": False, "shape": (4,5)}', 64),
                                ("hdr_py2_long", "{'descr': '<f4', 'fortran_order': False, 'shape': (4L, 5L), }", 64),
                                ("hdr_no_byteorder", "{'descr': 'f4', 'fortran_order': False, 'shape': (4, 5), }", 64)]:
        cases.append((raw_npy(tmp, name, header, d, total=total), {"": matrix(base.astype("<f4"))}))
    refuse = [npy(tmp, "oned", base[0]), npy(tmp, "zerod", np.float32(3)), npy(tmp, "zero_cols", np.zeros((3, 0), "<f4")),
              npy(tmp, "nan", np.where(base > 2, np.nan, base).astype("<f4")), npy(tmp, "inf_be", np.where(base > 2, np.inf, base).astype(">f8")),
              npy(tmp, "complex", base.astype("c8")), npy(tmp, "text", np.array([["a", "b"]])), npy(tmp, "datetime", np.array([[1]], "M8[ns]")),
              npy(tmp, "object", np.array([[1, None]], dtype=object), allow_pickle=True), npy(tmp, "longdouble", base.astype(np.longdouble)),
              npy(tmp, "structured", np.zeros((3, 2), dtype=[("a", "<f4"), ("b", "<i4")])),
              raw_npy(tmp, "trailing_bytes", hdr, d, extra=b"\0garbage"), raw_npy(tmp, "truncated", hdr, d[:-3]),
              raw_npy(tmp, "shape_list", hdr.replace("(4, 5)", "[4, 5]"), d), raw_npy(tmp, "extra_key", hdr.replace("}", "'x': 1}"), d)]
    cases.extend((p, "refuse") for p in refuse)


def make_npz(tmp):
    rng = np.random.default_rng(3)
    a, b, c = rng.normal(size=(4, 3)).astype("<f4"), rng.normal(size=(4, 2)), rng.normal(size=(4, 5)) > 0
    p = os.path.join(tmp, "plain.npz")
    np.savez(p, h1=a, h2=b, h3=c)
    cases.append((p, {"h1": matrix(a), "h2": matrix(b), "h3": matrix(c)}))
    p = os.path.join(tmp, "compressed.npz")
    np.savez_compressed(p, h1=np.asfortranarray(a), h2=np.asfortranarray(b.astype(">f8")), h3=c)
    cases.append((p, {"h1": matrix(a), "h2": matrix(b), "h3": matrix(c)}))
    p = os.path.join(tmp, "folders.npz")
    np.savez_compressed(p, **{"enc/h1": a, "enc/sub/h2": b})
    cases.append((p, {"enc/h1": matrix(a), "enc/sub/h2": matrix(b)}))
    p = os.path.join(tmp, "trailing_bytes.npz")
    with zipfile.ZipFile(p, "w") as z:
        buf = io.BytesIO()
        np.save(buf, a)
        z.writestr("h1.npy", buf.getvalue() + b"xx")
    cases.append((p, "refuse"))
    p = os.path.join(tmp, "rows_differ.npz")
    np.savez(p, h1=a, h2=b[:3])
    cases.append((p, "refuse-build"))  # each member reads; build refuses the pair


def make_safetensors(tmp):
    rng = np.random.default_rng(5)
    w, bias = rng.normal(size=(3, 4)), rng.normal(size=(3,))
    for dt in ["float16", "float32", "float64"]:
        p = os.path.join(tmp, "st_%s.safetensors" % dt)
        save_file({"fc.weight": w.astype(dt), "fc.bias": bias.astype(dt)}, p, metadata={"format": "np"})
        cases.append((p, {k: v.astype(np.float64).reshape(1, -1) for k, v in load_file(p).items()}))
    p = os.path.join(tmp, "st_bf16.safetensors")
    torch_save_file({"fc.weight": torch.tensor(w, dtype=torch.bfloat16), "fc.bias": torch.tensor(bias, dtype=torch.bfloat16)}, p)
    from safetensors.torch import load_file as torch_load_file
    cases.append((p, {k: v.double().numpy().reshape(1, -1) for k, v in torch_load_file(p).items()}))
    # unaligned offsets and a header that lists the tensors in another order than their data
    wb, bb = w.astype("<f2").tobytes(), bias.astype("<f4").tobytes()
    h = json.dumps({"fc.weight": {"dtype": "F16", "shape": [3, 4], "data_offsets": [12, 36]},
                    "fc.bias": {"dtype": "F32", "shape": [3], "data_offsets": [0, 12]}}).encode()
    p = os.path.join(tmp, "st_unaligned.safetensors")
    with open(p, "wb") as f:
        f.write(struct.pack("<Q", len(h)) + h + bb + wb)
    cases.append((p, {k: v.astype(np.float64).reshape(1, -1) for k, v in load_file(p).items()}))


def make_csv(tmp):
    rng = np.random.default_rng(11)
    a = np.round(rng.normal(size=(4, 3)) * 10, 3)
    df = pd.DataFrame(a, columns=["u0", "u1", "u2"])

    def put(name, text):
        p = os.path.join(tmp, name + ".csv")
        with open(p, "wb") as f:
            f.write(text if isinstance(text, bytes) else text.encode())
        return p

    def same(name, text, truth=a):
        cases.append((put(name, text), {"": np.asarray(truth, np.float64)}))

    same("bom", "\ufeff" + df.to_csv(index=False))
    same("crlf_bom", "\ufeff" + df.to_csv(index=False, lineterminator="\r\n"))
    same("trailing_blank_lines", df.to_csv(index=False) + "\n  \n\n")
    same("no_final_newline", df.to_csv(index=False).rstrip("\n"))
    same("quote_all", df.to_csv(index=False, quoting=csv.QUOTE_ALL))
    same("spaces", "u0 , u1 , u2\n" + "\n".join(" , ".join(" %r " % float(v) for v in r) for r in a) + "\n")
    s = io.StringIO()
    np.savetxt(s, a, delimiter=",", header="u0,u1,u2")
    same("savetxt_header", s.getvalue())
    forms = "a,b,c,d,e,f\n+1,.5,5.,1e3,1.E-2,-0.0\n"
    same("number_forms", forms, np.loadtxt(io.StringIO(forms), delimiter=",", skiprows=1, ndmin=2))
    wide = rng.normal(size=(30011, 13)) * 10.0 ** rng.integers(-8, 8, size=(30011, 13))
    p = put("pandas_big", "")
    pd.DataFrame(wide).to_csv(p, index=False, header=False, lineterminator="\r\n")
    cases.append((p, {"": np.loadtxt(p, delimiter=",")}))  # correctly rounded (pandas' default parser is not)
    for name, text in [("decimal_comma_one_column", pd.DataFrame({"v": [0.342, -5.103, 2.25]}).to_csv(header=False, index=False, sep=";", decimal=",")),
                       ("decimal_comma_header", df.to_csv(index=False, sep=";", decimal=",")),
                       ("decimal_comma_no_header", df.to_csv(index=False, header=False, sep=";", decimal=",")),
                       ("semicolons", pd.DataFrame(a.astype(int)).to_csv(index=False, header=False, sep=";")),
                       ("space_delimited", "1.5 2.5\n3.5 4.5\n"), ("nan", "a,b\n1,nan\n"), ("inf", "a,b\n1,-Infinity\n"),
                       ("NA", "a,b\n1,NA\n"), ("empty_cell", "a,b\n1,\n"), ("ragged", "a,b,c\n1,2,3\n4,5\n"),
                       ("cr_only", "a,b\r1,2\r3,4\r"), ("utf16", "a,b\r\n1,2\r\n".encode("utf-16")),
                       ("latin1", "d\xe9j\xe0,b\n1,2\n".encode("latin-1")), ("hex", "a,b\n1,0x10\n"), ("unicode_minus", "a,b\n1,\u22122\n")]:
        cases.append((put(name, text), "refuse"))


def run_dump(java, files, tmp):
    src = os.path.join(tmp, "Dump.java")
    with open(src, "w") as f:
        f.write(DUMP)
    out = subprocess.run([java, "-cp", JAR, src] + files, capture_output=True, text=True)
    if out.returncode != 0:
        sys.exit("the reader program failed: " + out.stderr[-2000:])
    got, member = {}, None
    for line in out.stdout.splitlines():
        if line.startswith("FILE "):
            cur = got.setdefault(line[5:], {})
            member = ""
        elif line.startswith("MEMBER "):
            member = line[7:]
        elif line.startswith("ROW"):
            cur.setdefault(member, []).append([float(x) for x in line.split()[1:]])
        elif line.startswith("REFUSED "):
            cur["refused"] = line[8:]
    return got


def main():
    subprocess.run([CLI, "--version"], capture_output=True, check=True)  # builds the jar when the sources are newer
    java = os.path.join(subprocess.run([os.path.join(ROOT, "bin", "find-jdk")], capture_output=True, text=True, check=True).stdout.strip(), "bin", "java")
    failed = 0
    with tempfile.TemporaryDirectory() as tmp:
        for make in (make_npy, make_npz, make_safetensors, make_csv):
            make(tmp)
        got = run_dump(java, [p for p, _ in cases], tmp)
        for p, want in cases:
            name, g = os.path.basename(p), got.get(p, {})
            if isinstance(want, dict):
                ok = "refused" not in g and all(np.asarray(g.get(m, []), np.float64).size == w.size
                                                and np.array_equal(np.asarray(g.get(m, []), np.float64).reshape(w.shape), w) for m, w in want.items())
                print(("OK    read as the reference reads it: " if ok else "DIFF  ") + name + ("" if ok else " " + str(g)[:300]))
                failed += not ok
                continue
            if want == "refuse" and "refused" not in g:
                print("DIFF  read, but must be refused: %s %s" % (name, str(g)[:200]))
                failed += 1
                continue
            run = subprocess.run([CLI, "build", "--out", os.path.join(tmp, "ix-" + name), "--activations", p], capture_output=True, text=True)
            ok = run.returncode == 2 and name in run.stderr
            print(("OK    refused (exit 2): " if ok else "DIFF  exit %d: " % run.returncode) + name + ": " + run.stderr.strip()[:160])
            failed += not ok
    print("%d of %d cases differ" % (failed, len(cases)))
    sys.exit(1 if failed else 0)


if __name__ == "__main__":
    main()
