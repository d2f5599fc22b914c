#!/usr/bin/env python3
"""Cross-check of the numbers `actindex compare`, `ood`, `fidelity` and `dupes` print, against
general-purpose libraries on open data bundled with scikit-learn (UCI digits, wine, breast cancer).

Not a test dependency: a script to rerun by hand after a change to the statistics. It builds small
indexes in a temporary folder with the command line, runs each command with --format json, and
recomputes every number with NumPy, SciPy, scikit-learn and pandas. Prints one line per check,
`OK` or `DIFF ...`, and exits 1 when any check differs.

References: MMD^2 unbiased estimator (Gretton et al., JMLR 2012, eq. 3) from full kernel matrices;
exact W2 with scipy.optimize.linear_sum_assignment or the transport LP (scipy.optimize.linprog);
Frechet distance with scipy.linalg.sqrtm; z tests with scipy.stats.norm.sf and
scipy.stats.false_discovery_control; AUROC, AUPR and ROC points with sklearn.metrics
(roc_auc_score, average_precision_score, roc_curve); nearest-rank quantiles with
np.percentile(method='inverted_cdf'); float k-NN with sklearn.neighbors.NearestNeighbors; max
softmax with sklearn.neural_network.MLPClassifier.predict_proba; Spearman with scipy.stats.spearmanr;
groups with scipy.sparse.csgraph.connected_components and pandas counts.

Usage: python3 tools/crosscheck/stats_vs_python.py [bin/actindex]
Needs numpy, scipy, scikit-learn, pandas, safetensors.
"""
import csv
import json
import os
import subprocess
import sys
import tempfile
import warnings

import numpy as np
import pandas as pd
from safetensors.numpy import save_file

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "golden"))
from reference_stats import exact_w2, mmd2_unbiased  # noqa: E402
from scipy import linalg, stats
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components
from scipy.spatial import distance
from sklearn.datasets import load_breast_cancer, load_digits, load_wine
from sklearn.metrics import average_precision_score, roc_auc_score, roc_curve
from sklearn.neighbors import NearestNeighbors
from sklearn.neural_network import MLPClassifier

warnings.filterwarnings("ignore")
ACTINDEX = os.path.abspath(sys.argv[1] if len(sys.argv) > 1 else os.path.join(os.path.dirname(__file__), "..", "..", "bin", "actindex"))
failures = 0


def check(what, ok, detail=""):
    global failures
    failures += 0 if ok else 1
    print(("OK   " if ok else "DIFF ") + what + ("" if ok else "  " + detail))


def run(*args):
    r = subprocess.run([ACTINDEX, *args], capture_output=True, text=True)
    if r.returncode != 0:
        raise SystemExit(f"actindex {' '.join(args)}: exit {r.returncode}: {r.stderr}")
    return json.loads(r.stdout) if "--format" in args and "json" in args else r.stdout


