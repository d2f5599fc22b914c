import os, sys, math; sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from truth import *
from check_nearest import IDX
def nr(sizes, p):
    s = sorted(sizes); return s[max(1, math.ceil(p * len(s))) - 1]
def check(idx, layersel, live=None):
    net, lmap, src = IDX[idx]; T = codes(net, "train"); n = len(T)
    live = np.ones(n, bool) if live is None else live
    ids = np.where(live)[0]
    args = ["census", "--index", idx, "--largest", "1000", "--examples", "3"]
    sel = layersel or [nm for nm, _ in LAYERS[net]]
    if layersel: args += ["--layers", ",".join(lmap[x] for x in layersel)]
    out = js(args); bad = 0; sl = layer_slices(net)
    if out["examples"] != len(ids): bad += 1; print("EXAMPLES", out["examples"], len(ids))
    for pi, pf in enumerate(out["prefixes"]):
        pre = sel[:pi+1]
        if pf["layers"] != [lmap[x] for x in pre]: bad += 1; print("PREFIX", pf["layers"], pre)
        m = mask(net, pre); reg = collections.defaultdict(list)
        for i in ids: reg[T[i, m].tobytes()].append(i)
        sizes = [len(v) for v in reg.values()]
        e = dict(bits=int(m.sum()), regions=len(reg), singletons=sum(1 for s in sizes if s == 1))
        for kk, v in e.items():
            if pf[kk] != v: bad += 1; print("CENSUS", idx, pre, kk, pf[kk], v)
        hist = collections.Counter(); hex_ = collections.Counter()
        for s in sizes:
            b = 0 if s == 1 else math.ceil(math.log2(s)); hist[b] += 1; hex_[b] += s
        h = [dict(min=1 if b == 0 else 2**(b-1)+1, max=2**b, regions=hist[b], examples=hex_[b]) for b in sorted(hist)]
        if pf["histogram"] != h: bad += 1; print("HIST", idx, pre, pf["histogram"], h)
        q = pf["examples_per_region"]
        eq = dict(min=min(sizes), p50=nr(sizes, .5), p90=nr(sizes, .9), p99=nr(sizes, .99), max=max(sizes), mean=len(ids)/len(reg))
        for kk, v in eq.items():
            if abs(q[kk] - v) > 1e-12: bad += 1; print("QUANT", idx, pre, kk, q[kk], v)
        pur = sum(collections.Counter(labels[i] for i in v).most_common(1)[0][1] for v in reg.values()) / len(ids)
        if abs(pf["purity"] - pur) > 1e-12: bad += 1; print("PURITY", pf["purity"], pur)
        # largest regions
        exp = sorted(reg.values(), key=lambda v: (-len(v), min(v)))
        got = pf["largest"]
        cnts = [g["count"] for g in got]
        if cnts != [len(v) for v in exp[:len(got)]]: bad += 1; print("LARGEST", cnts[:10], [len(v) for v in exp[:10]])
        for g in got:
            v = [v for v in exp if keys[min(v)] == g["keys"][0]]
            if not v: bad += 1; print("LARGEST-KEY", g); continue
            v = v[0]
            if g["keys"] != [keys[i] for i in sorted(v)[:3]] or g["active_neurons"] != int(T[v[0], m].sum()) or g["labels"] != dict(collections.Counter(labels[i] for i in v)):
                bad += 1; print("LARGEST-REG", g, len(v))
    for nb in out["neurons"]:
        nm = [k for k, v in lmap.items() if v == nb["layer"]][0]; a, b = sl[nm]
        rates = T[ids, a:b].mean(0)
        if np.abs(np.array(nb["firing_rates"]) - rates).max() > 1e-12: bad += 1; print("RATES", nm)
        # called dead / always on only when the 95% bound 1 - 0.05^(1/n) of an unseen rate is at most 5% (59 examples or more)
        bound = 1 - 0.05 ** (1 / len(ids)); call = bound <= 0.05
        dead = [f"{nb['layer']}:{u}" for u in np.where(rates == 0)[0]] if call else []; on = [f"{nb['layer']}:{u}" for u in np.where(rates == 1)[0]] if call else []
        if nb["dead"] != dead or nb["always_on"] != on: bad += 1; print("DEAD/ON", nm, nb["dead"], dead, nb["always_on"], on)
        if abs(nb["rate_bound"] - bound) > 1e-12 * bound or nb["too_few_examples"] != (not call): bad += 1; print("BOUND", nm, nb["rate_bound"], bound, nb["too_few_examples"])
    if [nb["layer"] for nb in out["neurons"]] != [lmap[x] for x, _ in LAYERS[net]]: bad += 1; print("NEURON LAYERS", [nb["layer"] for nb in out["neurons"]])
    print(f"census {idx} layers={layersel}: {len(out['prefixes'])} prefixes, {sum(len(p['largest']) for p in out['prefixes'])} largest regions, {bad} bad")
    return bad
if __name__ == "__main__":
    for idx in sys.argv[1:]:
        net = IDX[idx][0]
        sels = [None, ["2"], ["6"], ["2", "6"], ["6", "2"], ["4", "0", "6"]] if net == "deep" else [None]
        for s in sels: check(idx, s)
