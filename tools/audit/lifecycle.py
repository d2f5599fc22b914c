#!/usr/bin/env python3
"""The life of ONE index through the command line, checked after every step against a brute force.

What the other audits leave out: shapes_fuzz.py checks each case once, at the end of build + adds +
one delete by keys (+ compact); meta_batches.py checks filters only; newuser_mlp.py checks one add /
delete / compact. Here one index lives through a realistic sequence of days on activations of a
PyTorch MLP (random or briefly trained weights; hidden widths summing to odd code widths 37, 100,
300 or 700; inputs from an invented Gaussian mixture that drifts a little day by day, with a few
"hub" inputs repeated in every batch so that many examples share one code):

  build (from .npy for one layer, .npz for several), then adds of several sizes, some with metadata
  and some without (keys row-<id>, no label/split/fields), one metadata batch without a column,
  so that the default merge policy merges on its own (`info`'s segment count is printed per step);
  `delete --keys` (keys of both kinds) and `delete --where`, `compact`, more adds, more deletes.

After EVERY step:
  - `info`: live, next_id, the segments' counts; `check` (every 4th step and after compact): every
    file sound;
  - `export-codes --ids [--magnitudes]`: the live codes in id order equal (activations > 0) of the
    rows the script added and did not delete, with their ids and keys;
  - `nearest` (JSON) in seven configurations: k = 1, 10, 100; --ties; --where filters on number
    and text fields, on missing values (`!=`, `not`) and on a short key list; --layers masks; on a
    query set of in-distribution inputs, exact copies of live and of deleted examples, copies with
    other magnitudes but the same code, hub copies (large tie groups), far-out inputs (x40, negated),
    all-off and random-sign rows. Every neighbour's id, distance and per-layer distances, the order
    (distance, then ascending id: ids are never reused nor renumbered by merges or compact), the
    --ties group and the label vote (every neighbour within the K-th distance; label ties by the
    smaller total distance, then the smaller name) are compared with the brute force;
  - `nearest --refine cosine` (even steps) or `euclidean` with a filter and a mask (odd steps) when
    the index keeps magnitudes: the candidate count and
    Hamming radius exactly, the re-ranked ids and float distances (within 1e-9) against the float
    metric on the magnitudes `export-codes` gives back (dequantised), and the refined distance of
    each id the same before and after merges and compact (the docs say byte for byte);
  - `dupes --against` (even steps: every query row's matches within R, via --pairs) or a `dupes`
    self-join on a metadata sample (odd steps: `--where "grp < 2"`, --pairs, --layers now and then);
  - the kept magnitudes of every id, exported, stay the same bytes from step to step.

Reference: Hamming distance as the popcount of XOR of the packed codes (common practice), computed
with NumPy; cross-checked each step against scipy.spatial.distance.cdist(..., 'hamming') times the
bit count on a sample of the live codes.

    tools/audit/lifecycle.py [--seed S] [--bits 37|100|300|700] [--size N] [--bin bin/actindex] [--work DIR]

Prints the seed (`--seed S` repeats a run: data, weights, steps, queries), one line per step, every
DIFF with what differs, and a summary (steps, commands, queries, comparisons, differences). Exit 1
on any DIFF. Needs numpy, scipy, torch (CPU); never a test dependency.
"""
import argparse
import json
import os
import shutil
import subprocess
import sys
import time

import numpy as np
import torch
from scipy.spatial.distance import cdist

WIDTHS = {37: [37], 100: [41, 59], 300: [127, 101, 72], 700: [301, 257, 142]}
D_IN, COMPONENTS = 24, 8
TAGS = ["alpha", "beta", "gamma", "delta"]


class Stats:
    def __init__(self):
        self.steps = self.commands = self.queries = self.comparisons = self.diffs = 0
        self.nearest_runs = self.refine_runs = self.dupes_runs = 0
        self.details = []

    def check(self, ok, what):
        self.comparisons += 1
        if not ok:
            self.diffs += 1
            if len(self.details) < 200:
                self.details.append(what)
            print("DIFF " + what, flush=True)
        return ok


class Cli:
    def __init__(self, binary, stats):
        self.binary, self.stats = binary, stats

    def run(self, *args, expect_json=True, ok_codes=(0,)):
        p = subprocess.run([self.binary] + [str(a) for a in args], capture_output=True, text=True)
        self.stats.commands += 1
        if p.returncode not in ok_codes:
            raise SystemExit(f"exit {p.returncode}: {' '.join(map(str, args))}\n{p.stderr.strip()[:2000]}")
        return (json.loads(p.stdout) if expect_json else p.stdout), p.stderr


