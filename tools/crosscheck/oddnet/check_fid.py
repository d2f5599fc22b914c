import os, sys; sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from truth import *
from scipy.stats import spearmanr
def check(args, net, F, k, Xin=None):
    out = js(["fidelity", "--queries", "480", "-k", str(k), "--pairs", "200000"] + args); bad = 0
    T = codes(net, "train"); n = len(T); Dh = hd(T, T, np.ones(T.shape[1], bool))
    Fn = F / np.linalg.norm(F, axis=1, keepdims=True); Dc = 1 - Fn @ Fn.T
    ids = np.arange(n); ov = []; tied = 0; kth = []; acc = collections.Counter()
    lab = np.array(labels)
    def vote(nb):
        c = collections.Counter(lab[nb]); best = max(c.values())
        for i in nb:
            if c[lab[i]] == best: return lab[i]
    for q in range(n):
        o = ids != q
        hn = ids[o][np.lexsort((ids[o], Dh[q][o]))][:k]; cn = ids[o][np.lexsort((ids[o], Dc[q][o]))][:k]
        ov.append(len(set(hn) & set(cn)) / k); kd = Dh[q, hn[-1]]; kth.append(kd)
        if (Dh[q][o] <= kd).sum() > k: tied += 1
        acc["hamming"] += vote(hn) == lab[q]; acc["cosine"] += vote(cn) == lab[q]
        if Xin is not None:
            De = ((Xin - Xin[q]) ** 2).sum(1); en = ids[o][np.lexsort((ids[o], De[o]))][:k]; acc["euclidean_inputs"] += vote(en) == lab[q]
    iu = np.triu_indices(n, 1); sp = spearmanr(Dh[iu], Dc[iu]).statistic
    e = dict(overlap=np.mean(ov), spearman=sp, tied_share=tied / n, mean_kth_distance=np.mean(kth))
    for kk, v in e.items():
        if abs(out[kk] - v) > 1e-6: bad += 1; print("FID", kk, out[kk], v)
    for kk, v in acc.items():
        if abs(out["accuracy"][kk] - v / n) > 1e-12: bad += 1; print("ACC", kk, out["accuracy"][kk], v / n)
    if out["pairs"] != len(iu[0]): bad += 1; print("PAIRS", out["pairs"])
    print(f"fidelity {' '.join(args)} k={k}: {out['queries']} queries, {out['pairs']} pairs; overlap {out['overlap']:.4f} spearman {out['spearman']:.4f} acc {out['accuracy']}; {bad} bad")
if __name__ == "__main__":
    Xin = np.load(D + "train_inputs.npy").astype(np.float64)
    for net in ["deep", "wide"]:
        Fm = np.load(D + f"{net}_train_acts.npy").astype(np.float64)
        for k in [1, 5]:
            check(["--index", f"idx_{net}_model", "--inputs", "train_inputs.npy"], net, Fm, k, Xin)
            check(["--activations", f"{net}_train_acts.npy", "--meta", "train_meta.csv"], net, Fm, k)
