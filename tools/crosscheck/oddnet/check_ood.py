import os, sys, math, shutil; sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from truth import *
def nr(s, p): s = sorted(s); return s[max(1, math.ceil(p * len(s))) - 1]
def kscore(C, T, m, k, stat):
    d = np.sort(hd(C, T, m), 1)[:, :k]
    return (d[:, k-1] if stat == "kth" else d.mean(1)).astype(float), d
def auroc(si, so):
    gt = (so[:, None] > si[None, :]).sum() + 0.5 * (so[:, None] == si[None, :]).sum()
    return gt / (len(si) * len(so))
def fpr95(si, so):
    t = nr(si, 0.95); return (so <= t).mean()
def check(base, net, k, stat, layers, lmap):
    idx = base + "_ood"; shutil.rmtree(D + idx, ignore_errors=True); shutil.copytree(D + base, D + idx)
    T = codes(net, "train"); m = mask(net, layers); bad = 0
    Cc = np.load(D + f"{net}_cal_codes.npy"); Ic = np.load(D + f"{net}_in_codes.npy"); Oc = np.load(D + f"{net}_out_codes.npy")
    lay = ["--layers", ",".join(lmap[x] for x in layers)] if layers else []
    cal = js(["ood", "calibrate", "--index", idx, "--inputs", "cal_inputs.npy", "-k", str(k), "--statistic", stat, "--score", "code"] + lay)
    cs, _ = kscore(Cc, T, m, k, stat); n = len(cs); j = math.ceil(0.95 * (n + 1)); thr = sorted(cs)[j - 1]
    if abs(cal["threshold"] - thr) > 1e-12 or cal["calibration_inputs"] != n: bad += 1; print("THR", cal["threshold"], thr)
    for q, v in [("min", min(cs)), ("p50", nr(cs, .5)), ("p90", nr(cs, .9)), ("p95", nr(cs, .95)), ("p99", nr(cs, .99)), ("max", max(cs)), ("mean", cs.mean())]:
        if abs(cal["scores"][q] - v) > 1e-9: bad += 1; print("CALQ", q, cal["scores"][q], v)
    sc = js(["ood", "score", "--index", idx, "--inputs", "out_inputs.npy", "--evidence", str(min(3, k))])
    os_, d = kscore(Oc, T, m, k, stat); Dfull = hd(Oc, T, m)
    lg = np.load(D + f"{net}_out_logits.npy"); pr = np.exp(lg - lg.max(1, keepdims=True)); pr /= pr.sum(1, keepdims=True)
    for r in sc["results"]:
        q = r["query"]; s = os_[q]
        p = (1 + (cs >= s).sum()) / (n + 1)
        exp = dict(score=s, kth=d[q, k-1], mean=d[q].mean(), own_region=bool(d[q, 0] == 0), decision="out" if s > thr else "in", p_value=p)
        for kk, v in exp.items():
            if (abs(r[kk] - v) > 1e-9 if not isinstance(v, (bool, str)) else r[kk] != v): bad += 1; print("SCORE", q, kk, r[kk], v)
        ev = [e["id"] for e in r["evidence"]]; ids = np.lexsort((np.arange(len(T)), Dfull[q]))[:len(ev)]
        if ev != list(ids): bad += 1; print("EVID", q, ev, list(ids))
        if abs(r["max_softmax"] - pr[q].max()) > 1e-9: bad += 1; print("SOFTMAX", q, r["max_softmax"], pr[q].max())
    do = js(["ood", "score", "--index", idx, "--inputs", "out_inputs.npy", "--decision-only"])
    for r in do["results"]:
        if r["decision"] != ("out" if os_[r["query"]] > thr else "in"): bad += 1; print("DECONLY", r)
    ev = js(["ood", "eval", "--index", idx, "--in", "in_inputs.npy", "--out", "out_inputs.npy", "--kind", "inputs"])
    is_, _ = kscore(Ic, T, m, k, stat)
    from sklearn.metrics import roc_auc_score, average_precision_score
    code = [s for s in ev["scores"] if s["name"] == "code"][0]
    y = np.r_[np.zeros(len(is_)), np.ones(len(os_))]; sall = np.r_[is_, os_]
    e = dict(auroc=auroc(is_, os_), fpr_at_95_tpr=fpr95(is_, os_), aupr_out=average_precision_score(y, sall), aupr_in=average_precision_score(1 - y, -sall))
    if abs(e["auroc"] - roc_auc_score(y, sall)) > 1e-12: print("my auroc vs sklearn differ")
    for kk, v in e.items():
        if abs(code[kk] - v) > 1e-9: bad += 1; print("EVAL", kk, code[kk], v)
    il = np.load(D + f"{net}_in_logits.npy"); ol = lg
    sm = lambda L: 1 - (np.exp(L - L.max(1, keepdims=True)) / np.exp(L - L.max(1, keepdims=True)).sum(1, keepdims=True)).max(1)
    smx = [s for s in ev["scores"] if s["name"] == "softmax"]
    if smx and abs(smx[0]["auroc"] - auroc(sm(il), sm(ol))) > 1e-9: bad += 1; print("SOFTMAX AUROC", smx[0]["auroc"], auroc(sm(il), sm(ol)))
    nv = 0
    for v in ev["variants"]:
        lm = mask(net, [x for x in lmap if lmap[x] in v["layers"]] if v["layers"] else None)
        a, _ = kscore(Ic, T, lm, v["k"], v["statistic"]); b, _ = kscore(Oc, T, lm, v["k"], v["statistic"]); nv += 1
        if abs(v["auroc"] - auroc(a, b)) > 1e-9 or abs(v["fpr_at_95_tpr"] - fpr95(a, b)) > 1e-9: bad += 1; print("VARIANT", v, auroc(a, b), fpr95(a, b))
    print(f"ood {base} k={k} {stat} layers={layers}: cal {n}, scored {len(sc['results'])}+{len(do['results'])} decision-only, eval {len(is_)} in/{len(os_)} out, {nv} variants, softmax={'yes' if smx else 'no'}; code auroc {code['auroc']:.4f}; {bad} bad")
if __name__ == "__main__":
    dm = {"0":"0","2":"2","4":"4","6":"6"}
    for k, stat, L in [(1, "kth", None), (5, "kth", ["2", "6"]), (5, "mean", ["6"]), (3, "mean", ["0", "4"])]:
        check("idx_deep_model", "deep", k, stat, L, dm)
    for k, stat in [(1, "kth"), (5, "mean")]:
        check("idx_wide_model", "wide", k, stat, None, {"0": "0"})
