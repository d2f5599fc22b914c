#!/usr/bin/env python3
"""A new user's run through every command, on a model and data the project never saw, each answer
checked outside actindex (PyTorch forward pass, NumPy brute force, scikit-learn, SciPy).

The scenario (invented): a tabular task of 11 features and 5 classes from nonlinear rules; a
PyTorch MLP 11 -> 48 -> 100 -> 17 -> 5 (odd widths, names fc1, fc2, fc3, head that give no order,
so build orders them by shape) trained for a fixed number of epochs; a train/test split with 25
test rows that are exact copies of training rows (leaks) and 15 training rows repeated with
another label (conflicts); an out-of-distribution batch (scaled, shifted, sign-flipped features);
an unshifted and a shifted batch for drift.

Checks (each prints OK or DIFF):
- build from the model: every example's code equals the on/off states of the PyTorch forward pass
  (in float64), through `nearest --codes -k 1`;
- nearest (-k 7, --layers, --where, --ties) against a brute-force Hamming k-NN (distance, then id);
- dupes --pairs at radius 0, 3, 6 against all pairs by brute force; the planted leaks and
  conflicts are the groups flagged;
- region (radius 12) and census (regions, singletons, firing rates, dead units) against NumPy;
- ood calibrate / score: threshold = the ceil(tpr (n + 1))-th calibration score, p-values
  (1 + #{cal >= s}) / (n + 1); ood eval: every code-score variant's AUROC against scikit-learn's
  roc_auc_score, AUPR against average_precision_score, the softmax baseline's AUROC on float64
  logits;
- compare (shifted and unshifted batch): agreement- and exponential-kernel MMD^2 (unbiased, Gretton
  et al. 2012 eq. 3) by NumPy, W2 by scipy.optimize.linear_sum_assignment, Frechet distance by
  scipy.linalg.sqrtm on the model's hidden activations (taken by compare from the model);
- fidelity with --inputs and every row a query: Hamming, cosine and Euclidean k-NN accuracy by NumPy;
- add / delete / compact / check, then nearest against brute force on the live examples;
- export-edge --with-model and the edge jar on raw inputs, against ood score row by row.

    tools/audit/newuser_mlp.py [--bin bin/actindex] [--work DIR] [--epochs N]

Needs torch (CPU), numpy, scipy, scikit-learn, safetensors; never a test dependency. Exit 1 on any DIFF.
"""
import argparse
import csv
import json
import math
import os
import shutil
import subprocess
import sys
import warnings
from collections import Counter

import numpy as np
import torch
from safetensors.torch import save_file
from scipy.linalg import sqrtm
from scipy.optimize import linear_sum_assignment
from scipy.spatial.distance import cdist
from sklearn.metrics import average_precision_score, roc_auc_score

D, C = 11, 5
LAYERS = {"fc1": (0, 48), "fc2": (48, 148), "fc3": (148, 165)}
failures = []


def check(name, ok, detail=""):
    print(("OK   " if ok else "DIFF ") + name + ("" if ok else ": " + detail))
    if not ok:
        failures.append(name)


def gen(rng, k, shift=0.0):
    z = rng.normal(size=(k, D)).astype(np.float32)
    z[:, 3] = np.abs(z[:, 3]) * 2
    z[:, 7] = z[:, 0] * z[:, 1] + 0.3 * rng.normal(size=k)
    z[:, 2] += shift
    z[:, 5] += shift
    return z.astype(np.float32)


def labels(x):
    s = np.stack([x[:, 0] + x[:, 2], x[:, 1] - x[:, 4], np.sin(x[:, 3]) + x[:, 5], x[:, 6] * x[:, 8], x[:, 9] - x[:, 10] + x[:, 7]], 1)
    return s.argmax(1)


class Net(torch.nn.Module):
    def __init__(self):
        super().__init__()
        self.fc1, self.fc2, self.fc3, self.head = (torch.nn.Linear(D, 48), torch.nn.Linear(48, 100), torch.nn.Linear(100, 17),
                                                   torch.nn.Linear(17, C))

    def forward(self, x):
        return self.head(torch.relu(self.fc3(torch.relu(self.fc2(torch.relu(self.fc1(x)))))))


def hidden(net, x):
    """The hidden activations after ReLU and the logits, in float64."""
    h = torch.tensor(x, dtype=torch.float64)
    out = []
    with torch.no_grad():
        for lin in (net.fc1, net.fc2, net.fc3):
            h = torch.relu(h @ lin.weight.double().T + lin.bias.double())
            out.append(h.numpy())
        logits = (h @ net.head.weight.double().T + net.head.bias.double()).numpy()
    return np.concatenate(out, 1), logits


