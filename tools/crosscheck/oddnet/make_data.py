import numpy as np, torch, csv, os, sys
from torch import nn
from sklearn.datasets import load_breast_cancer
from sklearn.preprocessing import StandardScaler
from safetensors.torch import save_file
torch.manual_seed(7); rng = np.random.default_rng(7)
X, y = load_breast_cancer(return_X_y=True)
perm = rng.permutation(len(X)); X, y = X[perm], y[perm]
Xtr, ytr, Xq, yq = X[:450], y[:450], X[450:], y[450:]
sc = StandardScaler().fit(Xtr); Xtr = sc.transform(Xtr); Xq = sc.transform(Xq)
# plant duplicates: 15 exact copies, 15 tiny-noise copies, labels flipped on some
src = rng.choice(450, 30, replace=False)
extra = Xtr[src].copy(); extra[15:] += rng.normal(0, 0.01, extra[15:].shape)
eyl = ytr[src].copy(); eyl[::4] = 1 - eyl[::4]
Xtr = np.vstack([Xtr, extra]).astype(np.float32); ytr = np.concatenate([ytr, eyl])
Xq = Xq.astype(np.float32)
n = len(Xtr)
split = np.where(np.arange(n) % 5 == 0, "test", "train")
def train(model, X, y, epochs):
    opt = torch.optim.Adam(model.parameters(), 1e-2)
    Xt = torch.tensor(X); yt = torch.tensor(y, dtype=torch.long)
    for e in range(epochs):
        opt.zero_grad(); l = nn.functional.cross_entropy(model(Xt), yt); l.backward(); opt.step()
    return model
deep = nn.Sequential(nn.Linear(30,100), nn.ReLU(), nn.Linear(100,37), nn.ReLU(), nn.Linear(37,200), nn.ReLU(), nn.Linear(200,63), nn.ReLU(), nn.Linear(63,2))
wide = nn.Sequential(nn.Linear(30,1000), nn.ReLU(), nn.Linear(1000,2))
train(deep, Xtr, ytr, 60); train(wide, Xtr, ytr, 40)
def acts(model, X):
    # float64 forward, like actindex
    h = torch.tensor(X, dtype=torch.float64); out = {}; pre = {}
    mods = list(model)
    for i, m in enumerate(mods):
        if isinstance(m, nn.Linear):
            h = h @ m.weight.detach().double().T + m.bias.detach().double()
            if i < len(mods) - 1:
                pre[str(i)] = h.numpy().copy(); h = torch.relu(h); out[str(i)] = h.numpy().copy()
    return out, pre
os.chdir(os.environ["ODDNET_WORK"])
for name, model in [("deep", deep), ("wide", wide)]:
    save_file({k: v.detach().contiguous() for k, v in model.state_dict().items()}, f"{name}.safetensors")
    for part, X in [("train", Xtr), ("query", Xq)]:
        a, pre = acts(model, X)
        print(name, part, "min |pre|", min(np.abs(p).min() for p in pre.values()))
        np.savez(f"{name}_{part}_acts.npz", **{k: v.astype(np.float32) for k, v in a.items()})
        cat = np.hstack([a[k] for k in a]).astype(np.float32)
        np.save(f"{name}_{part}_acts.npy", cat)
        codes = cat > 0
        np.save(f"{name}_{part}_codes_bool.npy", codes)
        np.save(f"{name}_{part}_codes_packed.npy", np.packbits(codes, axis=1))
        np.save(f"{name}_{part}_codes_int.npy", codes.astype(np.int8))
        np.savetxt(f"{name}_{part}_acts.csv", cat, delimiter=",", fmt="%.9g")
        print(name, part, {k: v.shape for k, v in a.items()}, "on-rate", codes.mean())
np.save("train_inputs.npy", Xtr); np.save("query_inputs.npy", Xq)
np.savetxt("train_inputs.csv", Xtr, delimiter=",", fmt="%.9g")
with open("train_meta.csv", "w", newline="") as f:
    w = csv.writer(f); w.writerow(["key", "label", "split", "grp"])
    for i in range(n): w.writerow([f"ex{i:04d}", ["malignant","benign"][ytr[i]], split[i], i % 7])
