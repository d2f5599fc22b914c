#!/usr/bin/env python3
"""Every command but the search kernel, through the command line, at 100k and 1M examples.

A random ReLU network 32 -> 128 -> 128 -> 10 (256 code bits; the last layer is the output layer
and is not encoded) runs on a Gaussian mixture of 16 components; labels follow the component,
splits are 80/10/10 train/val/test. About 1% of the training rows are exact copies of other rows
(half of them moved to another split, a quarter relabelled) and 1% are copies with a little noise,
so that `dupes` has something to find. Written under WORK (default /tmp/actindex-scale):

  model.safetensors                the network (PyTorch names 0, 2, 4)
  inputs-N.npy, acts-N.npy, meta-N.csv   N = 100000 and 1000000 rows (the 100k set is the first
                                   100k rows of the 1M set); acts = both hidden layers, float32
  add-inputs.npy, add-meta.csv     20k more rows for `add`
  held-inputs.npy, held-acts.npy   2,000 held-out rows of the same mixture
  shift-inputs.npy, shift-acts.npy 2,000 rows of a shifted mixture (out of distribution)
  cmp-a.npy, cmp-b.npy             50k rows each: same mixture / a mixture drifted by half a sd

Then each command runs under /usr/bin/time -v at both sizes (the index built from the model and
its inputs, so it keeps 8-bit magnitudes) and a table of wall time, CPU (user+sys), max RSS and
the 100k -> 1M growth is printed (about 10x is linear in the examples).

Usage: python3 tools/audit/commands_at_scale.py [--work DIR] [--sizes 100000,1000000]
                                                  [--only CMD,CMD] [--skip-gen]
(numpy, safetensors; never a test dependency; about 25 minutes for both sizes on 2 busy cores, 4 GB of disk)
"""
import argparse
import os
import re
import shutil
import subprocess
import sys
import time

import numpy as np

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
CLI = os.path.join(ROOT, "bin", "actindex")
DIM, H1, H2, OUT, COMPONENTS = 32, 128, 128, 10, 16
SIZES = (100_000, 1_000_000)


def network(rng):
    w1 = rng.normal(0, np.sqrt(2 / DIM), (H1, DIM)).astype(np.float32)
    b1 = rng.normal(0, 0.1, H1).astype(np.float32)
    w2 = rng.normal(0, np.sqrt(2 / H1), (H2, H1)).astype(np.float32)
    b2 = rng.normal(0, 0.1, H2).astype(np.float32)
    w3 = rng.normal(0, np.sqrt(2 / H2), (OUT, H2)).astype(np.float32)
    b3 = np.zeros(OUT, np.float32)
    return {"0.weight": w1, "0.bias": b1, "2.weight": w2, "2.bias": b2, "4.weight": w3, "4.bias": b3}


def hidden(net, x):
    """Both hidden layers' activations as float32, computed as the index's forward pass does (float64
    sums of float32 weights; the stored activations only feed --refine and compare's floats)."""
    out = np.empty((len(x), H1 + H2), np.float32)
    for s in range(0, len(x), 100_000):
        xb = x[s:s + 100_000].astype(np.float64)
        a1 = np.maximum(xb @ net["0.weight"].T.astype(np.float64) + net["0.bias"], 0)
        a2 = np.maximum(a1 @ net["2.weight"].T.astype(np.float64) + net["2.bias"], 0)
        out[s:s + 100_000, :H1] = a1
        out[s:s + 100_000, H1:] = a2
    return out


def mixture(rng, means, n, shift=0.0):
    comp = rng.integers(0, len(means), n)
    x = means[comp] + rng.normal(0, 1, (n, DIM)) + shift
    return x.astype(np.float32), comp


