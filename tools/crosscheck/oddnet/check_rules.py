import os, sys; sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import truth; truth.LAYERS["thr"] = truth.LAYERS["deep"]; truth.LAYERS["med"] = truth.LAYERS["deep"]
from truth import *
import check_nearest, check_dupes, check_census
dm = {"0":"0","2":"2","4":"4","6":"6"}
check_nearest.IDX["idx_thr"] = ("thr", dm, lambda part: ["--activations", f"deep_{part}_acts.npz"])
check_nearest.IDX["idx_med"] = ("med", dm, lambda part: ["--activations", f"deep_{part}_acts.npz"])
for i in ["idx_thr", "idx_med"]:
    check_nearest.check(i, [1, 5, 50], [None, ["2"], ["6"], ["2", "6"]], ["query", "train"])
    check_census.check(i, None)
    for R in [0, 2]: check_dupes.check(i, ["6"], R)