with open("query_meta.csv", "w", newline="") as f:
    w = csv.writer(f); w.writerow(["key", "label"])
    for i in range(len(Xq)): w.writerow([f"q{i:03d}", ["malignant","benign"][yq[i]]])
np.save("train_labels.npy", ytr); np.save("query_labels.npy", yq)
with torch.no_grad():
    for name, model in [("deep", deep), ("wide", wide)]:
        print(name, "train acc", (model(torch.tensor(Xtr)).argmax(1).numpy() == ytr).mean(), "query acc", (model(torch.tensor(Xq)).argmax(1).numpy() == yq).mean())
        np.save(f"{name}_train_logits.npy", model(torch.tensor(Xtr)).numpy()); np.save(f"{name}_query_logits.npy", model(torch.tensor(Xq)).numpy())

# the same rows cut in three for build + add + add, and keys to delete
rows = list(csv.reader(open("train_meta.csv")))
for a, b in [(0, 300), (300, 400), (400, 480)]:
    np.save(f"in_{a}.npy", Xtr[a:b])
    z = np.load("deep_train_acts.npz"); np.savez(f"deep_acts_{a}.npz", **{k: z[k][a:b] for k in z.files})
    with open(f"meta_{a}.csv", "w", newline="") as f:
        w = csv.writer(f); w.writerow(rows[0]); w.writerows(rows[1 + a:1 + b])
open("delkeys.txt", "w").write("\n".join(f"ex{i:04d}" for i in [0, 5, 299, 300, 301, 455, 479]) + "\n")
# out-of-distribution inputs: query rows with every feature shuffled on its own, scaled, plus noise;
# calibration / in / out sets with their float64 forward pass (activations, codes, logits)
rng = np.random.default_rng(11)
out = (np.stack([rng.permutation(Xq[:, j]) for j in range(Xq.shape[1])], 1)[:80] * 1.5 + rng.normal(0, 0.5, (80, 30))).astype(np.float32)
np.save("cal_inputs.npy", Xq[:60]); np.save("in_inputs.npy", Xq[60:]); np.save("out_inputs.npy", out); np.save("out60_inputs.npy", out[:60])
np.savetxt("out_inputs.csv", out, delimiter=",", fmt="%.9g")
for name, model in [("deep", deep), ("wide", wide)]:
    for tag, X in [("cal", Xq[:60]), ("in", Xq[60:]), ("out", out)]:
        a, _ = acts(model, X); cat = np.hstack(list(a.values()))
        h = torch.tensor(X, dtype=torch.float64)
        for m in model:
            h = h @ m.weight.detach().double().T + m.bias.detach().double() if isinstance(m, nn.Linear) else torch.relu(h)
        np.save(f"{name}_{tag}_acts.npy", cat.astype(np.float32)); np.save(f"{name}_{tag}_codes.npy", cat > 0); np.save(f"{name}_{tag}_logits.npy", h.numpy())
# codes under --threshold 0.5 and --median (np.median over the build rows), layers 6,2 kept by name
T = np.load("deep_train_acts.npy"); Q = np.load("deep_query_acts.npy"); med = np.median(T, 0)
np.save("thr_train_codes_bool.npy", T > 0.5); np.save("thr_query_codes_bool.npy", Q > 0.5)
np.save("med_train_codes_bool.npy", T > med); np.save("med_query_codes_bool.npy", Q > med)
for part in ["train", "query"]:
    c = np.load(f"deep_{part}_codes_bool.npy"); np.save(f"sel_{part}_codes_bool.npy", np.hstack([c[:, 337:400], c[:, 100:137]]))
z = np.load("deep_query_acts.npz"); np.save("q62.npy", np.hstack([z["6"], z["2"]])); np.savetxt("q62.csv", np.hstack([z["6"], z["2"]]), delimiter=",", fmt="%.9g")