def compare_case(name, a, b):
    np.save(f"{name}_a.npy", a.astype(np.float32))
    np.save(f"{name}_b.npy", b.astype(np.float32))
    j = run("compare", "--a", f"{name}_a.npy", "--b", f"{name}_b.npy", "--format", "json", "--permutations", "50")
    ca, cb = a.astype(np.float32) > 0, b.astype(np.float32) > 0
    m, n, L = len(ca), len(cb), ca.shape[1]
    X = np.vstack([ca, cb]).astype(np.uint8)
    D = distance.cdist(X, X, "hamming") * L
    iu = np.triu_indices(m + n, 1)
    med = np.median(D[iu])
    sigma = med if med > 0 else 1.0
    check(f"compare {name}: agreement MMD^2", abs(j["mmd"][0]["mmd2"] - mmd2_unbiased(1 - D / L, m)) < 1e-9)
    check(f"compare {name}: median sigma", j["mmd"][1]["sigma"] == sigma, f'{j["mmd"][1]["sigma"]} vs {sigma}')
    check(f"compare {name}: exponential MMD^2", abs(j["mmd"][1]["mmd2"] - mmd2_unbiased(np.exp(-D / sigma), m)) < 1e-9)
    w, ex = j["w2"], exact_w2(ca.astype(np.uint8), cb.astype(np.uint8))
    if w["method"] == "exact":
        check(f"compare {name}: exact W2", abs(w["w2"] - ex) < 1e-9, f'{w["w2"]} vs {ex}')
    else:  # the entropic plan's cost: at or above the optimum (docs/commands/compare.md)
        check(f"compare {name}: Sinkhorn W2 >= exact ({w['w2']:.4f} vs {ex:.4f})", w["w2"] >= ex - 1e-6)
    pa, pb, p = ca.mean(0), cb.mean(0), (ca.sum(0) + cb.sum(0)) / (m + n)
    se = np.sqrt(p * (1 - p) * (1 / m + 1 / n))
    z = np.divide(pa - pb, se, out=np.zeros(L), where=se > 0)
    pv = 2 * stats.norm.sf(np.abs(z))
    q = stats.false_discovery_control(pv)
    bad = [x["neuron"] for x in j["neurons"] for u in [int(x["neuron"].split(":")[1])]
           if abs(x["z"] - z[u]) > 1e-9 or abs(x["p_value"] - pv[u]) > 2e-7 * pv[u] + 1e-300 or abs(x["q_value"] - q[u]) > 2e-7 * q[u] + 1e-300]
    check(f"compare {name}: neuron z, p, q", not bad, str(bad))
    check(f"compare {name}: neurons moved", j["neurons_moved"] == int((q < 0.05).sum()))
    fa, fb = a.astype(np.float32).astype(float), b.astype(np.float32).astype(float)
    if j["floats"] and min(m, n) > a.shape[1]:
        mu = fa.mean(0) - fb.mean(0)
        S1, S2 = np.cov(fa, rowvar=False), np.cov(fb, rowvar=False)
        fr = mu @ mu + np.trace(S1) + np.trace(S2) - 2 * np.real(np.trace(linalg.sqrtm(S1 @ S2)))
        check(f"compare {name}: Frechet", abs(j["floats"]["frechet"] - fr) < 1e-6 * max(1, abs(fr)), f'{j["floats"]["frechet"]} vs {fr}')
    if j["floats"]:
        F = np.vstack([fa, fb])
        E = distance.cdist(F, F)
        s = np.median(E[iu])
        s = s if s > 0 else 1.0
        check(f"compare {name}: Gaussian MMD^2", abs(j["floats"]["mmd"]["mmd2"] - mmd2_unbiased(np.exp(-E ** 2 / (2 * s * s)), m)) < 1e-9)


def compares():
    d = load_digits()
    X, y = d.data - 8, d.target
    compare_case("digits_equal", X[y < 5][:120], X[y >= 5][:120])
    compare_case("digits_unequal", X[y < 5][:90], X[y >= 5][:130])
    compare_case("digits_two_three", X[y < 5][:2], X[y >= 5][:3])
    compare_case("digits_same", X[:50], X[:50])
    w = load_wine()
    Xw = (w.data - w.data.mean(0)) / w.data.std(0)
    compare_case("wine", Xw[w.target == 0], Xw[w.target == 2])
    bc = load_breast_cancer()
    Xb = (bc.data - bc.data.mean(0)) / bc.data.std(0)
    compare_case("breast_cancer", Xb[bc.target == 0][:150], Xb[bc.target == 1][:200])


