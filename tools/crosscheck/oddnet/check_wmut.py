import os, sys; sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from truth import *
import check_nearest, check_region, check_census, check_dupes
check_nearest.IDX["idx_wmut"] = ("wide", {"0": "0"}, lambda part: ["--inputs", f"{part}_inputs.npy"])
live = np.ones(480, bool)
for i in [0, 5, 299, 300, 301, 455, 479]: live[i] = False
live &= np.array([int(r["grp"]) != 3 for r in meta]); sp = np.array(splits)
check_nearest.check("idx_wmut", [1, 5, 50], [None], ["query", "train"], live=live)
check_nearest.check("idx_wmut", [5], [None], ["query"], live=live, where=("split = test", sp == "test"))
check_region.check("idx_wmut", [None], ["train"], 60, live=live)
check_census.check("idx_wmut", None, live=live)
for R in [0, 3, 60, 100]: check_dupes.check("idx_wmut", None, R, live=live)
