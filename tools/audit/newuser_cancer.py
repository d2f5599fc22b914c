#!/usr/bin/env python3
"""A second new user's run: scikit-learn's breast-cancer data (569 x 30, offline copy shipped with
scikit-learn) and a PyTorch nn.Sequential MLP 30 -> 37 -> 129 -> 65 -> 2 held in a module as `net`
(tensor names net.0.weight ... net.6.weight), so the code is 231 bits whose layers cross 64-bit
words unevenly. What newuser_mlp.py (fc1..head names, 11 features) and the fuzzers leave out:

- the model saved as float32, float16, bfloat16 and float64 safetensors, and a model trained
  without biases: every build's codes (export-codes) against the PyTorch forward pass in float64 on
  the same stored weights (torch), and how many bits a native bfloat16 forward pass would flip;
- model inputs as .npy float64, float16, Fortran order, big-endian '>f4' and int32: the same codes;
- activations as .npy of 15 dtypes (either byte order, bool), C and Fortran order, 2-D and 4-D
  (flattened per row as NumPy's reshape does), uint64 above 2^63, float16 subnormals: codes equal
  (x > 0) by NumPy;
- refusals of query files (1-D, complex, object, (n, 0), 0-d, structured): exit 2 and a message
  naming the file; an empty (0, 30) file answers no rows;
- nearest -k 5 (JSON and CSV) against a brute-force Hamming k-NN (distance, then id) by NumPy,
  with labels holding a comma, quotes and accents, keys with spaces, a metadata column named with a
  space: read back exactly through JSON and through Python's csv module;
- nearest --refine euclidean / cosine (candidates 12 plus ties) against NumPy on the dequantised
  magnitudes export-codes gives;
- build --median, --threshold 0.5, --layers (reordered), --median with --layers: query distances
  from --inputs against NumPy medians of the float64 activations;
- ood calibrate / score with four score settings (euclidean, refined, code; k, statistic,
  layers, candidates): threshold = the ceil(0.95 (n + 1))-th calibration score and every score
  against NumPy; p-values (1 + #{cal >= s}) / (n + 1); AUROC against scikit-learn's roc_auc_score;
- fidelity --index --inputs: Hamming and cosine 10-NN label accuracy by NumPy (majority, a tie to
  the label met first);
- a continuous target as the label (every value distinct): build notes it and fidelity's verdict
  does not claim the codes keep what the floats know;
- delete --keys with a key listed twice and a blank line, compact, check, then nearest on the live
  examples against brute force;
- census: purity, the share of labelled examples alone in their region and the purity where a
  region holds two or more, against a NumPy grouping of the codes, with the true labels and with
  the labels shuffled (purity stays high there: most examples are alone at 231 bits);
- dupes --pairs at radius 0 and 4 with 12 planted copies (6 across the split, 6 relabelled)
  against all pairs by NumPy, and the leaking / conflicting groups.

    tools/audit/newuser_cancer.py [--bin bin/actindex] [--work DIR]

Prints one line per check (OK or DIFF) and a summary; exit 1 on any DIFF. Needs torch (CPU),
numpy, scikit-learn, safetensors; never a test dependency (not part of bin/test). About 10 minutes on one busy shared core (some 300 commands).
"""
import argparse
import csv
import json
import os
import shutil
import subprocess
import sys

import numpy as np
import torch
from safetensors.torch import load_file, save_file
from sklearn.datasets import load_breast_cancer
from sklearn.metrics import roc_auc_score

RESULTS = []


def check(name, ok, detail=""):
    RESULTS.append(ok)
    print(("OK   " if ok else "DIFF ") + name + ("" if ok or not detail else ": " + str(detail)), flush=True)


class Net(torch.nn.Module):
    def __init__(self, bias=True):
        super().__init__()
        L = torch.nn.Linear
        self.net = torch.nn.Sequential(L(30, 37, bias=bias), torch.nn.ReLU(), L(37, 129, bias=bias), torch.nn.ReLU(),
                                       L(129, 65, bias=bias), torch.nn.ReLU(), L(65, 2, bias=bias))

    def forward(self, x):
        return self.net(x)


