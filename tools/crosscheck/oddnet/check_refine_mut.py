import os, sys; sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from truth import *
from check_refine import quant
from check_nearest import IDX
live = np.ones(480, bool)
for i in [0, 5, 299, 300, 301, 455, 479]: live[i] = False
live &= np.array([int(r["grp"]) != 3 for r in meta]); sp = np.array(splits)
Ta = np.load(D + "deep_train_acts.npy").astype(np.float64)
TQ = np.vstack([quant(Ta[a:b]) for a, b in [(0, 300), (300, 400), (400, 480)]])
T = codes("deep", "train"); Q = codes("deep", "query"); Xa = np.load(D + "deep_query_acts.npy").astype(np.float64)
for ms, where, C, k in [(None, None, 100, 5), (["2", "6"], None, 100, 5), (["6"], ("split = train", sp == "train"), 40, 10), (None, ("grp in (1, 2)", np.isin([int(r["grp"]) for r in meta], [1, 2])), 30, 30)]:
    m = mask("deep", ms); ok = live & (where[1] if where else True); Dm = hd(Q, T, m)
    args = ["nearest", "--index", "idx_mutn", "-k", str(k), "--refine", "--candidates", str(C), "--activations", "deep_query_acts.npz"]
    if ms: args += ["--layers", ",".join(ms)]
    if where: args += ["--where", where[0]]
    out = js(args); bad = 0; near = 0
    for r in out["results"]:
        q = r["query"]; ids = np.where(ok)[0]; d = Dm[q]; o = ids[np.lexsort((ids, d[ids]))]; cd = d[o[min(C, len(o)) - 1]]
        cand = ids[d[ids] <= cd]
        a = Xa[q, m]; B = TQ[cand][:, m]; na = np.linalg.norm(a); nb = np.linalg.norm(B, axis=1)
        rd = np.where((na == 0) | (nb == 0), 1.0, 1 - B @ a / np.where(nb == 0, 1, nb) / (na or 1))
        oo = np.lexsort((cand, d[cand], rd)); exp = list(cand[oo][:k]); got = [x["id"] for x in r["neighbors"]]
        if r["candidates"] != len(cand): bad += 1; print("CAND", q, r["candidates"], len(cand)); continue
        if exp != got:
            rmap = dict(zip(cand, rd)); gv = np.array([rmap.get(i, 9) for i in got])
            if np.all(np.abs(np.sort(gv) - rd[oo][:k]) < 1e-5): near += 1
            else: bad += 1; print("ORD", q, exp[:5], got[:5])
    print(f"refine idx_mutn (3 segments, 75 deleted) layers={ms} where={where[0] if where else None} C={C} k={k}: {len(out['results'])} queries, {bad} bad, {near} near-tie swaps")
