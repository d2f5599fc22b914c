#!/usr/bin/env bash
# End-to-end audit on networks shaped unlike the demo's: an MLP 30 -> 100 -> 37 -> 200 -> 63 -> 2
# (four hidden layers whose boundaries fall inside 64-bit words, 400 bits) and one of a single
# hidden layer of 1,000 units, trained briefly (PyTorch) on scikit-learn's bundled breast cancer
# data (standardized; 30 training rows copied, half with a little noise, some relabelled).
# Every answer of build (model, .npz, .npy, CSV, packed/bool/int codes, --layers, --threshold,
# --median), add, delete, compact, nearest (k 1/5/50, every single layer and pair of layers,
# --ties, --where, --refine), region, census, dupes (radius 0..3 and wider, --layers, --where,
# --against), compare, fidelity, ood calibrate/score/eval (code and refined) and export-edge (Java
# and C) is recomputed in NumPy / SciPy / scikit-learn from the bits and floats the script wrote,
# and compared exactly (refined distances to 1e-5 relative: the script simulates the 8-bit
# quantisation in float64). Each check prints one line ending in "N bad"; the run fails when any
# N is not 0.
#
# Not a test dependency: rerun by hand after a change to search, encoding or the statistics.
# Usage: tools/crosscheck/oddnet/run.sh [WORKDIR]   (needs numpy, scipy, scikit-learn, torch, safetensors, gcc)
set -euo pipefail
HERE=$(cd "$(dirname "$0")" && pwd)
ROOT=$(cd "$HERE/../../.." && pwd)
export ODDNET_WORK=${1:-$(mktemp -d)}
export ACTINDEX="$ROOT/bin/actindex"
export JAVA_HOME=$(cd "$ROOT" && bin/find-jdk)
mkdir -p "$ODDNET_WORK" && cd "$ODDNET_WORK"
LOG="$ODDNET_WORK/checks.log"; : > "$LOG"
python3 "$HERE/make_data.py" | tee -a "$LOG"
A="$ACTINDEX"
b() { "$A" "$@" > /dev/null 2>> "$ODDNET_WORK/build.err"; }
rm -rf idx_*
b build --out idx_deep_model --model deep.safetensors --inputs train_inputs.npy --meta train_meta.csv
b build --out idx_deep_npz --activations deep_train_acts.npz --meta train_meta.csv
b build --out idx_deep_codes --codes deep_train_codes_packed.npy --code-layout 0:100,2:37,4:200,6:63 --meta train_meta.csv
b build --out idx_wide_model --model wide.safetensors --inputs train_inputs.csv --meta train_meta.csv
b build --out idx_wide_csv --activations wide_train_acts.csv --meta train_meta.csv
b build --out idx_wide_codes --codes wide_train_codes_int.npy --meta train_meta.csv
b build --out idx_thr --activations deep_train_acts.npz --threshold 0.5 --meta train_meta.csv
b build --out idx_med --activations deep_train_acts.npz --median --meta train_meta.csv
b build --out idx_sel_npz --activations deep_train_acts.npz --layers 6,2 --meta train_meta.csv
b build --out idx_sel_model --model deep.safetensors --inputs train_inputs.npy --layers 6,2 --meta train_meta.csv
for I in idx_mut:deep.safetensors idx_wmut:wide.safetensors; do
  b build --out ${I%%:*} --model ${I#*:} --inputs in_0.npy --meta meta_0.csv
  b add --index ${I%%:*} --inputs in_300.npy --meta meta_300.csv
  b add --index ${I%%:*} --inputs in_400.npy --meta meta_400.csv
done
b build --out idx_mutn --activations deep_acts_0.npz --meta meta_0.csv
b add --index idx_mutn --activations deep_acts_300.npz --meta meta_300.csv
b add --index idx_mutn --activations deep_acts_400.npz --meta meta_400.csv
P() { python3 "$HERE/$@" 2>&1 | tee -a "$LOG"; }
P check_nearest.py idx_deep_model idx_deep_npz idx_deep_codes idx_wide_model idx_wide_csv idx_wide_codes
P check_region.py idx_deep_model idx_wide_model
P check_census.py idx_deep_model idx_deep_npz idx_deep_codes idx_wide_model idx_wide_csv idx_wide_codes
P check_dupes.py idx_deep_model idx_deep_codes idx_wide_model idx_wide_codes
P check_refine.py idx_deep_model idx_deep_npz idx_wide_model idx_wide_csv
P check_misc.py
P check_rules.py
P check_sel.py
P check_compare.py
P check_fid.py
P check_ood.py
P check_ood_ref.py
P check_mut.py idx_mut full
for I in idx_mut idx_mutn idx_wmut; do b delete --index $I --keys delkeys.txt; b delete --index $I --where "grp = 3"; done
P check_mut.py idx_mut deleted
P check_refine_mut.py
P check_wmut.py
b compact --index idx_mut; b compact --index idx_wmut
P check_mut.py idx_mut deleted
P check_wmut.py
# the edge bundle (Java reader and generated C) against ood score
EDGE_JAR=$(ls "$ROOT"/edge/target/actindex-edge-*.jar | grep -v sources | head -1)
for N in deep:3:mean:2,6 wide:2:kth:0; do
  IFS=: read -r net k stat layers <<< "$N"
  rm -rf idx_edge_$net $net-c; cp -r idx_${net}_model idx_edge_$net
  b ood calibrate --index idx_edge_$net --inputs cal_inputs.npy -k $k --statistic $stat --layers $layers --score code
  b export-edge --index idx_edge_$net --out $net.edge --with-model --c-source $net-c
  gcc -O2 -std=c99 -I$net-c "$HERE/edge_main.c" $net-c/actindex_edge.c -o edge_$net -lm
  ./edge_$net < out_inputs.csv > edge_c_$net.txt
  "$JAVA_HOME/bin/java" -jar "$EDGE_JAR" $net.edge --inputs < out_inputs.csv | grep '^[0-9]' > edge_j_$net.txt
  "$A" ood score --index idx_edge_$net --inputs out_inputs.npy --format json > edge_ref_$net.json
  P check_edge.py edge_ref_$net.json edge_c_$net.txt edge_j_$net.txt
done
for I in idx_*; do "$A" check --index $I > /dev/null || echo "check $I: 1 bad" | tee -a "$LOG"; done
echo "checks: $(grep -c ' bad' "$LOG"), failing: $(grep ' bad' "$LOG" | grep -vc ' 0 bad')"
! grep ' bad' "$LOG" | grep -v ' 0 bad'
