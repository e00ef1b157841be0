#!/usr/bin/env bash
# The byte-identity cases: every command's output on the demo and reference feeders,
# in every format, written to OUTDIR as one file per case.  The figures are not checked
# here against any source (the other tests do that); the point is that a change meant to
# move code around changes no output at all.
#   bash tests/golden/cases.sh KILTER_BINARY SOURCE_DIR OUTDIR
# Run-time figures (the advisor's elapsed seconds) are replaced by "<s>" first: they are
# the one output that differs from run to run.
set -u
kilter=$1
src=$2
out=$3
mkdir -p "$out"
demo="$src/feeders/demo/quillmere-f3.yaml"
ieee13="$src/feeders/reference/ieee-13-node.yaml"
ref4a="$src/feeders/reference/ieee-4-node-gry-gry-balanced.yaml"
ref4b="$src/feeders/reference/ieee-4-node-gry-gry-unbalanced.yaml"
ref4c="$src/feeders/reference/ieee-4-node-delta-gry-unbalanced.yaml"

# One case: NAME, then the command line (run from SOURCE_DIR so paths print alike).
# NAME.out holds standard output, NAME.err standard error and the exit code; files a
# case writes itself are NAME.txt, NAME.html, NAME.yaml.
case_() {
  name=$1; shift
  (cd "$src" && "$kilter" "$@") >"$out/$name.out" 2>"$out/$name.err"
  echo "exit $?" >>"$out/$name.err"
  sed -i -E -e 's/([0-9]+ load flows, )[0-9.]+ s/\1<s> s/; s/(greedy plan after )[0-9.]+ s/\1<s> s/' \
    -e 's/"seconds": [0-9.eE+-]+/"seconds": "<s>"/; s/"seconds_greedy": [0-9.eE+-]+/"seconds_greedy": "<s>"/' \
    "$out/$name.out"
  for extra in "$out/$name".txt "$out/$name".html; do
    [ -f "$extra" ] && sed -i -E -e 's/([0-9]+ load flows, )[0-9.]+ s/\1<s> s/; s/(greedy plan after )[0-9.]+ s/\1<s> s/' \
      -e 's/[0-9]+ load flows in [0-9.]+ s/<n> load flows in <s> s/' "$extra"
  done
  return 0
}

for f in demo ieee13 ref4a ref4b ref4c; do
  file=${!f}
  rel=${file#"$src/"}
  for fmt in table csv json; do
    case_ "$f-check-$fmt" check --format $fmt "$rel"
    case_ "$f-lines-$fmt" lines --format $fmt "$rel"
    case_ "$f-flow-$fmt" flow --format $fmt "$rel"
    case_ "$f-study-$fmt" study --format $fmt "$rel"
  done
  case_ "$f-lines-modified" lines --earth-return modified "$rel"
  case_ "$f-flow-sections" flow --table sections "$rel"
  case_ "$f-flow-sections-csv" flow --format csv --table sections "$rel"
  case_ "$f-flow-nodal-json" flow --solver nodal --format json "$rel"
  case_ "$f-flow-scaled" flow --load-scale 0.6 --earth-return modified "$rel"
  for t in buses sections neutrals runs contributors; do
    case_ "$f-study-csv-$t" study --format csv --table $t "$rel"
  done
done

# kilter 0.1's spelling of the earth-return option (goes in 0.2): the modified form's bytes,
# and one line on standard error.
case_ demo-lines-carson-old lines --carson approx feeders/demo/quillmere-f3.yaml

# The study's HTML report and the complaint check.
case_ demo-study-html study -o "$out/demo-study-html.txt" --html "$out/demo-study-html.html" --map neutral feeders/demo/quillmere-f3.yaml
case_ ieee13-study-html study -o "$out/ieee13-study-html.txt" --html "$out/ieee13-study-html.html" feeders/reference/ieee-13-node.yaml
case_ demo-at study --at kestrel-8 --measured-line 12400,12520,12310 feeders/demo/quillmere-f3.yaml
case_ demo-at-json study --format json --at brantle-480 --measured-phase 276,279,271 feeders/demo/quillmere-f3.yaml
case_ demo-at-plain study --at m10 feeders/demo/quillmere-f3.yaml
case_ ieee13-at study --at 671 --measured-phase 2390,2530,2430 --tolerance 1 feeders/reference/ieee-13-node.yaml
case_ demo-study-tight study --limit-unbalance 1 --level-unbalance 0.5 --contributors 3 --range B feeders/demo/quillmere-f3.yaml

# The rebalancing advisor: table, CSV, JSON, the items, the written feeder, the report.
# A long time limit on every search: under the default 30 s a loaded machine running the
# sanitizer build can stop the search early or skip the plan's exact (subset) ordering, whose
# 2^moves load flows must fit in the time left (plan_order.c); the output does not show it.
case_ demo-rebalance rebalance --time-limit 900 feeders/demo/quillmere-f3.yaml
case_ demo-rebalance-csv rebalance --time-limit 900 --format csv feeders/demo/quillmere-f3.yaml
case_ demo-rebalance-json rebalance --time-limit 900 --format json feeders/demo/quillmere-f3.yaml
case_ demo-rebalance-items rebalance --items feeders/demo/quillmere-f3.yaml
case_ demo-rebalance-mixed rebalance --time-limit 900 --objective vuf=1,losses=0.5 --levels 1:1,0.4:0.5 --max-moves 4 feeders/demo/quillmere-f3.yaml
case_ demo-rebalance-feeder rebalance --time-limit 900 -o "$out/demo-rebalance-feeder.txt" --max-moves 3 --write-feeder "$out/demo-rebalance-feeder.yaml" feeders/demo/quillmere-f3.yaml
case_ demo-rebalance-html rebalance --time-limit 900 -o "$out/demo-rebalance-html.txt" --max-moves 3 --html "$out/demo-rebalance-html.html" feeders/demo/quillmere-f3.yaml
case_ ieee13-rebalance rebalance --time-limit 900 feeders/reference/ieee-13-node.yaml
case_ ieee13-rebalance-json rebalance --time-limit 900 --format json --objective vuf feeders/reference/ieee-13-node.yaml

# Errors: a bad file, an unknown bus.
case_ bad-check check tests/data/broken-phase.yaml
case_ bad-at study --at nowhere feeders/demo/quillmere-f3.yaml
exit 0
