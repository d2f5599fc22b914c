import os, sys; sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from truth import *
from check_nearest import IDX
def against(idx, R, ms=None):
    net, lmap, src = IDX[idx]; T = codes(net, "train"); Q = codes(net, "query"); m = mask(net, ms)
    Dq = hd(Q, T, m)
    args = ["dupes", "--index", idx, "--radius", str(R), "--against", src("query")[1], "--pairs", D + "ag.csv"]
    if ms: args += ["--layers", ",".join(lmap[x] for x in ms)]
    out = js(args); bad = 0
    got = set(tuple(map(int, r)) for r in list(csv.reader(open(D + "ag.csv")))[1:])
    exp = set((int(q), int(i), int(Dq[q, i])) for q, i in zip(*np.where(Dq <= R)))
    if got != exp: bad += 1; print("AGAINST", len(got), len(exp))
    s = out["summary"]
    if s["matches"] != len(exp) or s["rows_with_matches"] != len(set(q for q, _, _ in exp)): bad += 1; print("AGSUM", s)
    for r in out["rows"]:
        q = r["row"]; ids = np.where(Dq[q] <= R)[0]; o = ids[np.lexsort((ids, Dq[q, ids]))][:20]
        if r["count"] != len(ids) or [x["id"] for x in r["matches"]] != list(o): bad += 1; print("AGROW", q); break
    print(f"dupes --against {idx} R={R} layers={ms}: 119 rows, {len(exp)} matches; {bad} bad")
def ties(idx, k, ms=None, threads=None):
    net, lmap, src = IDX[idx]; T = codes(net, "train"); Q = codes(net, "query"); m = mask(net, ms); Dq = hd(Q, T, m)
    args = ["nearest", "--index", idx, "-k", str(k), "--ties"] + src("query")
    if ms: args += ["--layers", ",".join(lmap[x] for x in ms)]
    if threads: args += ["--threads", str(threads)]
    out = js(args); bad = 0; tot = 0
    for r in out["results"]:
        q = r["query"]; d = Dq[q]; o = np.lexsort((np.arange(len(d)), d)); kd = d[o[k-1]]
        exp = [int(i) for i in o if d[i] <= kd]; got = [x["id"] for x in r["neighbors"]]; tot += len(got)
        if exp != got: bad += 1; print("TIES", q, len(exp), len(got))
    print(f"nearest --ties {idx} k={k} layers={ms} threads={threads}: 119 queries, {tot} rows listed; {bad} bad")
for idx in ["idx_deep_model", "idx_deep_codes"]:
    for R in [0, 1, 3]:
        for ms in [None, ["2"], ["6"]]: against(idx, R, ms)
    for ms in [None, ["2"], ["6"], ["2", "6"]]: ties(idx, 5, ms, threads=2)
for R in [0, 3, 10]: against("idx_wide_model", R)
ties("idx_wide_model", 5, threads=2)
