# MaskedWorstBench JSON (-rf json, sample mode) -> Markdown rows, planner / masked scan per set, same run.
# Columns: masked scan and planner median ns per query (one sample = one invocation of the 256-query
# set, over 256); the ratio of the medians; min-max of the per-fork ratios (fork i's median over
# fork i's: the forks' spread); the ratio of the means ± the two 99.9% intervals (JMH's scoreError)
# combined in relative terms. Run: jq -r -f bench/masked-ratios.jq RESULT.json
def key: .params | {data, n, bits, queries, k, mask};
def r2: (. * 100 | round) / 100;
def hmedian: (add | sort_by(.[0])) as $h | ($h | map(.[1]) | add) as $t
  | reduce $h[] as $b ({c: 0, m: null}; (if .m == null and .c + $b[1] >= $t / 2 then .m = $b[0] else . end) | .c += $b[1]) | .m;
[.[] | select(.benchmark | endswith("MaskedWorstBench.knnSet"))]
| group_by(key) | .[]
| (map(select(.params.searcher == "planner"))[0]) as $p
| (map(select(.params.searcher == "maskscan"))[0]) as $s
| select($p != null and $s != null)
| ($p.primaryMetric) as $pm | ($s.primaryMetric) as $sm
| ($pm.scorePercentiles."50.0" / $sm.scorePercentiles."50.0") as $med
| ([$pm.rawDataHistogram, $sm.rawDataHistogram] | transpose | map((.[0] | hmedian) / (.[1] | hmedian) | r2)) as $forks
| ($pm.score / $sm.score) as $r
| ($r * ((($pm.scoreError / $pm.score) | . * .) + (($sm.scoreError / $sm.score) | . * .) | sqrt)) as $e
| "| \($p.params.data) | \($p.params.bits) | \($p.params.queries) | \($p.params.k) | \($sm.scorePercentiles."50.0" | round) | \($pm.scorePercentiles."50.0" | round) | **\($med | r2)×** | \($forks | min)-\($forks | max)× | \($r | r2)× ± \($e | r2) |"
