#!/usr/bin/env bash
# Our examples are our own: no published test-feeder data outside feeders/reference/ and tests/.
#   bash tests/cli_own_examples.sh KILTER_BINARY SOURCE_DIR
# The docs (README.md, DEVELOPERS.md, feeders/README.md, docs/), the demo feeder and the script
# that writes it, the program's help texts and manual page, and the library's sources must
# illustrate with the invented Quillmere scenario, never with the IEEE PES 13-node test feeder,
# whose data live in feeders/reference/ and tests/ as check values with their source named.
# Looked for, in every text file of the project outside feeders/reference/ and tests/:
#  - the published phase impedance and susceptance elements of configurations 601-607 (IEEE
#    PES 13-node data sheet, "Line Configurations"), read from tests/ref_ieee13.c, the one place
#    the tests keep them, so the list cannot drift from the check values;
#  - the data sheet's cables and pole top: configuration 606's 250 kcmil AA concentric-neutral
#    cable with 13 #14 strands, 1.29 in over the neutral ("cn250"), configuration 607's 1/0 AA
#    tape-shielded cable, 0.88 in over a 5 mil tape ("ts10"), spacing 500's crossarm (phases
#    at x 0 / 2.5 / 7 ft, neutral at 4 ft) and 505's two-phase arm (0 and 7 ft), 510's neutral
#    0.5 ft beside a single phase, 515's cables 0.5 ft (6 in) apart;
#  - the feeder's bus names (650, 632, 633, 634, 645, 646, 652, 671, 675, 680, 684, 692, 611,
#    rg60, and reg1 for its regulator) where they stand as names: quoted, in a section name,
#    after bus/node/--at or a YAML key, or in an element name such as cap-675;
#  - its loads as P + jQ (160 + j110, 17 + j10, ...) and its regulator's settings as keys
#    (pt_ratio 20, ct_primary 700 A, compensator 3 V and 9 V), read from tests/ref_ieee13.c.
# The same patterns are run over kilter's --help texts (every command), which no file holds.
set -u
kilter=$1
src=$2
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
fails=0
fail() { echo "FAIL: $*"; fails=$((fails + 1)); }

ref="$src/tests/ref_ieee13.c"
[ -r "$ref" ] || { echo "FAIL: cannot read $ref"; exit 1; }

# The published matrix elements, each also without its trailing zeros (5.6990 as 5.699).
nums=$(sed -n '/ref_ieee13_configs\[/,/^};/p' "$ref" | grep -oE '[0-9]+\.[0-9]{4}' | sort -u)
[ "$(echo "$nums" | wc -l)" -ge 50 ] || fail "read only $(echo "$nums" | wc -l) matrix elements from $ref"
alt=$(for n in $nums; do echo "$n"; m=$(echo "$n" | sed -E 's/0+$//'); [ "$m" != "$n" ] && echo "$m"; done |
      sort -u | sed 's/\./\\./g' | paste -sd'|')
matrix="(^|[^0-9.])($alt)([^0-9]|$)"

buses='650|632|633|634|645|646|652|671|675|680|684|692|611'
busname="[\`\"']($buses|rg60|RG60)[\`\"']|(^|[^0-9.])($buses|rg60|RG60)-($buses)([^0-9]|$)|(^|[^0-9.])($buses)-(rg60|RG60)"
busname="$busname|(\\b(bus|buses|node|nodes):? +|--at[= ]+)[\`\"']?($buses)\\b|\\b(bus|from|to|at|section): *[\`\"']?($buses)\\b"
busname="$busname|\\b(cap|load|sw|xf|xfm|reg|tap)-($buses)\\b|\\b(rg60|RG60|reg1)\\b"

# The published spot and distributed loads as P + jQ (IEEE PES 13-node data sheet, "Spot Load
# Data" and "Distributed Load Data", as tests/ref_ieee13.c keeps them: kW per phase, then kvar).
loads=$(sed -n '/ref_ieee13_loads\[/,/ref_ieee13_distributed/p' "$ref" |
        grep -oE '\{[0-9]+, [0-9]+, [0-9]+\}, \{[0-9]+, [0-9]+, [0-9]+\}' | tr -d '{},' |
        awk '{ for (k = 1; k <= 3; k++) if ($k > 0) print $k " \\+ j" $(k + 3) }' | sort -u | paste -sd'|')
