import os, sys; sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import truth; truth.LAYERS["sel"] = [("6", 63), ("2", 37)]
from truth import *
import check_nearest, check_region, check_dupes, check_census
m = {"6": "6", "2": "2"}
check_nearest.IDX["idx_sel_npz"] = ("sel", m, lambda part: ["--activations", f"deep_{part}_acts.npz"])
check_nearest.IDX["idx_sel_model"] = ("sel", m, lambda part: ["--inputs", f"{part}_inputs.npy"])
check_nearest.check("idx_sel_npz", [1, 5, 50], [None, ["6"], ["2"]], ["query", "train"])
check_nearest.check("idx_sel_model", [1, 5, 50], [None, ["6"], ["2"]], ["query", "train"])
import subprocess
p = subprocess.run([A, "nearest", "--index", "idx_sel_npz", "--activations", "q62.npy", "-k", "5", "--format", "json"], capture_output=True, text=True, cwd=D)
p2 = subprocess.run([A, "nearest", "--index", "idx_sel_npz", "--activations", "deep_query_acts.npz", "-k", "5", "--format", "json"], capture_output=True, text=True, cwd=D)
print(f"nearest idx_sel_npz: q62.npy (layers 6, 2 side by side) against the .npz members by name: {len(json.loads(p2.stdout)['results'])} queries, {0 if p.returncode == 0 and p.stdout == p2.stdout else 1} bad", p.stderr.strip()[:300])
check_region.IDX = check_nearest.IDX
for R in [0, 2]: check_region.check("idx_sel_model", [None, ["2"]], ["query"], R)
check_dupes.IDX = check_nearest.IDX
for R in [0, 1, 3]: check_dupes.check("idx_sel_model", None, R)
check_census.IDX = check_nearest.IDX; check_census.check("idx_sel_model", None); check_census.check("idx_sel_npz", ["2", "6"])