def write_meta(path, rows):
    with open(path, "w", newline="") as f:
        w = csv.writer(f)
        w.writerow(["key", "label", "split"])
        w.writerows(rows)


def hamming(a, b):
    """All pairwise Hamming distances of two 0/1 matrices, as integers (products of 0/1 floats are exact)."""
    a, b = a.astype(np.float32), b.astype(np.float32)
    return np.rint(a @ (1 - b).T + (1 - a) @ b.T).astype(np.int64)


def runners(binary):
    """run(*args, ok=True): the command's completed process (exits on failure unless ok=False); js(*args): its --format json output."""
    def run(*a, ok=True):
        p = subprocess.run([binary, *map(str, a)], capture_output=True, text=True)
        if ok and p.returncode != 0:
            sys.exit("actindex " + " ".join(map(str, a)) + " failed:\n" + p.stderr)
        return p

    def js(*a):
        return json.loads(run(*a, "--format", "json").stdout)
    return run, js


def data(epochs):
    """The model, trained here, every batch, drawn in a fixed order from fixed seeds (far_inputs.py uses them too), and the planted conflicts' count."""
    rng = np.random.default_rng(7)
    torch.manual_seed(7)
    torch.set_num_threads(1)
    x = gen(rng, 6000)
    y = labels(x)
    perm = rng.permutation(len(x))
    xtr, ytr, xte, yte = x[perm[:4800]], y[perm[:4800]], x[perm[4800:]].copy(), y[perm[4800:]].copy()
    leak = rng.choice(len(xtr), 25, replace=False)
    xte[:25], yte[:25] = xtr[leak], ytr[leak]
    conf = np.setdiff1d(rng.choice(len(xtr), 15, replace=False), leak)
    xtr, ytr = np.concatenate([xtr, xtr[conf]]), np.concatenate([ytr, (ytr[conf] + 1) % C])
    net = Net()
    opt = torch.optim.Adam(net.parameters(), 3e-3)
    xt, yt = torch.tensor(xtr), torch.tensor(ytr)
    for _ in range(epochs):
        p = torch.randperm(len(xt))
        for i in range(0, len(xt), 128):
            b = p[i:i + 128]
            opt.zero_grad()
            torch.nn.functional.cross_entropy(net(xt[b]), yt[b]).backward()
            opt.step()
    xood = (rng.normal(size=(300, D)) * 3 + 4).astype(np.float32)
    xood[:, ::2] *= -1
    xin, xshift, xsame = gen(rng, 800), gen(rng, 800, 1.0), gen(rng, 800)
    return net, xtr, ytr, xte, yte, xood, xin, xshift, xsame, len(conf)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--bin", default=os.path.join(os.path.dirname(__file__), "..", "..", "bin", "actindex"))
    ap.add_argument("--work", default="/tmp/actindex-newuser")
    ap.add_argument("--epochs", type=int, default=40)
    args = ap.parse_args()
    warnings.filterwarnings("ignore", message="Matrix is singular")  # dead units: singular covariances, as compare notes
    binary = os.path.abspath(args.bin)
    shutil.rmtree(args.work, ignore_errors=True)
    os.makedirs(args.work)
    os.chdir(args.work)

    run, js = runners(binary)

    # data and model
    net, xtr, ytr, xte, yte, xood, xin, xshift, xsame, conflicts = data(args.epochs)
    save_file({k: v.contiguous() for k, v in net.state_dict().items()}, "model.safetensors")
    for name, arr in [("train", xtr), ("test", xte), ("ood", xood), ("in", xin), ("shift", xshift), ("same", xsame)]:
        np.save(name + ".npy", arr)
    write_meta("train.csv", [(f"tr{i}", f"c{l}", "train") for i, l in enumerate(ytr)])
    write_meta("test.csv", [(f"te{i}", f"c{l}", "test") for i, l in enumerate(yte)])
    np.save("all.npy", np.concatenate([xtr, xte]))
    write_meta("all.csv", [(f"tr{i}", f"c{l}", "train") for i, l in enumerate(ytr)] + [(f"te{i}", f"c{l}", "test") for i, l in enumerate(yte)])
    a_all, _ = hidden(net, np.load("all.npy"))
    c_all = a_all > 0
    a_tr, l_tr = hidden(net, xtr)
    c_tr = a_tr > 0
    run("build", "--out", "all", "--model", "model.safetensors", "--inputs", "all.npy", "--meta", "all.csv")
    run("build", "--out", "train", "--model", "model.safetensors", "--inputs", "train.npy", "--meta", "train.csv")

    # codes
    np.save("codes.npy", c_all)
    res = js("nearest", "--index", "all", "--codes", "codes.npy", "-k", "1")["results"]
    first = {}
    for i, row in enumerate(map(bytes, np.packbits(c_all, axis=1))):
        first.setdefault(row, i)
    rows = list(map(bytes, np.packbits(c_all, axis=1)))
    bad = sum(r["neighbors"][0]["distance"] != 0 or r["neighbors"][0]["id"] != first[rows[r["query"]]] for r in res)
    check("build --model: codes equal the PyTorch forward pass (float64)", bad == 0, f"{bad} rows differ")

    # nearest
    a_ood, _ = hidden(net, xood)
    c_ood = a_ood > 0
    meta = [r for r in csv.reader(open("all.csv"))][1:]
    for extra, cols, keep in [([], slice(0, 165), None), (["--layers", "fc2"], slice(48, 148), None),
                              (["--where", "split = test"], slice(0, 165), lambda m: m[2] == "test")]:
        ids = np.array([i for i in range(len(meta)) if keep is None or keep(meta[i])])
        res = js("nearest", "--index", "all", "--inputs", "ood.npy", "-k", "7", *extra)["results"]
        d = hamming(c_ood[:, cols], c_all[ids][:, cols])
        bad = 0
        for r in res:
            o = np.lexsort((ids, d[r["query"]]))[:7]
            bad += [(n["id"], n["distance"]) for n in r["neighbors"]] != [(int(ids[i]), int(d[r["query"], i])) for i in o]
        check("nearest -k 7 " + " ".join(extra) + ": brute-force Hamming k-NN", bad == 0, f"{bad} of {len(res)} queries")

    # dupes
    for radius in [0, 3, 6]:
        run("dupes", "--index", "all", "--radius", radius, "--pairs", f"pairs{radius}.csv")
        got = {tuple(map(int, l.split(","))) for l in open(f"pairs{radius}.csv").read().splitlines()[1:]}
        want = set()
        for i in range(len(c_all)):
            d = (c_all[i + 1:] != c_all[i]).sum(1)
            want |= {(i, i + 1 + int(j), int(d[j])) for j in np.nonzero(d <= radius)[0]}
        check(f"dupes --radius {radius}: every pair by brute force", got == want, f"{len(got)} pairs, brute force {len(want)}")
    summary = js("dupes", "--index", "all", "--radius", "0")["summary"]
    check("dupes: the 25 planted leaks and 15 planted conflicts are the flagged groups",
          (summary["cross_split_groups"], summary["conflicting_groups"]) == (25, conflicts), json.dumps(summary))

    # region and census
    a_te, _ = hidden(net, xte)
    c_te = a_te > 0
    res = js("region", "--index", "train", "--inputs", "test.npy", "--rows", "25:60", "--radius", "12")["results"]
    bad = 0
    for r in res:
        q = c_te[r["query"]]
        d = (c_tr != q).sum(1)
        u, cnt = np.unique(c_tr[(d >= 1) & (d <= 12)], axis=0, return_counts=True)
        want = sorted((int((v != q).sum()), int(n)) for v, n in zip(u, cnt))
        bad += r["same"]["count"] != (d == 0).sum() or sorted((g["distance"], g["count"]) for g in r["nearby"]) != want
    check("region --radius 12: populated regions by brute force", bad == 0, f"{bad} queries")
    census = js("census", "--index", "train", "--largest", "1")
    bad = []
    for p in census["prefixes"]:
        u, cnt = np.unique(c_tr[:, :p["bits"]], axis=0, return_counts=True)
        if (p["regions"], p["singletons"]) != (len(u), int((cnt == 1).sum())):
            bad.append(p["layers"])
    for n in census["neurons"]:
        a, b = LAYERS[n["layer"]]
        rates = c_tr[:, a:b].mean(0)
        if np.abs(np.array(n["firing_rates"]) - rates).max() > 1e-12 or n["dead"] != [f"{n['layer']}:{i}" for i in np.nonzero(rates == 0)[0]]:
            bad.append(n["layer"])
    check("census: regions, singletons, firing rates and dead units", not bad, str(bad))

    # ood
    run("ood", "calibrate", "--index", "train", "--inputs", "test.npy", "--rows", "25:", "-k", "3", "--statistic", "mean", "--score", "code")
    def score(c, k=3, stat="mean", cols=slice(0, 165)):
        d = np.sort(hamming(c[:, cols], c_tr[:, cols]), 1)
        return d[:, :k].mean(1) if stat == "mean" else d[:, k - 1].astype(float)
    cal = np.sort(score(c_te[25:]))
    n = len(cal)
    threshold = cal[math.ceil(0.95 * (n + 1)) - 1]
    scored = js("ood", "score", "--index", "train", "--inputs", "ood.npy")
    s_ood = score(c_ood)
    bad = sum(abs(r["score"] - s_ood[r["query"]]) > 1e-9 or abs(r["p_value"] - (1 + (cal >= s_ood[r["query"]]).sum()) / (n + 1)) > 1e-12
              or (r["decision"] == "out") != (s_ood[r["query"]] > threshold) for r in scored["results"])
    check("ood score: scores, p-values and decisions; calibrate's threshold", bad == 0 and abs(scored["threshold"] - threshold) < 1e-12,
          f"{bad} rows, threshold {scored['threshold']} vs {threshold}")
    ev = js("ood", "eval", "--index", "train", "--in", "in.npy", "--out", "ood.npy", "--kind", "inputs")
    a_in, l_in = hidden(net, xin)
    c_in = a_in > 0
    truth = np.r_[np.zeros(len(c_in)), np.ones(len(c_ood))]
    bad = []
    for v in ev["variants"]:
        cols = slice(0, 165) if not v["layers"] else slice(*LAYERS[v["layers"][0]])
        s = np.r_[score(c_in, v["k"], v["statistic"], cols), score(c_ood, v["k"], v["statistic"], cols)]
        if abs(v["auroc"] - roc_auc_score(truth, s)) > 1e-12:
            bad.append((v["k"], v["statistic"], v["layers"]))
    check("ood eval: every variant's AUROC = scikit-learn roc_auc_score", not bad, str(bad))
    code = next(s for s in ev["scores"] if s["name"] == "code")
    s = np.r_[score(c_in), score(c_ood)]
    check("ood eval: AUPR = scikit-learn average_precision_score (out and in positive)",
          abs(code["aupr_out"] - average_precision_score(truth, s)) < 1e-12 and abs(code["aupr_in"] - average_precision_score(1 - truth, -s)) < 1e-12)
    _, l_ood = hidden(net, xood)
    def msp(l):
        e = np.exp(l - l.max(1, keepdims=True))
        return (e / e.sum(1, keepdims=True)).max(1)
    soft = next(s for s in ev["scores"] if s["name"] == "softmax")
    check("ood eval: softmax baseline AUROC (float64 logits) = roc_auc_score",
          abs(soft["auroc"] - roc_auc_score(truth, np.r_[1 - msp(l_in), 1 - msp(l_ood)])) < 1e-9, str(soft["auroc"]))
    print(f"     measured: code AUROC {code['auroc']:.3f}, softmax {soft['auroc']:.3f} on the far-out batch")

    # compare
    for other, name in [(xshift, "shift"), (xsame, "same")]:
        doc = js("compare", "--index", "train", "--a", "in.npy", "--b", name + ".npy", "--permutations", "200")
        a_b, _ = hidden(net, other)
        c_b = a_b > 0
        def mmd(k):
            kxx, kyy, kxy = k(hamming(c_in, c_in)), k(hamming(c_b, c_b)), k(hamming(c_in, c_b))
            m, q = len(c_in), len(c_b)
            return (kxx.sum() - np.trace(kxx)) / (m * (m - 1)) + (kyy.sum() - np.trace(kyy)) / (q * (q - 1)) - 2 * kxy.mean()
        pooled = np.r_[c_in, c_b]
        sigma = np.median(hamming(pooled, pooled)[np.triu_indices(len(pooled), 1)])
        cost = hamming(c_in, c_b).astype(float) ** 2
        r, c = linear_sum_assignment(cost)
        mu = a_in.mean(0) - a_b.mean(0)
        s1, s2 = np.cov(a_in, rowvar=False), np.cov(a_b, rowvar=False)
        frechet = mu @ mu + np.trace(s1 + s2 - 2 * sqrtm(s1 @ s2).real)
        ok = (abs(doc["mmd"][0]["mmd2"] - mmd(lambda d: 1 - d / 165)) < 1e-12 and doc["mmd"][1]["sigma"] == sigma
              and abs(doc["mmd"][1]["mmd2"] - mmd(lambda d: np.exp(-d / sigma))) < 1e-12
              and abs(doc["w2"]["w2"] - math.sqrt(cost[r, c].mean())) < 1e-9
              and doc["floats"] is not None and abs(doc["floats"]["frechet"] - frechet) < 1e-4 * max(1, frechet))
        check(f"compare in vs {name}: MMD^2 (NumPy), W2 (linear_sum_assignment), Frechet (scipy sqrtm)", ok, json.dumps(doc["mmd"])[:300])
        print(f"     measured: in vs {name}: MMD p = {doc['mmd'][0]['p_value']:.4f} (agreement), {doc['mmd'][1]['p_value']:.4f} (exponential)")

    # fidelity
    fid = js("fidelity", "--index", "train", "--inputs", "train.npy", "-k", "5", "--queries", len(xtr))
    unit = a_tr / np.linalg.norm(a_tr, axis=1, keepdims=True)
    def accuracy(dist):
        ok = 0
        for i in range(len(dist)):
            d = dist[i].astype(float)
            d[i] = np.inf
            near = [f"c{ytr[j]}" for j in np.lexsort((np.arange(len(d)), d))[:5]]
            count = Counter(near)
            ok += next(l for l in near if count[l] == max(count.values())) == f"c{ytr[i]}"
        return ok / len(dist)
    acc = fid["accuracy"]
    want = {"hamming": accuracy(hamming(c_tr, c_tr)), "cosine": accuracy(1 - unit @ unit.T),
            "euclidean_inputs": accuracy(cdist(xtr.astype(np.float64), xtr.astype(np.float64), "sqeuclidean"))}
    check("fidelity: 5-NN label accuracies by NumPy", all(abs(acc[k] - v) < 1e-12 for k, v in want.items()), f"{acc} vs {want}")

    # add, delete, compact, check
    shutil.copytree("train", "grown")
    run("add", "--index", "grown", "--inputs", "test.npy", "--meta", "test.csv")
    run("delete", "--index", "grown", "--where", "split = test and label = c0")
    run("compact", "--index", "grown")
    run("check", "--index", "grown")
    live = np.r_[np.ones(len(xtr), bool), yte != 0]
    ids = np.nonzero(live)[0]
    codes = np.r_[c_tr, c_te]
    res = js("nearest", "--index", "grown", "--inputs", "ood.npy", "-k", "3")["results"]
    bad = 0
    for r in res:
        d = (codes[ids] != c_ood[r["query"]]).sum(1)
        o = np.lexsort((ids, d))[:3]
        bad += [(n["id"], n["distance"]) for n in r["neighbors"]] != [(int(ids[i]), int(d[i])) for i in o]
    check("add + delete + compact + check: nearest on the live examples", bad == 0, f"{bad} queries")

    # export-edge and the jar
    run("export-edge", "--index", "train", "--out", "model.edge", "--with-model")
    jar = os.path.join(os.path.dirname(binary), "..", "edge", "target", "actindex-edge-0.1.0-SNAPSHOT.jar")
    java = os.path.join(subprocess.run([os.path.join(os.path.dirname(binary), "find-jdk")], capture_output=True, text=True).stdout.strip(), "bin", "java")
    if os.path.exists(jar):
        np.savetxt("ood.csv", xood.astype("f8"), delimiter=",", fmt="%.17g")
        edge = subprocess.run([java, "-jar", jar, "model.edge", "--inputs"], stdin=open("ood.csv"), capture_output=True, text=True)
        rows = [l.split(",") for l in edge.stdout.splitlines()[2:]]
        bad = sum(float(e[1]) != r["score"] or e[2] != r["decision"] or float(e[3]) != r["p_value"] for e, r in zip(rows, scored["results"]))
        check("edge jar --inputs: score, decision and p-value = ood score", edge.returncode == 0 and len(rows) == len(xood) and bad == 0,
              f"exit {edge.returncode}, {len(rows)} rows, {bad} differ")
    else:
        print("skip edge jar: " + jar + " not built")
    print(f"{len(failures)} DIFF" if failures else "all OK")
    sys.exit(1 if failures else 0)


if __name__ == "__main__":
    main()
