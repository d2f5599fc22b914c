import os, sys; sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from truth import *
from check_nearest import IDX
def quant(X):
    mn = X.min(0); mx = X.max(0); st = (mx - mn) / 255
    q = np.where(st > 0, np.round((X - mn) / np.where(st > 0, st, 1)), 0)
    return mn + q * st
def check(idx, metric, k, C, ms, part, Xacts, Tacts):
    net, lmap, src = IDX[idx]; T = codes(net, "train"); Q = codes(net, part); m = mask(net, ms)
    Dm = hd(Q, T, m); TQ = quant(Tacts)[:, m]; XQ = Xacts[:, m]
    args = ["nearest", "--index", idx, "-k", str(k), "--refine", metric, "--candidates", str(C)] + src(part)
    if ms is not None: args += ["--layers", ",".join(lmap[x] for x in ms)]
    out = js(args); bad = 0; near = 0; nq = 0
    for r in out["results"]:
        q = r["query"]; nq += 1; d = Dm[q]; order = np.lexsort((np.arange(len(d)), d))
        cd = d[order[C-1]]; cand = np.where(d <= cd)[0]
        if r["candidates"] != len(cand) or r["hamming_radius"] != cd: bad += 1; print("CAND", q, r["candidates"], len(cand), r["hamming_radius"], cd); continue
        a = XQ[q]; B = TQ[cand]
        if metric == "cosine":
            na = np.linalg.norm(a); nb = np.linalg.norm(B, axis=1)
            rd = np.where((na == 0) | (nb == 0), 1.0, 1 - B @ a / np.where(nb == 0, 1, nb) / (na if na else 1))
        else: rd = np.sqrt(((B - a) ** 2).sum(1))
        o = np.lexsort((cand, d[cand], rd)); exp = cand[o][:k]
        got = [nb_["id"] for nb_ in r["neighbors"]]; grd = np.array([nb_["refined_distance"] for nb_ in r["neighbors"]])
        erd = rd[o][:k]
        if list(exp) != got:
            # allow swaps among near-equal refined distances
            rmap = dict(zip(cand, rd))
            gvals = np.array([rmap.get(i, np.inf) for i in got])
            if set(got) <= set(cand) and np.all(np.abs(np.sort(gvals) - erd) < 1e-5) and np.all(np.diff(grd) >= -1e-12): near += 1
            else:
                bad += 1
                if bad < 4: print("ORDER", idx, metric, ms, q, list(exp), got, erd[:5], grd[:5])
            continue
        if np.abs(grd - erd).max() > 1e-5 * max(1, np.abs(erd).max()): bad += 1; print("RDIST", q, grd[:3], erd[:3])
        if [nb_["distance"] for nb_ in r["neighbors"]] != list(d[exp]): bad += 1; print("HDIST")
    print(f"refine {idx} {metric} k={k} C={C} layers={ms} {part}: {nq} queries, {bad} bad, {near} near-tie swaps")
if __name__ == "__main__":
    for idx in sys.argv[1:]:
        net = IDX[idx][0]
        Ta = np.load(f"{net}_train_acts.npy").astype(np.float64)
        for part in ["query", "train"]:
            Xa = np.load(f"{net}_{part}_acts.npy").astype(np.float64)
            sels = [None, ["2"], ["6"], ["2", "6"], ["0", "4"]] if net == "deep" else [None]
            for ms in sels:
                for metric in ["cosine", "euclidean"]:
                    check(idx, metric, 5, 100, ms, part, Xa, Ta)
            check(idx, "cosine", 50, 60, None, part, Xa, Ta)
            check(idx, "cosine", 1, 1, None, part, Xa, Ta)
