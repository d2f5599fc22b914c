#!/usr/bin/env python3
"""Audit of metadata as an index grows batch by batch (build, then add, add, ...).

Each batch's metadata CSV differs from the first (a numeric column gets text, columns appear and
go missing, empty cells, quoted commas/quotes/newlines, numbers spelt several ways, -0, long and
unicode values, columns named like keywords, duplicate headers, a BOM). After each step every
filter of a list runs through `nearest --where ... -k 1000 --format json` and its ids are compared
with a plain-Python model of the rules in docs/where.md and docs/reference.md ("Metadata CSV").
Refusals are checked for exit 2, a message naming the file, and an unchanged index.

Usage: python3 tools/audit/meta_batches.py [WORKDIR]   (run from the repository root)
Prints one line per check; exit 1 when any check disagrees with the documented rule.
"""
import json
import os
import re
import shutil
import subprocess
import sys
import unicodedata
from decimal import Decimal

import numpy as np

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
CLI = os.path.join(ROOT, "bin", "actindex")
WORK = sys.argv[1] if len(sys.argv) > 1 else "/tmp/meta-audit"
BITS = 64
FIXED = {"key", "label", "split", "source"}
KEYWORDS = {"and", "or", "not", "in"}
NUMBER = re.compile(r"[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?")
problems = []


class Q(str):
    """A cell written in double quotes (kept as is); a plain str cell loses the spaces around it."""


def cell_text(c):
    return '"' + c.replace('"', '""') + '"' if isinstance(c, Q) else c


def cell_value(c):
    return str(c) if isinstance(c, Q) else c.strip(" \t")


def is_number(v):
    if not NUMBER.fullmatch(v):
        return False
    d = float(v)
    return d not in (float("inf"), float("-inf")) and Decimal(v) == Decimal(repr(d))


def run(*args):
    p = subprocess.run([CLI, *args], capture_output=True, text=True)
    return p.returncode, p.stdout, p.stderr


class Model:
    """The documented rules: rows by id, column kinds fixed by the batch that first has a value."""

    def __init__(self):
        self.rows = []  # id -> {field: value}
        self.kinds = {k: "KEYWORD" for k in FIXED}

    def accept(self, header, rows):
        """Returns None if the batch is acceptable per the docs, else the reason it must be refused."""
        names = [unicodedata.normalize("NFC", h.strip()) for h in header]
        if any(len(r) != len(header) for r in rows):
            return "a row with another number of fields"
        if len(set(names)) != len(names):
            return "duplicate column"
        if "id" in names or any(n.startswith("kind.") for n in names):
            return "reserved column"
        values = [{n: cell_value(c) for n, c in zip(names, r) if cell_value(c) != ""} for r in rows]
        keys = [v["key"].strip() for v in values if "key" in v]
        if len(set(keys)) != len(keys) or set(keys) & {r["key"] for r in self.rows}:
            return "key taken"
        new = {}
        for n in names:
            vs = [v[n] for v in values if n in v]
            if not vs or n in FIXED:
                continue
            allnum = all(is_number(x) for x in vs)
            if self.kinds.get(n) == "NUMBER" and not allnum:
                return "text in number column " + n
            if n not in self.kinds:
                new[n] = "NUMBER" if allnum else "KEYWORD"
        self.kinds.update(new)
        for v in values:
            if "key" in v:
                v["key"] = v["key"].strip()
            else:
                v["key"] = "row-%d" % len(self.rows)
            self.rows.append(v)
        return None

    def select(self, expr):
        """ids an expression selects, or the string 'refused'."""
        try:
            f = expr.fn(self)
        except Refused:
            return "refused"
        return {i for i, r in enumerate(self.rows) if f(r)}


class Refused(Exception):
    pass


class E:
    def __init__(self, text, fn):
        self.text, self.fn = text, fn


def val_text(v):
    return v if re.fullmatch(r"[^\s'\"(),=!<>]+", v) and v.lower() not in KEYWORDS else "'" + v.replace("\\", "\\\\").replace("'", "\\'") + "'"


def known(m, field):
    field = unicodedata.normalize("NFC", field)
    if field not in m.kinds:
        raise Refused()
    return m.kinds[field]


def field_text(f):
    """A field name as written in a filter: quoted when it spells a keyword or holds spaces or symbols."""
    return val_text(f)


def bare_keyword_field(field, value):
    """A keyword-named field written bare: refused (a keyword cannot start a comparison)."""
    def fn(m):
        raise Refused()
    return E("%s = %s" % (field, value), fn)