def digits_model():
    d = load_digits()
    X, y = (d.data / 16.0).astype(np.float32), d.target
    order = np.random.default_rng(0).permutation(len(X))
    X, y = X[order], y[order]
    Xin, yin, Xout = X[y < 5], y[y < 5], X[y >= 5][:300]
    clf = MLPClassifier(hidden_layer_sizes=(32, 16), max_iter=300, random_state=0).fit(Xin[:500], yin[:500])
    weights = {}
    for i, (w, b) in enumerate(zip(clf.coefs_, clf.intercepts_)):
        weights[f"{2 * i}.weight"] = np.ascontiguousarray(w.T.astype(np.float32))
        weights[f"{2 * i}.bias"] = b.astype(np.float32)
    clf.coefs_ = [weights[f"{2 * i}.weight"].T.astype(float) for i in range(3)]  # the float32 model actindex runs
    clf.intercepts_ = [weights[f"{2 * i}.bias"].astype(float) for i in range(3)]
    save_file(weights, "model.safetensors")
    parts = {"train": Xin[:500], "cal": Xin[500:700], "in": Xin[700:], "out": Xout}
    for k, v in parts.items():
        np.save(f"x_{k}.npy", v)
        h1 = np.maximum(0, v @ clf.coefs_[0] + clf.intercepts_[0])
        h2 = np.maximum(0, h1 @ clf.coefs_[1] + clf.intercepts_[1])
        np.savez(f"a_{k}.npz", h1=h1.astype(np.float32), h2=h2.astype(np.float32))
        np.save(f"f_{k}.npy", np.hstack([h1, h2]).astype(np.float32))
    rng = np.random.default_rng(3)
    meta = pd.DataFrame({"key": [f"r{i}" for i in range(500)], "label": yin[:500].astype(str),
                         "split": ["test" if i % 4 == 0 else "train" for i in range(500)]})
    meta.loc[rng.random(500) < 0.1, "label"] = ""
    meta.loc[rng.random(500) < 0.1, "split"] = ""
    meta.to_csv("meta.csv", index=False)
    return clf, parts


def codes(part):
    z = np.load(f"a_{part}.npz")
    return np.hstack([z["h1"] > 0, z["h2"] > 0])


def knn(Q, T, k, stat):
    D = np.sort((Q[:, None, :] != T[None]).sum(2), 1)[:, :k]
    return D[:, -1].astype(float) if stat == "kth" else D.mean(1)


def roc_checks(what, si, so, m, roc_rows=None):
    s, y = np.r_[si, so], np.r_[np.zeros(len(si)), np.ones(len(so))]
    fpr, tpr, _ = roc_curve(1 - y, -s, drop_intermediate=False)
    want = {"auroc": roc_auc_score(y, s), "fpr_at_95_tpr": fpr[np.argmax(tpr >= 0.95 - 1e-12)]}
    if "aupr_in" in m:
        want.update(aupr_in=average_precision_score(1 - y, -s), aupr_out=average_precision_score(y, s))
    diff = {k: (m[k], v) for k, v in want.items() if abs(m[k] - v) > 1e-12}
    check(what, not diff, str(diff))
    if roc_rows is not None:
        f, t, th = roc_curve(y, s, drop_intermediate=False)
        ok = len(roc_rows) == len(th) and all(
            abs(float(r["false_alarm_rate"]) - a) < 1e-12 and abs(float(r["detection_rate"]) - b) < 1e-12
            and (r["threshold"] == "inf" or float(r["threshold"]) == c) for r, a, b, c in zip(roc_rows, f, t, th))
        check(what + ": every ROC point", ok)


