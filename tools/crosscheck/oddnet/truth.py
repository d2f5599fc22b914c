import os, numpy as np, json, subprocess, csv, itertools, sys, collections
A = os.environ["ACTINDEX"]
D = os.environ["ODDNET_WORK"].rstrip("/") + "/"
LAYERS = {"deep": [("0",100),("2",37),("4",200),("6",63)], "wide": [("0",1000)]}
def run(args, ok=True):
    p = subprocess.run([A] + args, capture_output=True, text=True, cwd=D)
    if ok and p.returncode != 0:
        print("FAIL rc", p.returncode, " ".join(args), p.stderr[-2000:]); return None
    return p
def js(args):
    p = run(args + ["--format", "json"])
    return None if p is None else json.loads(p.stdout)
def codes(net, part):
    return np.load(D + f"{net}_{part}_codes_bool.npy")
def mask(net, names, layernames=None):
    lay = LAYERS[net]; m = np.zeros(sum(w for _, w in lay), bool); o = 0
    for nm, w in lay:
        if names is None or nm in names: m[o:o+w] = True
        o += w
    return m
def layer_slices(net):
    o = 0; out = {}
    for nm, w in LAYERS[net]: out[nm] = (o, o+w); o += w
    return out
def hd(Q, T, m):
    Qm = Q[:, m].astype(np.int32); Tm = T[:, m].astype(np.int32)
    return (Qm[:, None, :] != Tm[None, :, :]).sum(2)
meta = list(csv.DictReader(open(D + "train_meta.csv")))
labels = [r["label"] for r in meta]; splits = [r["split"] for r in meta]; keys = [r["key"] for r in meta]
