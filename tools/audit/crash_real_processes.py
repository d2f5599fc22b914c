#!/usr/bin/env python3
"""Crash audit with real processes: what a user sees after a write is interrupted or two writers meet.

Runs the built jar (src-demo/target/actindex.jar; `bin/actindex --help` builds it) as separate
processes on copies of the demo's index, and
  1. kills each writing command (add with and without --meta, an add followed by a merge, delete
     --keys/--where, compact, ood calibrate, build --out onto a new folder; build onto an existing
     index is refused before it writes) with SIGKILL after a random delay spread over its measured
     run, then checks: `check` exits 0 (or, for build, the folder is refused with a message saying
     what to do); the index answers exactly as before or exactly as after the command (nearest
     --format json of a fixed query file, info's counts, ood score; for the add with a merge, the
     add's commit alone must read the same as after); the next write works (no stale lock); no
     leftover or temporary file stays after that next write; kills chained on one folder leave a bounded number of files;
  2. starts two writers on one index (add+add, add+delete, compact+add, add --meta+compact,
     delete --where+compact, compact+delete --where): once the first holds writer.lock (seen in
     /proc/locks) it is stopped (SIGSTOP) while the second runs, then continued: the second must be
     refused (exit 2, one line naming the index and another writer) and the index must equal the
     first one's result; a trial is inconclusive only when the first was never seen holding the
     lock, and the count of conclusive ones is printed; a reader (nearest) run during a write must
     answer from before or after;
  3. the same checks as 1 after SIGINT and SIGTERM;
  4. kills commands that write a file outside the index (dupes --pairs, report --out) with each
     signal: the target holds its old bytes or the whole new file (pairs: the bytes of an
     unkilled run), SIGINT and SIGTERM leave no .NAME.RANDOM.tmp beside it, and one that SIGKILL
     leaves is removed by the next write of the same target once it is older than 10 minutes (its
     time is set back) and kept while younger.
Trials run one after another (the machine is shared). The seed is printed; --seed repeats a run.
Exit code: 0 when every trial ran and none failed; 1 when any failed; 130 when Ctrl-C cut the run
short (after the table of the trials done) and none of those failed.

  python3 tools/audit/crash_real_processes.py [--work DIR] [--trials N] [--signal-trials N] [--seed S]
      [--only "add,compact,pairs,outputs"] [--signals KILL,INT,TERM] [--output-trials N]
"""
import argparse
import json
import os
import random
import shutil
import signal
import subprocess
import sys
import time
from collections import Counter, defaultdict

HERE = os.path.dirname(os.path.abspath(__file__))
REPO = os.path.dirname(os.path.dirname(HERE))
JAR = os.path.join(REPO, "src-demo", "target", "actindex.jar")


def java_cmd():
    jdk = subprocess.run([os.path.join(REPO, "bin", "find-jdk")], capture_output=True, text=True, check=True).stdout.strip()
    return [os.path.join(jdk, "bin", "java"), "-Dactindex.stderr.tty=false", "--add-modules", "jdk.incubator.vector",
            "--enable-native-access=ALL-UNNAMED"]


class Tool:
    def __init__(self, work, jar):
        self.java = java_cmd()
        self.jar = jar
        self.work = work
        self.jtmp = os.path.join(work, "java-tmp")  # every run's java.io.tmpdir: nothing may stay in it
        os.makedirs(self.jtmp, exist_ok=True)

    def argv(self, args, props=()):
        return self.java + ["-Djava.io.tmpdir=" + self.jtmp] + list(props) + ["-jar", self.jar] + args

    def run(self, args, timeout=300, props=()):
        p = subprocess.run(self.argv(args, props), capture_output=True, text=True, timeout=timeout)
        return p.returncode, p.stdout, clean(p.stderr)

    def start(self, args, tag):
        out = open(os.path.join(self.work, tag + ".out"), "w")
        err = open(os.path.join(self.work, tag + ".err"), "w")
        # SIGINT back to its default: a job started in the background of a script inherits it ignored, and so would
        # the JVM (it then keeps running on Ctrl-C, which is not what a user at a terminal gets)
        p = subprocess.Popen(self.argv(args), stdout=out, stderr=err, preexec_fn=lambda: signal.signal(signal.SIGINT, signal.SIG_DFL))
        p.files = (out, err, os.path.join(self.work, tag + ".err"), os.path.join(self.work, tag + ".out"))
        return p


