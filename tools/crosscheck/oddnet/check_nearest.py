import os, sys; sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from truth import *
IDX = {  # index -> (net, layer-name map net->index, query source builder)
 "idx_deep_model": ("deep", {"0":"0","2":"2","4":"4","6":"6"}, lambda part: ["--inputs", f"{part}_inputs.npy"]),
 "idx_deep_npz":   ("deep", {"0":"0","2":"2","4":"4","6":"6"}, lambda part: ["--activations", f"deep_{part}_acts.npz"]),
 "idx_deep_codes": ("deep", {"0":"0","2":"2","4":"4","6":"6"}, lambda part: ["--codes", f"deep_{part}_codes_packed.npy"]),
 "idx_mut": ("deep", {"0":"0","2":"2","4":"4","6":"6"}, lambda part: ["--inputs", f"{part}_inputs.npy"]),
 "idx_mutn": ("deep", {"0":"0","2":"2","4":"4","6":"6"}, lambda part: ["--activations", f"deep_{part}_acts.npz"]),
 "idx_wide_model": ("wide", {"0":"0"}, lambda part: ["--inputs", f"{part}_inputs.npy"]),
 "idx_wide_csv":   ("wide", {"0":"act"}, lambda part: ["--activations", f"wide_{part}_acts.csv"]),
 "idx_wide_codes": ("wide", {"0":"code"}, lambda part: ["--codes", f"wide_{part}_codes_bool.npy"]),
}
def vote_truth(ids, dist):
    c = collections.Counter(); tot = collections.Counter()
    for i, d in zip(ids, dist): c[labels[i]] += 1; tot[labels[i]] += d
    best = sorted(c, key=lambda l: (-c[l], tot[l], l))[0]
    return best, c[best], sum(c.values())
def check(idx, ks, masksets, parts, where=None, live=None, extra=()):
    net, lmap, src = IDX[idx]; T = codes(net, "train"); n = len(T)
    live = np.ones(n, bool) if live is None else live
    if where is not None: live = live & where[1]
    bad = 0; nq = 0
    for part in parts:
        Q = codes(net, part)
        for ms in masksets:
            m = mask(net, ms); D_ = hd(Q, T, m)
            sl = layer_slices(net)
            for k in ks:
                args = ["nearest", "--index", idx, "-k", str(k)] + src(part) + list(extra)
                if ms is not None: args += ["--layers", ",".join(lmap[x] for x in ms)]
                if where is not None: args += ["--where", where[0]]
                out = js(args)
                if out is None: bad += 1; continue
                for r in out["results"]:
                    q = r["query"]; nq += 1
                    d = D_[q].copy(); ids = np.where(live)[0]
                    order = ids[np.lexsort((ids, d[ids]))]
                    exp = order[:k]; got = [nb["id"] for nb in r["neighbors"]]
                    gd = [nb["distance"] for nb in r["neighbors"]]
                    if list(exp) != got or list(d[exp]) != gd:
                        bad += 1
                        if bad < 5: print("MISMATCH", idx, part, ms, k, q, list(exp)[:8], list(d[exp])[:8], got[:8], gd[:8])
                        continue
                    # layer distances
                    for nb in r["neighbors"]:
                        for nm in (ms or lmap.keys()):
                            a, b = sl[nm]; t = int((Q[q, a:b] != T[nb["id"], a:b]).sum())
                            if nb["layer_distances"].get(lmap[nm]) != t:
                                bad += 1; print("LAYERDIST", idx, q, nb["id"], nm, nb["layer_distances"], t); break
                        if nb["key"] != keys[nb["id"]] or nb["label"] != labels[nb["id"]]: bad += 1; print("META", nb)
                    if len(exp):
                        kd = d[exp[-1]]; within = order[d[order] <= kd]
                        lab, v, of = vote_truth(within, d[within])
                        vt = r["vote"]
                        if (vt["label"], vt["votes"], vt["of"], vt["neighbors"], vt["within_distance"]) != (lab, v, of, len(within), kd):
                            bad += 1; print("VOTE", idx, q, vt, lab, v, of, len(within), kd)
    print(f"nearest {idx} k={ks} masks={len(masksets)} parts={parts} where={where[0] if where else None}: {nq} query answers, {bad} bad")
    return nq, bad
if __name__ == "__main__":
    deepm = [None, ["0"], ["2"], ["4"], ["6"]] + [list(p) for p in itertools.combinations(["0","2","4","6"], 2)]
    for idx in sys.argv[1:]:
        net = IDX[idx][0]
        ms = deepm if net == "deep" else [None]
        check(idx, [1, 5, 50], ms, ["query", "train"])