def cmp(field, op, value):
    def fn(m):
        kind = known(m, field)
        if kind == "NUMBER":
            if not is_number(value.strip()):
                raise Refused()
            x = float(value)
            ops = {"=": lambda a: a == x, "!=": lambda a: a != x, "<": lambda a: a < x, "<=": lambda a: a <= x,
                   ">": lambda a: a > x, ">=": lambda a: a >= x}
            t = ops[op]
            nf = unicodedata.normalize("NFC", field)
            return lambda r: (t(float(r[nf])) if nf in r else op == "!=")
        if op not in ("=", "!="):
            raise Refused()
        want = {value, value.strip()} if field == "key" else {value}
        return lambda r: ((r[field] in want) != (op == "!=")) if field in r else op == "!="
    return E("%s %s %s" % (field_text(field), op, val_text(value)), fn)


def isin(field, values, neg=False):
    def fn(m):
        kind = known(m, field)
        if kind == "NUMBER":
            if not all(is_number(v) for v in values):
                raise Refused()
            xs = {float(v) for v in values}
            return lambda r: (float(r[field]) in xs) != neg if field in r else neg
        return lambda r: (r[field] in values) != neg if field in r else neg
    return E("%s %sin (%s)" % (field_text(field), "not " if neg else "", ", ".join(val_text(v) for v in values)), fn)


def both(op, a, b):
    def fn(m):
        fa, fb = a.fn(m), b.fn(m)
        return (lambda r: fa(r) and fb(r)) if op == "and" else (lambda r: fa(r) or fb(r))
    return E("(%s) %s (%s)" % (a.text, op, b.text), fn)


def neg(a):
    def fn(m):
        f = a.fn(m)
        return lambda r: not f(r)
    return E("not (%s)" % a.text, fn)


def write_batch(path, header, rows, bom=False):
    with open(path, "w", encoding="utf-8", newline="") as f:
        if bom:
            f.write("\ufeff")
        f.write(",".join(cell_text(h) for h in header) + "\n")
        for r in rows:
            f.write(",".join(cell_text(c) for c in r) + "\n")


def codes(path, n, seed):
    np.save(path, np.random.default_rng(seed).integers(0, 2, size=(n, BITS)).astype(np.uint8))


def snapshot(idx):
    code, out, _ = run("nearest", "--index", idx, "--codes", os.path.join(WORK, "q.npy"), "-k", "1000", "--format", "json")
    return sorted((n["id"], n["key"], json.dumps(n["meta"], sort_keys=True), n["label"], n["split"])
                  for n in json.loads(out)["results"][0]["neighbors"]) if code == 0 else None


def check_filters(idx, model, exprs, step):
    for e in exprs:
        want = model.select(e)
        code, out, err = run("nearest", "--index", idx, "--codes", os.path.join(WORK, "q.npy"), "-k", "1000",
                             "--where", e.text, "--format", "json")
        if code == 0:
            got = {n["id"] for n in json.loads(out)["results"][0]["neighbors"]}
        elif code == 2:
            got = "refused"
        else:
            got = "exit %d: %s" % (code, err.strip()[:200])
        ok = got == want
        detail = "" if ok else " want %s got %s %s" % (
            want if isinstance(want, str) else "%d ids (only model: %s)" % (len(want), sorted(want - got)[:5] if isinstance(got, set) else ""),
            got if isinstance(got, str) else "%d ids (only index: %s)" % (len(got), sorted(got - want)[:5] if isinstance(want, set) else ""),
            err.strip().splitlines()[-1][:160] if err.strip() else "")
        print("%s %-9s where %s%s" % ("ok  " if ok else "BAD ", step, e.text[:90].replace("\n", "\\n"), detail))
        if not ok:
            problems.append((step, e.text, detail))


def step(idx, model, name, header, rows, exprs, build=False, bom=False, seed=0):
    csv = os.path.join(WORK, name + ".csv")
    npy = os.path.join(WORK, name + ".npy")
    write_batch(csv, header, rows, bom)
    codes(npy, len(rows), seed)
    before = None if build else snapshot(idx)
    reason = model.accept(header, rows)
    args = ["build", "--out", idx] if build else ["add", "--index", idx]
    code, out, err = run(*args, "--codes", npy, "--meta", csv)
    msg = err.strip().splitlines()[-1] if err.strip() else ""
    if reason is None:
        ok = code == 0
        print("%s %-9s accepted as documented%s" % ("ok  " if ok else "BAD ", name, "" if ok else ": exit %d %s" % (code, msg)))
    else:
        ok = code == 2 and csv in err
        print("%s %-9s refused (%s): exit %d: %s" % ("ok  " if ok else "BAD ", name, reason, code, msg[:200]))
        after = snapshot(idx)
        if after != before:
            ok = False
            print("BAD  %-9s index changed by a refused add" % name)
    if not ok:
        problems.append((name, "accept/refuse", "exit %d %s" % (code, msg)))
    check_filters(idx, model, exprs, name)


