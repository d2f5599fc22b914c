#!/usr/bin/env python3
"""Writes the PyTorch golden models the encode module's TorchGoldenTest reads.

Reference: PyTorch (torch.nn.Sequential, torch.nn.Linear, forward hooks) and the reference
safetensors writer/reader (safetensors.torch.save_file, safetensors.numpy.load_file). The
versions used are written to VERSIONS.txt beside the outputs.

For each model the script saves, in OUT:
  MODEL.safetensors          the state_dict, written by safetensors.torch.save_file (which sorts
                             the tensors by name: "0, 10, 12, ..., 2" for a deep nn.Sequential)
  MODEL_inputs.npy           float32 inputs, one row per example
  MODEL_act_LAYER.npy        PyTorch's own post-ReLU activations of each hidden Linear layer,
                             captured by forward hooks (float32); a code bit is (activation > 0)
  MODEL.txt                  what the Java test should do: the layer order to pass (or "refuse"
                             when names and shapes leave several orders), the hidden layers and
                             whether the file has an output layer
It also writes refuse_*.safetensors / refuse_*.pt: a BatchNorm1d model (with and without its
affine scale) and torch.save checkpoints (zip and legacy pickle), which the Java side must refuse.
Rows whose pre-activation |z| < MARGIN anywhere are dropped, so that float32 (PyTorch) and
float64 (actindex) arithmetic cannot disagree on the sign of a unit.

It also reads own_writer.safetensors (written by actindex's SafetensorsWriter, see the Java test
SafetensorsGoldenTest) with the reference reader and records what it read in own_writer_read.txt.

Usage (from the repository root; pip install torch safetensors numpy):
  python3 tools/golden/make_torch_models.py encode/src/test/resources/golden/torch
"""
import os
import sys

import numpy as np
import safetensors
import safetensors.numpy
import torch
from safetensors import safe_open
from safetensors.torch import save_file
from torch import nn

out = sys.argv[1] if len(sys.argv) > 1 else "golden/torch"
os.makedirs(out, exist_ok=True)
MARGIN = 1e-4
torch.manual_seed(20261203)
rng = np.random.default_rng(20261203)


class Named(nn.Module):
    """A model whose layers are attributes, applied in the order `order` (ReLU between)."""

    def __init__(self, order, widths, output=True):
        super().__init__()
        self.order = order
        self.output = output
        for name, (i, o) in zip(order, widths):
            setattr(self, name, nn.Linear(i, o))

    def forward(self, x):
        for k, name in enumerate(self.order):
            x = getattr(self, name)(x)
            if k < len(self.order) - 1 or not self.output:
                x = torch.relu(x)
        return x


def sequential(widths, output=True):
    mods = []
    for k, (i, o) in enumerate(widths):
        mods.append(nn.Linear(i, o))
        if k < len(widths) - 1 or not output:
            mods.append(nn.ReLU())
    return nn.Sequential(*mods)


def linear_layers(model):
    """(state_dict name, module) of every Linear, in forward order."""
    if isinstance(model, nn.Sequential):
        return [(str(i), m) for i, m in enumerate(model) if isinstance(m, nn.Linear)]
    return [(n, getattr(model, n)) for n in model.order]


def save(name, model, n_in, rows, expect, output=True):
    model.eval()
    layers = linear_layers(model)
    hidden = layers if not output else layers[:-1]
    pre, post = {}, {}
    hooks = []
    for lname, mod in hidden:
        # the hook sees the Linear's output z; the hidden activation is relu(z)
        hooks.append(mod.register_forward_hook(lambda m, i, o, lname=lname: pre.__setitem__(lname, o.detach().clone())))
    x = torch.tensor(rng.normal(0, 1, size=(rows * 2, n_in)).astype(np.float32))
    with torch.no_grad():
        model(x)
    keep = torch.ones(x.shape[0], dtype=torch.bool)
    for lname, z in pre.items():
        keep &= (z.abs() >= MARGIN).all(dim=1)
    x = x[keep][:rows]
    pre.clear()
    with torch.no_grad():
        model(x)
    for h in hooks:
        h.remove()
    assert x.shape[0] == rows, name
    for lname, z in pre.items():
        post[lname] = torch.relu(z)
    save_file({k: v.contiguous() for k, v in model.state_dict().items()}, os.path.join(out, name + ".safetensors"))
    np.save(os.path.join(out, name + "_inputs.npy"), x.numpy())
    for lname, a in post.items():
        np.save(os.path.join(out, "%s_act_%s.npy" % (name, lname)), a.numpy())
    with open(os.path.join(out, name + ".txt"), "w") as f:
        f.write("order %s\n" % expect)
        f.write("forward %s\n" % ",".join(l for l, _ in layers))
        f.write("hidden %s\n" % ",".join(l for l, _ in hidden))
        f.write("output %s\n" % ("yes" if output else "no"))


