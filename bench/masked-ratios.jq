# MaskedWorstBench JSON (-rf json) -> Markdown rows: planner / masked scan per set, same run.
# ratio = planner score / maskscan score; ± = the two 99.9% intervals (JMH's scoreError) combined
# in relative terms; forks = the per-fork mean ratios (planner fork i / maskscan fork i), min-max.
# Run: jq -r -f bench/masked-ratios.jq RESULT.json
def key: .params | {data, n, bits, queries, k, mask};
def fmt(x): (x * 100 | round) / 100;
[.[] | select(.benchmark | endswith("MaskedWorstBench.knnSet"))]
| group_by(key) | .[]
| (map(select(.params.searcher == "planner"))[0]) as $p
| (map(select(.params.searcher == "maskscan"))[0]) as $s
| select($p != null and $s != null)
| ($p.primaryMetric) as $pm | ($s.primaryMetric) as $sm
| ($pm.score / $sm.score) as $r
| ($r * ((($pm.scoreError / $pm.score) | . * .) + (($sm.scoreError / $sm.score) | . * .) | sqrt)) as $e
| ([$pm.rawData, $sm.rawData] | transpose | map((.[0] | add / length) / (.[1] | add / length))) as $forks
| "| \($p.params.data) | \($p.params.bits) | \($p.params.queries) | \($p.params.k) | \($sm.score | round) ± \($sm.scoreError | round) | \($pm.score | round) ± \($pm.scoreError | round) | \(fmt($r))× ± \(fmt($e)) | \($forks | map(fmt(.)) | min)-\($forks | map(fmt(.)) | max)× |"
