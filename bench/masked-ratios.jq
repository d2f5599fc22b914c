# MaskedWorstBench JSON (-rf json, sample mode) -> Markdown rows, planner / masked scan per set.
# Run: jq -r -f bench/masked-ratios.jq RESULT.json
# Columns: data, bits, queries, k; masked scan and planner median ns per query (one sample = one
# invocation of the 256-query set, over 256); the ratio of the medians; min-max of the per-fork
# ratios (the forks' spread); then
#   searcher=both (same fork, iterations alternate, planner first): min-max of the ratios of
#     adjacent iteration pairs;
#   searcher=planner / maskscan (a fork each): the ratio of the means ± the two 99.9% intervals
#     (JMH's scoreError) combined in relative terms.
def key: .params | {data, n, bits, queries, k, mask};
def r2: (. * 100 | round) / 100;
# median of a list of iterations, each a histogram [[value, count], ...]
def hmedian: (add | sort_by(.[0])) as $h | ($h | map(.[1]) | add) as $t
  | reduce $h[] as $b ({c: 0, m: null}; (if .m == null and .c + $b[1] >= $t / 2 then .m = $b[0] else . end) | .c += $b[1]) | .m;
def evens: [to_entries[] | select(.key % 2 == 0) | .value];
def odds: [to_entries[] | select(.key % 2 == 1) | .value];
def row($p; $s; $med; $forks; $last; $mode):
  "| \(.params.data) | \(.params.bits) | \(.params.queries) | \(.params.k) | \($s | round) | \($p | round) | **\($med | r2)×** | \($forks | min)-\($forks | max)× | \($last) | \($mode) |";
[.[] | select(.benchmark | endswith("MaskedWorstBench.knnSet"))]
| group_by(key) | sort_by(.[0].params | [.data, (.bits | tonumber), .queries, (.k | tonumber)]) | .[]
| ( (map(select(.params.searcher == "both"))[0]) as $b
    | select($b != null)
    | $b.primaryMetric.rawDataHistogram as $h
    | ($h | map(evens) | add | hmedian) as $p | ($h | map(odds) | add | hmedian) as $s
    | ($h | map((evens | hmedian) / (odds | hmedian) | r2)) as $forks
    | ([$h[] | . as $f | range(0; length / 2 | floor) | ([$f[2 * .]] | hmedian) / ([$f[2 * . + 1]] | hmedian) | r2]) as $pairs
    | $b | row($p; $s; $p / $s; $forks; "\($pairs | min)-\($pairs | max)×"; "same fork, \($h | length) forks")),
  ( (map(select(.params.searcher == "planner"))[0]) as $pl
    | (map(select(.params.searcher == "maskscan"))[0]) as $sc
    | select($pl != null and $sc != null)
    | $pl.primaryMetric as $pm | $sc.primaryMetric as $sm
    | ($pm.scorePercentiles."50.0") as $p | ($sm.scorePercentiles."50.0") as $s
    | ([$pm.rawDataHistogram, $sm.rawDataHistogram] | transpose | map((.[0] | hmedian) / (.[1] | hmedian) | r2)) as $forks
    | ($pm.score / $sm.score) as $r
    | ($r * ((($pm.scoreError / $pm.score) | . * .) + (($sm.scoreError / $sm.score) | . * .) | sqrt)) as $e
    | $pl | row($p; $s; $p / $s; $forks; "means \($r | r2)× ± \($e | r2)"; "a fork each, \($pm.rawDataHistogram | length) forks"))
