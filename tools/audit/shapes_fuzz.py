#!/usr/bin/env python3
"""Randomized command-line fuzz of exact search on odd shapes, against a plain NumPy brute force.

Each case draws a number of stored codes (1 to 70,000: the scan, the tables and, from
Partition.MIN_CODES = 4,096 codes in a segment, the cluster partition), a code width (1 to 4,097
bits) cut into 1-4 layers at random places (inside and at 64-bit word boundaries), a code family
(uniform, skewed, few distinct codes, near copies of a few centres, all identical), an input form
(bool/int/float 0-1 codes, packed bytes with --code-layout, float or int activations as .npy or
.npz with named layers), a build (in one go, or build + adds + a delete by keys (now and then of
every example) + maybe compact + maybe an add, also with small segments and a low merge factor),
and planner costs (stored, scan made dear, tables made dear, random): costs choose the path, never
the answer. Then it runs nearest (k 1, 2, 10, n-1, n, n+5; --ties; --layers in any order; --where;
JSON or CSV), region, dupes (self-join at radius 0-3 and now and then wider, with --pairs, and
--against), census, and checks every answer against NumPy on the live codes under the documented
rules (distance, then id ascending).

    tools/audit/shapes_fuzz.py [--seed S] [--cases N] [--bin bin/actindex] [--work DIR]

One line per case, OK or DIFF (with what differs); exit 1 on any DIFF. numpy only; never a test
dependency.
"""
import argparse
import csv
import io
import json
import os
import shutil
import subprocess
import sys
import time

import numpy as np

N_CHOICES = [1, 2, 3, 63, 64, 65, 127, 1000, 5000, 70000]
BITS_CHOICES = [1, 2, 7, 63, 64, 65, 127, 128, 129, 200, 255, 256, 257, 511, 1000, 1025, 4097]
FAMILIES = ["uniform", "skewed", "few", "near", "identical"]
MAX_CELLS = 40_000_000  # n * bits, so that files and the brute force stay small
MAX_PAIRS_FILE = 300_000
DEFAULT_COSTS = [0.4, 0.3, 20, 50, 30, 3, 1.56, 30]
COST_NAMES = ["scan-per-code", "scan-per-word", "probe-dense", "probe-sparse", "candidate", "walk",
              "partition-code", "candidate-far"]


class Diff(Exception):
    pass


# ---------------------------------------------------------------- brute force

def popdist(q, codes):
    """Hamming distances between packed rows q (m, B) and codes (n, B): (m, n) int32."""
    out = np.empty((q.shape[0], codes.shape[0]), dtype=np.int32)
    for i in range(q.shape[0]):
        out[i] = np.bitwise_count(np.bitwise_xor(codes, q[i])).sum(axis=1, dtype=np.int32)
    return out


class Model:
    """The live examples as NumPy sees them: bool codes, ids, keys, labels, grp."""

    def __init__(self, layers):
        self.layers = layers  # [(name, width)]
        self.bounds = np.cumsum([0] + [w for _, w in layers])
        self.codes = []
        self.ids = []
        self.keys = []
        self.labels = []
        self.grp = []

    def finish(self, live_mask):
        self.C = np.concatenate(self.codes)[live_mask]
        self.I = np.concatenate(self.ids)[live_mask]
        self.K = [k for k, m in zip(sum(self.keys, []), live_mask) if m]
        self.L = [k for k, m in zip(sum(self.labels, []), live_mask) if m]
        self.G = np.concatenate(self.grp)[live_mask]

    def cols(self, layer_names):
        names = [nm for nm, _ in self.layers]  # in the order given: census takes prefixes of it
        idx = [names.index(nm) for nm in layer_names] if layer_names else range(len(self.layers))
        return [(self.layers[i][0], self.bounds[i], self.bounds[i + 1]) for i in idx]

    def packed(self, B, layer_names):
        """Packed bytes of the chosen layers side by side, each layer padded to whole bytes."""
        return np.concatenate([np.packbits(B[:, a:b], axis=1) for _, a, b in self.cols(layer_names)], axis=1)

    def layer_dists(self, Q, sel, layer_names):
        return {nm: popdist(np.packbits(Q[:, a:b], axis=1), np.packbits(self.C[sel][:, a:b], axis=1))
                for nm, a, b in self.cols(layer_names)}


# ---------------------------------------------------------------- drawing a case

def draw_layers(rng, bits):
    nl = int(rng.integers(1, min(4, bits) + 1))
    cuts = set()
    cand = [c for c in range(1, bits) if c % 64 in (0, 1, 63)]
    while len(cuts) < nl - 1:
        if cand and rng.random() < 0.5:
            cuts.add(int(rng.choice(cand)))
        else:
            cuts.add(int(rng.integers(1, bits)))
    b = [0] + sorted(cuts) + [bits]
    names = rng.choice(["h", "L", "relu", "blk", "x"], size=nl)
    return [(f"{names[i]}{i}", b[i + 1] - b[i]) for i in range(nl)]