def main():
    shutil.rmtree(WORK, ignore_errors=True)
    os.makedirs(WORK)
    np.save(os.path.join(WORK, "q.npy"), np.zeros((1, BITS), dtype=np.uint8))
    idx = os.path.join(WORK, "idx")
    m = Model()
    labels = ["cat", "dog", "3", "3.0"]
    # batch 0: n numeric (integers), x decimals with empty cells, t text, note with quoted specials
    h0 = ["key", "label", "split", "n", "x", "t", "note", "later"]
    r0 = [["k%d" % i, labels[i % 4], ["train", "test"][i % 2], str(i % 7), "" if i % 5 == 0 else "%.2f" % (i / 8),
           ["alpha", "beta", "gamma"][i % 3], Q(["a,b", 'say "hi"', "line1\nline2", "  padded  ", ""][i % 5]), ""]
          for i in range(100)]
    common = [cmp("n", "=", "3"), cmp("n", "!=", "3"), cmp("n", "<", "3"), cmp("n", "<=", "3"), cmp("n", ">=", "-0"),
              cmp("n", "=", "0"), cmp("n", "=", "3e0"), cmp("n", "=", "03"), isin("n", ["1", "2.0", "3e0"]), isin("n", ["1", "2"], True),
              cmp("x", "<", "5"), cmp("x", "!=", "1.25"), cmp("x", ">", "0"), isin("x", ["0.25", "1.5"], True),
              cmp("t", "=", "alpha"), cmp("t", "!=", "alpha"), isin("t", ["alpha", "3"]), cmp("t", "<", "b"),
              cmp("note", "=", "a,b"), cmp("note", "=", 'say "hi"'), cmp("note", "=", "line1\nline2"), cmp("note", "=", "  padded  "),
              cmp("note", "=", "padded"), cmp("note", "!=", "a,b"),
              cmp("label", "=", "3"), cmp("label", "=", "3.0"), isin("label", ["cat", "3"], True), cmp("split", "=", "test"),
              cmp("key", "=", "k7"), cmp("key", "=", " k7 "), isin("key", ["k1", "k2", "b1-3"]),
              both("and", cmp("split", "=", "train"), both("or", cmp("n", ">", "4"), cmp("t", "=", "beta"))),
              neg(both("or", cmp("n", "=", "1"), cmp("x", "<", "2"))), cmp("later", "=", "1"), cmp("nosuch", "=", "1")]
    step(idx, m, "b0-build", h0, r0, common, build=True, seed=1)

    # batch 1: n spelt other ways (3.0, 03, 3e0, ' 3', +3, -0, -0.0, .5), t missing, new column extra, x empty
    spell = ["3.0", "03", "3e0", " 3", Q("3"), "+3", "-0", "-0.0", ".5", "3.", "0e5", "1E0"]
    h1 = ["split", "key", "n", "x", "extra", "label"]
    r1 = [["train" if i % 3 else "", "b1-%d" % i, spell[i % len(spell)], "" if i % 2 else "-0",
           ["e1", "10", "x y"][i % 3], ["cat", "", "03"][i % 3]] for i in range(50)]
    more = common + [cmp("extra", "=", "10"), cmp("extra", "=", "x y"), cmp("extra", "!=", "e1"), cmp("x", "=", "0"),
                     cmp("n", "=", "0.5"), cmp("n", "<", "0"), cmp("n", "<=", "-0"), cmp("t", "!=", "beta")]
    step(idx, m, "b1-add", h1, r1, more, seed=2)

    # batch 2: n gets text -> refused, index unchanged
    h2 = ["key", "n", "t"]
    r2 = [["b2-%d" % i, "cat" if i == 7 else str(i), "z"] for i in range(20)]
    step(idx, m, "b2-text", h2, r2, more[:4], seed=3)

    # batch 3: BOM, keyword-named columns, unicode (NFC and NFD), a long value, numbers in a text column,
    # a column first seen empty (later) now numeric, a number column's huge and unexact values
    h3 = ["key", "and", "in", "not", "or", "later", "t", "big", "u", "night shift", Q("rpm (avg)")]
    long = "L" * 5000
    r3 = [["b3-%d" % i, "v%d" % (i % 2), "w", "", "", str(i % 4), str(i % 3), ["12345678901234567", "1e400", "NaN", "7"][i % 4],
           ["caf\u00e9", "cafe\u0301", long, "\u65e5\u672c", Q("\u00a0nb\u00a0")][i % 5], str(i % 5), "r%d" % (i % 3)]
          for i in range(40)]
    m3 = more + [cmp("later", "<", "2"), cmp("later", "=", "3"), cmp("t", "=", "1"), isin("t", ["1", "alpha"]),
                 cmp("big", "=", "12345678901234567"), cmp("big", "=", "NaN"), cmp("big", "!=", "7"),
                 cmp("u", "=", "caf\u00e9"), cmp("u", "=", "cafe\u0301"), cmp("u", "=", long), cmp("u", "=", "\u65e5\u672c"),
                 cmp("u", "=", "\u00a0nb\u00a0"), cmp("and", "=", "v1"), cmp("in", "!=", "w"),
                 isin("not", ["x"], True), bare_keyword_field("and", "v1"), cmp("night shift", ">=", "2"),
                 cmp("rpm (avg)", "=", "r1")]
    step(idx, m, "b3-add", h3, r3, m3, bom=True, seed=4)

    # batch 4: duplicate header names -> refused
    step(idx, m, "b4-dup", ["key", "n", "n"], [["b4-%d" % i, "1", "2"] for i in range(5)], m3[:3], seed=5)
    # batch 5: a column named id -> refused
    step(idx, m, "b5-id", ["key", "id"], [["b5-%d" % i, str(i)] for i in range(5)], m3[:3], seed=6)
    # batch 6: header name with spaces around it becomes the same column; a key with spaces
    h6 = [" n ", "key", " t"]
    r6 = [["4", Q(" b6-%d " % i), "gamma"] for i in range(10)]
    step(idx, m, "b6-spaces", h6, r6, m3, seed=7)

    # batch 7: a quoted ' 3' keeps its spaces, so it is text in the number column n -> refused
    step(idx, m, "b7-quoted", ["key", "n"], [["b7-%d" % i, Q(" 3") if i == 2 else "3"] for i in range(5)], m3[:2], seed=8)
    # batch 8: a key the index holds already -> refused
    step(idx, m, "b8-key", ["key", "n"], [["b8-%d" % i if i != 3 else " k7", "1"] for i in range(5)], m3[:2], seed=9)
    # batch 9: a short row -> refused
    step(idx, m, "b9-short", ["key", "n", "x"], [["b9-%d" % i, "1"] + ([] if i == 4 else ["2"]) for i in range(6)], m3[:2], seed=10)
    # batch 10: a column named kind.x -> refused
    step(idx, m, "b10-kind", ["key", "kind.x"], [["b10-%d" % i, "1"] for i in range(3)], m3[:2], seed=11)
    # batch 11: header names in NFD join the NFC column; source is text even when numeric; AND as a column
    h11 = ["key", "cafe\u0301", "source", "AND"]
    r11 = [["b11-%d" % i, str(i), str(i % 3), "y"] for i in range(12)]
    step(idx, m, "b11-names", h11, r11, m3[:3] + [cmp("caf\u00e9", "<", "5"), cmp("cafe\u0301", ">=", "10"), cmp("source", "=", "1"),
                                                 cmp("source", "<", "2"), isin("source", ["0", "2"], True), cmp("AND", "=", "y")], seed=12)

    # delete --where on a copy agrees with the model's count
    cp = os.path.join(WORK, "idx-copy")
    shutil.copytree(idx, cp)
    e = both("or", cmp("n", "=", "3"), cmp("u", "=", "caf\u00e9"))
    code, out, err = run("delete", "--index", cp, "--where", e.text, "--format", "json")
    want = len(m.select(e))
    got = json.loads(out)["deleted"] if code == 0 else "exit %d" % code
    print("%s delete    where %s: model %s, deleted %s" % ("ok  " if got == want else "BAD ", e.text, want, got))
    if got != want:
        problems.append(("delete", e.text, got))

    # dupes --where at a radius that pairs every code: the ids in the pairs are the filter's ids
    e = both("and", cmp("night shift", ">=", "2"), cmp("in", "=", "w"))
    pairs = os.path.join(WORK, "pairs.csv")
    code, out, err = run("dupes", "--index", idx, "--radius", str(BITS), "--where", e.text, "--pairs", pairs, "--format", "json")
    got = set()
    if code == 0:
        with open(pairs) as f:
            for line in f.read().splitlines()[1:]:
                a, b, _ = line.split(",")
                got |= {int(a), int(b)}
    want = m.select(e)
    print("%s dupes     where %s: model %d ids, pairs hold %d" % ("ok  " if got == want else "BAD ", e.text, len(want), len(got)))
    if got != want:
        problems.append(("dupes", e.text, "exit %d" % code))

    print("\n%d problem(s)" % len(problems))
    for p in problems:
        print("  ", p)
    sys.exit(1 if problems else 0)


if __name__ == "__main__":
    main()