# ---------------------------------------------------------------- data and model

class World:
    """The invented data: a drifting Gaussian mixture, hub inputs, and the MLP's activations."""

    def __init__(self, rng, widths, trained):
        self.rng = rng
        self.centres = rng.normal(0, 2.5, size=(COMPONENTS, D_IN))
        self.scales = rng.uniform(0.5, 1.5, size=(COMPONENTS, D_IN))
        self.hubs = self.sample(6, day=0)[0]
        torch.manual_seed(int(rng.integers(0, 2**31)))
        layers, prev = [], D_IN
        for w in widths:
            layers += [torch.nn.Linear(prev, w), torch.nn.ReLU()]
            prev = w
        self.net = torch.nn.Sequential(*layers, torch.nn.Linear(prev, COMPONENTS))
        if trained:
            x, y = self.sample(20_000, day=0)
            opt = torch.optim.Adam(self.net.parameters(), lr=3e-3)
            xt, yt = torch.tensor(x, dtype=torch.float32), torch.tensor(y)
            for _ in range(3):
                for s in range(0, len(xt), 256):
                    opt.zero_grad()
                    torch.nn.functional.cross_entropy(self.net(xt[s:s + 256]), yt[s:s + 256]).backward()
                    opt.step()
        self.widths = widths

    def sample(self, n, day):
        y = self.rng.integers(0, COMPONENTS, size=n)
        x = self.centres[y] + 0.05 * day + self.rng.normal(size=(n, D_IN)) * self.scales[y]
        return x.astype(np.float32), y

    def acts(self, x):
        """Post-ReLU activations of every hidden layer side by side, float32."""
        out, h = [], torch.tensor(x, dtype=torch.float32)
        with torch.no_grad():
            for m in self.net[:-1]:
                h = m(h)
                if isinstance(m, torch.nn.ReLU):
                    out.append(h)
        return torch.cat(out, dim=1).numpy().astype(np.float32)


# ---------------------------------------------------------------- the live examples as the script sees them

class Model:
    def __init__(self, layers):
        self.layers = layers  # [(name, width)]
        self.bounds = np.cumsum([0] + [w for _, w in layers])
        self.bits = int(self.bounds[-1])
        self.acts = []  # per batch float32
        self.meta = {f: [] for f in ("key", "label", "split", "tag")}
        self.num = {f: [] for f in ("grp", "day")}
        self.live = np.zeros(0, dtype=bool)
        self.next_id = 0

    def add(self, A, meta):
        n = A.shape[0]
        ids = np.arange(self.next_id, self.next_id + n)
        self.acts.append(A)
        for f in self.meta:
            self.meta[f] += meta[f] if meta else ([f"row-{i}" for i in ids] if f == "key" else [None] * n)
        for f in self.num:
            self.num[f].append(np.asarray(meta[f], dtype=float) if meta else np.full(n, np.nan))
        self.live = np.concatenate([self.live, np.ones(n, dtype=bool)])
        self.next_id += n
        self._cache = None
        return ids

    def delete(self, ids):
        self.live[ids] = False
        self._cache = None

    def snapshot(self):
        """Arrays over the live examples in id order."""
        if self._cache is None:
            A = np.concatenate(self.acts)
            ids = np.nonzero(self.live)[0]
            B = A[ids] > 0
            s = {"ids": ids, "B": B, "A": A[ids]}
            for f in self.meta:
                col = np.array(self.meta[f], dtype=object)
                s[f] = col[ids]
            for f in self.num:
                s[f] = np.concatenate(self.num[f])[ids]
            s["packed"] = [pack(B[:, a:b]) for a, b in zip(self.bounds[:-1], self.bounds[1:])]
            self._cache = s
        return self._cache

    def all_acts(self):
        return np.concatenate(self.acts)


def pack(B):
    """Bool rows -> uint64 words (padding bits 0)."""
    P = np.packbits(B, axis=1)
    pad = (-P.shape[1]) % 8
    if pad:
        P = np.concatenate([P, np.zeros((P.shape[0], pad), dtype=np.uint8)], axis=1)
    return np.ascontiguousarray(P).view(np.uint64)


