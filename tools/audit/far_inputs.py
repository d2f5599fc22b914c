#!/usr/bin/env python3
"""Far inputs and the OOD scores: the model and data of newuser_mlp.py (same seeds, same 11 -> 48 ->
100 -> 17 -> 5 PyTorch MLP), its far-out batch, and held-out in-distribution inputs multiplied by
t = 2, 5, 10, 100. For every batch: `ood eval` AUROC of each score actindex offers (code score at
k=1 and the audit's k=3 mean, the refined (cosine) and euclidean scores from kept magnitudes, the float and
candidate-float scores from float files, the softmax baseline), each checked against NumPy /
scikit-learn, plus scores actindex does not have (plain Euclidean k-NN on activations, the
activation norm), and how many far codes lie at Hamming distance 0 or d from a training code; and one
row of a batch scaled by 1e38 (past float32): answered, flagged out, the other rows unchanged.
Then the edge bundle's range guard (export-edge --with-model, run by the edge jar on raw inputs):
the share of training, held-out and far inputs whose range ratio is above 1, its AUROC, and the jar's
ratio against NumPy's (largest layer norm over the exported bound). Last, NumPy only: whether the magnitude-aware score (Euclidean instead of cosine among the 100
nearest codes, what `--score euclidean` computes on kept magnitudes) loses on near inputs, on scikit-learn's copy of the UCI digits (0-4 in, 5-9 out,
a scikit-learn (64, 32) MLP, the three seeds of DigitsOodTest; not the project's trainer).

A ReLU network is piecewise linear: along x -> t x the input ends in one outer linear region, where
the hidden activations grow linearly in t and their direction settles (Hein, Andriushchenko &
Bitterwolf, CVPR 2019). Hamming and cosine scores see the region and the direction, not the size.

    tools/audit/far_inputs.py [--bin bin/actindex] [--edge-jar edge/target/actindex-edge-*.jar] [--work DIR] [--epochs N]

Needs torch (CPU), numpy, scikit-learn, safetensors; never a test dependency. Exit 1 on any DIFF.
"""
import argparse
import glob
import json
import os
import shutil
import subprocess
import sys
import warnings

import numpy as np
import torch
from safetensors.torch import save_file
from sklearn.metrics import roc_auc_score

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from newuser_mlp import data, hamming, hidden, runners  # noqa: E402

SCALES = [2, 5, 10, 100]
failures = []


def check(name, ok, detail=""):
    print(("OK   " if ok else "DIFF ") + name + ("" if ok else ": " + detail))
    if not ok:
        failures.append(name)


def knn(q, train, k=1, metric="hamming"):
    """The k-th nearest distance of each row of q to the rows of train."""
    if metric == "hamming":
        d = hamming(q, train).astype(float)
    elif metric == "cosine":
        qn = q / np.maximum(np.linalg.norm(q, axis=1, keepdims=True), 1e-300)
        tn = train / np.maximum(np.linalg.norm(train, axis=1, keepdims=True), 1e-300)
        d = 1 - qn @ tn.T
        d[(np.linalg.norm(q, axis=1) == 0)[:, None] | (np.linalg.norm(train, axis=1) == 0)[None, :]] = 1
    else:
        d = np.sqrt(np.maximum((q * q).sum(1)[:, None] + (train * train).sum(1)[None, :] - 2 * q @ train.T, 0))
    return np.sort(d, 1)[:, k - 1]


def refined(a_q, c_q, a_tr, c_tr, metric="cosine", candidates=100):
    """The distance (cosine or Euclidean) to the nearest of the `candidates` nearest codes (ties at the
    last distance included), on float activations (actindex uses its 8-bit kept magnitudes: close, not equal)."""
    h = hamming(c_q, c_tr)
    out = np.empty(len(a_q))
    for i in range(len(a_q)):
        last = np.sort(h[i])[candidates - 1]
        idx = np.nonzero(h[i] <= last)[0]
        out[i] = knn(a_q[i:i + 1], a_tr[idx], 1, metric)[0]
    return out


def msp_score(logits):
    e = np.exp(logits - logits.max(1, keepdims=True))
    return 1 - (e / e.sum(1, keepdims=True)).max(1)