def draw_codes(rng, family, n, bits):
    if family == "uniform":
        return rng.random((n, bits)) < 0.5
    if family == "skewed":
        kind = rng.choice(3, size=bits, p=[0.35, 0.15, 0.5])
        rate = np.where(kind == 0, 0.0, np.where(kind == 1, 1.0, rng.beta(0.5, 0.5, size=bits)))
        return rng.random((n, bits)) < rate
    if family == "identical":
        return np.repeat(rng.random((1, bits)) < 0.5, n, axis=0)
    u = int(rng.choice([1, 2, 3, 5, 17, 100]))
    centres = rng.random((u, bits)) < rng.choice([0.5, 0.2])
    C = centres[rng.integers(0, u, size=n)]
    if family == "near":
        for f in range(3):  # up to 3 flips each, so dupes at radius 1-3 have pairs
            rows = np.nonzero(rng.random(n) < 0.4)[0]
            C[rows, rng.integers(0, bits, size=rows.size)] ^= True
    return C


def draw_queries(rng, model_all, bits, nq):
    allc = model_all
    Q = []
    for _ in range(nq):
        r = rng.random()
        if r < 0.4:
            Q.append(allc[rng.integers(0, allc.shape[0])].copy())
        elif r < 0.75:
            q = allc[rng.integers(0, allc.shape[0])].copy()
            f = rng.integers(0, bits, size=int(rng.integers(1, 4)))
            q[f] ^= True
            Q.append(q)
        elif r < 0.85:
            Q.append(np.full(bits, rng.random() < 0.5))
        else:
            Q.append(rng.random(bits) < 0.5)
    return np.array(Q, dtype=bool)


def write_codes(rng, path, B, layers, form):
    """Writes bool codes B in form; returns the options that read them."""
    layout = ",".join(f"{nm}:{w}" for nm, w in layers)
    if form == "packed":
        np.save(path, np.packbits(B, axis=1))
        return ["--codes", path, "--code-layout", layout]
    dt = {"bool": bool, "int8": np.int8, "uint8": np.uint8, "int64": np.int64, "float32": np.float32}[form]
    arr = B.astype(dt)
    if rng.random() < 0.3:
        arr = np.asfortranarray(arr)
    np.save(path, arr)
    named = layers != [("code", B.shape[1])]
    return ["--codes", path] + (["--code-layout", layout] if named or rng.random() < 0.5 else [])


def activations(rng, B, dtype):
    if dtype == "int8":
        on = rng.integers(1, 128, size=B.shape)
        off = rng.integers(-128, 1, size=B.shape)
        return np.where(B, on, off).astype(np.int8)
    on = rng.choice([1e-30, 1e-3, 0.5, 7.0], size=B.shape) * rng.random(B.shape) + np.float32(1e-30)
    off = rng.choice([0.0, -0.0, -1e-30, -1.0], size=B.shape) * (rng.random(B.shape) + 0.5)
    a = np.where(B, on, off)
    if dtype == "float16":
        a = np.where(B, np.maximum(a, 1e-3), a)  # stays above 0 in float16
    return a.astype(dtype)


def write_acts(rng, path, B, layers, form, dtype):
    """Activations that binarize (> 0) to B; .npy for one layer or side by side, .npz by name."""
    A = activations(rng, B, dtype)
    if form == "npz":
        bounds = np.cumsum([0] + [w for _, w in layers])
        np.savez(path, **{nm: A[:, bounds[i]:bounds[i + 1]] for i, (nm, _) in enumerate(layers)})
        return ["--activations", path + ".npz"]
    np.save(path, A)
    return ["--activations", path + ".npy"]


# ---------------------------------------------------------------- running the jar

class Runner:
    def __init__(self, binary, env):
        self.binary = binary
        self.env = env
        self.commands = 0
        self.seconds = 0.0
        self.slowest = (0.0, "")

    def run(self, *args, expect_json=True):
        t = time.time()
        p = subprocess.run([self.binary] + [str(a) for a in args], capture_output=True, text=True, env=self.env)
        self.commands += 1
        self.seconds += time.time() - t
        self.slowest = max(self.slowest, (time.time() - t, " ".join(str(a) for a in args if not str(a).startswith("/"))))
        if p.returncode != 0:
            raise Diff(f"exit {p.returncode}: {' '.join(map(str, args))}: {p.stderr.strip()[:400]}")
        return json.loads(p.stdout) if expect_json else p.stdout


# ---------------------------------------------------------------- one case

