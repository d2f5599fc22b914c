import os, sys; sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from truth import *
from scipy.optimize import linear_sum_assignment
from scipy.stats import norm
def mmd2(Ka, Kb, Kab):
    m, n = len(Ka), len(Kb)
    return (Ka.sum() - np.trace(Ka)) / (m*(m-1)) + (Kb.sum() - np.trace(Kb)) / (n*(n-1)) - 2 * Kab.mean()
def check(idx, net, a, b, Ac, Bc, layers, lmap, sigma=None, extra=()):
    args = ["compare", "--index", idx, "--a", a, "--b", b, "--kind", "inputs", "--permutations", "50", "--top", "1000"] + list(extra)
    if sigma: args += ["--sigma", str(sigma)]
    if layers: args += ["--layers", ",".join(lmap[x] for x in layers)]
    out = js(args); bad = 0
    m = mask(net, layers); A_ = Ac[:, m]; B_ = Bc[:, m]; L = m.sum()
    H = lambda X, Y: hd(X, Y, np.ones(X.shape[1], bool))
    Daa, Dbb, Dab = H(A_, A_), H(B_, B_), H(A_, B_)
    ag = mmd2(1 - Daa / L, 1 - Dbb / L, 1 - Dab / L)
    g = {x["kernel"]: x for x in out["mmd"]}
    if abs(g["agreement"]["mmd2"] - ag) > 1e-12: bad += 1; print("AGREE", g["agreement"]["mmd2"], ag)
    P = np.vstack([A_, B_]); Dp = H(P, P); iu = np.triu_indices(len(P), 1)
    s = sigma or np.median(Dp[iu]); s = s if s > 0 else 1
    ex = mmd2(np.exp(-Daa / s), np.exp(-Dbb / s), np.exp(-Dab / s))
    if abs(g["exponential"]["sigma"] - s) > 1e-9 or abs(g["exponential"]["mmd2"] - ex) > 1e-12: bad += 1; print("EXP", g["exponential"]["sigma"], s, g["exponential"]["mmd2"], ex)
    if out["w2"]["method"] == "exact":
        r, c = linear_sum_assignment(Dab.astype(float) ** 2); w = np.sqrt((Dab[r, c].astype(float) ** 2).mean())
        if abs(out["w2"]["w2"] - w) > 1e-9: bad += 1; print("W2", out["w2"]["w2"], w)
    sl = layer_slices(net); sel = layers or [x for x, _ in LAYERS[net]]
    if [x["layer"] for x in out["layers"]] != [lmap[x] for x in sel]: bad += 1; print("LAYERS", [x["layer"] for x in out["layers"]])
    for x in out["layers"]:
        nm = [k for k in lmap if lmap[k] == x["layer"]][0]; lo, hi = sl[nm]
        a_, b_ = Ac[:, lo:hi], Bc[:, lo:hi]; w_ = hi - lo
        da, db, dab = H(a_, a_), H(b_, b_), H(a_, b_)
        P = np.vstack([a_, b_]); Dp = H(P, P); ls = np.median(Dp[iu]); ls = ls if ls > 0 else 1
        e = dict(bits=w_, agreement_mmd2=mmd2(1 - da / w_, 1 - db / w_, 1 - dab / w_), sigma=ls,
                 exponential_mmd2=mmd2(np.exp(-da / ls), np.exp(-db / ls), np.exp(-dab / ls)), mean_abs_rate_diff=np.abs(a_.mean(0) - b_.mean(0)).mean())
        for k, v in e.items():
            if abs(x[k] - v) > 1e-12: bad += 1; print("LAYER", x["layer"], k, x[k], v)
    # neurons
    ra, rb = A_.mean(0), B_.mean(0); na, nb = len(A_), len(B_)
    p = (ra * na + rb * nb) / (na + nb); se = np.sqrt(p * (1 - p) * (1 / na + 1 / nb))
    z = np.where(se > 0, (ra - rb) / np.where(se > 0, se, 1), 0); pv = 2 * norm.sf(np.abs(z))
    o = np.argsort(pv, kind="stable"); M = len(pv); q = np.empty(M); run = 1.0
    for rank in range(M - 1, -1, -1): run = min(run, pv[o[rank]] * M / (rank + 1)); q[o[rank]] = run
    names = []
    for nm in sel: names += [f"{lmap[nm]}:{u}" for u in range(sl[nm][1] - sl[nm][0])]
    cols = np.concatenate([np.arange(*sl[nm]) for nm in sel]); 
    # the mask order is by layout; names list in sel order: re-map by column
    colname = {}
    for nm in sel:
        for u in range(sl[nm][1] - sl[nm][0]): colname[sl[nm][0] + u] = f"{lmap[nm]}:{u}"
    mcols = np.where(m)[0]; byname = {colname[c]: i for i, c in enumerate(mcols)}
    nn_ = 0
    for x in out["neurons"]:
        i = byname[x["neuron"]]; nn_ += 1
        for k, v in [("rate_a", ra[i]), ("rate_b", rb[i]), ("z", z[i]), ("p_value", pv[i]), ("q_value", q[i])]:
            if abs(x[k] - v) > 1e-9 * max(1, abs(v)): bad += 1; print("NEURON", x["neuron"], k, x[k], v); break
    if out["neurons_moved"] != int((q <= out["alpha"]).sum()): bad += 1; print("MOVED", out["neurons_moved"], int((q <= 0.05).sum()))
    print(f"compare {idx} {a} vs {b} layers={layers} sigma={sigma}: {na}+{nb} rows, {len(out['layers'])} layers, {nn_} neurons, w2 {out['w2']['method']}; {bad} bad")
if __name__ == "__main__":
    dm = {"0":"0","2":"2","4":"4","6":"6"}
    C = {t: np.load(D + f"deep_{t}_codes.npy") for t in ["cal", "in", "out"]}
    np.save(D + "out60_inputs.npy", np.load(D + "out_inputs.npy")[:60])
    for L in [None, ["2"], ["6"], ["2", "6"]]:
        for s in [None, 20]:
            check("idx_deep_model", "deep", "in_inputs.npy", "out_inputs.npy", C["in"], C["out"], L, dm, s)
        check("idx_deep_model", "deep", "cal_inputs.npy", "out60_inputs.npy", C["cal"], C["out"][:60], L, dm)
    W = {t: np.load(D + f"wide_{t}_codes.npy") for t in ["cal", "in", "out"]}
    check("idx_wide_model", "wide", "cal_inputs.npy", "out60_inputs.npy", W["cal"], W["out"][:60], None, {"0": "0"})
    check("idx_wide_model", "wide", "cal_inputs.npy", "in_inputs.npy", W["cal"], W["in"], None, {"0": "0"})
