import json, sys
ref = {r["query"]: r for r in json.load(open(sys.argv[1]))["results"]}
for f in sys.argv[2:]:
    bad = n = 0
    for l in open(f):
        row, score, dec, p = l.strip().split(",")[:4]; r = ref[int(row)]; n += 1
        if abs(float(score) - r["score"]) > 1e-9 or dec != r["decision"] or abs(float(p) - r["p_value"]) > 1e-9: bad += 1; print("EDGE", l.strip(), r["score"], r["decision"], r["p_value"])
    print(f"edge {f} against ood score: {n} rows, {bad} bad")
