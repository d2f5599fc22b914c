#!/usr/bin/env python3
"""Writes the scikit-learn golden files the encode module's SklearnGoldenTest reads.

Reference: scikit-learn's MLPClassifier (sklearn.neural_network; activation="relu"). Its
coefs_[i] is the weight matrix of layer i as [in, out] and intercepts_[i] its bias, as
documented for the attributes of sklearn.neural_network.MLPClassifier; hidden layers apply ReLU,
the output layer softmax. The hidden activations are computed here with NumPy exactly as
sklearn's own forward pass does (X @ coefs_[i] + intercepts_[i], then ReLU), float64 throughout.
The model is trained on sklearn's bundled copy of the UCI digits (load_digits, pixels / 16).

Outputs, in OUT:
  mlp.safetensors          the model as a user should save it: NAME.weight = coefs_[i].T
                           ([out, in]), NAME.bias = intercepts_[i], names 0, 1, 2, float64,
                           written by safetensors.numpy.save_file
  mlp_f32.safetensors      the same in float32
  inputs.npy               200 rows of the digits (float64), rows whose hidden pre-activation is
                           within MARGIN of 0 anywhere dropped (float32 weights then agree too)
  codes.npy                bool, (rows, hidden units of every hidden layer side by side):
                           sklearn-forward-pass activation > 0
  coefs.npz                np.savez(*coefs_, *intercepts_): what a user may save first (refused
                           by --model, with the conversion named)
  untransposed.safetensors coefs_[i] saved as is under NAME.weight (refused: [in, out])
  named_untransposed.safetensors  the same under names input, hidden, output (refused: the bias
                           matches the weight's second dimension)
  VERSIONS.txt             library versions

and, in BINARY_OUT, a two-class MLPClassifier on the breast cancer data (load_breast_cancer,
standardized), which has ONE output unit with the logistic function (out_activation_ "logistic"):
  model.safetensors        saved as above
  inputs.npy               60 standardized rows
  one_minus_msp.npy        1 - predict_proba(inputs).max(axis=1) as one column, scikit-learn's own probabilities

Usage (from the repository root; pip install scikit-learn safetensors numpy):
  python3 tools/golden/make_sklearn_mlp.py encode/src/test/resources/golden/sklearn \
      query/src/test/resources/golden/sklearn_binary
"""
import os
import sys
import warnings

import numpy as np
import safetensors
import sklearn
from safetensors.numpy import save_file
from sklearn.datasets import load_breast_cancer, load_digits
from sklearn.exceptions import ConvergenceWarning
from sklearn.neural_network import MLPClassifier

MARGIN = 1e-4


def main(out):
    os.makedirs(out, exist_ok=True)
    X, y = load_digits(return_X_y=True)
    X = X / 16.0
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ConvergenceWarning)
        clf = MLPClassifier(hidden_layer_sizes=(24, 12), activation="relu", max_iter=200, random_state=3).fit(X, y)
    W, B = clf.coefs_, clf.intercepts_

    def hidden(rows):
        h, acts, pre = rows, [], []
        for w, b in zip(W[:-1], B[:-1]):
            z = h @ w + b
            pre.append(z)
            h = np.maximum(z, 0)
            acts.append(h)
        return acts, pre

    rows = X[np.random.default_rng(3).permutation(len(X))[:260]]
    _, pre = hidden(rows)
    keep = np.all(np.hstack([np.abs(z) >= MARGIN for z in pre]), axis=1)
    rows = rows[keep][:200]
    acts, _ = hidden(rows)
    # sklearn's own forward pass agrees with ours (its private helper is not API; predict_proba is)
    out_layer = acts[-1] @ W[-1] + B[-1]
    assert np.array_equal(np.argmax(out_layer, axis=1), clf.predict(rows).astype(int))

    right = {}
    for i, (w, b) in enumerate(zip(W, B)):
        right[f"{i}.weight"], right[f"{i}.bias"] = np.ascontiguousarray(w.T), b
    save_file(right, os.path.join(out, "mlp.safetensors"))
    save_file({k: v.astype(np.float32) for k, v in right.items()}, os.path.join(out, "mlp_f32.safetensors"))
    np.save(os.path.join(out, "inputs.npy"), rows)
    np.save(os.path.join(out, "codes.npy"), np.hstack([a > 0 for a in acts]))
    np.savez(os.path.join(out, "coefs.npz"), *W, *B)
    save_file({**{f"{i}.weight": w for i, w in enumerate(W)}, **{f"{i}.bias": b for i, b in enumerate(B)}},
              os.path.join(out, "untransposed.safetensors"))
    names = ["input", "hidden", "output"]
    save_file({**{f"{n}.weight": w for n, w in zip(names, W)}, **{f"{n}.bias": b for n, b in zip(names, B)}},
              os.path.join(out, "named_untransposed.safetensors"))
    with open(os.path.join(out, "VERSIONS.txt"), "w") as f:
        f.write(f"scikit-learn {sklearn.__version__}\nnumpy {np.__version__}\nsafetensors {safetensors.__version__}\n")
        f.write(f"rows {len(rows)}, hidden {[w.shape[1] for w in W[:-1]]}, train accuracy {clf.score(X, y):.4f}\n")


def binary(out):
    os.makedirs(out, exist_ok=True)
    X, y = load_breast_cancer(return_X_y=True)
    X = (X - X.mean(axis=0)) / X.std(axis=0)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ConvergenceWarning)
        clf = MLPClassifier(hidden_layer_sizes=(16,), activation="relu", max_iter=300, random_state=1).fit(X, y)
    assert clf.out_activation_ == "logistic" and clf.coefs_[-1].shape[1] == 1
    t = {}
    for i, (w, b) in enumerate(zip(clf.coefs_, clf.intercepts_)):
        t[f"{i}.weight"], t[f"{i}.bias"] = np.ascontiguousarray(w.T), b
    save_file(t, os.path.join(out, "model.safetensors"))
    rows = X[np.random.default_rng(1).permutation(len(X))[:60]]
    np.save(os.path.join(out, "inputs.npy"), rows)
    np.save(os.path.join(out, "one_minus_msp.npy"), (1 - clf.predict_proba(rows).max(axis=1)).reshape(-1, 1))
    with open(os.path.join(out, "VERSIONS.txt"), "w") as f:
        f.write(f"scikit-learn {sklearn.__version__}\nnumpy {np.__version__}\nsafetensors {safetensors.__version__}\n")


if __name__ == "__main__":
    main(sys.argv[1])
    binary(sys.argv[2])