def digits():
    """Cosine and Euclidean among the 100 nearest codes, the code score and the activation norm on near
    out-of-distribution inputs (unseen digit classes): NumPy and scikit-learn only."""
    from sklearn.datasets import load_digits
    from sklearn.neural_network import MLPClassifier
    warnings.filterwarnings("ignore")  # 60 epochs do not converge, as intended
    x, y = load_digits(return_X_y=True)
    x = x / 16.0

    def acts(m, q):
        h, out = q, []
        for w, b in zip(m.coefs_[:-1], m.intercepts_[:-1]):
            h = np.maximum(h @ w + b, 0)
            out.append(h)
        return np.concatenate(out, 1)

    print()
    print("| UCI digits seed | code k=1 | refined cosine among 100 codes | refined Euclidean among 100 codes | activation norm |")
    print("|---|---|---|---|---|")
    for seed in [11, 22, 33]:
        rng = np.random.default_rng(seed)
        idx = rng.permutation(np.nonzero(y < 5)[0])
        n = len(idx)
        tr, te = idx[:int(.6 * n)], idx[int(.8 * n):]
        m = MLPClassifier((64, 32), max_iter=60, random_state=seed).fit(x[tr], y[tr])
        a, ai, ao = acts(m, x[tr]), acts(m, x[te]), acts(m, x[y >= 5])
        truth = np.r_[np.zeros(len(ai)), np.ones(len(ao))]
        auc = [roc_auc_score(truth, np.r_[f(ai), f(ao)]) for f in [
            lambda q: knn(q > 0, a > 0), lambda q: refined(q, q > 0, a, a > 0), lambda q: refined(q, q > 0, a, a > 0, "euclid"),
            lambda q: np.linalg.norm(q, axis=1)]]
        print(f"| {seed} | " + " | ".join(f"{v:.3f}" for v in auc) + " |")


def range_guard(run, js, edge_jar, net, xtr, xin, batches):
    """The bundle's range guard: export-edge --with-model (the index's stored calibration is the code score by now), the edge jar's
    range column on raw inputs written as CSV (17 digits: float32 values exactly)."""
    out = js("export-edge", "--index", "index", "--out", "far.edge", "--with-model")
    bounds = out["range_bounds"]
    check("export-edge gives one range bound per hidden layer", bounds is not None and len(bounds) == 3, str(bounds))

    def ranges(x, name):
        np.savetxt(name + ".csv", x.astype(np.float64), delimiter=",", fmt="%.17g")
        with open(name + ".csv") as f:
            p = subprocess.run(["java", "-jar", edge_jar, "far.edge", "--inputs"], stdin=f, capture_output=True, text=True)
        if p.returncode != 0:
            sys.exit("edge jar on " + name + ".csv failed:\n" + p.stderr)
        lines = p.stdout.splitlines()
        check(f"{name}: the jar's columns end in range", lines[1] == "row,score,decision,p_value,range", lines[1])
        return np.array([float(l.split(",")[-1]) for l in lines[2:]])

    a_tr = hidden(net, xtr)[0]
    widths = [48, 100, 17]
    cuts = np.cumsum([0] + widths)

    def numpy_ratio(x):
        a = hidden(net, x)[0]
        return np.max(np.stack([np.linalg.norm(a[:, cuts[l]:cuts[l + 1]], axis=1) / bounds[l] for l in range(3)], 1), 1)

    for l in range(3):
        top = np.linalg.norm(a_tr[:, cuts[l]:cuts[l + 1]], axis=1).max()
        check(f"layer {l}: the bound covers the largest training norm, within 1%", top <= bounds[l] <= top * 1.01, f"{bounds[l]} vs {top}")
    r_tr = ranges(xtr, "train")
    check("no training input has a range ratio above 1", r_tr.max() <= 1, f"largest {r_tr.max()}")
    check("the jar's ratio on training inputs = NumPy's", np.allclose(r_tr, numpy_ratio(xtr), rtol=1e-9, atol=0), "")
    r_in = ranges(xin, "in")
    print()
    print(f"range guard: bounds {', '.join(f'{b:.4g}' for b in bounds)}; largest training ratio {r_tr.max():.4f}; "
          f"held-out inputs above 1: {np.mean(r_in > 1):.4f} of {len(r_in)} (exchangeable inputs: at most 3 / (n + 1) = {3 / (len(xtr) + 1):.4f})")
    print("| batch | range ratio above 1 | AUROC of the ratio | ratio median |")
    print("|---|---|---|---|")
    print(f"| held-out in ({len(r_in)}) | {np.mean(r_in > 1):.3f} | - | {np.median(r_in):.3f} |")
    for i, (name, xb) in enumerate(batches.items()):
        r = ranges(xb, f"out{i}")
        check(f"{name}: the jar's ratio = NumPy's", np.allclose(r, numpy_ratio(xb), rtol=1e-9, atol=0), "")
        auc = roc_auc_score(np.r_[np.zeros(len(r_in)), np.ones(len(r))], np.r_[r_in, r])
        print(f"| {name} | {np.mean(r > 1):.3f} | {auc:.3f} | {np.median(r):.3f} |")