def layer_distances(Qb, snap, bounds):
    """(layers, queries, live) int32: per-layer popcount(XOR) distances."""
    out = np.empty((len(bounds) - 1, Qb.shape[0], len(snap["ids"])), dtype=np.int32)
    for li, (a, b) in enumerate(zip(bounds[:-1], bounds[1:])):
        Qp, Cp = pack(Qb[:, a:b]), snap["packed"][li]
        for qi in range(Qb.shape[0]):
            out[li, qi] = np.bitwise_count(Cp ^ Qp[qi]).sum(axis=1, dtype=np.int32)
    return out


# ---------------------------------------------------------------- filters: the CLI text and the same rule in NumPy

def filters(rng, snap):
    """A few --where filters with their NumPy masks over the live examples (docs/where.md rules)."""
    grp, day, label, split, tag, key = (snap[f] for f in ("grp", "day", "label", "split", "tag", "key"))
    has = lambda col, v: np.array([x == v for x in col], dtype=bool)
    t = int(rng.choice([1, 5, 20, 50, 90]))
    c = f"c{int(rng.integers(0, COMPONENTS))}"
    days = sorted(set(int(x) for x in rng.integers(0, 12, size=3)))
    live_keys = [k for k in key if not k.startswith("row-")]
    picked = list(rng.choice(live_keys, size=min(30, len(live_keys)), replace=False)) if live_keys else []
    picked += [f"row-{int(i)}" for i in rng.choice(snap["ids"], size=min(5, len(snap["ids"])), replace=False)]
    out = [
        (f"grp < {t}", grp < t),
        (f"label != {c}", ~has(label, c)),
        ("split = train and tag != beta", has(split, "train") & ~has(tag, "beta")),
        (f"day in ({', '.join(map(str, days))})", np.isin(day, days)),
        (f"not (grp >= {t}) or tag = gamma", ~(grp >= t) | has(tag, "gamma")),
        ("key in (" + ", ".join(picked) + ")", np.isin(key.astype(str), picked)),
        (f"label = {c} and grp >= {t}", has(label, c) & (grp >= t)),
    ]
    return out


# ---------------------------------------------------------------- checks

def expected_order(d, ids):
    return np.lexsort((ids, d))


def check_nearest(cli, st, idx, qpath, Qb, LD, snap, layers, k, ties, where, mask_layers, tag):
    names = [nm for nm, _ in layers]
    sel = np.ones(len(snap["ids"]), dtype=bool) if where is None else where[1]
    use = [names.index(nm) for nm in mask_layers] if mask_layers else list(range(len(names)))
    opts = ["-k", k] + (["--ties"] if ties else []) + (["--where", where[0]] if where else []) + \
        (["--layers", ",".join(mask_layers)] if mask_layers else [])
    out, _ = cli.run("nearest", "--index", idx, "--activations", qpath, *opts, "--format", "json")
    st.nearest_runs += 1
    st.queries += Qb.shape[0]
    ids = snap["ids"][sel]
    labels = snap["label"][sel]
    lds = LD[use][:, :, sel]
    D = lds.sum(axis=0)
    what = f"{tag} nearest {' '.join(map(str, opts))}"
    if not st.check(len(out["results"]) == Qb.shape[0], f"{what}: {len(out['results'])} results"):
        return
    for qi, res in enumerate(out["results"]):
        order = expected_order(D[qi], ids)
        want = order[:k]
        if len(want) and (ties or True):
            within = order[D[qi][order] <= D[qi][want[-1]]]
        else:
            within = want
        listed = within if ties else want
        got = res["neighbors"]
        gids = [g["id"] for g in got]
        if not st.check(gids == ids[listed].tolist(),
                        f"{what} query {qi}: ids {gids[:8]}... ({len(gids)}), want {ids[listed][:8].tolist()}... ({len(listed)}); "
                        f"distances {[g['distance'] for g in got][:8]} want {D[qi][listed][:8].tolist()}"):
            continue
        st.check([g["distance"] for g in got] == D[qi][listed].tolist(), f"{what} query {qi}: distances")
        want_ld = [{names[li]: int(lds[j, qi, p]) for j, li in enumerate(use)} for p in listed]
        st.check([g["layer_distances"] for g in got] == want_ld, f"{what} query {qi}: layer distances")
        st.check([g["key"] for g in got] == snap["key"][sel][listed].tolist(), f"{what} query {qi}: keys")
        # the vote: every neighbour within the K-th distance
        v = res["vote"]
        labs = [lab for lab in labels[within] if lab is not None]
        if not labs:
            st.check(v is None, f"{what} query {qi}: vote {v}, want none")
            continue
        count, total = {}, {}
        for p in within:
            lab = labels[p]
            if lab is not None:
                count[lab] = count.get(lab, 0) + 1
                total[lab] = total.get(lab, 0) + int(D[qi][p])
        best = sorted(count, key=lambda x: (-count[x], total[x], x))[0]
        wv = (best, count[best], len(labs), len(within), int(D[qi][within[-1]]))
        gv = None if v is None else (v["label"], v["votes"], v["of"], v["neighbors"], v["within_distance"])
        st.check(gv == wv, f"{what} query {qi}: vote {gv}, want {wv}")