def oods(clf):
    tr, cal, cin, cout = codes("train"), codes("cal"), codes("in"), codes("out")
    run("build", "--out", "codes-idx", "--activations", "a_train.npz", "--meta", "meta.csv", "--magnitudes", "off")
    for k, stat in [(1, "kth"), (5, "kth"), (5, "mean"), (500, "kth")]:
        cj = run("ood", "calibrate", "--index", "codes-idx", "--activations", "a_cal.npz", "-k", str(k), "--statistic", stat, "--format", "json")
        cs = np.sort(knn(cal, tr, k, stat))
        j = int(np.ceil(0.95 * (len(cs) + 1)))
        check(f"ood calibrate k={k} {stat}: threshold = score of rank ceil(tpr (n + 1))", cj["threshold"] == cs[j - 1])
        want = {f"p{q}": np.percentile(cs, q, method="inverted_cdf") for q in (50, 90, 95, 99)}
        want.update(min=cs.min(), max=cs.max(), mean=cs.mean())
        check(f"ood calibrate k={k} {stat}: quantiles and mean", all(abs(cj["scores"][x] - v) < 1e-12 for x, v in want.items()))
        sj = run("ood", "score", "--index", "codes-idx", "--activations", "a_in.npz", "--format", "json")
        si = knn(cin, tr, k, stat)
        got = np.array([r["score"] for r in sj["results"]])
        pv = np.array([(1 + (cs >= s).sum()) / (len(cs) + 1) for s in si])
        check(f"ood score k={k} {stat}: scores", np.allclose(got, si, rtol=0, atol=1e-12))
        check(f"ood score k={k} {stat}: conformal p-values", np.allclose([r["p_value"] for r in sj["results"]], pv, rtol=0, atol=1e-15))
        ej = run("ood", "eval", "--index", "codes-idx", "--in", "a_in.npz", "--out", "a_out.npz", "--kind", "activations",
                 "--in-floats", "f_in.npy", "--out-floats", "f_out.npy", "--train-floats", "f_train.npy", "--roc", "roc.csv", "--format", "json")
        rows = [r for r in csv.DictReader(open("roc.csv")) if r["score"] == "code"]
        roc_checks(f"ood eval k={k} {stat}: code AUROC, FPR@95%TPR, AUPR", si, knn(cout, tr, k, stat),
                   next(s for s in ej["scores"] if s["name"] == "code"), rows)
        if k == 1:
            unit = lambda X: X / np.maximum(np.linalg.norm(X, axis=1, keepdims=True), 1e-300)  # an all-zero row stays 0 (cos 0)
            nn = NearestNeighbors(n_neighbors=1).fit(unit(np.load("f_train.npy").astype(float)))
            fi, fo = (nn.kneighbors(unit(np.load(f"f_{p}.npy").astype(float)))[0][:, 0] for p in ("in", "out"))
            roc_checks("ood eval k=1: float k-NN score (unit vectors)", fi, fo, next(s for s in ej["scores"] if s["name"] == "float"))
        for v in ej["variants"]:
            ls = v["layers"] or ["h1", "h2"]
            sel = np.concatenate([np.arange(32) if l == "h1" else np.arange(32, 48) for l in ls])
            roc_checks(f"ood eval k={k} {stat}: variant k={v['k']} {v['statistic']} {ls}",
                       knn(cin[:, sel], tr[:, sel], v["k"], v["statistic"]), knn(cout[:, sel], tr[:, sel], v["k"], v["statistic"]), v)
    run("build", "--out", "model-idx", "--model", "model.safetensors", "--inputs", "x_train.npy")
    run("ood", "calibrate", "--index", "model-idx", "--inputs", "x_cal.npy")
    sj = run("ood", "score", "--index", "model-idx", "--inputs", "x_out.npy", "--format", "json")
    msp = clf.predict_proba(np.load("x_out.npy").astype(float)).max(1)
    check("ood score: max_softmax = MLPClassifier.predict_proba max", np.abs(np.array([r["max_softmax"] for r in sj["results"]]) - msp).max() < 1e-9)
    ej = run("ood", "eval", "--index", "model-idx", "--in", "x_in.npy", "--out", "x_out.npy", "--format", "json")
    roc_checks("ood eval: softmax baseline", 1 - clf.predict_proba(np.load("x_in.npy").astype(float)).max(1), 1 - msp,
               next(s for s in ej["scores"] if s["name"] == "softmax"))


def vote(labels):
    if not labels:
        return None
    counts = {}
    for l in labels:
        counts[l] = counts.get(l, 0) + 1
    best = max(counts.values())
    return next(l for l in labels if counts[l] == best)  # a tie goes to the label met first in rank order


