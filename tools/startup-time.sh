#!/usr/bin/env bash
# Start-up of the command line with and without bin/actindex's class archive: for each of a few
# commands on the demo's index, N runs (default 8) alternating `bin/actindex COMMAND` and the same
# with ACTINDEX_CLASS_ARCHIVE=off, each under /usr/bin/time, pinned to one core (CORE, default 1).
# Prints medians of wall and CPU seconds as a Markdown table (docs/benchmarks.md, "Start-up of the
# command line").
#   tools/startup-time.sh DEMO_DIR     (DEMO_DIR from `bin/actindex demo --out DEMO_DIR`)
set -eu
here=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
demo=${1:?usage: tools/startup-time.sh DEMO_DIR}
log=$(mktemp)
trap 'rm -f "$log"' EXIT
"$here/bin/actindex" --version >/dev/null # builds the jar and records the archive first
cmds=("--version" "info --index $demo/index" "nearest --index $demo/index --inputs $demo/incoming.npy --rows 0:5 -k 5"
  "ood score --index $demo/index --inputs $demo/incoming.npy --rows 0:50" "dupes --index $demo/index --radius 1")
for c in "${cmds[@]}"; do
  for _ in $(seq "${N:-8}"); do
    # shellcheck disable=SC2086 # the command's words split on purpose
    /usr/bin/time -f "%e %U %S on|$c" -a -o "$log" taskset -c "${CORE:-1}" "$here/bin/actindex" $c >/dev/null 2>&1
    # shellcheck disable=SC2086
    /usr/bin/time -f "%e %U %S off|$c" -a -o "$log" env ACTINDEX_CLASS_ARCHIVE=off taskset -c "${CORE:-1}" "$here/bin/actindex" $c >/dev/null 2>&1
  done
done
python3 - "$log" <<'PY'
import collections, statistics as st, sys
d = collections.defaultdict(list)
for line in open(sys.argv[1]):
    if '|' not in line or line.startswith('Command'):
        continue
    times, cmd = line.rstrip('\n').split('|', 1)
    wall, user, sys_, kind = times.split()
    d[(cmd.split(' --')[0] if not cmd.startswith('--') else cmd, kind)].append((float(wall), float(user) + float(sys_)))
print('| command | wall s, no archive | wall s, archive | CPU s, no archive | CPU s, archive |')
print('|---|---:|---:|---:|---:|')
for cmd in dict.fromkeys(k[0] for k in d):
    on, off = d[(cmd, 'on')], d[(cmd, 'off')]
    print(f"| {cmd} | {st.median(x[0] for x in off):.2f} | {st.median(x[0] for x in on):.2f} | "
          f"{st.median(x[1] for x in off):.2f} | {st.median(x[1] for x in on):.2f} |")
PY