def run_case(args, seed, case, work, state):
    rng = np.random.default_rng([seed, case])
    n = int(rng.choice(args.sizes))
    bits = int(rng.choice(args.widths))
    while n * bits > MAX_CELLS:
        bits = int(rng.choice([b for b in args.widths if n * b <= MAX_CELLS] or [1]))
    layers = draw_layers(rng, bits)
    family = str(rng.choice(FAMILIES))
    C = draw_codes(rng, family, n, bits)
    if n * bits <= 4_000_000 and rng.random() < 0.4:
        src = "acts"
        form = "npz" if (len(layers) > 1 and rng.random() < 0.7) or rng.random() < 0.3 else "npy"
        dtype = str(rng.choice(["float32", "float64", "float16", "int8"]))
        if form == "npy":
            layers = [("act", bits)]  # a single .npy is one layer
    else:
        src = "codes"
        form = "packed" if (n * bits > 8_000_000 or rng.random() < 0.4) and bits > 1 else str(
            rng.choice(["bool", "int8", "uint8", "int64", "float32"]))
        if form != "packed" and len(layers) == 1 and rng.random() < 0.5:
            layers = [("code", bits)]
        dtype = None
    mode = str(rng.choice(["one", "pieces", "pieces"])) if n >= 2 else "one"
    costs = str(rng.choice(["stored", "scan-dear", "tables-dear", "random"]))
    small_segments = mode == "pieces" and rng.random() < 0.4
    desc = (f"n={n} bits={bits} layers={','.join(f'{a}:{b}' for a, b in layers)} family={family} "
            f"src={src}/{form}{'/' + dtype if dtype else ''} build={mode}{'+small-segments' if small_segments else ''} "
            f"costs={costs}")

    state["desc"] = desc
    env = dict(os.environ)
    costs_file = os.path.join(work, "planner-costs.properties")
    if costs == "stored":
        env["ACTINDEX_PLANNER_COSTS"] = os.path.join(work, "no-such-costs-file")
    else:
        c = list(DEFAULT_COSTS)
        if costs == "scan-dear":
            c[0] *= 300; c[1] *= 300
        elif costs == "tables-dear":
            c[2] *= 300; c[3] *= 300; c[4] *= 300; c[7] *= 300
        else:
            c = [min(9e5, x * 10 ** rng.uniform(-1.5, 1.5)) for x in c]
        with open(costs_file, "w") as f:
            f.write("format=1\n" + "".join(f"{nm}={v:.6g}\n" for nm, v in zip(COST_NAMES, c)))
        env["ACTINDEX_PLANNER_COSTS"] = costs_file
    java_opts = []
    if small_segments:
        words = (bits + 63) // 64
        java_opts += [f"-Dactindex.segment.maxBytes={8 * words * int(rng.integers(300, 6000))}",
                      f"-Dactindex.merge.factor={int(rng.integers(2, 5))}"]
    env["ACTINDEX_JAVA_OPTS"] = " ".join(java_opts)
    r = Runner(args.bin, env)
    checks = [0]
    skipped = state.setdefault("skipped", [0])

    def check(cond, what):
        checks[0] += 1
        if not cond:
            raise Diff(what)

    idx = os.path.join(work, "idx")
    model = Model(layers)
    keyprefix = str(rng.choice(["k", "w-", "ex", "row"]))

    def meta_file(name, ids):
        labels = [f"c{int(x)}" for x in rng.integers(0, 3, size=len(ids))]
        grp = rng.integers(0, 100, size=len(ids))
        keys = [f"{keyprefix}{i:05d}" if keyprefix != "row" else f"row-{i}" for i in ids]
        path = os.path.join(work, name)
        with open(path, "w") as f:
            f.write("key,label,split,grp\n")
            for k, lab, g in zip(keys, labels, grp):
                f.write(f"{k},{lab},{'train' if g % 2 else 'test'},{g}\n")
        model.codes.append(C[ids])
        model.ids.append(np.asarray(ids))
        model.keys.append(keys)
        model.labels.append(labels)
        model.grp.append(grp)
        return path

    def source(name, rows):
        path = os.path.join(work, name)
        B = C[rows]
        if src == "acts":  # an add may give an .npz index's layers side by side in one .npy
            f = "npy" if form == "npz" and name != "b0" and rng.random() < 0.3 else form
            return write_acts(rng, path, B, layers, f, dtype)
        return write_codes(rng, path + ".npy", B, layers, form)

    # build
    if mode == "one":
        chunks = [np.arange(n)]
    else:
        cuts = sorted(set(int(x) for x in rng.integers(1, n, size=int(rng.integers(1, 4)))))
        chunks = np.split(np.arange(n), cuts)
    mags = (["--magnitudes", "off" if rng.random() < 0.7 else str(rng.choice([8, 4, 2]))]) if src == "acts" else []
    out = r.run("build", "--out", idx, *source("b0", chunks[0]), "--meta", meta_file("m0.csv", chunks[0]), *mags,
                "--format", "json")
    check(out["rows"] == len(chunks[0]) and out["first_id"] == 0 and out["bits"] == bits,
          f"build summary {out}")
    for j, ch in enumerate(chunks[1:], 1):
        out = r.run("add", "--index", idx, *source(f"a{j}", ch)[:2], "--meta", meta_file(f"m{j}.csv", ch), "--format", "json")
        check(out["rows"] == len(ch) and out["first_id"] == int(ch[0]), f"add {j} summary {out} (first id {ch[0]})")
    live = np.ones(n, dtype=bool)
    if mode == "pieces":
        ndel = int(rng.integers(0, max(1, n // 5) + 1)) if rng.random() < 0.8 else 0
        if rng.random() < 0.05:
            ndel = n  # every example: answers without live examples
        if ndel:
            gone = rng.choice(n, size=ndel, replace=False)
            allkeys = sum(model.keys, [])
            with open(os.path.join(work, "gone.txt"), "w") as f:
                f.write("".join(allkeys[i] + "\n" for i in gone))
            out = r.run("delete", "--index", idx, "--keys", os.path.join(work, "gone.txt"), "--format", "json")
            live[gone] = False
            check(out["deleted"] == ndel and out["live"] == int(live.sum()), f"delete summary {out}")
            if rng.random() < 0.6:
                r.run("compact", "--index", idx, "--format", "json")
            if rng.random() < 0.3:  # and an add after the delete
                extra = draw_codes(rng, family, int(rng.integers(1, 50)), bits)
                C = np.concatenate([C, extra])
                ch = np.arange(n, n + extra.shape[0])
                out = r.run("add", "--index", idx, *source("a9", ch)[:2], "--meta", meta_file("m9.csv", ch), "--format", "json")
                check(out["first_id"] == n, f"add after delete: first id {out['first_id']}, not {n}")
                live = np.concatenate([live, np.ones(extra.shape[0], dtype=bool)])
                n = C.shape[0]
    model.finish(live)
    info = r.run("info", "--index", idx, "--format", "json")
    check(info["live"] == int(live.sum()), f"info live {info['live']} != {int(live.sum())}")
    nseg = len(info["segments"])
    paths = [s["searcher"]["substrings"] > 0 for s in info["segments"]]
    parts = sum(s["searcher"]["on_demand_bytes"] > 0 for s in info["segments"])
    desc += f" segments={nseg} with-tables={sum(paths)} with-partition={parts}"
    state["desc"] = desc
    nlive = int(live.sum())
    names = [nm for nm, _ in layers]

    # queries
    nq = int(rng.integers(5, 150))
    Q = draw_queries(rng, C, bits, nq)
    qpath = os.path.join(work, "q")
    if src == "acts" and rng.random() < 0.7:
        qopt = write_acts(rng, qpath, Q, layers, "npz" if form == "npz" and rng.random() < 0.6 else "npy", "float32")
    else:
        packed = (rng.random() < 0.3 or form == "packed") and bits > 1
        qopt = write_codes(rng, qpath + ".npy", Q, layers, "packed" if packed else "bool")[:2]  # the index's layout
    kind = ["--kind", "codes"] if src == "acts" and qopt[0] == "--codes" else []

    def pick_layers():
        if len(names) == 1 or rng.random() < 0.5:
            return None
        k = int(rng.integers(1, len(names) + 1))
        picked = rng.choice(names, size=k, replace=False).tolist()
        return picked if rng.random() < 0.5 else sorted(picked, key=names.index)

    def where():
        if rng.random() < 0.25:
            t = int(rng.choice([0, 1, 2, 5, 10, 50, 99, 100, int(rng.integers(0, 101))]))
            return t, ["--where", f"grp < {t}"]
        return None, []

    # nearest
    for rep in range(2):
        k = int(rng.choice([1, 2, 10, max(1, nlive - 1), max(1, nlive), nlive + 5]))
        ties = rng.random() < 0.4
        lay = pick_layers() if rep == 1 else None
        t, wopt = where()
        opts = ["-k", k] + (["--ties"] if ties else []) + (["--layers", ",".join(lay)] if lay else []) + wopt
        if rng.random() < 0.3:
            opts += ["--threads", 2]
        sel = np.ones(nlive, dtype=bool) if t is None else model.G < t
        ids = model.I[sel]
        ld = model.layer_dists(Q, sel, lay)
        D = sum(ld.values()) if ld else np.zeros((nq, 0), dtype=np.int32)
        wants, total = [], 0
        for qi in range(nq):  # the expected answers, as many queries as keep the output small
            order = np.lexsort((ids, D[qi]))
            want = order[:k]
            if ties and len(want):
                want = order[D[qi][order] <= D[qi][want[-1]]]
            total += len(want)
            if wants and total > 20_000:
                break
            wants.append(want)
        opts += ["--rows", f"0:{len(wants)}"]
        if rng.random() < 0.3:  # CSV: one line per neighbour
            text = r.run("nearest", "--index", idx, *qopt, *opts, "--format", "csv", expect_json=False)
            lines = list(csv.DictReader(io.StringIO(text)))
            out = {"results": [{"neighbors": []} for _ in wants]}
            for ln in lines:
                out["results"][int(ln["query"])]["neighbors"].append(
                    {"id": int(ln["id"]), "key": ln["key"], "distance": int(ln["distance"]),
                     "layer_distances": {c[len("distance_"):]: int(v) for c, v in ln.items() if c.startswith("distance_")}})
            opts += ["--format", "csv"]
        else:
            out = r.run("nearest", "--index", idx, *qopt, *opts, "--format", "json")
        check(len(out["results"]) == len(wants), f"nearest {opts}: {len(out['results'])} results for {len(wants)} queries")
        for qi, res in enumerate(out["results"]):
            want = wants[qi]
            got_ids = [nb["id"] for nb in res["neighbors"]]
            got_d = [nb["distance"] for nb in res["neighbors"]]
            check(got_ids == ids[want].tolist() and got_d == D[qi][want].tolist(),
                  f"nearest {opts} query {qi}: got ids {got_ids[:12]} d {got_d[:12]}, "
                  f"want ids {ids[want][:12].tolist()} d {D[qi][want][:12].tolist()}")
            if "vote" in res and len(want):  # the default vote counts every example within the k-th distance
                dk = int(D[qi][want[-1]])
                v = res["vote"]
                check(v is not None and (v["neighbors"], v["within_distance"]) == (int((D[qi] <= dk).sum()), dk),
                      f"nearest {opts} query {qi}: vote over {None if v is None else (v['neighbors'], v['within_distance'])}, "
                      f"want {(int((D[qi] <= dk).sum()), dk)}")
            for nb, w in zip(res["neighbors"], want):
                check(nb["key"] == model.K[np.nonzero(sel)[0][w]], f"nearest {opts} query {qi}: id {nb['id']} key {nb['key']}")
                check(all(nb["layer_distances"].get(nm) == int(ld[nm][qi][w]) for nm in ld),
                      f"nearest {opts} query {qi}: id {nb['id']} layer distances {nb['layer_distances']}")

    # region
    rad = int(rng.integers(0, 4))
    lay = pick_layers()
    t, wopt = where()
    cols = model.cols(lay)
    lbits = sum(b - a for _, a, b in cols)
    rad = min(rad, lbits)
    opts = ["--radius", rad, "--examples", 4] + (["--layers", ",".join(lay)] if lay else []) + wopt
    out = r.run("region", "--index", idx, *qopt, *opts, "--format", "json")
    sel = np.ones(nlive, dtype=bool) if t is None else model.G < t
    Cs, Is = model.C[sel], model.I[sel]
    Ls = [l for l, s in zip(model.L, sel) if s]
    Ks = [k for k, s in zip(model.K, sel) if s]
    P = model.packed(Cs, lay)
    uniq, inv, cnt = np.unique(P, axis=0, return_inverse=True, return_counts=True) if len(Cs) else (P, np.zeros(0, int), np.zeros(0, int))
    inv = np.asarray(inv).ravel()
    first_ids = {}
    for pos in np.argsort(Is, kind="stable"):
        first_ids.setdefault(int(inv[pos]), []).append(pos)
    check(len(out["results"]) == nq, "region: result count")
    for qi, res in enumerate(out["results"]):
        qp = model.packed(Q[qi:qi + 1], lay)
        d = popdist(qp, uniq)[0] if len(uniq) else np.zeros(0, int)
        want = []
        same = None
        for u in np.nonzero(d <= rad)[0]:
            mem = first_ids[int(u)]
            labs = {}
            for m in mem:
                labs[Ls[m]] = labs.get(Ls[m], 0) + 1
            ucode = np.unpackbits(uniq[u])
            qcode = np.unpackbits(qp[0])
            flipped, off = [], 0
            for nm, a, b in cols:
                w = b - a
                pad = (w + 7) // 8 * 8
                diff = np.nonzero(ucode[off:off + w] != qcode[off:off + w])[0]
                flipped += [f"{nm}:{x}" for x in diff]
                off += pad
            item = (int(d[u]), tuple(sorted(flipped)), int(cnt[u]), tuple(sorted(labs.items())), tuple(Ks[m] for m in mem[:4]))
            if d[u] == 0:
                same = item
            else:
                want.append(item)
        got = [(g["distance"], tuple(sorted(g["flipped"])), g["count"], tuple(sorted(g["labels"].items())), tuple(g["keys"]))
               for g in res["nearby"]]
        check(sorted(got) == sorted(want), f"region {opts} query {qi}: {len(got)} regions, want {len(want)}; "
              f"first missing {sorted(set(want) - set(got))[:2]} first extra {sorted(set(got) - set(want))[:2]}")
        check(all((a[0], -a[2]) <= (b[0], -b[2]) for a, b in zip(got, got[1:])), f"region {opts} query {qi}: order")
        s = res["same"]
        gs = (s["count"], tuple(sorted(s["labels"].items())), tuple(s["keys"]))
        ws = (same[2], same[3], same[4]) if same else (0, (), ())
        check(gs == ws, f"region {opts} query {qi}: same region {gs}, want {ws}")

    # dupes self-join
    for rep in range(2 if n <= 5000 else 1):
        rad = int(rng.integers(0, 4)) if rng.random() < 0.8 else int(rng.choice([5, 8, 12, 30, 31, bits]))
        lay = pick_layers()
        t, wopt = where()
        cols = model.cols(lay)
        rad = min(rad, sum(b - a for _, a, b in cols))
        for attempt in range(2):
            sel = np.ones(nlive, dtype=bool) if t is None else model.G < t
            Cs, Is = model.C[sel], model.I[sel]
            P = model.packed(Cs, lay)
            if len(Cs):
                uniq, inv, cnt = np.unique(P, axis=0, return_inverse=True, return_counts=True)
                inv = np.asarray(inv).ravel()
            else:
                uniq, inv, cnt = P, np.zeros(0, int), np.zeros(0, int)
            upairs = distinct_pairs(uniq, rad)
            if upairs is not None:
                break
            t, wopt = 2, ["--where", "grp < 2"]  # too many candidates for the reference: a 2% sample
        if upairs is None:
            skipped[0] += 1
            continue
        ua, ub, ud = upairs
        npairs = int((cnt[ua].astype(np.int64) * cnt[ub]).sum() + (cnt.astype(np.int64) * (cnt - 1) // 2).sum())
        exact = int((cnt.astype(np.int64) * (cnt - 1) // 2).sum())
        # groups: components over distinct codes
        parent = list(range(len(uniq)))

        def find(x):
            while parent[x] != x:
                parent[x] = parent[parent[x]]
                x = parent[x]
            return x
        for a, b in zip(ua.tolist(), ub.tolist()):
            ra, rb = find(a), find(b)
            if ra != rb:
                parent[max(ra, rb)] = min(ra, rb)
        comp = np.array([find(x) for x in range(len(uniq))], dtype=np.int64)
        size = np.bincount(comp[inv], minlength=len(uniq)) if len(inv) else np.zeros(0, int)
        gsizes = size[size >= 2]
        pairs_file = os.path.join(work, "pairs.csv")
        want_file = npairs <= MAX_PAIRS_FILE
        opts = ["--radius", rad, "--groups", 5] + (["--layers", ",".join(lay)] if lay else []) + wopt + \
            (["--pairs", pairs_file] if want_file else []) + ["--threads", int(rng.integers(1, 3))]
        out = r.run("dupes", "--index", idx, *opts, "--format", "json")
        sm = out["summary"]
        got = (sm["examples"], sm["pairs"], sm["exact_duplicate_pairs"], sm["duplicated_examples"], sm["groups"],
               sm["largest_group"], sm["examples_in_groups"])
        want = (int(sel.sum()), npairs, exact, int(cnt[cnt >= 2].sum()), int(gsizes.size),
                int(gsizes.max()) if gsizes.size else 0, int(gsizes.sum()))
        check(got == want, f"dupes {opts}: (examples, pairs, exact pairs, duplicated, groups, largest, in groups) {got}, want {want}")
        # the listed groups: size descending, ties by smallest id
        members = {}
        for pos in np.argsort(Is, kind="stable"):
            c = int(comp[inv[pos]])
            if size[c] >= 2:
                members.setdefault(c, []).append(int(Is[pos]))
        split_of = {int(i): ("train" if g % 2 else "test") for i, g in zip(model.I, model.G)}
        label_of = dict(zip(model.I.tolist(), model.L))
        cross = sum(len({split_of[i] for i in m}) > 1 for m in members.values())
        conflict = sum(len({label_of[i] for i in m}) > 1 for m in members.values())
        check((sm["cross_split_groups"], sm["conflicting_groups"]) == (cross, conflict),
              f"dupes {opts}: (cross-split, conflicting) groups {(sm['cross_split_groups'], sm['conflicting_groups'])}, "
              f"want {(cross, conflict)}")
        lst = sorted(members.values(), key=lambda m: (-len(m), m[0]))[:5]
        glist = [[m["id"] for m in g["members"]] for g in out["groups"]]
        check([len(g) for g in lst] == [g["size"] for g in out["groups"]] and [m[:20] for m in lst] == glist,
              f"dupes {opts}: groups {[(g['size'], gl[:3]) for g, gl in zip(out['groups'], glist)]}, "
              f"want {[(len(m), m[:3]) for m in lst]}")
        if want_file:
            with open(pairs_file) as f:
                got_pairs = [tuple(int(x) for x in line.split(",")) for line in f.read().splitlines()[1:]]
            wp = expand_pairs(Is, inv, cnt, ua, ub, ud)
            gp = sorted(got_pairs)
            check(gp == wp, f"dupes {opts}: --pairs holds {len(gp)} pairs, want {len(wp)}; "
                  f"extra {sorted(set(gp) - set(wp))[:3]} missing {sorted(set(wp) - set(gp))[:3]}")

    # dupes --against
    rad = int(rng.integers(0, 4)) if rng.random() < 0.8 else int(rng.choice([5, 8, 12, 30, 31, bits]))
    lay = pick_layers()
    rad = min(rad, sum(b - a for _, a, b in model.cols(lay)))
    t, wopt = where()
    sel = np.ones(nlive, dtype=bool) if t is None else model.G < t
    D = sum(model.layer_dists(Q, sel, lay).values())
    ids = model.I[sel]
    opts = ["--radius", rad] + (["--layers", ",".join(lay)] if lay else []) + wopt
    nmatch = int((D <= rad).sum())
    apairs = os.path.join(work, "against.csv")
    if nmatch <= MAX_PAIRS_FILE:
        opts += ["--pairs", apairs]
    out = r.run("dupes", "--index", idx, "--against", qopt[1], *kind, *opts, "--format", "json")
    if nmatch <= MAX_PAIRS_FILE:
        with open(apairs) as f:
            gp = sorted(tuple(int(x) for x in line.split(",")) for line in f.read().splitlines()[1:])
        qi_, ui_ = np.nonzero(D <= rad)
        wp = sorted(zip(qi_.tolist(), ids[ui_].tolist(), D[qi_, ui_].tolist()))
        check(gp == wp, f"dupes --against {opts}: --pairs holds {len(gp)} rows, want {len(wp)}; "
              f"extra {sorted(set(gp) - set(wp))[:3]} missing {sorted(set(wp) - set(gp))[:3]}")
    rows = {x["row"]: x for x in out["rows"]}
    check(out["summary"]["matches"] == int((D <= rad).sum()), f"dupes --against {opts}: {out['summary']['matches']} matches, want {int((D <= rad).sum())}")
    for qi in range(nq):
        m = np.nonzero(D[qi] <= rad)[0]
        order = m[np.lexsort((ids[m], D[qi][m]))]
        if len(m) == 0:
            check(qi not in rows, f"dupes --against {opts}: row {qi} listed without matches")
            continue
        g = rows.get(qi)
        check(g is not None and g["count"] == len(m) and [x["id"] for x in g["matches"]] == ids[order][:20].tolist(),
              f"dupes --against {opts} row {qi}: {None if g is None else (g['count'], [x['id'] for x in g['matches']][:5])}, "
              f"want {(len(m), ids[order][:5].tolist())}")

    # census
    lay = pick_layers()
    out = r.run("census", "--index", idx, "--largest", 3, *(["--layers", ",".join(lay)] if lay else []), "--format", "json")
    cols = model.cols(lay)
    check(out["examples"] == nlive, f"census examples {out['examples']} != {nlive}")
    for pi, pre in enumerate(out["prefixes"]):
        pl = [nm for nm, _, _ in cols[:pi + 1]]
        check(pre["layers"] == pl, f"census prefix {pi} layers {pre['layers']} != {pl}")
        if nlive:
            _, rinv, cnt = np.unique(model.packed(model.C, pl), axis=0, return_inverse=True, return_counts=True)
            lab = np.unique(model.L, return_inverse=True)[1]
            joint = np.zeros((len(cnt), lab.max() + 1), dtype=np.int64)
            np.add.at(joint, (np.asarray(rinv).ravel(), lab), 1)
            check(abs(pre["purity"] - joint.max(axis=1).sum() / nlive) < 1e-12, f"census prefix {pl}: purity {pre['purity']}")
        else:
            cnt = np.zeros(0, int)
        got = (pre["regions"], pre["singletons"], [x["count"] for x in pre["largest"]])
        want = (len(cnt), int((cnt == 1).sum()), sorted(cnt.tolist(), reverse=True)[:3])
        check(got == want, f"census prefix {pl}: (regions, singletons, largest) {got}, want {want}")
        if nlive:
            sc = np.sort(cnt)
            q = lambda p: int(sc[max(0, int(np.ceil(p * len(sc))) - 1)])
            e = pre["examples_per_region"]
            check((e["min"], e["p50"], e["p90"], e["p99"], e["max"]) == (int(sc[0]), q(0.5), q(0.9), q(0.99), int(sc[-1])),
                  f"census prefix {pl}: examples per region {e}")
            hist = {}  # buckets 1, 2, 3-4, 5-8, ...
            for c in cnt.tolist():
                lo = 1 if c == 1 else 2 ** (int(c - 1).bit_length() - 1) + 1
                h = hist.setdefault(lo, [0, 0])
                h[0] += 1
                h[1] += c
            want_h = [(lo, max(lo, 2 * lo - 2) if lo > 1 else 1, r_, e_) for lo, (r_, e_) in sorted(hist.items())]
            got_h = [(x["min"], x["max"], x["regions"], x["examples"]) for x in pre["histogram"]]
            check(got_h == want_h, f"census prefix {pl}: histogram {got_h[:4]}, want {want_h[:4]}")
    check(len(out["neurons"]) == len(cols), "census neuron layers")
    for ne, (nm, a, b) in zip(out["neurons"], cols):
        rate = model.C[:, a:b].mean(axis=0) if nlive else None
        if nlive:
            check(np.allclose(ne["firing_rates"], rate, rtol=0, atol=1e-12), f"census layer {nm}: firing rates")
            if nlive >= 59:
                dead = [f"{nm}:{x}" for x in np.nonzero(rate == 0)[0]]
                on = [f"{nm}:{x}" for x in np.nonzero(rate == 1)[0]]
                check(ne["dead"] == dead and ne["always_on"] == on, f"census layer {nm}: dead/always on {ne['dead'][:5]} {ne['always_on'][:5]}")
    return desc, checks[0], r


def distinct_pairs(uniq, rad):
    """Pairs (a < b) of distinct packed codes within rad, with distances; None when too many to try."""
    u = len(uniq)
    if u < 2:
        z = np.zeros(0, dtype=np.int64)
        return z, z, z
    if u * u * uniq.shape[1] <= 1e9:  # plain all pairs
        A, Bx, Dx = [], [], []
        step = max(1, int(2e8 // (u * uniq.shape[1] + 1)))
        for s in range(0, u, step):
            d = popdist(uniq[s:s + step], uniq)
            a, b = np.nonzero(d <= rad)
            keep = s + a < b
            A.append(s + a[keep]); Bx.append(b[keep]); Dx.append(d[a[keep], b[keep]])
        return np.concatenate(A), np.concatenate(Bx), np.concatenate(Dx)
    # pigeonhole: rad + 1 disjoint byte ranges; a pair within rad agrees on one of them
    nb = uniq.shape[1]
    edges = np.linspace(0, nb, rad + 2).astype(int)
    cand = []
    for p in range(rad + 1):
        part = uniq[:, edges[p]:edges[p + 1]]
        if part.shape[1] == 0:
            return None
        _, lab = np.unique(part, axis=0, return_inverse=True)
        lab = np.asarray(lab).ravel()
        order = np.argsort(lab, kind="stable")
        bounds = np.nonzero(np.diff(lab[order]))[0] + 1
        runs = np.split(order, bounds)
        if sum(len(x) * (len(x) - 1) // 2 for x in runs) > 3_000_000:
            return None
        for run in runs:
            if len(run) > 1:
                i, j = np.triu_indices(len(run), 1)
                a, b = run[i], run[j]
                cand.append(np.minimum(a, b) * u + np.maximum(a, b))
    c = np.unique(np.concatenate(cand + [np.zeros(0, dtype=np.int64)]).astype(np.int64))
    c = np.stack([c // u, c % u], axis=1)
    d = np.bitwise_count(np.bitwise_xor(uniq[c[:, 0]], uniq[c[:, 1]])).sum(axis=1)
    k = d <= rad
    return c[k, 0], c[k, 1], d[k]


def expand_pairs(Is, inv, cnt, ua, ub, ud):
    by = {}
    for pos in range(len(Is)):
        by.setdefault(int(inv[pos]), []).append(int(Is[pos]))
    out = []
    for mem in by.values():
        mem.sort()
        out += [(mem[i], mem[j], 0) for i in range(len(mem)) for j in range(i + 1, len(mem))]
    for a, b, d in zip(ua.tolist(), ub.tolist(), ud.tolist()):
        for x in by[a]:
            for y in by[b]:
                out.append((min(x, y), max(x, y), d))
    return sorted(out)


def main():
    here = os.path.dirname(os.path.abspath(__file__))
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--seed", type=int, default=None)
    ap.add_argument("--cases", type=int, default=30)
    ap.add_argument("--bin", default=os.path.join(here, "..", "..", "bin", "actindex"))
    ap.add_argument("--work", default="/tmp/actindex-shapes-fuzz")
    ap.add_argument("--only", type=int, default=None, help="run this case number alone")
    ap.add_argument("--keep", action="store_true", help="keep the files of cases that pass too")
    ap.add_argument("--sizes", type=lambda x: [int(v) for v in x.split(",")], default=N_CHOICES,
                    help="stored codes to draw from (default %(default)s)")
    ap.add_argument("--widths", type=lambda x: [int(v) for v in x.split(",")], default=BITS_CHOICES,
                    help="code widths to draw from (default %(default)s)")
    args = ap.parse_args()
    seed = args.seed if args.seed is not None else int(time.time()) % 1_000_000
    print(f"seed {seed}", flush=True)
    bad = total_checks = total_cmds = skipped = 0
    t0 = time.time()
    cases = [args.only] if args.only is not None else range(args.cases)
    for case in cases:
        work = os.path.join(args.work, f"case{case}")
        shutil.rmtree(work, ignore_errors=True)
        os.makedirs(work)
        t = time.time()
        state = {"desc": "?"}
        try:
            desc, nchecks, r = run_case(args, seed, case, work, state)
            total_checks += nchecks
            total_cmds += r.commands
            skipped += state["skipped"][0]
            print(f"OK   case {case} ({nchecks} checks, {r.commands} commands, {time.time() - t:.1f} s, {r.seconds:.1f} s in actindex, slowest {r.slowest[1]} {r.slowest[0]:.1f} s): {desc}", flush=True)
            if not args.keep:
                shutil.rmtree(work, ignore_errors=True)
        except Diff as e:
            bad += 1
            print(f"DIFF case {case} (rerun: --seed {seed} --only {case}; files in {work}): {state['desc']}: {e}", flush=True)
    print(f"{len(cases)} cases, {total_checks} checks, {total_cmds} commands in {time.time() - t0:.0f} s; "
          f"{skipped} self-joins left unchecked (too many candidate pairs for the reference); {bad} DIFF")
    sys.exit(1 if bad else 0)


if __name__ == "__main__":
    main()