[ "$(echo "$loads" | tr '|' '\n' | wc -l)" -ge 10 ] || fail "read only these published loads from $ref: $loads"
load="(^|[^0-9.])($loads)([^0-9.]|$)"
# The published regulator settings ("Regulator Data": PT ratio, CT primary, compensator R and X),
# as YAML keys would give them.
reg=$(grep -oE 'ref_ieee13_reg = \{[^}]*\}' "$ref" | tr -d '{},' | awk '{ print $4, $5, $7, $8 }')
set -- $reg
[ $# -eq 4 ] || fail "could not read the published regulator settings from $ref"
regulator="pt_ratio: *$1\\b|ct_primary: *$2 ?A|compensator_r: *$3 V|compensator_x: *\\{?[^}]*\\b$4 V"
set --

cable='\bcn250\b|\bts10\b|1\.29 ?in|0\.88 ?in|strands: *13\b|13 ?x ?#14'
spacing='x: *7 ft|\{id: *n, *x: *4 ft|\{id: *"2", *x: *2\.5 ft|\b0 ?/ ?2\.5 ?/ ?7\b|\{id: *n, *x: *0\.5 ft|x: *(6 in|0\.5 ft), *depth'

# Every text file of the project outside feeders/reference/ and tests/ (build trees left out).
files="$work/files"
for top in README.md DEVELOPERS.md CMakeLists.txt cmake docs feeders include scripts src; do
    [ -e "$src/$top" ] && find "$src/$top" -path "$src/feeders/reference" -prune -o -type f \
        \( -name '*.md' -o -name '*.1' -o -name '*.yaml' -o -name '*.py' -o -name '*.sh' -o -name '*.c' \
           -o -name '*.h' -o -name '*.in' -o -name '*.txt' -o -name 'README*' \) -print
done | sort -u >"$files"
[ "$(wc -l <"$files")" -ge 20 ] || fail "found only $(wc -l <"$files") files to look at under $src"
grep -q 'feeders/README.md$' "$files" && grep -q 'feeders/demo/quillmere-f3.yaml$' "$files" &&
    grep -q 'docs/kilter.1$' "$files" || fail "the file list misses the format reference, the demo or the manual page"

# look WHAT REGEX: every match, file:line, is a failure.
look() {
    what=$1 re=$2
    xargs -d '\n' grep -nE -- "$re" <"$files" >"$work/hits" 2>/dev/null
    while IFS= read -r hit; do
        fail "$what: ${hit#"$src/"}"
    done <"$work/hits"
}
look "published 13-node matrix element" "$matrix"
look "published 13-node cable" "$cable"
look "published 13-node pole-top spacing" "$spacing"
look "13-node bus name" "$busname"
look "published 13-node load" "$load"
look "published 13-node regulator setting" "$regulator"

# The program's help texts.
for cmd in check lines flow study rebalance; do
    "$kilter" "$cmd" --help >"$work/help-$cmd" 2>&1 || fail "kilter $cmd --help exited $?"
done
"$kilter" --help >"$work/help-top" 2>&1
for re in "$matrix" "$cable" "$spacing" "$busname" "$load" "$regulator"; do
    grep -nE -- "$re" "$work"/help-* && fail "a --help text quotes published 13-node data (above)"
done

# The patterns must find what they are for (a check that cannot fail is no check): every line
# of this probe holds published 13-node data and must be caught.
cat >"$work/probe.md" <<'EOF'
impedance: {aa: 1.3425 + j0.5124 ohm/mi}
susceptance: {aa: 88.9912 uS/mi}
`0.3 + j2.1 ohm`, `1.3425 - j0.0143 ohm/mi`
a row 601,a,a,0.3465...,1.0179...,6.30...
published B 5.699 uS/mi
- {name: cn250, kind: concentric-neutral, conductor: 250AA}
  diameter_over_neutral: 1.29 in
  strands: 13
- {name: ts10, kind: tape-shielded, conductor: 1/0AA, tape_diameter: 0.88 in, tape_thickness: 5 mil}
- {id: "2", x: 2.5 ft, height: 28 ft}
- {id: "3", x: 7 ft, height: 28 ft}
- {id: n, x: 4 ft, height: 24 ft}
- {id: n, x: 0.5 ft, height: 24 ft}
- {id: "2", x: 6 in, depth: 4 ft}
"buses": [{"name": "632", "base_ln_volts": 2401.78}]
"sections": [{"name": "632-671"}]
{"name": "cap-675"}
"regulators": [{"name": "reg1"}]
the voltage at bus 671
kilter study FEEDER --at 692
- {from: 650, to: rg60, regulator: r1}
the RG60 output node
written after the number (`500 ft`, `0.1859 ohm/mi`, `160 + j110 kVA`)
  - {name: dist-1, section: s1, power: {a: 17 + j10 kVA}}
    pt_ratio: 20
    ct_primary: 700 A
    compensator_r: 3 V
    compensator_x: {a: 9 V, b: 9 V, c: 9 V}
EOF
n=0
while IFS= read -r line; do
    n=$((n + 1))
    printf '%s\n' "$line" | grep -qE -- "$matrix|$cable|$spacing|$busname|$load|$regulator" || fail "probe line $n not caught: $line"
done <"$work/probe.md"
[ "$n" -ge 20 ] || fail "the probe has $n lines"
cat >"$work/clean.md" <<'EOF'
675 bytes/bus; 0.9 ft; 1.0 pu at 632 buses per second; crossarm-10ft at x 0 / 3.5 / 9.5 ft
impedance 1.34 + j0.51 ohm/mi; a 2.5 ft arm; strands: 18; 1.46 in; Quillmere sub to m01
power: {a: 48 + j15.8 kVA, b: 1160 + j110 kVA}; pt_ratio: 60; ct_primary: 300 A; compensator_x: 4 V
EOF
for re in "$matrix" "$cable" "$spacing" "$busname" "$load" "$regulator"; do
    grep -nE -- "$re" "$work/clean.md" && fail "a pattern matches ordinary text (above)"
done

[ $fails -eq 0 ] && echo "cli_own_examples: all checks passed"
exit $((fails > 0))