def refine_reference(metric, q, M):
    q = q.astype(np.float64)
    M = M.astype(np.float64)
    if metric == "euclidean":
        return np.sqrt(((M - q) ** 2).sum(axis=1))
    na, nb = (q * q).sum(), (M * M).sum(axis=1)
    dot = M @ q
    with np.errstate(invalid="ignore", divide="ignore"):
        d = 1 - dot / np.sqrt(na * nb)
    return np.where((na == 0) | (nb == 0), 1.0, d)


def check_refine(cli, st, idx, qpath, QA, LD, snap, mags, layers, k, metric, where, mask_layers, tag, remember, anchors):
    names = [nm for nm, _ in layers]
    bounds = np.cumsum([0] + [w for _, w in layers])
    sel = np.ones(len(snap["ids"]), dtype=bool) if where is None else where[1]
    use = [names.index(nm) for nm in mask_layers] if mask_layers else list(range(len(names)))
    units = np.concatenate([np.arange(bounds[li], bounds[li + 1]) for li in use])
    opts = ["-k", k, "--refine", metric] + (["--where", where[0]] if where else []) + \
        (["--layers", ",".join(mask_layers)] if mask_layers else [])
    out, _ = cli.run("nearest", "--index", idx, "--activations", qpath, *opts, "--format", "json")
    st.refine_runs += 1
    st.queries += QA.shape[0]
    ids = snap["ids"][sel]
    D = LD[use][:, :, sel].sum(axis=0)
    M = mags[sel][:, units]
    what = f"{tag} nearest {' '.join(map(str, opts))}"
    C = max(100, k)
    for qi, res in enumerate(out["results"]):
        order = expected_order(D[qi], ids)
        cand = order[:C]
        if len(cand):
            cand = order[D[qi][order] <= D[qi][cand[-1]]]
        st.check((res["candidates"], res["hamming_radius"]) ==
                 (len(cand), int(D[qi][cand[-1]]) if len(cand) else res["hamming_radius"]),
                 f"{what} query {qi}: candidates {res['candidates']} radius {res['hamming_radius']}, want {len(cand)}")
        rd = refine_reference(metric, QA[qi, units], M[cand])
        ref = {int(ids[p]): (float(rd[j]), int(D[qi][p])) for j, p in enumerate(cand)}
        want = sorted(ref, key=lambda i: (ref[i][0], ref[i][1], i))[:k]
        got = res["neighbors"]
        gids = [g["id"] for g in got]
        ok = len(gids) == len(want) and all(i in ref for i in gids)
        if ok:  # equal ids, or a swap between float distances that differ by rounding alone
            ok = all(abs(g["refined_distance"] - ref[g["id"]][0]) <= 1e-9 and g["distance"] == ref[g["id"]][1] for g in got)
            ok = ok and all(a == b or abs(ref[a][0] - ref[b][0]) <= 1e-9 for a, b in zip(gids, want))
        st.check(ok, f"{what} query {qi}: ids {gids[:6]} dist {[g.get('refined_distance') for g in got][:3]}, "
                     f"want {want[:6]} dist {[ref[i][0] for i in want[:3]]}")
        if qi >= anchors:
            continue
        for g in got:  # the same refined distance for an anchor query and an id in every state of the index
            key_ = (metric, tuple(mask_layers or ()), qi, g["id"])
            if key_ in remember:
                st.check(remember[key_] == g["refined_distance"],
                         f"{what} query {qi} id {g['id']}: refined distance {g['refined_distance']} now, {remember[key_]} before")
            remember[key_] = g["refined_distance"]