def past_float32(run, js, net, xin):
    """One row of a query batch scaled by 1e38 (hidden activations past float32's largest value, NumPy in float64 says):
    ood score (the default euclidean calibration) and nearest --refine answer every row, the far one out with a null score
    and null refined distances in Hamming order, the others as in the batch without it; ood calibrate on it exits 2."""
    xs = xin[:20].astype(np.float64)
    far = np.insert(xs, 7, xs[7] * 1e38, axis=0)
    np.save("q.npy", xs)
    np.save("q-far.npy", far)
    biggest = np.abs(hidden(net, far[7:8])[0]).max()
    check("the row x 1e38 has a hidden activation past float32 (float64 forward pass)", biggest > np.finfo(np.float32).max, f"{biggest:.3g}")
    p = run("ood", "score", "--index", "index", "--inputs", "q-far.npy", "--format", "json", ok=False)
    check("ood score on a batch with one far row exits 0", p.returncode == 0, p.stderr.strip())
    if p.returncode != 0:
        return
    note = [l for l in p.stderr.splitlines() if "float32" in l]
    check("one note names the file and the row", len(note) == 1 and note[0].startswith("q-far.npy: note: row 7 (0-based)"), str(note))
    got = json.loads(p.stdout)["results"]
    base = js("ood", "score", "--index", "index", "--inputs", "q.npy")["results"]
    check("the far row: decision out, score null", got[7]["decision"] == "out" and got[7]["score"] is None, str(got[7]))
    strip = lambda r: {k: v for k, v in r.items() if k != "query"}
    check("the other 20 rows: the answers of the batch without it", [strip(r) for r in got[:7] + got[8:]] == [strip(r) for r in base], "")
    n1 = js("nearest", "--index", "index", "--inputs", "q-far.npy", "--refine", "euclidean", "-k", "3")["results"]
    n0 = js("nearest", "--index", "index", "--inputs", "q.npy", "--refine", "euclidean", "-k", "3")["results"]
    nb = n1[7]["neighbors"]
    check("nearest --refine: the far row's refined distances null, in Hamming order",
          all(n["refined_distance"] is None for n in nb) and [n["distance"] for n in nb] == sorted(n["distance"] for n in nb), str(nb))
    check("nearest --refine: the other rows as without it", [strip(r) for r in n1[:7] + n1[8:]] == [strip(r) for r in n0], "")
    c = run("ood", "calibrate", "--index", "index", "--inputs", "q-far.npy", ok=False)
    check("ood calibrate on it exits 2 naming the file and row", c.returncode == 2 and "q-far.npy: row 7 (0-based)" in c.stderr, c.stderr.strip())
    print(f"past float32: x 1e38 gives a largest hidden activation of {biggest:.3g}; ood score: {got[7]}")


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--bin", default=os.path.join(os.path.dirname(__file__), "..", "..", "bin", "actindex"))
    ap.add_argument("--work", default="/tmp/actindex-far")
    ap.add_argument("--epochs", type=int, default=40)
    ap.add_argument("--edge-jar", default=None, help="the edge jar (default: the newest edge/target/actindex-edge-*.jar)")
    args = ap.parse_args()
    binary = os.path.abspath(args.bin)
    jars = [args.edge_jar] if args.edge_jar else sorted(glob.glob(os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "edge", "target",
                                                                               "actindex-edge-*.jar")), key=os.path.getmtime)
    if not jars:
        sys.exit("no edge jar: build it with `mvn -B -ntp -q -pl edge package`, or pass --edge-jar")
    edge_jar = os.path.abspath(jars[-1])
    shutil.rmtree(args.work, ignore_errors=True)
    os.makedirs(args.work)
    os.chdir(args.work)

    run, js = runners(binary)

    net, xtr, _, xte, _, xood, xin, _, xsame, _ = data(args.epochs)
    save_file({k: v.contiguous() for k, v in net.state_dict().items()}, "model.safetensors")
    batches = {"far-out (newuser_mlp)": xood}
    for t in SCALES:
        batches[f"in x {t}"] = (xsame * t).astype(np.float32)
    np.save("train.npy", xtr)
    np.save("cal.npy", xte[25:])  # the audit's calibration rows (its first 25 test rows are copies of training rows)
    np.save("in.npy", xin)
    a_tr, _ = hidden(net, xtr)
    c_tr = a_tr > 0
    np.save("train-floats.npy", a_tr.astype(np.float32))
    a_in, l_in = hidden(net, xin)
    c_in = a_in > 0
    np.save("in-floats.npy", a_in.astype(np.float32))
    run("build", "--out", "index", "--model", "model.safetensors", "--inputs", "train.npy")
    for i, (name, xb) in enumerate(batches.items()):
        np.save(f"out{i}.npy", xb)
        np.save(f"out{i}-floats.npy", hidden(net, xb)[0].astype(np.float32))

    # the four calibrations: refined (cosine, k=1 kth), the default (euclidean, k=1 kth), code k=1 kth, the audit's code k=3 mean
    setups = [("refined", ["--score", "refined"]), ("euclidean (default)", []), ("code k=1", ["--score", "code"]),
              ("code k=3 mean (audit)", ["--score", "code", "-k", "3", "--statistic", "mean"])]
    rows = []
    for setup, flags in setups:
        cal = js("ood", "calibrate", "--index", "index", "--inputs", "cal.npy", *flags)
        if flags == []:
            check("the default calibration of an index with kept magnitudes is the euclidean score", cal["score"] == "euclidean", cal["score"])
            past_float32(run, js, net, xin)
        code_score = flags[:2] == ["--score", "code"]
        for i, (name, xb) in enumerate(batches.items()):
            extra = ["--in-floats", "in-floats.npy", "--out-floats", f"out{i}-floats.npy", "--train-floats", "train-floats.npy"] if code_score else []
            ev = js("ood", "eval", "--index", "index", "--in", "in.npy", "--out", f"out{i}.npy", "--kind", "inputs", *extra)
            sc = {s["name"]: s for s in ev["scores"]}
            rows.append((setup, name, {n: s["auroc"] for n, s in sc.items()}, {n: s["fpr_at_95_tpr"] for n, s in sc.items()}))
            scored = js("ood", "score", "--index", "index", "--inputs", f"out{i}.npy")
            rows[-1][2]["flagged"] = sum(r["decision"] == "out" for r in scored["results"]) / len(scored["results"])
            rows[-1][2]["best variant"] = max(v["auroc"] for v in ev["variants"])
        scored = js("ood", "score", "--index", "index", "--inputs", "in.npy")
        rows.append((setup, "in (held out, 800)", {"flagged": sum(r["decision"] == "out" for r in scored["results"]) / len(scored["results"])}, {}))
        print(f"calibration {setup}: {cal.get('score_name', '')} threshold {cal.get('threshold')}")

    # NumPy / scikit-learn on the same batches
    print()
    print("| batch | code k=1 (NumPy) | cosine k=1, all training rows | refined cosine among 100 codes (floats) | Euclidean k=1 on activations "
          "| Euclidean among 100 codes | activation norm | softmax | norm above the largest training norm | codes at distance 0 / <=2 / <=5 "
          "of a training code | nearest distance median / 95th percentile |")
    print("|---|---|---|---|---|---|---|---|---|---|---|")
    d_in = knn(c_in, c_tr)
    top = np.linalg.norm(a_tr, axis=1).max()
    print(f"| in (held out, 800) | - | - | - | - | - | - | - | {np.mean(np.linalg.norm(a_in, axis=1) > top):.2f} "
          f"| {np.mean(d_in == 0):.2f} / {np.mean(d_in <= 2):.2f} / {np.mean(d_in <= 5):.2f} | {np.median(d_in):.0f} / {np.percentile(d_in, 95):.0f} |")
    truth = None
    for i, (name, xb) in enumerate(batches.items()):
        a_o, l_o = hidden(net, xb)
        c_o = a_o > 0
        truth = np.r_[np.zeros(len(a_in)), np.ones(len(a_o))]
        d_o = knn(c_o, c_tr)
        auc = {
            "code": roc_auc_score(truth, np.r_[d_in, d_o]),
            "cosine": roc_auc_score(truth, np.r_[knn(a_in, a_tr, 1, "cosine"), knn(a_o, a_tr, 1, "cosine")]),
            "refined": roc_auc_score(truth, np.r_[refined(a_in, c_in, a_tr, c_tr), refined(a_o, c_o, a_tr, c_tr)]),
            "euclid": roc_auc_score(truth, np.r_[knn(a_in, a_tr, 1, "euclid"), knn(a_o, a_tr, 1, "euclid")]),
            "euclid-cands": roc_auc_score(truth, np.r_[refined(a_in, c_in, a_tr, c_tr, "euclid"), refined(a_o, c_o, a_tr, c_tr, "euclid")]),
            "norm": roc_auc_score(truth, np.r_[np.linalg.norm(a_in, axis=1), np.linalg.norm(a_o, axis=1)]),
            "softmax": roc_auc_score(truth, np.r_[msp_score(l_in), msp_score(l_o)]),
        }
        print(f"| {name} | {auc['code']:.3f} | {auc['cosine']:.3f} | {auc['refined']:.3f} | {auc['euclid']:.3f} | {auc['euclid-cands']:.3f} "
              f"| {auc['norm']:.3f} | {auc['softmax']:.3f} | {np.mean(np.linalg.norm(a_o, axis=1) > top):.2f} "
              f"| {np.mean(d_o == 0):.2f} / {np.mean(d_o <= 2):.2f} / {np.mean(d_o <= 5):.2f} | {np.median(d_o):.0f} / {np.percentile(d_o, 95):.0f} |")
        got = next(r for r in rows if r[0] == "code k=1" and r[1] == name)[2]
        check(f"{name}: ood eval code AUROC (k=1) = roc_auc_score", abs(got["code"] - auc["code"]) < 1e-12, f"{got['code']} vs {auc['code']}")
        check(f"{name}: ood eval softmax AUROC = roc_auc_score (float64 logits)", abs(got["softmax"] - auc["softmax"]) < 1e-6,
              f"{got['softmax']} vs {auc['softmax']}")
        check(f"{name}: ood eval float AUROC (unit-length k=1) = cosine k-NN", abs(got["float"] - auc["cosine"]) < 1e-4, f"{got['float']} vs {auc['cosine']}")
        ref = next(r for r in rows if r[0] == "refined" and r[1] == name)[2]["refined"]
        check(f"{name}: refined from kept magnitudes near the float cosine among 100 codes", abs(ref - auc["refined"]) < 0.02, f"{ref} vs {auc['refined']}")
        eu = next(r for r in rows if r[0] == "euclidean (default)" and r[1] == name)[2]
        check(f"{name}: euclidean from kept magnitudes near the float Euclidean among 100 codes", abs(eu["euclidean"] - auc["euclid-cands"]) < 0.02,
              f"{eu['euclidean']} vs {auc['euclid-cands']}")
        check(f"{name}: the euclidean calibration's eval lists the same cosine refined AUROC as the refined calibration's", eu["refined"] == ref,
              f"{eu['refined']} vs {ref}")
        # the outer region: the code at t and at 10 t
        if name.startswith("in x"):
            c_far = hidden(net, xb * 10)[0] > 0
            t = int(name[5:])
            print(f"|   x {t}: the same code as at x {10 * t}: {np.mean((c_far == c_o).all(1)):.2f} of the rows; median activation norm "
                  f"{np.median(np.linalg.norm(a_o, axis=1)) / np.median(np.linalg.norm(a_in, axis=1)):.1f} times the held-out inputs' |")

    print()
    print("| calibration | batch | " + " | ".join(["code", "best code variant", "refined", "euclidean", "float", "softmax"]) + " | flagged out by ood score |")
    print("|---|---|---|---|---|---|---|---|---|")
    for setup, name, auc, _ in rows:
        cell = lambda n: f"{auc[n]:.3f}" if n in auc else "-"
        print(f"| {setup} | {name} | {cell('code')} | {cell('best variant')} | {cell('refined')} | {cell('euclidean')} | {cell('float')} | {cell('softmax')} "
              f"| {auc['flagged']:.2f} |")
    range_guard(run, js, edge_jar, net, xtr, xin, batches)
    digits()
    print(f"{len(failures)} DIFF" if failures else "all OK")
    sys.exit(1 if failures else 0)


if __name__ == "__main__":
    main()