NAMES = ["net.0", "net.2", "net.4", "net.6"]
LAYERS = {"net.0": slice(0, 37), "net.2": slice(37, 166), "net.4": slice(166, 231)}


def hidden(sd, x, dtype=torch.float64):
    """Hidden activations after ReLU of the stored weights, computed in dtype (float64: the reference)."""
    h = torch.tensor(np.asarray(x, dtype=np.float64)).to(dtype)
    hs = []
    for i, n in enumerate(NAMES):
        b = sd.get(n + ".bias")
        h = torch.nn.functional.linear(h, sd[n + ".weight"].to(dtype), None if b is None else b.to(dtype))
        if i < 3:
            h = torch.relu(h)
            hs.append(h.double().numpy())
    return np.concatenate(hs, 1)


def brute_knn(Q, C, k):
    """Hamming k-NN by NumPy, ties by ascending id."""
    D = (Q[:, None, :] != C[None, :, :]).sum(2)
    return D, [list(np.lexsort((np.arange(len(C)), D[i]))[:k]) for i in range(len(Q))]


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--bin", default=os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "bin", "actindex"))
    ap.add_argument("--work", default="/tmp/actindex-newuser-cancer")
    args = ap.parse_args()
    shutil.rmtree(args.work, ignore_errors=True)
    os.makedirs(args.work)
    os.chdir(args.work)
    binary = os.path.abspath(args.bin)

    def run(*a):
        return subprocess.run(["taskset", "-c", "0", binary, *a], capture_output=True, text=True)

    def ok_run(*a):
        p = run(*a)
        if p.returncode != 0:
            check("run " + " ".join(a), False, p.stderr.strip()[:400])
        return p

    def js(*a):
        return json.loads(ok_run(*a, "--format", "json").stdout)

    def codes_of(index, extra=()):
        ok_run("export-codes", "--index", index, "--out", index + ".codes.npy", *extra)
        return np.load(index + ".codes.npy").astype(bool)

    # ---- data and models
    torch.manual_seed(7)
    rng = np.random.default_rng(7)
    d = load_breast_cancer()
    X = (d.data - d.data.mean(0)) / d.data.std(0)
    y = d.target
    perm = rng.permutation(len(X))
    tr, te = perm[:400], perm[400:]
    for bias, name in [(True, "model"), (False, "nobias")]:
        m = Net(bias)
        opt = torch.optim.Adam(m.parameters(), 1e-2)
        xt, yt = torch.tensor(X[tr], dtype=torch.float32), torch.tensor(y[tr])
        for _ in range(40):
            opt.zero_grad()
            torch.nn.functional.cross_entropy(m(xt), yt).backward()
            opt.step()
        sd = {k: v.detach().contiguous() for k, v in m.state_dict().items()}
        save_file(sd, name + ".safetensors")
        if bias:
            save_file({k: v.half() for k, v in sd.items()}, "model_f16.safetensors")
            save_file({k: v.bfloat16() for k, v in sd.items()}, "model_bf16.safetensors")
            save_file({k: v.double() for k, v in sd.items()}, "model_f64.safetensors")
    Xtr, Xte = X[tr].astype(np.float32), X[te].astype(np.float32)
    np.save("train.npy", Xtr)
    np.save("test.npy", Xte)
    np.save("cal.npy", Xte[:84])
    np.save("held.npy", Xte[84:])
    np.save("oodx.npy", np.stack([r[rng.permutation(30)] for r in Xte[84:]]).astype(np.float32))  # features shuffled per row
    label_names = ["malignant tumour, confirmed", 'bénin ü "ok"']
    with open("train.csv", "w", newline="") as f:
        w = csv.writer(f)
        w.writerow(["key", "label", "split", "age band"])
        for i in tr:
            w.writerow([f"pt {i:04d}", label_names[y[i]], "train", f"{i % 7} yrs"])
    meta = list(csv.DictReader(open("train.csv", encoding="utf-8")))
    sd = load_file("model.safetensors")

    # ---- model dtypes, no biases, input dtypes
    for model in ["model", "model_f16", "model_bf16", "model_f64", "nobias"]:
        idx = "ix_" + model
        ok_run("build", "--out", idx, "--model", model + ".safetensors", "--inputs", "train.npy", "--magnitudes", "off")
        c = codes_of(idx)
        msd = load_file(model + ".safetensors")
        ref = hidden(msd, Xtr) > 0
        check(f"build --model {model}.safetensors: codes = float64 forward pass of the stored weights", c.shape == ref.shape and (c == ref).all(),
              f"{(c != ref).sum()} bits differ")
        if model == "model_bf16":
            nat = hidden(msd, Xtr, torch.bfloat16) > 0
            print(f"     (a native bfloat16 forward pass flips {(nat != ref).sum()} of {ref.size} bits in {(nat != ref).any(1).sum()} rows)")
    ref = hidden(sd, Xtr) > 0
    for nm, arr in [("float64", X[tr]), ("float16", X[tr].astype(np.float16)), ("Fortran", np.asfortranarray(Xtr)),
                    ("big-endian", X[tr].astype(">f4")), ("int32", np.round(X[tr] * 10).astype(np.int32))]:
        np.save(f"in_{nm}.npy", arr)
        idx = "ix_in_" + nm
        ok_run("build", "--out", idx, "--model", "model.safetensors", "--inputs", f"in_{nm}.npy", "--magnitudes", "off")
        want = hidden(sd, arr.astype(np.float64)) > 0
        c = codes_of(idx)
        check(f"build --inputs {nm} .npy: codes = float64 forward pass", (c == want).all(), f"{(c != want).sum()} bits differ")

    # ---- activations of many dtypes and orders
    base = rng.normal(size=(23, 4, 5, 3))
    nd = 0
    cases = 0
    for dt in ["<f2", ">f2", "<f4", ">f4", "<f8", ">f8", "<i1", ">i2", "<i4", ">i8", "<u2", ">u4", ">u8", "|b1", "|u1"]:
        a = (base > 0) if dt == "|b1" else (np.abs(base) * 3).astype(dt) if dt[1] == "u" else (base * 3).astype(dt) if dt[1] == "i" else base.astype(dt)
        for shape_name, arr in [("C4d", np.ascontiguousarray(a)), ("F4d", np.asfortranarray(a)), ("F2d", np.asfortranarray(a.reshape(23, -1)))]:
            cases += 1
            np.save("act.npy", arr)
            shutil.rmtree("ia", ignore_errors=True)
            p = run("build", "--out", "ia", "--activations", "act.npy", "--magnitudes", "off")
            want = arr.reshape(len(arr), -1).astype(np.float64) > 0
            if p.returncode or not (codes_of("ia") == want).all():
                nd += 1
                print(f"     {dt} {shape_name}: rc {p.returncode} {p.stderr.strip()[:200]}")
    for nm, arr in [("uint64 above 2^63", np.array([[2**63 + 1, 0], [2**64 - 1, 5]], dtype="<u8")),
                    ("float16 subnormals", np.array([[6e-8, -6e-8], [1e-7, 0]], dtype="<f2"))]:
        cases += 1
        np.save("act.npy", arr)
        shutil.rmtree("ia", ignore_errors=True)
        p = run("build", "--out", "ia", "--activations", "act.npy", "--magnitudes", "off")
        if p.returncode or not (codes_of("ia") == (arr.astype(np.float64) > 0)).all():
            nd += 1
            print(f"     {nm}: rc {p.returncode} {p.stderr.strip()[:200]}")
    check(f"build --activations: {cases} dtype / order / shape cases give (x > 0)", nd == 0, f"{nd} cases differ")

    # ---- the main index and query-file refusals
    ok_run("build", "--out", "i1", "--model", "model.safetensors", "--inputs", "train.npy", "--meta", "train.csv")
    ok_run("export-codes", "--index", "i1", "--out", "i1c.npy", "--magnitudes", "i1m.npy")
    C = np.load("i1c.npy").astype(bool)
    M = np.load("i1m.npy").astype(np.float64)
    bad = {"oned": np.zeros(30, np.float32), "complex": np.zeros((3, 30), np.complex64), "cols0": np.zeros((5, 0), np.float32),
           "scalar": np.float32(1), "struct": np.zeros(3, dtype=[("a", "f4"), ("b", "f4")]), "wide": np.zeros((2, 31), np.float32)}
    for nm, arr in bad.items():
        np.save(f"bad_{nm}.npy", arr)
        p = run("nearest", "--index", "i1", "--inputs", f"bad_{nm}.npy")
        lines = p.stderr.strip().splitlines()
        check(f"nearest --inputs {nm}: exit 2, one line naming the file", p.returncode == 2 and len(lines) == 1 and f"bad_{nm}.npy" in lines[0]
              and p.stdout == "", (p.returncode, p.stderr.strip()[:200]))
    np.save("empty.npy", np.zeros((0, 30), np.float32))
    p = run("nearest", "--index", "i1", "--inputs", "empty.npy", "--format", "json")
    check("nearest on a (0, 30) file: no rows, exit 0", p.returncode == 0 and json.loads(p.stdout)["results"] == [], p.stderr.strip())

    # ---- nearest against brute force, metadata round trip
    A = hidden(sd, Xte)
    Q = A > 0
    D, want = brute_knn(Q, C, 5)
    J = js("nearest", "--index", "i1", "--inputs", "test.npy", "-k", "5")
    diffs = 0
    for r in J["results"]:
        q = r["query"]
        if [n["id"] for n in r["neighbors"]] != want[q] or [n["distance"] for n in r["neighbors"]] != [int(D[q][i]) for i in want[q]]:
            diffs += 1
        for n in r["neighbors"]:
            m = meta[n["id"]]
            if (n["key"], n["label"], n["split"], n["meta"].get("age band")) != (m["key"], m["label"], m["split"], m["age band"]):
                diffs += 1
            lay = {k: int((Q[q][s] != C[n["id"]][s]).sum()) for k, s in LAYERS.items()}
            if n["layer_distances"] != lay:
                diffs += 1
    check(f"nearest -k 5 JSON: {len(J['results'])} queries, ids, distances, per-layer distances and metadata", diffs == 0, f"{diffs} differences")
    p = ok_run("nearest", "--index", "i1", "--inputs", "test.npy", "-k", "5", "--format", "csv")
    rows = list(csv.DictReader(p.stdout.splitlines()))
    diffs = sum(1 for r in rows if int(r["id"]) != want[int(r["query"])][int(r["rank"]) - 1] or r["label"] != meta[int(r["id"])]["label"]
                or r["age band"] != meta[int(r["id"])]["age band"])
    check(f"nearest CSV read by Python's csv module: {len(rows)} rows", diffs == 0 and len(rows) == 5 * len(Xte), f"{diffs} differences")

    # ---- refine
    for metric in ["euclidean", "cosine"]:
        J = js("nearest", "--index", "i1", "--inputs", "test.npy", "-k", "4", "--refine", metric, "--candidates", "12")
        diffs = 0
        for r in J["results"]:
            q = r["query"]
            o = np.lexsort((np.arange(len(C)), D[q]))
            cand = np.where(D[q] <= D[q][o[11]])[0]
            if metric == "euclidean":
                e = np.sqrt(((A[q] - M[cand]) ** 2).sum(1))
            else:
                e = 1 - (M[cand] @ A[q]) / (np.linalg.norm(M[cand], axis=1) * np.linalg.norm(A[q]))
            oo = np.lexsort((cand, e))[:4]
            got = [n["id"] for n in r["neighbors"]]
            gd = np.array([n["refined_distance"] for n in r["neighbors"]])
            if got != list(cand[oo]) or np.abs(gd - e[oo]).max() > 1e-4:
                diffs += 1
        check(f"nearest --refine {metric} --candidates 12: ids and refined distances (1e-4) against NumPy", diffs == 0, f"{diffs} queries differ")

    # ---- binarization rules and --layers, queries by --inputs
    H, HT = hidden(sd, Xtr), hidden(sd, Xte)
    med = np.median(H, 0)
    for opts, f in [(["--median"], lambda h: h > med), (["--threshold", "0.5"], lambda h: h > 0.5),
                    (["--layers", "net.4,net.0"], lambda h: np.concatenate([h[:, LAYERS["net.4"]], h[:, LAYERS["net.0"]]], 1) > 0),
                    (["--median", "--layers", "net.2"], lambda h: h[:, LAYERS["net.2"]] > med[LAYERS["net.2"]])]:
        shutil.rmtree("ib", ignore_errors=True)
        ok_run("build", "--out", "ib", "--model", "model.safetensors", "--inputs", "train.npy", *opts)
        Db, wb = brute_knn(f(HT), f(H), 3)
        J = js("nearest", "--index", "ib", "--inputs", "test.npy", "-k", "3")
        diffs = sum(1 for r in J["results"] if [n["id"] for n in r["neighbors"]] != wb[r["query"]]
                    or [n["distance"] for n in r["neighbors"]] != [int(Db[r["query"]][i]) for i in wb[r["query"]]])
        check(f"build {' '.join(opts)}: nearest --inputs against NumPy", diffs == 0, f"{diffs} queries differ")

    # ---- ood
    def score(x, kind, k, stat, layers, cands):
        a = hidden(sd, x)
        cols = np.concatenate([np.arange(231)[LAYERS[l]] for l in layers]) if layers else np.arange(231)
        Dq = ((a[:, None, cols] > 0) != C[None][:, :, cols]).sum(2)
        out = []
        for i in range(len(x)):
            if kind == "code":
                v = np.sort(Dq[i])[:k].astype(float)
            else:
                o = np.lexsort((np.arange(len(C)), Dq[i]))
                cand = np.where(Dq[i] <= Dq[i][o[cands - 1]])[0]
                qv, mv = a[i][cols], M[cand][:, cols]
                if kind == "euclidean":
                    e = np.sqrt(((qv - mv) ** 2).sum(1))
                else:
                    e = 1 - (mv @ qv) / (np.linalg.norm(qv) * np.linalg.norm(mv, axis=1))
                v = np.sort(e)[:k]
            out.append(v[-1] if stat == "kth" else v.mean())
        return np.array(out)

    for kind, k, stat, layers, cands in [("euclidean", 1, "kth", [], 100), ("euclidean", 5, "mean", ["net.2"], 7),
                                         ("refined", 3, "kth", ["net.4", "net.0"], 10), ("code", 4, "mean", ["net.2", "net.4"], 100)]:
        shutil.rmtree("io", ignore_errors=True)
        shutil.copytree("i1", "io")
        opts = ["--score", kind, "-k", str(k), "--statistic", stat] + (["--layers", ",".join(layers)] if layers else []) \
            + (["--candidates", str(cands)] if kind != "code" else [])
        thr = js("ood", "calibrate", "--index", "io", "--inputs", "cal.npy", *opts)["threshold"]
        cal = score(np.load("cal.npy"), kind, k, stat, layers, cands)
        n = len(cal)
        rthr = np.sort(cal)[int(np.ceil(0.95 * (n + 1))) - 1]
        name = f"ood {kind} k={k} {stat} layers={layers or 'all'} candidates={cands}"
        check(name + ": threshold", abs(thr - rthr) <= 1e-5 * max(1, abs(rthr)), (thr, rthr))
        sc = {}
        for part in ["held", "oodx"]:
            J = js("ood", "score", "--index", "io", "--inputs", part + ".npy")
            got = np.array([r["score"] for r in J["results"]])
            ref = score(np.load(part + ".npy"), kind, k, stat, layers, cands)
            pv = np.array([(1 + (cal >= s).sum()) / (n + 1) for s in got])
            check(f"{name}: {part} scores (1e-5) and p-values", np.abs(got - ref).max() <= 1e-5 * max(1, np.abs(ref).max())
                  and np.abs(pv - [r["p_value"] for r in J["results"]]).max() < 1e-12, np.abs(got - ref).max())
            sc[part] = got
        if kind == "euclidean" and not layers:
            E = js("ood", "eval", "--index", "io", "--in", "held.npy", "--out", "oodx.npy")
            au = roc_auc_score(np.r_[np.zeros(len(sc["held"])), np.ones(len(sc["oodx"]))], np.r_[sc["held"], sc["oodx"]])
            got = next((s["auroc"] for s in E.get("scores", []) if s["name"] == "euclidean"), None)
            check("ood eval: euclidean AUROC against scikit-learn's roc_auc_score", got is not None and abs(got - au) < 1e-9, (got, au))

    # ---- fidelity label accuracy
    F = js("fidelity", "--index", "i1", "--inputs", "train.npy", "-k", "10")
    lab = np.array([m["label"] for m in meta])

    def acc(dist):
        right = 0
        for i in range(len(dist)):
            dd = dist[i].astype(float).copy()
            dd[i] = np.inf
            top = np.lexsort((np.arange(len(dd)), dd))[:10]
            cnt = {}
            for j in top:
                cnt[lab[j]] = cnt.get(lab[j], 0) + 1
            best = max(cnt.values())
            vote = next(lab[j] for j in top if cnt[lab[j]] == best)
            right += vote == lab[i]
        return right / len(dist)
    Dh = (C[:, None] != C[None]).sum(2)
    nrm = np.linalg.norm(H, axis=1)
    Dc = 1 - (H @ H.T) / np.outer(nrm, nrm)
    for nm, ref in [("hamming", acc(Dh)), ("cosine", acc(Dc))]:
        check(f"fidelity: {nm} 10-NN label accuracy against NumPy", abs(F["accuracy"][nm] - ref) < 1e-12, (F["accuracy"][nm], ref))

    # ---- a continuous target as the label
    with open("price.csv", "w", newline="") as f:
        w = csv.writer(f)
        w.writerow(["key", "label"])
        for i, v in enumerate(rng.gamma(2, 1.5, size=400)):
            w.writerow([f"h{i}", f"{v:.5f}"])
    p = ok_run("build", "--out", "ip", "--model", "model.safetensors", "--inputs", "train.npy", "--meta", "price.csv")
    check("build with a continuous target as the label: a note says so", "are written by no other row" in p.stderr, p.stderr.strip()[-300:])
    v = js("fidelity", "--index", "ip", "--inputs", "train.npy")["verdict"]
    check("fidelity with a continuous target: the verdict does not compare accuracies of 0", "keep what the float activations know" not in v
          and "Labels too rarely shared" in v, v[:200])

    # ---- delete (a key twice, a blank line), compact, check
    shutil.rmtree("id", ignore_errors=True)
    shutil.copytree("i1", "id")
    gone = [meta[i]["key"] for i in (3, 17, 250)]
    with open("gone.txt", "w") as f:
        f.write(gone[0] + "\n\n" + gone[1] + "\n" + gone[0] + "\n" + gone[2] + "\n")
    dj = js("delete", "--index", "id", "--keys", "gone.txt")
    check("delete --keys with a key twice and a blank line: 3 deleted", dj["deleted"] == 3 and dj["live"] == 397, dj)
    live = np.array([i for i in range(400) if i not in (3, 17, 250)])
    for step in ["after delete", "after compact"]:
        if step == "after compact":
            ok_run("compact", "--index", "id")
        Dl, wl = brute_knn(Q, C[live], 5)
        J = js("nearest", "--index", "id", "--inputs", "test.npy", "-k", "5")
        diffs = sum(1 for r in J["results"] if [n["id"] for n in r["neighbors"]] != [int(live[i]) for i in wl[r["query"]]])
        check(f"nearest {step}: live examples only, against brute force", diffs == 0, f"{diffs} queries differ")
    p = run("check", "--index", "id")
    check("check after delete and compact: exit 0", p.returncode == 0, p.stderr.strip()[:200])

    # ---- census purity, and what it rests on
    with open("shuffled.csv", "w", newline="") as f:
        w = csv.writer(f)
        w.writerow(["key", "label"])
        for i, lbl in enumerate(rng.permutation([m["label"] for m in meta])):
            w.writerow([f"s{i}", lbl])
    ok_run("build", "--out", "ish", "--model", "model.safetensors", "--inputs", "train.npy", "--meta", "shuffled.csv")
    for idx, labs in [("i1", [m["label"] for m in meta]), ("ish", [r["label"] for r in csv.DictReader(open("shuffled.csv", encoding="utf-8"))])]:
        cj = js("census", "--index", idx)
        for pre in cj["prefixes"]:
            end = {"net.0": 37, "net.2": 166, "net.4": 231}[pre["layers"][-1]]
            groups = {}
            for i in range(400):
                groups.setdefault(C[i, :end].tobytes(), []).append(labs[i])
            alone = sum(1 for g in groups.values() if len(g) == 1)
            shared = [g for g in groups.values() if len(g) > 1]
            maj = sum(max(g.count(x) for x in set(g)) for g in shared)
            purity = (alone + maj) / 400
            ps = maj / sum(len(g) for g in shared) if shared else None
            ok = abs(pre["purity"] - purity) < 1e-12 and abs(pre["labelled_alone"] - alone / 400) < 1e-12 and \
                (ps is None and pre["purity_shared"] is None or ps is not None and abs(pre["purity_shared"] - ps) < 1e-12)
            check(f"census {idx} {'+'.join(pre['layers'])}: purity {purity:.3f}, labelled alone {alone / 400:.3f}, purity where shared "
                  f"{'n/a' if ps is None else f'{ps:.3f}'} against NumPy", ok, pre)

    # ---- dupes with planted copies
    Xd = np.concatenate([Xtr, Xtr[:12]])
    np.save("dup.npy", Xd)
    with open("dup.csv", "w", newline="") as f:
        w = csv.writer(f)
        w.writerow(["key", "label", "split"])
        for i in range(412):
            src = i if i < 400 else i - 400
            lbl = label_names[y[tr[src]]] if not (i >= 406) else label_names[1 - y[tr[src]]]
            w.writerow([f"d{i}", lbl, "test" if 400 <= i < 406 else "train"])
    ok_run("build", "--out", "idup", "--model", "model.safetensors", "--inputs", "dup.npy", "--meta", "dup.csv")
    Cd = hidden(sd, Xd) > 0
    Dd = (Cd[:, None] != Cd[None]).sum(2)
    for radius in [0, 4]:
        J = js("dupes", "--index", "idup", "--radius", str(radius), "--pairs", f"pairs{radius}.csv")
        got = {(int(r["id_a"]), int(r["id_b"]), int(r["distance"])) for r in csv.DictReader(open(f"pairs{radius}.csv"))}
        want = {(i, j, int(Dd[i, j])) for i in range(412) for j in range(i + 1, 412) if Dd[i, j] <= radius}
        check(f"dupes --radius {radius}: {len(want)} pairs against all pairs by NumPy", got == want, f"{len(got ^ want)} pairs differ")
        if radius == 0:
            s = J["summary"]
            check("dupes --radius 0: the 6 copies across the split leak and the 6 relabelled conflict (at least)",
                  s["cross_split_groups"] >= 6 and s["conflicting_groups"] >= 6, s)

    n_diff = RESULTS.count(False)
    print(f"\n{len(RESULTS)} checks, {n_diff} DIFF")
    sys.exit(1 if n_diff else 0)


if __name__ == "__main__":
    main()