def check_dupes_against(cli, st, work, idx, qpath, LD, snap, layers, rad, mask_layers, tag):
    names = [nm for nm, _ in layers]
    use = [names.index(nm) for nm in mask_layers] if mask_layers else list(range(len(names)))
    D = LD[use].sum(axis=0)
    pairs = os.path.join(work, "against.csv")
    opts = ["--radius", rad, "--pairs", pairs] + (["--layers", ",".join(mask_layers)] if mask_layers else [])
    out, _ = cli.run("dupes", "--index", idx, "--against", qpath, *opts, "--format", "json")
    st.dupes_runs += 1
    with open(pairs) as f:
        got = sorted(tuple(int(x) for x in line.split(",")) for line in f.read().splitlines()[1:])
    qi, ui = np.nonzero(D <= rad)
    want = sorted(zip(qi.tolist(), snap["ids"][ui].tolist(), D[qi, ui].tolist()))
    st.check(got == want, f"{tag} dupes --against {opts[:2]} {opts[4:]}: {len(got)} matches, want {len(want)}; "
             f"extra {sorted(set(got) - set(want))[:3]} missing {sorted(set(want) - set(got))[:3]}")
    st.check(out["summary"]["matches"] == len(want), f"{tag} dupes --against: summary matches {out['summary']['matches']}")


def check_dupes_self(cli, st, work, idx, snap, layers, rad, mask_layers, tag):
    names = [nm for nm, _ in layers]
    bounds = np.cumsum([0] + [w for _, w in layers])
    use = [names.index(nm) for nm in mask_layers] if mask_layers else list(range(len(names)))
    sel = snap["grp"] < 2
    B = snap["B"][sel][:, np.concatenate([np.arange(bounds[li], bounds[li + 1]) for li in use])]
    ids = snap["ids"][sel]
    pairs = os.path.join(work, "pairs.csv")
    opts = ["--radius", rad, "--where", "grp < 2", "--pairs", pairs] + (["--layers", ",".join(mask_layers)] if mask_layers else [])
    out, _ = cli.run("dupes", "--index", idx, *opts, "--format", "json")
    st.dupes_runs += 1
    P = pack(B)
    want = []
    for i in range(len(ids)):
        d = np.bitwise_count(P[i + 1:] ^ P[i]).sum(axis=1)
        for j in np.nonzero(d <= rad)[0]:
            want.append((int(ids[i]), int(ids[i + 1 + j]), int(d[j])))
    with open(pairs) as f:
        got = sorted(tuple(int(x) for x in line.split(",")) for line in f.read().splitlines()[1:])
    st.check(got == sorted(want), f"{tag} dupes {opts[:4]} {opts[6:]}: {len(got)} pairs, want {len(want)}; "
             f"extra {sorted(set(got) - set(want))[:3]} missing {sorted(set(want) - set(got))[:3]}")
    st.check((out["summary"]["examples"], out["summary"]["pairs"], out["summary"]["exact_duplicate_pairs"]) ==
             (len(ids), len(want), sum(1 for w in want if w[2] == 0)), f"{tag} dupes summary {out['summary']}")


# ---------------------------------------------------------------- the life

