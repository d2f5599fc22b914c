#!/usr/bin/env python3
"""Writes the golden files of io.actindex.query.HookedActivationsGoldenTest.

Reference: PyTorch (torch.nn.Sequential of torch.nn.Linear and torch.nn.ReLU; y = x W^T + b, then
max(0, y)) and forward hooks, the way a PyTorch user captures hidden activations; the model saved
with the reference writer safetensors.torch.save_file. Versions in hooked/VERSIONS.txt.

In OUT:
  model.safetensors   the state_dict of Linear(6, 10), ReLU, Linear(10, 8), ReLU, Linear(8, 3)
  inputs.npy          float32 inputs, 40 rows (the index is built from them)
  queries.npy         float32 inputs, 12 rows
  queries_pre.npz     the queries' hidden activations hooked on the Linear layers "0" and "2":
                      before ReLU, negative values included
  queries_post.npz    the same hooked on the ReLU layers "1" and "3", saved under the Linear
                      layers' names "0" and "2": after ReLU
Rows whose pre-activation |y| < MARGIN anywhere are dropped, so that float32 (PyTorch) and float64
(actindex) arithmetic cannot disagree on the sign of a unit.

Usage (from the repository root; pip install torch safetensors numpy):
  python3 tools/golden/make_hooked_activations.py query/src/test/resources/golden/hooked
"""
import os
import sys

import numpy as np
import safetensors
import torch
from safetensors.torch import save_file
from torch import nn

out = sys.argv[1] if len(sys.argv) > 1 else "golden/hooked"
os.makedirs(out, exist_ok=True)
MARGIN = 1e-4
torch.manual_seed(20261204)

model = nn.Sequential(nn.Linear(6, 10), nn.ReLU(), nn.Linear(10, 8), nn.ReLU(), nn.Linear(8, 3))
captured = {}
for i in range(4):
    model[i].register_forward_hook(lambda mod, inp, outp, i=i: captured.__setitem__(i, outp.detach().numpy().copy()))


def rows(n):
    """n input rows whose pre-activations all lie at least MARGIN from 0."""
    kept = []
    while len(kept) < n:
        x = torch.randn(4 * n, 6)
        with torch.no_grad():
            model(x)
        ok = (np.abs(captured[0]) >= MARGIN).all(1) & (np.abs(captured[2]) >= MARGIN).all(1)
        kept.extend(x.numpy()[ok])
    return np.array(kept[:n], dtype=np.float32)


inputs, queries = rows(40), rows(12)
with torch.no_grad():
    model(torch.from_numpy(queries))
assert (captured[0] < 0).any() and (captured[2] < 0).any(), "the pre-ReLU activations must hold negative values"
save_file({k: v.contiguous() for k, v in model.state_dict().items()}, os.path.join(out, "model.safetensors"))
np.save(os.path.join(out, "inputs.npy"), inputs)
np.save(os.path.join(out, "queries.npy"), queries)
np.savez(os.path.join(out, "queries_pre.npz"), **{"0": captured[0], "2": captured[2]})
np.savez(os.path.join(out, "queries_post.npz"), **{"0": captured[1], "2": captured[3]})
with open(os.path.join(out, "VERSIONS.txt"), "w") as f:
    f.write("torch %s\nsafetensors %s\nnumpy %s\n" % (torch.__version__, safetensors.__version__, np.__version__))
