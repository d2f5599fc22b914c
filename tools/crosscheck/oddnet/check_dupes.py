import os, sys; sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from truth import *
from check_nearest import IDX
def comps(n, pairs, members):
    par = {i: i for i in members}
    def f(x):
        while par[x] != x: par[x] = par[par[x]]; x = par[x]
        return x
    for a, b in pairs: par[f(a)] = f(b)
    g = collections.defaultdict(list)
    for i in members: g[f(i)].append(i)
    return [sorted(v) for v in g.values() if len(v) > 1]
def check(idx, ms, R, live=None, where=None, threads=None):
    net, lmap, src = IDX[idx]; T = codes(net, "train"); n = len(T)
    live = np.ones(n, bool) if live is None else live.copy()
    if where is not None: live &= where[1]
    ids = np.where(live)[0]; m = mask(net, ms)
    Dm = hd(T[ids], T[ids], m)
    iu = np.triu_indices(len(ids), 1); sel = Dm[iu] <= R
    exp = set((int(ids[a]), int(ids[b]), int(Dm[a, b])) for a, b in zip(iu[0][sel], iu[1][sel]))
    args = ["dupes", "--index", idx, "--radius", str(R), "--pairs", D + f"pairs_{idx}.csv", "--groups", "100000"]
    if ms is not None: args += ["--layers", ",".join(lmap[x] for x in ms)]
    if where is not None: args += ["--where", where[0]]
    if threads is not None: args += ["--threads", str(threads)]
    out = js(args); bad = 0
    got = set(tuple(map(int, r)) for r in list(csv.reader(open(D + f"pairs_{idx}.csv")))[1:])
    if got != exp: bad += 1; print("PAIRS", idx, ms, R, len(got), len(exp), list(got - exp)[:5], list(exp - got)[:5])
    s = out["summary"]; pairs = [(a, b) for a, b, d in exp]
    groups = comps(n, pairs, list(ids))
    codesof = lambda i: T[i, m].tobytes()
    cnt = collections.Counter(codesof(i) for i in ids)
    e = dict(examples=len(ids), bits=int(m.sum()), radius=R, pairs=len(exp), exact_duplicate_pairs=sum(1 for p in exp if p[2] == 0),
             duplicated_examples=sum(1 for i in ids if cnt[codesof(i)] > 1), groups=len(groups), largest_group=max((len(g) for g in groups), default=0),
             examples_in_groups=sum(len(g) for g in groups),
             cross_split_groups=sum(1 for g in groups if len(set(splits[i] for i in g)) > 1),
             conflicting_groups=sum(1 for g in groups if len(set(labels[i] for i in g)) > 1), pairs_written=len(exp))
    for k, v in e.items():
        if s[k] != v: bad += 1; print("SUMMARY", idx, ms, R, k, s[k], v)
    # listed groups
    eg = sorted(groups, key=lambda g: (-len(g), g[0]))
    gg = out["groups"]
    if [g["size"] for g in gg] != [len(g) for g in eg]: bad += 1; print("GROUPSIZES", [g["size"] for g in gg][:10], [len(g) for g in eg][:10])
    else:
        for g, t in zip(gg, eg):
            mem = [x["id"] for x in g["members"]]
            inner = [d for a, b, d in exp if a in set(t) and b in set(t)]
            if mem != t[:20] or g["distinct_codes"] != len(set(codesof(i) for i in t)) or g["max_distance"] != max(inner) \
               or g["labels"] != dict(collections.Counter(labels[i] for i in t)) or g["cross_split"] != (len(set(splits[i] for i in t)) > 1):
                bad += 1; print("GROUP", idx, ms, R, g["size"], mem[:5], t[:5], g["distinct_codes"], g["max_distance"], max(inner)); break
    print(f"dupes {idx} layers={ms} R={R} where={where[0] if where else None}: {len(ids)} examples, {len(exp)} pairs, {len(groups)} groups, {bad} bad")
    return bad
if __name__ == "__main__":
    for idx in sys.argv[1:]:
        net = IDX[idx][0]
        sels = [None, ["0"], ["2"], ["4"], ["6"], ["2", "6"], ["0", "2"]] if net == "deep" else [None]
        for ms in sels:
            for R in [0, 1, 2, 3]: check(idx, ms, R)