def main():
    here = os.path.dirname(os.path.abspath(__file__))
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--seed", type=int, default=None)
    ap.add_argument("--bits", type=int, choices=sorted(WIDTHS), default=None, help="default: drawn from the seed")
    ap.add_argument("--size", type=int, default=100_000, help="examples added over the whole life (default %(default)s)")
    ap.add_argument("--queries", type=int, default=60, help="query rows per step (default %(default)s)")
    ap.add_argument("--magnitudes", choices=["8", "4", "2", "off"], default=None, help="default: drawn from the seed")
    ap.add_argument("--bin", default=os.path.join(here, "..", "..", "bin", "actindex"))
    ap.add_argument("--work", default="/tmp/actindex-lifecycle")
    args = ap.parse_args()
    seed = args.seed if args.seed is not None else int(time.time()) % 1_000_000
    rng = np.random.default_rng(seed)
    bits = args.bits or int(rng.choice(sorted(WIDTHS)))
    trained = bool(rng.random() < 0.5)
    mags = args.magnitudes or str(rng.choice(["8", "8", "4", "off"]))
    N = args.size
    print(f"seed {seed}: bits {bits} (layers {WIDTHS[bits]}), {'trained' if trained else 'random'} weights, "
          f"magnitudes {mags}, {N} examples over the life (rerun: --seed {seed} --bits {bits} --magnitudes {mags} --size {N} --queries {args.queries})", flush=True)
    work = os.path.join(args.work, f"seed{seed}")
    shutil.rmtree(work, ignore_errors=True)
    os.makedirs(work)
    idx = os.path.join(work, "idx")
    st = Stats()
    cli = Cli(args.bin, st)
    world = World(rng, WIDTHS[bits], trained)
    single = len(WIDTHS[bits]) == 1
    layers = [("act", bits)] if single else [(f"h{i + 1}", w) for i, w in enumerate(WIDTHS[bits])]
    model = Model(layers)
    names = [nm for nm, _ in layers]
    remember, mag_hash = {}, {}
    t0 = time.time()
    anchor = world.acts(world.sample(8, 0)[0])
    hash_w = rng.integers(1, 2**63, size=bits, dtype=np.uint64)

    def batch(n, day, with_meta, drop_tag=False):
        x, y = world.sample(n, day)
        hub = rng.random(n) < 0.03  # hub inputs: many examples on one code
        x[hub] = world.hubs[rng.integers(0, len(world.hubs), size=int(hub.sum()))]
        if model.next_id and n > 10:  # exact copies of earlier examples (deleted ones too)
            cp = np.nonzero(rng.random(n) < 0.01)[0]
            prev = model.all_acts()
            A = world.acts(x)
            A[cp] = prev[rng.integers(0, prev.shape[0], size=len(cp))]
        else:
            A = world.acts(x)
        meta = None
        if with_meta:
            ids = range(model.next_id, model.next_id + n)
            meta = {"key": [f"d{day}-{i}" for i in ids], "label": [f"c{v}" for v in y],
                    "split": [str(rng.choice(["train", "train", "test"])) for _ in ids],
                    "tag": [None if drop_tag or rng.random() < 0.2 else str(rng.choice(TAGS)) for _ in ids],
                    "grp": rng.integers(0, 100, size=n).tolist(), "day": [day] * n}
        return A, meta

    def write_source(A, name, npz):
        if npz:
            path = os.path.join(work, name + ".npz")
            np.savez(path, **{nm: A[:, a:b] for nm, a, b in zip(names, model.bounds[:-1], model.bounds[1:])})
        else:
            path = os.path.join(work, name + ".npy")
            np.save(path, A)
        return path

    def write_meta(meta, name):
        path = os.path.join(work, name + ".csv")
        cols = ["key", "label", "split", "grp", "day"] + (["tag"] if any(t is not None for t in meta["tag"]) else [])
        with open(path, "w") as f:
            f.write(",".join(cols) + "\n")
            for i in range(len(meta["key"])):
                f.write(",".join("" if meta[c][i] is None else str(meta[c][i]) for c in cols) + "\n")
        return path

    def do_add(n, day, with_meta, drop_tag=False, build=False):
        A, meta = batch(n, day, with_meta, drop_tag)
        src = write_source(A, f"b{day}", npz=not single and (build or rng.random() < 0.5))
        mopt = ["--meta", write_meta(meta, f"m{day}")] if meta else []
        if build:
            out, _ = cli.run("build", "--out", idx, "--activations", src, *mopt, "--magnitudes", mags, "--format", "json")
        else:
            out, _ = cli.run("add", "--index", idx, "--activations", src, *mopt, "--format", "json")
        ids = model.add(A, meta)
        st.check((out["rows"], out["first_id"]) == (n, int(ids[0])), f"day {day}: add summary {out}, want first id {ids[0]}")
        return f"{'build' if build else 'add'} {n} {'with' if meta else 'without'} metadata{' (no tag column)' if drop_tag else ''}"

    def do_delete_keys(frac, day):
        snap = model.snapshot()
        n = max(1, int(frac * len(snap["ids"])))
        pick = rng.choice(len(snap["ids"]), size=n, replace=False)
        path = os.path.join(work, f"gone{day}.txt")
        with open(path, "w") as f:
            f.write("".join(str(snap["key"][p]) + "\n" for p in pick))
        out, _ = cli.run("delete", "--index", idx, "--keys", path, "--format", "json")
        ids = snap["ids"][pick]
        st.check(out["deleted"] == n, f"day {day}: delete --keys deleted {out['deleted']}, want {n}")
        model.delete(ids)
        return f"delete --keys {n} ({sum(str(snap['key'][p]).startswith('row-') for p in pick)} row- keys)"

    def do_delete_where(expr, mask_fn, day):
        snap = model.snapshot()
        m = mask_fn(snap)
        out, _ = cli.run("delete", "--index", idx, "--where", expr, "--format", "json")
        st.check(out["deleted"] == int(m.sum()), f"day {day}: delete --where '{expr}' deleted {out['deleted']}, want {int(m.sum())}")
        model.delete(snap["ids"][m])
        return f"delete --where '{expr}' ({int(m.sum())})"

    def do_compact(day):
        out, _ = cli.run("compact", "--index", idx, "--format", "json")
        return f"compact ({out['segments_before']} -> {out['segments_after']} segments)"

    def queries(day):
        nq = args.queries
        snap = model.snapshot()
        allA = model.all_acts()
        parts = [anchor]  # the same rows every day
        x, _ = world.sample(nq // 4, day)
        parts.append(world.acts(x))  # in distribution
        parts.append(snap["A"][rng.integers(0, len(snap["ids"]), size=nq // 6)])  # exact copies of live examples
        dead = np.nonzero(~model.live)[0]
        if len(dead):
            parts.append(allA[rng.choice(dead, size=min(4, len(dead)), replace=False)])  # copies of deleted ones
        cp = snap["A"][rng.integers(0, len(snap["ids"]), size=nq // 10)]
        parts.append(cp * rng.uniform(0.5, 2.0, size=cp.shape).astype(np.float32))  # same code, other magnitudes
        parts.append(world.acts(world.hubs[rng.integers(0, len(world.hubs), size=4)]))  # hubs: large tie groups
        x, _ = world.sample(nq // 10, day)
        parts.append(world.acts(40 * x))  # far out
        parts.append(world.acts(-x))
        parts.append(np.zeros((2, bits), dtype=np.float32))  # all off
        parts.append(np.where(rng.random((3, bits)) < 0.5, 1.0, -1.0).astype(np.float32))  # random signs
        Q = np.concatenate(parts).astype(np.float32)
        path = os.path.join(work, f"q{day}.npy")
        np.save(path, Q)
        return path, Q

    def verify(day, what):
        st.steps += 1
        snap = model.snapshot()
        info, _ = cli.run("info", "--index", idx, "--format", "json")
        nseg = len(info["segments"])
        st.check((info["live"], info["next_id"], sum(s["count"] - s["deleted"] for s in info["segments"])) ==
                 (len(snap["ids"]), model.next_id, len(snap["ids"])),
                 f"day {day}: info live/next_id/segment counts {info['live']}/{info['next_id']}, want {len(snap['ids'])}/{model.next_id}")
        if day % 4 == 0 or "compact" in what:
            chk, _ = cli.run("check", "--index", idx, "--format", "json")
            st.check(chk["ok"], f"day {day}: check not ok")
        codes, ids_csv = os.path.join(work, "codes.npy"), os.path.join(work, "ids.csv")
        mopt = ["--magnitudes", os.path.join(work, "mags.npy")] if mags != "off" else []
        cli.run("export-codes", "--index", idx, "--out", codes, "--ids", ids_csv, *mopt, "--format", "json")
        E = np.load(codes)
        with open(ids_csv) as f:
            rows = [ln.split(",", 1) for ln in f.read().splitlines()[1:]]
        st.check(E.shape == snap["B"].shape and np.array_equal(E.astype(bool), snap["B"]), f"day {day}: exported codes differ")
        st.check([int(r[0]) for r in rows] == snap["ids"].tolist() and [r[1] for r in rows] == snap["key"].tolist(),
                 f"day {day}: exported ids/keys differ")
        M = np.load(mopt[1]) if mopt else None
        if M is not None:
            st.check(np.array_equal(M > 0, (M > 0) & snap["B"]), f"day {day}: a kept magnitude above 0 with a 0 bit")
            h = (M.view(np.uint32).astype(np.uint64) * hash_w).sum(axis=1)  # wraps: a hash of each row's bytes
            before = [(i, mag_hash[i]) for i in snap["ids"].tolist() if i in mag_hash]
            changed = [i for (i, v), j in zip(before, np.searchsorted(snap["ids"], [i for i, _ in before])) if h[j] != v]
            st.check(not changed, f"day {day}: the kept magnitudes of {len(changed)} examples changed (first ids {changed[:5]})")
            mag_hash.update(zip(snap["ids"].tolist(), h.tolist()))
        qpath, QA = queries(day)
        Qb = QA > 0
        LD = layer_distances(Qb, snap, model.bounds)
        # the popcount reference against scipy on a sample of the live codes
        smp = rng.choice(len(snap["ids"]), size=min(1500, len(snap["ids"])), replace=False)
        sc = np.rint(cdist(Qb, snap["B"][smp], "hamming") * bits).astype(np.int32)
        st.check(np.array_equal(sc, LD.sum(axis=0)[:, smp]), f"day {day}: popcount reference differs from scipy cdist")
        fl = filters(rng, snap)
        masks = [None] if single else [None, [names[0]], names[::-1][:2], [names[-1]]]
        pick = lambda: fl[int(rng.integers(0, len(fl)))]
        pmask = lambda: masks[int(rng.integers(0, len(masks)))]
        confs = [(1, False, None, None), (10, False, None, None), (100, bool(rng.random() < 0.5), None, None),
                 (1, False, pick(), pmask()), (10, True, pick(), None), (100, False, pick(), pmask()),
                 (int(rng.choice([1, 10, 100])), bool(rng.random() < 0.5), fl[5], None)]
        for k, ties, where, ml in confs:
            check_nearest(cli, st, idx, qpath, Qb, LD, snap, layers, k, ties, where, ml, f"day {day}")
        if M is not None:
            if day % 2 == 0:
                check_refine(cli, st, idx, qpath, QA, LD, snap, M, layers, 10, "cosine", None, None, f"day {day}", remember, len(anchor))
            else:
                check_refine(cli, st, idx, qpath, QA, LD, snap, M, layers, 5, "euclidean",
                             fl[0], None if single else [names[-1]], f"day {day}", remember, len(anchor))
        if day % 2 == 0:
            check_dupes_against(cli, st, work, idx, qpath, LD, snap, layers, int(rng.choice([0, 1, 3])),
                                None if single or rng.random() < 0.5 else [names[0]], f"day {day}")
        else:
            check_dupes_self(cli, st, work, idx, snap, layers, int(rng.choice([0, 1, 2])),
                             None if single or rng.random() < 0.6 else [names[-1]], f"day {day}")
        print(f"day {day:2d}: {what:60s} live {len(snap['ids']):7d} next_id {model.next_id:7d} segments {nseg} "
              f"[{', '.join(str(s['count']) + ('-' + str(s['deleted']) if s['deleted'] else '') for s in info['segments'])}] "
              f"diffs so far {st.diffs} ({time.time() - t0:.0f} s)", flush=True)

    plan = [
        lambda d: do_add(int(0.30 * N), d, True, build=True),
        lambda d: do_add(int(0.05 * N), d, True),
        lambda d: do_add(max(50, int(0.01 * N)), d, False),
        lambda d: do_add(int(0.08 * N), d, True),
        lambda d: do_delete_keys(0.01, d),
        lambda d: do_add(int(0.03 * N), d, True, drop_tag=True),
        lambda d: do_delete_where("day = 1 and grp < 40", lambda s: (s["day"] == 1) & (s["grp"] < 40), d),
        lambda d: do_add(int(0.12 * N), d, True),
        lambda d: do_add(max(50, int(0.02 * N)), d, False),
        lambda d: do_compact(d),
        lambda d: do_add(int(0.15 * N), d, True),
        lambda d: do_delete_where("label = c3 or tag = delta", lambda s: np.array(
            [a == "c3" or b == "delta" for a, b in zip(s["label"], s["tag"])], dtype=bool), d),
        lambda d: do_add(int(0.04 * N), d, False),
        lambda d: do_add(int(0.10 * N), d, True),
        lambda d: do_delete_keys(0.05, d),
        lambda d: do_add(int(0.03 * N), d, True),
        lambda d: do_add(int(0.07 * N), d, True),
    ]
    for day, step in enumerate(plan):
        what = step(day)
        verify(day, what)
    print(f"seed {seed} bits {bits}: {st.steps} steps, {st.commands} commands ({st.nearest_runs} nearest, "
          f"{st.refine_runs} refine, {st.dupes_runs} dupes), {st.queries} query rows searched, {st.comparisons} comparisons, "
          f"{st.diffs} DIFF, {time.time() - t0:.0f} s", flush=True)
    if st.diffs == 0:
        shutil.rmtree(work, ignore_errors=True)
    sys.exit(1 if st.diffs else 0)


if __name__ == "__main__":
    main()
