import os, sys; sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from truth import *
from check_nearest import IDX
def check(idx, masksets, parts, R, N=3, rows=None, live=None):
    net, lmap, src = IDX[idx]; T = codes(net, "train"); n = len(T)
    lay = LAYERS[net]; names = []
    for nm, w in lay: names += [(nm, u) for u in range(w)]
    bad = 0; nq = 0; nreg = 0; tieorder = 0
    for part in parts:
        Q = codes(net, part)
        for ms in masksets:
            m = mask(net, ms); cols = np.where(m)[0]
            # regions of training codes
            reg = collections.defaultdict(list)
            for i in range(n):
                if live is None or live[i]: reg[T[i, cols].tobytes()].append(i)
            rk = list(reg.keys()); RC = np.array([np.frombuffer(k, dtype=bool) for k in rk])
            args = ["region", "--index", idx, "--radius", str(R), "--examples", str(N)] + src(part)
            if rows: args += ["--rows", rows]
            if ms is not None: args += ["--layers", ",".join(lmap[x] for x in ms)]
            out = js(args)
            if out is None: bad += 1; continue
            for r in out["results"]:
                q = r["query"]; nq += 1; qc = Q[q, cols]
                dist = (RC != qc).sum(1)
                exp = []
                for j in np.where(dist <= R)[0]:
                    ids = reg[rk[j]]; flips = [f"{lmap[names[cols[b]][0]]}:{names[cols[b]][1]}" for b in np.where(RC[j] != qc)[0]]
                    lc = collections.Counter(labels[i] for i in ids)
                    exp.append(dict(distance=int(dist[j]), flipped=flips, count=len(ids), labels=dict(lc), keys=[keys[i] for i in sorted(ids)[:N]], _f=[cols[b] for b in np.where(RC[j] != qc)[0]]))
                same = [e for e in exp if e["distance"] == 0]
                near = [e for e in exp if e["distance"] > 0]
                near.sort(key=lambda e: (e["distance"], -e["count"], e["_f"]))
                g = r["same"]
                if same:
                    e = same[0]
                    if (g["count"], g["labels"], g["keys"], g["flipped"]) != (e["count"], e["labels"], e["keys"], []): bad += 1; print("SAME", idx, q, g, e)
                elif g["count"] != 0: bad += 1; print("SAME0", idx, q, g)
                gn = r["nearby"]; nreg += len(gn) + (1 if same else 0)
                strip = lambda e: (e["distance"], tuple(e["flipped"]), e["count"], tuple(sorted(e["labels"].items())), tuple(e["keys"]))
                if sorted(map(strip, gn)) != sorted(map(strip, near)):
                    bad += 1
                    if bad < 5: print("NEARBY", idx, part, ms, q, len(gn), len(near), [strip(x) for x in gn[:3]], [strip(x) for x in near[:3]])
                elif list(map(strip, gn)) != list(map(strip, near)):
                    tieorder += 1
                    if tieorder < 3: print("ORDER", idx, ms, q, [strip(x)[:3] for x in gn[:6]], [strip(x)[:3] for x in near[:6]])
                for e in gn + ([g] if same else []):
                    cs = list(e["labels"].values())
                    if cs != sorted(cs, reverse=True): bad += 1; print("LABELORDER", e)
    print(f"region {idx} R={R} masks={len(masksets)} parts={parts}: {nq} queries, {nreg} regions compared, {bad} bad, {tieorder} order-only diffs")
    return nq, bad
if __name__ == "__main__":
    deepm = [None, ["0"], ["2"], ["4"], ["6"], ["2","6"], ["0","2"], ["4","6"]]
    for idx in sys.argv[1:]:
        net = IDX[idx][0]
        ms = deepm if net == "deep" else [None]
        for R in [0, 2, 3]:
            check(idx, ms, ["query", "train"], R)