def finish(p):
    p.wait()
    p.files[0].close()
    p.files[1].close()
    with open(p.files[2]) as f:
        err = clean(f.read())
    with open(p.files[3]) as f:
        out = f.read()
    return p.returncode, out, err


def clean(err):
    return "\n".join(l for l in err.splitlines() if "Using incubator modules" not in l)


def listing(d):
    """Every file below d, relative, sorted."""
    out = []
    for root, _, files in os.walk(d):
        for f in files:
            out.append(os.path.relpath(os.path.join(root, f), d))
    return sorted(out)


def copy(src, dst):
    if os.path.exists(dst):
        shutil.rmtree(dst)
    shutil.copytree(src, dst)


class Audit:
    def __init__(self, tool, work, rnd):
        self.t = tool
        self.work = work
        self.rnd = rnd
        self.d = os.path.join(work, "data")
        self.rows = defaultdict(Counter)   # command -> Counter of outcomes / failure kinds
        self.notes = []                    # failures with details, for the report
        self.fail_kinds = set()
        self.output_refs = {}              # output command -> (bytes of an unkilled run, its duration)

    # ---------- set-up ----------
    def setup(self, needed):
        import numpy as np
        demo = os.path.join(self.d, "demo")
        if not os.path.exists(os.path.join(demo, "index", "writer.lock")):
            os.makedirs(self.d, exist_ok=True)
            rc, _, err = self.t.run(["demo", "--out", demo])
            assert rc == 0, err
        rng = np.random.default_rng(7)
        w = np.load(os.path.join(demo, "windows.npy"))
        with open(os.path.join(demo, "windows.csv")) as f:
            lines = f.read().splitlines()
        header, body = lines[0], lines[1:]

        def batch(name, n, meta):
            i = rng.integers(0, len(w), n)
            np.save(os.path.join(self.d, name + ".npy"), (w[i] + rng.normal(0, 0.05, (n, w.shape[1]))).astype(np.float32))
            if meta:
                with open(os.path.join(self.d, name + ".csv"), "w") as f:
                    f.write(header + "\n")
                    for j, r in enumerate(i):
                        f.write(name + "-%05d" % j + body[r][body[r].index(","):] + "\n")
        batch("add", 8000, False)       # about 2 s
        batch("addmeta", 6000, True)
        batch("probe", 40, False)       # the "next write" after a crash
        batch("second", 30, False)      # the second writer's small add
        with open(os.path.join(self.d, "keys.txt"), "w") as f:
            for r in rng.choice(len(body), 4000, replace=False):
                f.write(body[r].split(",")[0] + "\n")
        self.base = os.path.join(self.d, "base")          # the demo's index as it is
        copy(os.path.join(demo, "index"), self.base)
        self.based = os.path.join(self.d, "base-deleted")  # with deleted examples, for compact
        copy(self.base, self.based)
        rc, _, err = self.t.run(["delete", "--index", self.based, "--where", "split = test"])
        assert rc == 0, err
        self.base3 = os.path.join(self.d, "base-3-segments")  # the next add makes a fourth segment: a merge follows its commit
        copy(self.base, self.base3)
        for part in ("second", "probe"):
            rc, _, err = self.t.run(["add", "--index", self.base3, "--inputs", os.path.join(self.d, part + ".npy")])
            assert rc == 0, err
        self.demo = demo
        D = self.d
        self.commands = {
            "add": (self.base, ["add", "--index", "{idx}", "--inputs", D + "/add.npy"]),
            "add (then a merge)": (self.base3, ["add", "--index", "{idx}", "--inputs", D + "/add.npy"]),
            "add --meta": (self.base, ["add", "--index", "{idx}", "--inputs", D + "/addmeta.npy", "--meta", D + "/addmeta.csv"]),
            "delete --keys": (self.base, ["delete", "--index", "{idx}", "--keys", D + "/keys.txt"]),
            "delete --where": (self.base, ["delete", "--index", "{idx}", "--where", "line = L2 or season = winter"]),
            "compact": (self.based, ["compact", "--index", "{idx}"]),
            "ood calibrate": (self.base, ["ood", "calibrate", "--index", "{idx}", "--inputs", demo + "/calibration.npy", "--rows", "0:1200", "--tpr", "0.9"]),
            "build --out (new folder)": (None, ["build", "--out", "{idx}", "--model", demo + "/model.safetensors", "--inputs",
                                                demo + "/windows.npy", "--meta", demo + "/windows.csv"]),
        }
        self.refs = {}
        for name, (base, args) in self.commands.items():
            if needed is not None and name not in needed:
                continue
            idx = os.path.join(self.work, "ref")
            if base:
                copy(base, idx)
                before = self.state(idx)
            else:
                if os.path.exists(idx):
                    shutil.rmtree(idx)
                before = None
            durs = []
            for run in range(3):  # the median of three runs: one run on a shared machine can take twice as long
                if run:
                    if base:
                        copy(base, idx)
                    else:
                        shutil.rmtree(idx)
                t0 = time.monotonic()
                rc, _, err = self.t.run([a.replace("{idx}", idx) for a in args])
                durs.append(time.monotonic() - t0)
                assert rc == 0, name + ": " + err
            dur = sorted(durs)[1]
            after = self.state(idx)
            assert before != after, name + ": the command changes nothing the audit compares"
            self.refs[name] = (before, after, dur, listing(idx))
            if "merge" in name:
                # the add's own commit without the merge that follows it (each merge is its own commit): a merge
                # copies kept magnitudes unchanged, so a kill between the two commits must read exactly as after
                copy(base, idx)
                rc, _, err = self.t.run([a.replace("{idx}", idx) for a in args], props=["-Dactindex.merge.factor=1000"])
                assert rc == 0, err
                assert listing(idx) != self.refs[name][3], name + ": no merge to audit"
                mid = self.state(idx)
                assert mid == after, name + ": the add's commit alone reads differently from the merged index: " + str(mid)[:300]
            print(f"  {name}: runs {dur:.2f} s", flush=True)

    # ---------- 4: output files outside the index ----------
    def outputs_interrupted(self, trials, sig):
        out = os.path.join(self.work, "out")
        os.makedirs(out, exist_ok=True)
        idx = self.demo + "/index"
        for name, args, whole in [
                ("dupes --pairs", ["dupes", "--index", idx, "--radius", "10", "--pairs", "{out}"], None),
                ("report --out", ["report", "--index", idx, "--out", "{out}"], lambda b: b.rstrip().endswith(b"</html>"))]:
            label = f"{name} [{signal.Signals(sig).name}]"
            target = os.path.join(out, "target")
            argv = [a.replace("{out}", target) for a in args]
            if name not in self.output_refs:  # an unkilled run: its bytes and duration
                t0 = time.time()
                rc, _, err = self.t.run(argv)
                assert rc == 0, name + ": " + err
                with open(target, "rb") as f:
                    self.output_refs[name] = (f.read(), time.time() - t0)
            ref, dur = self.output_refs[name]
            if whole is None:
                whole = lambda b, ref=ref: b == ref
            for trial in range(trials):
                for f in os.listdir(out):
                    os.remove(os.path.join(out, f))
                with open(target, "wb") as f:
                    f.write(b"old\n")
                delay = self.rnd.uniform(0, dur * 1.05)
                p = self.t.start(argv, "out")
                time.sleep(delay)
                killed = p.poll() is None
                if killed:
                    p.send_signal(sig)
                rc, _, err = finish(p)
                where = f"trial {trial} delay {delay:.2f}s rc {rc}"
                self.rows[label]["trials"] += 1
                self.rows[label]["interrupted" if killed else "finished before the signal"] += 1
                if not killed and rc != 0:
                    self.fail(label, "command failed", where + ": " + err[:300])
                with open(target, "rb") as f:
                    got = f.read()
                if got == b"old\n":
                    self.rows[label]["target: old"] += 1
                elif whole(got):
                    self.rows[label]["target: new"] += 1
                else:
                    self.fail(label, "target neither old nor whole", where + f": {len(got)} bytes")
                tmp = sorted(f for f in os.listdir(out) if f.startswith(".target.") and f.endswith(".tmp"))
                if tmp and sig != signal.SIGKILL:
                    self.fail(label, "temporary file after SIGINT/SIGTERM", where + ": " + str(tmp))
                if not tmp:
                    continue
                self.rows[label]["temporary file left by the kill"] += 1
                # the next write keeps a young one (it may be a writer's), removes one older than 10 minutes
                rc, _, err = self.t.run(["report", "--index", idx, "--out", target])
                left = sorted(f for f in os.listdir(out) if f.startswith(".target.") and f.endswith(".tmp"))
                if rc != 0 or left != tmp:
                    self.fail(label, "young temporary file not kept", where + f": rc {rc} {left} {err[:200]}")
                for f in left:
                    old = time.time() - 11 * 60
                    os.utime(os.path.join(out, f), (old, old))
                rc, _, err = self.t.run(["report", "--index", idx, "--out", target])
                left = [f for f in os.listdir(out) if f.startswith(".target.") and f.endswith(".tmp")]
                if rc != 0 or left:
                    self.fail(label, "stale temporary file not removed by the next write", where + f": rc {rc} {left} {err[:200]}")
            self.jtmp_clean(label, trials)

    # ---------- what the user sees ----------
    def state(self, idx):
        """What a user reads from the index: nearest answers, counts, the stored OOD calibration."""
        rc, near, err = self.t.run(["nearest", "--index", idx, "--inputs", self.demo + "/incoming.npy", "--rows", "0:60", "-k", "8",
                                    "--format", "json"])
        if rc != 0:
            return ("nearest failed", rc, err.strip()[:300])
        rc, info, err = self.t.run(["info", "--index", idx, "--format", "json"])
        if rc != 0:
            return ("info failed", rc, err.strip()[:300])
        i = json.loads(info)
        rc, ood, err = self.t.run(["ood", "score", "--index", idx, "--inputs", self.demo + "/incoming.npy", "--rows", "390:410",
                                   "--format", "json"])
        stored = sum(g["count"] for g in i["segments"])
        ood = ood.replace(idx, "IDX") if rc == 0 else "no calibration: " + err.replace(idx, "IDX").strip()[:200]
        return (near, i["next_id"], i["live"], i["deleted"], stored, i["layout"], ood)

    def leftovers(self, idx):
        rc, out, err = self.t.run(["check", "--index", idx, "--format", "json"])
        if not out.strip():
            return rc, err, None
        files = json.loads(out)["files"]
        return rc, err, [f["file"] for f in files if f.get("status") == "leftover"]

    def fail(self, cmd, kind, detail):
        self.fail_kinds.add(kind)
        self.rows[cmd][kind] += 1
        self.notes.append(f"{cmd}: {kind}: {detail}")
        print(f"    FAIL {kind}: {detail}", flush=True)

    def jtmp_clean(self, cmd, trial):
        left = os.listdir(self.t.jtmp)
        if left:
            self.fail(cmd, "temp files in java.io.tmpdir", f"trial {trial}: {left[:5]}")
            for f in left:
                p = os.path.join(self.t.jtmp, f)
                shutil.rmtree(p) if os.path.isdir(p) else os.remove(p)

    # ---------- 1 and 3: interrupted writes ----------
    def interrupted(self, name, trials, sig):
        base, args = self.commands[name]
        before, after, dur, _ = self.refs[name]
        label = name if sig == signal.SIGKILL else f"{name} [{signal.Signals(sig).name}]"
        idx = os.path.join(self.work, "trial")
        for trial in range(trials):
            if base:
                copy(base, idx)
            elif os.path.exists(idx):
                shutil.rmtree(idx)
            delay = self.rnd.uniform(0, dur * 1.05)
            p = self.t.start([a.replace("{idx}", idx) for a in args], "cmd")
            time.sleep(delay)
            killed = p.poll() is None
            if killed:
                p.send_signal(sig)
            rc, _, err = finish(p)
            self.rows[label]["trials"] += 1
            self.rows[label]["interrupted" if killed else "finished before the signal"] += 1
            where = f"trial {trial} delay {delay:.2f}s rc {rc}"
            if not killed and rc != 0:
                self.fail(label, "command failed", where + ": " + err[:300])
            if killed and sig != signal.SIGKILL and rc == 0:
                self.rows[label]["exit 0 after the signal"] += 1
            if base is None:
                self.build_outcome(label, idx, where, before, after)
            else:
                self.index_outcome(label, idx, where, before, after)
            self.jtmp_clean(label, trial)

    def index_outcome(self, label, idx, where, before, after):
        rc, err, left = self.leftovers(idx)
        if rc != 0:
            self.fail(label, "check fails", where + ": " + err.strip()[:300])
        if left:
            self.rows[label]["leftovers after the kill (listed by check)"] += 1
        s = self.state(idx)
        if s == before:
            self.rows[label]["state: before"] += 1
        elif s == after:
            self.rows[label]["state: after"] += 1
        else:
            self.fail(label, "state neither before nor after", where + ": " + str(s)[:300])
        self.next_write(label, idx, where)

    def next_write(self, label, idx, where):
        rc, _, err = self.t.run(["add", "--index", idx, "--inputs", self.d + "/probe.npy"])
        if rc != 0:
            kind = "stale lock" if "lock" in err else "next write fails"
            self.fail(label, kind, where + ": " + err.strip()[:300])
            return
        rc, err, left = self.leftovers(idx)
        if rc != 0:
            self.fail(label, "check fails after the next write", where + ": " + err.strip()[:300])
        elif left:
            self.fail(label, "leftovers after the next write", where + ": " + str(left[:6]))
        tmp = [f for f in listing(idx) if "tmp" in f.lower()]
        if tmp:
            self.fail(label, "temporary files after the next write", where + ": " + str(tmp[:6]))

    def build_outcome(self, label, idx, where, before, after):
        if not os.path.exists(idx) or not os.listdir(idx):
            self.rows[label]["state: no folder / empty"] += 1
            return
        rc, _, err = self.t.run(["check", "--index", idx])
        if rc == 0:
            s = self.state(idx)
            if s == after:
                self.rows[label]["state: after"] += 1
                self.next_write(label, idx, where)
            else:
                self.fail(label, "check passes on a build that is not complete", where + ": " + str(s)[:300])
            return
        # a killed build: every command must refuse the folder with a message saying what it is
        self.rows[label]["state: refused as unfinished (documented)"] += 1
        rc2, _, err2 = self.t.run(["nearest", "--index", idx, "--inputs", self.demo + "/incoming.npy", "--rows", "0:2"])
        rc3, _, err3 = self.t.run(["add", "--index", idx, "--inputs", self.d + "/probe.npy"])
        rc4, _, err4 = self.t.run(["build", "--out", idx, "--model", self.demo + "/model.safetensors", "--inputs", self.d + "/probe.npy"])
        for what, r, e in (("check", rc, err), ("nearest", rc2, err2), ("add", rc3, err3), ("build again", rc4, err4)):
            e1 = e.strip().splitlines()[-1] if e.strip() else ""
            self.rows[label][f"{what} says: {shape(e1)}"] += 1
            if r != 2 or idx not in e:
                self.fail(label, f"{what} on a killed build: exit {r}, message without the folder", where + ": " + e1[:300])
        if "remove" not in err4:
            self.fail(label, "build again does not say to remove the folder", where + ": " + err4.strip()[:300])

    def build_onto_index(self):
        """build --out onto an existing index folder: refused (exit 2) before anything is written."""
        label = "build --out (existing index)"
        base, args = self.commands["build --out (new folder)"]
        idx = os.path.join(self.work, "trial")
        copy(self.base, idx)
        before = {f: open(os.path.join(idx, f), "rb").read() for f in listing(idx)}
        rc, _, err = self.t.run([a.replace("{idx}", idx) for a in args])
        self.rows[label]["trials"] += 1
        after = {f: open(os.path.join(idx, f), "rb").read() for f in listing(idx)}
        if rc != 2 or before != after:
            self.fail(label, "not refused, or the index changed", f"exit {rc}: {err.strip()[:300]}")
        else:
            self.rows[label][f"refused, index unchanged: {shape(err.strip().splitlines()[-1])}"] += 1

    # ---------- 2: two writers, and a reader during a write ----------
    def two_writers(self, first, second_args, trials):
        """The second writer starts once the first holds writer.lock (seen in /proc/locks) and runs while the first is
        stopped (SIGSTOP) holding it: the second's whole attempt falls inside the first's hold, as with a slow first
        writer, and must be refused. A trial is inconclusive only when the first was never seen holding the lock."""
        label = f"{first} + second writer ({second_args[0]})"
        base, args = self.commands[first]
        before, after, dur, _ = self.refs[first]
        idx = os.path.join(self.work, "trial")
        for trial in range(trials):
            copy(base, idx)
            lockfile = os.path.join(idx, "writer.lock")
            p = self.t.start([a.replace("{idx}", idx) for a in args], "first")
            held = wait_lock(p, lockfile)
            if held:
                os.kill(p.pid, signal.SIGSTOP)
                held = holds_lock(p.pid, lockfile)  # it may have released the lock between the look and the stop
                if not held:
                    os.kill(p.pid, signal.SIGCONT)
            self.rows[label]["trials"] += 1
            where = f"trial {trial}"
            if not held:
                rc, _, err = finish(p)
                self.rows[label]["first never seen holding the lock (inconclusive)"] += 1
                if rc != 0:
                    self.fail(label, "first writer failed", where + ": " + err[:300])
                continue
            try:
                q_rc, _, q_err = self.t.run([a.replace("{idx}", idx) for a in second_args])
            finally:
                os.kill(p.pid, signal.SIGCONT)
            rc, _, err = finish(p)
            self.rows[label]["conclusive"] += 1
            if rc != 0:
                self.fail(label, "first writer failed", where + ": " + err[:300])
            lines = q_err.strip().splitlines()
            if q_rc == 2 and len(lines) == 1 and "another writer" in q_err and idx in q_err:
                self.rows[label]["second refused, exit 2, one line naming index and writer"] += 1
                self.rows[label][f"second says: {shape(lines[-1])}"] += 1
            else:
                self.fail(label, "second writer not refused clearly", f"{where}: exit {q_rc}: {q_err.strip()[:300]}")
            if self.state(idx) != after:
                self.fail(label, "state is not the first writer's result", where)
            else:
                self.rows[label]["state: first writer's result"] += 1

    def reader_during_write(self, name, trials):
        label = f"nearest during {name}"
        base, args = self.commands[name]
        before, after, dur, _ = self.refs[name]
        idx = os.path.join(self.work, "trial")
        for trial in range(trials):
            copy(base, idx)
            p = self.t.start([a.replace("{idx}", idx) for a in args], "writer")
            time.sleep(self.rnd.uniform(0, dur * 0.5))
            while p.poll() is None:
                rc, near, err = self.t.run(["nearest", "--index", idx, "--inputs", self.demo + "/incoming.npy", "--rows", "0:60",
                                            "-k", "8", "--format", "json"])
                self.rows[label]["reads"] += 1
                if rc != 0:
                    self.fail(label, "reader failed", f"trial {trial}: exit {rc}: {err.strip()[:300]}")
                elif near == before[0]:
                    self.rows[label]["answer: before"] += 1
                elif near == after[0]:
                    self.rows[label]["answer: after"] += 1
                else:
                    self.fail(label, "reader answer neither before nor after", f"trial {trial}")
            finish(p)

    # ---------- pile-up: kills chained on one folder ----------
    def chained(self, name, trials):
        label = f"{name} chained kills (one folder)"
        base, args = self.commands[name]
        _, _, dur, ref_files = self.refs[name]
        idx = os.path.join(self.work, "chain")
        copy(base, idx)
        sizes = []
        for trial in range(trials):
            p = self.t.start([a.replace("{idx}", idx) for a in args], "chain")
            time.sleep(self.rnd.uniform(0, dur * 1.05))
            if p.poll() is None:
                p.kill()
            finish(p)
            self.rows[label]["trials"] += 1
            sizes.append(len(listing(idx)))
        rc, err, left = self.leftovers(idx)
        if rc != 0:
            self.fail(label, "check fails", err.strip()[:300])
        self.next_write(label, idx, "after the chain")
        self.rows[label][f"files in the folder per kill: {min(sizes)}-{max(sizes)}, after the next write {len(listing(idx))}"] += 1