def gen(work, seed=20261205):
    from safetensors.numpy import save_file
    rng = np.random.default_rng(seed)
    os.makedirs(work, exist_ok=True)
    net = network(rng)
    save_file(net, os.path.join(work, "model.safetensors"))
    means = rng.normal(0, 2.5, (COMPONENTS, DIM))
    n = max(SIZES)
    x, comp = mixture(rng, means, n)
    labels = np.array([f"c{c % 8}" for c in comp], dtype=object)
    split = rng.choice(np.array(["train", "val", "test"], dtype=object), n, p=[0.8, 0.1, 0.1])
    # planted copies, spread over the whole range so the 100k prefix has its share
    copies = rng.choice(n, n // 50, replace=False)
    exact, noisy = copies[: n // 100], copies[n // 100:]
    src = rng.integers(0, n, len(copies))
    x[exact] = x[src[: len(exact)]]
    x[noisy] = x[src[len(exact):]] + rng.normal(0, 0.01, (len(noisy), DIM)).astype(np.float32)
    labels[exact] = labels[src[: len(exact)]]
    moved = exact[: len(exact) // 2]
    split[moved] = np.where(split[src[: len(moved)]] == "train", "test", "train")
    relabelled = exact[len(exact) // 2: len(exact) // 2 + len(exact) // 4]
    labels[relabelled] = "c9"
    acts = hidden(net, x)
    for size in SIZES:
        np.save(os.path.join(work, f"inputs-{size}.npy"), x[:size])
        np.save(os.path.join(work, f"acts-{size}.npy"), acts[:size])
        write_meta(os.path.join(work, f"meta-{size}.csv"), "k", 0, labels[:size], split[:size])
    xa, ca = mixture(rng, means, 20_000)
    np.save(os.path.join(work, "add-inputs.npy"), xa)
    write_meta(os.path.join(work, "add-meta.csv"), "a", 0,
               np.array([f"c{c % 8}" for c in ca], dtype=object), np.full(len(xa), "train", dtype=object))
    for name, shift in (("held", 0.0), ("shift", 0.0)):
        if name == "held":
            xq, _ = mixture(rng, means, 2_000)
        else:
            xq, _ = mixture(rng, rng.normal(0, 2.5, (COMPONENTS, DIM)), 2_000)
        np.save(os.path.join(work, f"{name}-inputs.npy"), xq)
        np.save(os.path.join(work, f"{name}-acts.npy"), hidden(net, xq))
    np.save(os.path.join(work, "cmp-a.npy"), mixture(rng, means, 50_000)[0])
    np.save(os.path.join(work, "cmp-b.npy"), mixture(rng, means, 50_000, shift=0.5)[0])


def write_meta(path, prefix, start, labels, split):
    with open(path, "w") as f:
        f.write("key,label,split\n")
        f.writelines(f"{prefix}{start + i},{labels[i]},{split[i]}\n" for i in range(len(labels)))


def commands(work, size):
    """(name, argv, needs a fresh copy of the index) in the order they run."""
    w = lambda f: os.path.join(work, f)
    idx = w(f"idx-{size}")
    out = w(f"out-{size}")
    return [
        ("build --activations", ["build", "--out", w(f"idx-acts-{size}"), "--activations", w(f"acts-{size}.npy"),
                                 "--meta", w(f"meta-{size}.csv")]),
        ("build --model", ["build", "--out", idx, "--model", w("model.safetensors"), "--inputs", w(f"inputs-{size}.npy"),
                           "--meta", w(f"meta-{size}.csv")]),
        ("info", ["info", "--index", idx]),
        ("check", ["check", "--index", idx]),
        ("nearest 1000 q", ["nearest", "--index", idx, "--inputs", w("held-inputs.npy"), "--rows", "0:1000",
                            "-k", "10", "--format", "csv"]),
        ("nearest --refine", ["nearest", "--index", idx, "--inputs", w("held-inputs.npy"), "--rows", "0:1000",
                              "-k", "10", "--refine", "--format", "csv"]),
        ("nearest --where", ["nearest", "--index", idx, "--inputs", w("held-inputs.npy"), "--rows", "0:1000",
                             "-k", "10", "--where", "split = test", "--format", "csv"]),
        ("region 1000 q", ["region", "--index", idx, "--inputs", w("held-inputs.npy"), "--rows", "0:1000",
                           "--radius", "2", "--format", "csv"]),
        ("census", ["census", "--index", idx, "--format", "json"]),
        ("dupes r0", ["dupes", "--index", idx, "--radius", "0", "--format", "json"]),
        ("dupes r1", ["dupes", "--index", idx, "--radius", "1", "--format", "json"]),
        ("dupes r3", ["dupes", "--index", idx, "--radius", "3", "--format", "json"]),
        ("dupes r1 --where", ["dupes", "--index", idx, "--radius", "1", "--where", "split = train", "--format", "json"]),
        ("dupes r1 --against", ["dupes", "--index", idx, "--radius", "1", "--against", w("held-inputs.npy"),
                                "--kind", "inputs", "--format", "json"]),
        ("dupes r1 --pairs", ["dupes", "--index", idx, "--radius", "1", "--pairs", os.path.join(out, "pairs.csv"),
                              "--format", "json"]),
        ("ood calibrate", ["ood", "calibrate", "--index", idx, "--inputs", w("held-inputs.npy"), "--rows", "1000:2000"]),
        ("ood score", ["ood", "score", "--index", idx, "--inputs", w("shift-inputs.npy"), "--format", "csv"]),
        ("ood eval", ["ood", "eval", "--index", idx, "--in", w("held-inputs.npy"), "--out", w("shift-inputs.npy"),
                      "--kind", "inputs", "--html", os.path.join(out, "ood.html")]),
        ("compare 50k files", ["compare", "--index", idx, "--a", w("cmp-a.npy"), "--b", w("cmp-b.npy"), "--kind", "inputs",
                         "--format", "json"]),
        ("compare --a-where", ["compare", "--index", idx, "--a-where", "split = val", "--b-where", "split = test",
                               "--format", "json"]),
        ("fidelity", ["fidelity", "--index", idx, "--format", "json"]),
        ("report", ["report", "--index", idx, "--out", os.path.join(out, "report.html")]),
        ("report --threads 2", ["report", "--index", idx, "--out", os.path.join(out, "report-t2.html"), "--threads", "2"]),
        ("report +dupes +compare", ["report", "--index", idx, "--out", os.path.join(out, "report2.html"),
                                    "--dupes-radius", "1", "--compare-a", w("cmp-a.npy"), "--compare-b", w("cmp-b.npy"),
                                    "--compare-kind", "inputs"]),
        ("ood calibrate --score code", ["ood", "calibrate", "--index", idx, "--inputs", w("held-inputs.npy"),
                                        "--rows", "1000:2000", "--score", "code"]),  # export-edge needs it
        ("export-edge", ["export-edge", "--index", idx, "--out", os.path.join(out, "edge.bin"), "--with-model"]),
        ("add 20k", ["add", "--index", idx, "--inputs", w("add-inputs.npy"), "--meta", w("add-meta.csv")]),
        ("delete --where", ["delete", "--index", idx, "--where", "label = c9"]),
        ("compact", ["compact", "--index", idx]),
        ("check after", ["check", "--index", idx]),
    ]


TIME_FIELDS = {
    "wall": re.compile(r"Elapsed \(wall clock\) time.*: (.+)$"),
    "user": re.compile(r"User time \(seconds\): ([\d.]+)"),
    "sys": re.compile(r"System time \(seconds\): ([\d.]+)"),
    "rss": re.compile(r"Maximum resident set size \(kbytes\): (\d+)"),
}


def wall_seconds(text):
    parts = [float(p) for p in text.split(":")]
    s = 0.0
    for p in parts:
        s = s * 60 + p
    return s


def timed(argv, log):
    p = subprocess.run(["/usr/bin/time", "-v", CLI, *argv], capture_output=True, text=True)
    fields = {}
    for line in p.stderr.splitlines():
        for k, rx in TIME_FIELDS.items():
            m = rx.search(line)
            if m:
                fields[k] = m.group(1)
    rest = "\n".join(l for l in p.stderr.splitlines() if not l.startswith("\t"))
    with open(log, "a") as f:
        f.write(f"$ actindex {' '.join(argv)}\nexit {p.returncode}\n--- stdout (first 2000 chars)\n"
                f"{p.stdout[:2000]}\n--- stderr\n{rest}\n{'-' * 60}\n")
    return {
        "exit": p.returncode,
        "wall": wall_seconds(fields.get("wall", "0")),
        "cpu": float(fields.get("user", 0)) + float(fields.get("sys", 0)),
        "rss": int(fields.get("rss", 0)) / 1024,
        "err": rest.strip().splitlines()[-1] if p.returncode and rest.strip() else "",
    }


def run(work, sizes, only):
    results = {}
    log = os.path.join(work, "commands.log")
    for size in sizes:
        for d in (f"idx-{size}", f"idx-acts-{size}", f"out-{size}"):
            shutil.rmtree(os.path.join(work, d), ignore_errors=True)
        os.makedirs(os.path.join(work, f"out-{size}"))
        for name, argv in commands(work, size):
            if only and name not in only and not name.startswith("build --model"):
                continue
            r = timed(argv, log)
            results[(name, size)] = r
            print(f"{size:>8} {name:<24} exit {r['exit']} wall {r['wall']:7.1f} s cpu {r['cpu']:7.1f} s "
                  f"rss {r['rss']:7.0f} MB {r['err'][:100]}", flush=True)
        shutil.rmtree(os.path.join(work, f"idx-acts-{size}"), ignore_errors=True)
    return results


def table(results, sizes):
    small, large = sizes[0], sizes[-1]
    size = lambda n: f"{n // 1_000_000}M" if n % 1_000_000 == 0 else f"{n // 1000}k"
    print(f"\n| command | {size(small)} wall s | CPU s | RSS MB | {size(large)} wall s | CPU s | RSS MB "
          f"| CPU growth | RSS growth |")
    print("|---|---|---|---|---|---|---|---|---|")
    names = []
    for (name, _) in results:
        if name not in names:
            names.append(name)
    for name in names:
        a, b = results.get((name, small)), results.get((name, large))
        cell = lambda r: (f"{r['wall']:.1f} | {r['cpu']:.1f} | {r['rss']:.0f}" if r and r["exit"] == 0
                          else f"exit {r['exit']} | | " if r else " | | ")
        growth = (f"{b['cpu'] / a['cpu']:.1f}x | {b['rss'] / a['rss']:.1f}x"
                  if a and b and a["exit"] == 0 and b["exit"] == 0 and a["cpu"] > 0 else " | ")
        print(f"| {name} | {cell(a)} | {cell(b)} | {growth} |")


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--work", default="/tmp/actindex-scale")
    ap.add_argument("--sizes", default=",".join(str(s) for s in SIZES))
    ap.add_argument("--only", default="")
    ap.add_argument("--skip-gen", action="store_true")
    a = ap.parse_args()
    sizes = [int(s) for s in a.sizes.split(",")]
    if not a.skip_gen:
        t = time.time()
        gen(a.work)
        print(f"data written to {a.work} in {time.time() - t:.0f} s", flush=True)
    subprocess.run([CLI, "--version"], capture_output=True)  # builds the jar if needed, untimed
    with open("/proc/loadavg") as f:
        print(f"load average before: {f.read().strip()}; {os.cpu_count()} cores", flush=True)
    results = run(a.work, sizes, set(filter(None, a.only.split(","))))
    with open("/proc/loadavg") as f:
        print(f"load average after: {f.read().strip()}")
    table(results, sizes)
    sys.exit(1 if any(r["exit"] != 0 for r in results.values()) else 0)


if __name__ == "__main__":
    main()