def fidelities():
    F = np.load("f_train.npy").astype(float)
    C, n = F > 0, len(F)
    labels = list(pd.read_csv("meta.csv", dtype=str, keep_default_na=False)["label"])
    H = (C[:, None, :] != C[None]).sum(2)
    norms = np.linalg.norm(F, axis=1)
    with np.errstate(all="ignore"):
        cos = np.where(np.outer(norms, norms) == 0, 1.0, 1 - (F @ F.T) / np.outer(norms, norms))
    for k in (1, 5, 10):
        j = run("fidelity", "--activations", "f_train.npy", "-k", str(k), "--queries", str(n), "--format", "json")
        ov, tied, kth = [], 0, []
        for q in range(n):
            o = np.array([i for i in range(n) if i != q])
            ho, co = o[np.lexsort((o, H[q, o]))], o[np.lexsort((o, cos[q, o]))]
            ov.append(len(set(ho[:k]) & set(co[:k])) / k)
            kth.append(H[q, ho[k - 1]])
            tied += (H[q, o] <= H[q, ho[k - 1]]).sum() > k
        check(f"fidelity k={k}: knn_overlap, tied_share, mean_kth_distance",
              abs(j["overlap"] - np.mean(ov)) < 1e-12 and abs(j["tied_share"] - tied / n) < 1e-12 and abs(j["mean_kth_distance"] - np.mean(kth)) < 1e-12)
    meta = pd.DataFrame({"key": [f"r{i}" for i in range(n)], "label": labels})
    labeled = meta[meta.label != ""].index.to_numpy()
    meta.to_csv("meta_fid.csv", index=False)
    for k in (1, 5):
        j = run("fidelity", "--activations", "f_train.npy", "--meta", "meta_fid.csv", "--label-column", "label", "-k", str(k), "--queries", str(n), "--format", "json")
        ah = ac = 0
        for q in labeled:
            o = np.array([i for i in range(n) if i != q])
            ho, co = o[np.lexsort((o, H[q, o]))], o[np.lexsort((o, cos[q, o]))]
            # unlabelled rows among the k nearest are skipped; none labelled = a miss (docs/commands/fidelity.md)
            lab = lambda order: vote([labels[i] for i in order[:k] if labels[i] != ""])
            ah += lab(ho) == labels[q]
            ac += lab(co) == labels[q]
        acc = j["accuracy"]
        check(f"fidelity k={k}: label accuracy (Hamming, cosine) on {acc['labeled']} labelled queries",
              acc["labeled"] == len(labeled) and abs(acc["hamming"] - ah / len(labeled)) < 1e-12 and abs(acc["cosine"] - ac / len(labeled)) < 1e-12,
              f"{acc} vs {ah / len(labeled)}, {ac / len(labeled)}")
    for name, X in (("wine", load_wine().data), ("breast_cancer_40", load_breast_cancer().data[:40])):
        X = (X - X.mean(0)) / X.std(0)
        Fw = np.maximum(0, X @ np.random.default_rng(0).normal(size=(X.shape[1], 24))).astype(np.float32)
        np.save(f"{name}.npy", Fw)
        Fw, m = Fw.astype(float), len(Fw)
        iu = np.triu_indices(m, 1)
        Hw = ((Fw > 0)[:, None, :] != (Fw > 0)[None]).sum(2)[iu]
        nw = np.linalg.norm(Fw, axis=1)
        with np.errstate(all="ignore"):
            cw = np.where(np.outer(nw, nw) == 0, 1.0, 1 - (Fw @ Fw.T) / np.outer(nw, nw))[iu]
        rho = stats.spearmanr(Hw, cw).statistic
        j = run("fidelity", "--activations", f"{name}.npy", "--queries", "10", "--format", "json")
        check(f"fidelity {name}: Spearman over all {len(Hw)} pairs (no more than --pairs 20000)",
              j["pairs"] == len(Hw) and abs(j["spearman"] - rho) < 1e-9, f'{j["pairs"]} pairs, {j["spearman"]} vs {rho}')