def wait_lock(p, lockfile, limit=60):
    """Waits until process p holds the POSIX lock on lockfile (/proc/locks, read only: nothing here takes a lock)."""
    t0 = time.monotonic()
    while p.poll() is None and time.monotonic() - t0 < limit:
        if holds_lock(p.pid, lockfile):
            return True
        time.sleep(0.002)
    return False


def holds_lock(pid, lockfile):
    """Whether process pid holds a lock on lockfile, per /proc/locks."""
    try:
        ino = os.stat(lockfile).st_ino
    except FileNotFoundError:
        return False
    with open("/proc/locks") as f:
        for line in f:
            parts = line.split()
            if len(parts) > 5 and parts[4] == str(pid) and parts[5].endswith(":" + str(ino)):
                return True
    return False


def shape(line):
    """A message with its numbers and paths blanked, so that equal messages count together."""
    import re
    line = re.sub(r"/\S+", "PATH", line)
    return re.sub(r"\d+", "N", line)[:220]


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--work", default="/tmp/actindex-crash-audit")
    ap.add_argument("--trials", type=int, default=24, help="SIGKILL trials per command")
    ap.add_argument("--signal-trials", type=int, default=6, help="SIGINT and SIGTERM trials per command, each")
    ap.add_argument("--pair-trials", type=int, default=5)
    ap.add_argument("--output-trials", type=int, default=6, help="trials per signal of each output-writing command")
    ap.add_argument("--only", default="", help="comma-separated command names to run (default: all)")
    ap.add_argument("--signals", default="KILL,INT,TERM", help="which signals interrupt the commands")
    ap.add_argument("--seed", type=int, default=None)
    ap.add_argument("--jar", default=JAR, help="the jar to run (a copy lets the tree be rebuilt during a run)")
    a = ap.parse_args()
    seed = a.seed if a.seed is not None else random.SystemRandom().randrange(1 << 31)
    print(f"seed {seed} (repeat with --seed {seed})", flush=True)
    if not os.path.exists(a.jar):
        sys.exit(f"{a.jar} is missing: run bin/actindex --help first")
    os.makedirs(a.work, exist_ok=True)
    au = Audit(Tool(a.work, a.jar), a.work, random.Random(seed))
    print("set-up (demo, batches, reference states):", flush=True)
    only = [s.strip() for s in a.only.split(",") if s.strip()]
    needed = set(only) | ({"add", "compact", "add --meta", "delete --where"} if "pairs" in only else set()) if only else None
    au.setup(needed)
    names = [n for n in au.commands if not only or n in only]
    sigs = [getattr(signal, "SIG" + x.strip()) for x in a.signals.split(",")]
    interrupted = False
    try:  # Ctrl-C (SIGINT to this script) stops the run and prints the table of the trials done
        if not only or "pairs" in only:  # first: the shortest part
            au.build_onto_index()
            D = au.d
            print("two writers", flush=True)
            au.two_writers("add", ["add", "--index", "{idx}", "--inputs", D + "/second.npy"], a.pair_trials)
            au.two_writers("add", ["delete", "--index", "{idx}", "--where", "line = L1"], a.pair_trials)
            au.two_writers("compact", ["add", "--index", "{idx}", "--inputs", D + "/second.npy"], a.pair_trials)
            au.two_writers("add --meta", ["compact", "--index", "{idx}"], a.pair_trials)
            au.two_writers("delete --where", ["compact", "--index", "{idx}"], a.pair_trials)
            au.two_writers("compact", ["delete", "--index", "{idx}", "--where", "line = L2"], a.pair_trials)
            print("readers during writes", flush=True)
            au.reader_during_write("add", a.pair_trials)
            au.reader_during_write("compact", a.pair_trials)
            print("chained kills", flush=True)
            au.chained("add", 12)
            au.chained("compact", 8)
        for n in names if signal.SIGKILL in sigs else []:
            print(f"SIGKILL: {n} x {a.trials}", flush=True)
            au.interrupted(n, a.trials, signal.SIGKILL)
        for sig in [x for x in sigs if x != signal.SIGKILL]:
            for n in names:
                print(f"{sig.name}: {n} x {a.signal_trials}", flush=True)
                au.interrupted(n, a.signal_trials, sig)
        if not only or "outputs" in only:
            for sig in sigs:
                print(f"{sig.name}: output files x {a.output_trials}", flush=True)
                au.outputs_interrupted(a.output_trials, sig)
    except KeyboardInterrupt:
        interrupted = True
        print("\ninterrupted: the table counts the trials done so far", flush=True)
    print(f"\nseed {seed}\n")
    print("| command | trials | outcomes | failures by kind |")
    print("|---|---|---|---|")
    total = 0
    for cmd, c in au.rows.items():
        failures = {k: v for k, v in c.items() if k in au.fail_kinds}
        outcomes = {k: v for k, v in c.items() if k not in au.fail_kinds and k not in ("trials", "reads")}
        n = c.get("trials", c.get("reads", 0))
        total += n
        print(f"| {cmd} | {n} | " + "; ".join(f"{k}: {v}" for k, v in outcomes.items()) + " | "
              + ("; ".join(f"{k}: {v}" for k, v in failures.items()) or "none") + " |")
    pairs = [c for cmd, c in au.rows.items() if "second writer" in cmd]
    if pairs:
        print(f"\ntwo writers: {sum(c['trials'] for c in pairs)} trials, {sum(c['conclusive'] for c in pairs)} conclusive "
              "(the second tried while the first held the lock)")
    print(f"\n{total} trials and reads; {len(au.notes)} failures")
    for n in au.notes:
        print("  " + n)
    # a failure first (exit 1), else a run cut short by Ctrl-C (130, the shell's code for SIGINT): neither is a pass
    if interrupted:
        print("incomplete: interrupted before every trial ran" + ("" if au.notes else "; exit 130"))
    sys.exit(1 if au.notes else 130 if interrupted else 0)



if __name__ == "__main__":
    main()
