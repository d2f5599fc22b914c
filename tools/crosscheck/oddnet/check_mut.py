import os, sys; sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from truth import *
import check_nearest, check_region, check_census, check_dupes
idx = sys.argv[1]; stage = sys.argv[2]
live = np.ones(480, bool)
if stage != "full":
    for i in [0, 5, 299, 300, 301, 455, 479]: live[i] = False
    live &= np.array([int(r["grp"]) != 3 for r in meta])
grp = np.array([int(r["grp"]) for r in meta]); sp = np.array(splits)
ms = [None, ["2"], ["6"], ["2", "6"], ["0", "4"]]
check_nearest.check(idx, [1, 5, 50], ms, ["query", "train"], live=live)
check_nearest.check(idx, [5], [None, ["6"]], ["query"], live=live, where=("split = train and grp in (1, 2, 5)", (sp == "train") & np.isin(grp, [1, 2, 5])))
for R in [0, 2]:
    check_region.check(idx, [None, ['2'], ['6'], ['0','6']], ['query', 'train'], R, live=live)
check_census.check(idx, None, live=live); check_census.check(idx, ["6", "2"], live=live)
for m_ in [None, ["2"], ["6"]]:
    for R in [0, 1, 2, 3]: check_dupes.check(idx, m_, R, live=live)
check_dupes.check(idx, ["2"], 2, live=live, where=("split = train", sp == "train"))