def dupes():
    C, n = codes("train"), 500
    meta = pd.read_csv("meta.csv", dtype=str, keep_default_na=False)
    run("build", "--out", "dupes-idx", "--activations", "a_train.npz", "--meta", "meta.csv", "--magnitudes", "off")
    H = (C[:, None, :] != C[None]).sum(2)
    L, S = meta["label"].to_numpy(), meta["split"].to_numpy()
    iu = np.triu_indices(n, 1)
    for R in (0, 1, 2, 3):
        mask = H[iu] <= R
        a, b = iu[0][mask], iu[1][mask]
        _, comp = connected_components(coo_matrix((np.ones(len(a)), (a, b)), shape=(n, n)), directed=False)
        df = pd.DataFrame({"c": comp, "l": L, "s": S})
        sizes = df.groupby("c").size()
        groups = set(sizes[sizes >= 2].index)
        nl, ns = df[df.l != ""].groupby("c").l.nunique(), df[df.s != ""].groupby("c").s.nunique()
        conflict, cross = set(nl[nl >= 2].index) & groups, set(ns[ns >= 2].index) & groups
        for flags in ([], ["--cross-split"], ["--conflicting-labels"], ["--cross-split", "--conflicting-labels"]):
            j = run("dupes", "--index", "dupes-idx", "--radius", str(R), "--groups", "100000", "--pairs", "pairs.csv", "--format", "json", *flags)
            s = j["summary"]
            cs, cl = "--cross-split" in flags, "--conflicting-labels" in flags
            pair_cross = (S[a] != S[b]) & (S[a] != "") & (S[b] != "")
            pair_conflict = (L[a] != L[b]) & (L[a] != "") & (L[b] != "")
            flagged = int(((pair_cross if cs else False) | (pair_conflict if cl else False)).sum()) if cs or cl else -1
            want = dict(pairs=int(mask.sum()), exact_duplicate_pairs=int((H[iu] == 0).sum()), groups=len(groups),
                        largest_group=int(sizes.max()) if groups else 0, examples_in_groups=int(sizes[list(groups)].sum()),
                        cross_split_groups=len(cross), conflicting_groups=len(conflict), flagged_pairs=flagged,
                        duplicated_examples=int(((H == 0).sum(1) > 1).sum()))
            diff = {k: (s[k], v) for k, v in want.items() if s[k] != v}
            listed = len(groups) if not (cs or cl) else len((cross if cs else set()) | (conflict if cl else set()))
            written = len(pd.read_csv("pairs.csv"))
            check(f"dupes R={R} {' '.join(flags) or '(no flag)'}: summary, listed groups, --pairs rows",
                  not diff and len(j["groups"]) == listed and written == (want["pairs"] if flagged < 0 else flagged), f"{diff} {len(j['groups'])} {listed} {written}")
        bad = 0
        j = run("dupes", "--index", "dupes-idx", "--radius", str(R), "--groups", "100000", "--format", "json")
        for g in j["groups"]:
            mem = np.where(comp == comp[g["members"][0]["id"]])[0]
            lab = pd.Series(L[mem])
            spl = pd.Series(S[mem])
            inside = [(x, y) for x, y in zip(a, b) if comp[x] == comp[mem[0]]]
            bad += (g["size"] != len(mem) or g["labels"] != lab[lab != ""].value_counts().to_dict()
                    or g["splits"] != spl[spl != ""].value_counts().to_dict() or g["max_distance"] != max(H[x, y] for x, y in inside)
                    or g["distinct_codes"] != len({C[i].tobytes() for i in mem}))
        check(f"dupes R={R}: every group's size, label and split counts, largest distance, distinct codes", bad == 0, f"{bad} groups differ")
        Q = codes("in")
        HQ = (Q[:, None, :] != C[None]).sum(2)
        j = run("dupes", "--index", "dupes-idx", "--radius", str(R), "--against", "a_in.npz", "--format", "json")
        cnt = (HQ <= R).sum(1)
        ok = j["summary"]["matches"] == cnt.sum() and j["summary"]["rows_with_matches"] == (cnt > 0).sum()
        for row in j["rows"]:
            ids = np.where(HQ[row["row"]] <= R)[0]
            order = ids[np.lexsort((ids, HQ[row["row"], ids]))][:20]
            ok = ok and row["count"] == cnt[row["row"]] and [m["id"] for m in row["matches"]] == list(order)
        check(f"dupes R={R} --against: matches per row, ordered by (distance, id)", ok)


if __name__ == "__main__":
    with tempfile.TemporaryDirectory() as work:
        os.chdir(work)
        compares()
        clf, _ = digits_model()
        oods(clf)
        fidelities()
        dupes()
    print(f"{failures} checks differ")
    sys.exit(1 if failures else 0)
