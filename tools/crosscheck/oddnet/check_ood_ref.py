import os, sys, math, shutil; sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from truth import *
from check_refine import quant
def refscore(Xa, Xc, T, TQ, m, k, stat, C=100):
    D_ = hd(Xc, T, m); out = []
    for q in range(len(Xc)):
        d = D_[q]; o = np.lexsort((np.arange(len(d)), d)); cand = np.where(d <= d[o[C-1]])[0]
        a = Xa[q, m]; B = TQ[cand][:, m]; na = np.linalg.norm(a); nb = np.linalg.norm(B, axis=1)
        cs = np.sort(np.where((na == 0) | (nb == 0), 1.0, 1 - B @ a / np.where(nb == 0, 1, nb) / (na or 1)))[:k]
        out.append(cs[k-1] if stat == "kth" else cs.mean())
    return np.array(out)
def check(base, net, k, stat, layers, lmap):
    idx = base + "_oodr"; shutil.rmtree(D + idx, ignore_errors=True); shutil.copytree(D + base, D + idx)
    T = codes(net, "train"); TQ = quant(np.load(D + f"{net}_train_acts.npy").astype(np.float64)); m = mask(net, layers); bad = 0
    lay = ["--layers", ",".join(lmap[x] for x in layers)] if layers else []
    cal = js(["ood", "calibrate", "--index", idx, "--inputs", "cal_inputs.npy", "-k", str(k), "--statistic", stat, "--score", "refined"] + lay)
    L = lambda t: (np.load(D + f"{net}_{t}_acts.npy").astype(np.float64), np.load(D + f"{net}_{t}_codes.npy"))
    cs = refscore(*L("cal"), T, TQ, m, k, stat); n = len(cs); thr = sorted(cs)[math.ceil(0.95 * (n + 1)) - 1]
    if abs(cal["threshold"] - thr) > 1e-5 * max(thr, 1e-3): bad += 1; print("RTHR", cal["threshold"], thr)
    sc = js(["ood", "score", "--index", idx, "--inputs", "out_inputs.npy"]); os_ = refscore(*L("out"), T, TQ, m, k, stat)
    flips = 0
    for r in sc["results"]:
        q = r["query"]
        if abs(r["score"] - os_[q]) > 1e-5 * max(os_[q], 1e-3): bad += 1; print("RSCORE", q, r["score"], os_[q])
        if r["decision"] != ("out" if os_[q] > thr else "in"):
            if abs(os_[q] - thr) < 1e-5: flips += 1
            else: bad += 1; print("RDEC", q, r["decision"], os_[q], thr)
    ev = js(["ood", "eval", "--index", idx, "--in", "in_inputs.npy", "--out", "out_inputs.npy", "--kind", "inputs"])
    is_ = refscore(*L("in"), T, TQ, m, k, stat)
    gt = (os_[:, None] > is_[None, :]).sum() + 0.5 * (os_[:, None] == is_[None, :]).sum(); au = gt / (len(is_) * len(os_))
    r = [s for s in ev["scores"] if s["name"] == "refined"][0]
    if abs(r["auroc"] - au) > 1e-9: bad += 1; print("RAUROC", r["auroc"], au)
    print(f"ood refined {base} k={k} {stat} layers={layers}: cal {n}, scored {len(os_)}, eval {len(is_)}/{len(os_)}; refined auroc {r['auroc']:.4f}; {bad} bad, {flips} at-threshold")
dm = {"0":"0","2":"2","4":"4","6":"6"}
for k, stat, L_ in [(1, "kth", None), (5, "mean", ["2", "6"]), (3, "kth", ["6"])]: check("idx_deep_model", "deep", k, stat, L_, dm)
check("idx_wide_model", "wide", 1, "kth", None, {"0": "0"})