# nn.Sequential, 12 square Linear layers: names 0, 2, ..., 22; alphabetical order (0, 10, 12, ...) chains too,
# so only natural number order is right.
save("seq_deep", sequential([(8, 8)] * 11 + [(8, 3)]), 8, 64, "names")
# nn.Sequential of hidden layers only (a trunk): every layer is a code layer
save("seq_trunk", sequential([(10, 16), (16, 12)], output=False), 10, 64, "names", output=False)
# input/hidden/output, all square but the output: alphabetical (hidden, input, output) chains; so do the names' two orders
save("named_square", Named(["input", "hidden", "output"], [(16, 16), (16, 16), (16, 3)]), 16, 64, "refuse:input,hidden,output")
# fc1/fc2/out with a square hidden layer between non-square ones: the shapes leave one order
save("fc_out", Named(["fc1", "fc2", "out"], [(12, 20), (20, 20), (20, 4)]), 12, 64, "shapes")
# fc1/fc2/fc3/out with two square hidden layers: fc2 and fc3 can swap, refused
save("fc_square", Named(["fc1", "fc2", "fc3", "out"], [(12, 20), (20, 20), (20, 20), (20, 4)]), 12, 64, "refuse:fc1,fc2,fc3,out")
# encoder/decoder/head, non-square
save("enc_dec_head", Named(["encoder", "decoder", "head"], [(12, 24), (24, 8), (8, 3)]), 12, 64, "shapes")

# Files actindex must refuse rather than run as another network: normalization layers (a
# BatchNorm1d's scale and running statistics; with affine=False only the statistics, so every
# ".weight" is still a Linear's) and PyTorch's own checkpoints (torch.save: zip, and the legacy pickle).
def refused_files():
    bn = nn.Sequential(nn.Linear(6, 8), nn.BatchNorm1d(8), nn.ReLU(), nn.Linear(8, 2))
    bn.train()
    bn(torch.randn(32, 6))  # moves the running statistics away from their initial values
    bn.eval()
    save_file(bn.state_dict(), os.path.join(out, "refuse_batchnorm.safetensors"))
    stats = nn.Sequential(nn.Linear(6, 8), nn.BatchNorm1d(8, affine=False), nn.ReLU(), nn.Linear(8, 2))
    stats.train()
    stats(torch.randn(32, 6))
    save_file(stats.state_dict(), os.path.join(out, "refuse_batchnorm_stats.safetensors"))
    plain = sequential([(6, 8), (8, 2)])
    torch.save(plain.state_dict(), os.path.join(out, "refuse_checkpoint_zip.pt"))
    torch.save(plain.state_dict(), os.path.join(out, "refuse_checkpoint_pickle.pt"), _use_new_zipfile_serialization=False)


refused_files()

own = os.path.join(out, "own_writer.safetensors")
if os.path.exists(own):
    tensors = safetensors.numpy.load_file(own)
    with safe_open(own, framework="np") as f:
        meta = f.metadata() or {}
    with open(os.path.join(out, "own_writer_read.txt"), "w") as f:
        for k in sorted(meta):
            f.write("meta %s %s\n" % (k, meta[k]))
        for k in sorted(tensors):
            t = tensors[k]
            f.write("tensor %s %s %s\n" % (k, t.dtype, ",".join(str(s) for s in t.shape)))
            for v in t.ravel(order="C"):
                f.write(repr(float(v)) + "\n")
else:
    print("no %s yet: run SafetensorsGoldenTest with -Dactindex.golden.update=true first" % own)

with open(os.path.join(out, "VERSIONS.txt"), "w") as f:
    f.write("torch %s\nsafetensors %s\nnumpy %s\n" % (torch.__version__, safetensors.__version__, np.__version__))
