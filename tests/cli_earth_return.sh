#!/usr/bin/env bash
# The earth-return option of every command that derives line constants (lines, flow, study,
# rebalance): --earth-return complete|modified, and the old spelling --carson full|approx kept
# for one release.
#   bash tests/cli_earth_return.sh KILTER_BINARY SOURCE_DIR
# Checks, for each command, that:
#  - --earth-return complete gives the default's bytes and --earth-return modified other bytes
#    (Carson's complete series and its first terms differ on a real feeder: the modified form
#    drops every term of P and Q past the first, W. H. Kersting, Distribution System Modeling
#    and Analysis, section 4.1.2, from memory);
#  - --carson full and --carson approx give the same bytes as complete and modified, and one
#    line on standard error naming the new spelling and the release it goes in (0.2);
#  - an unknown value of either spelling, or none, is refused with exit 64 and a message that
#    names the accepted values; a command without line constants refuses --carson as unknown;
#  - kilter lines' JSON names the form under "earth_return" (complete or modified), and no
#    "carson" key is left.
set -u
kilter=$1
src=$2
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
fails=0
fail() { echo "FAIL: $*"; fails=$((fails + 1)); }
ieee="$src/feeders/reference/ieee-13-node.yaml"

# run NAME CMD ARGS...: standard output to NAME.out, standard error to NAME.err, exit code echoed.
run() {
    name=$1; shift
    "$kilter" "$@" "$ieee" >"$work/$name.out" 2>"$work/$name.err"
    echo $?
}

for cmd in lines flow study rebalance; do
    fmt=csv # CSV: the rebalancing plan's text carries its run time, its CSV does not
    [ "$(run "$cmd-default" "$cmd" --format $fmt)" = 0 ] || fail "$cmd: default exited non-zero"
    [ "$(run "$cmd-complete" "$cmd" --format $fmt --earth-return complete)" = 0 ] ||
        fail "$cmd --earth-return complete: $(cat "$work/$cmd-complete.err")"
    [ "$(run "$cmd-modified" "$cmd" --format $fmt --earth-return modified)" = 0 ] ||
        fail "$cmd --earth-return modified: $(cat "$work/$cmd-modified.err")"
    for f in complete modified; do
        [ -s "$work/$cmd-$f.err" ] && fail "$cmd --earth-return $f wrote to standard error: $(cat "$work/$cmd-$f.err")"
    done
    cmp -s "$work/$cmd-default.out" "$work/$cmd-complete.out" ||
        fail "$cmd: --earth-return complete is not the default"
    cmp -s "$work/$cmd-complete.out" "$work/$cmd-modified.out" &&
        fail "$cmd: --earth-return complete and modified gave the same output"

    # The old spelling, both ways of giving the value.
    [ "$(run "$cmd-full" "$cmd" --format $fmt --carson full)" = 0 ] || fail "$cmd --carson full exited non-zero"
    [ "$(run "$cmd-approx" "$cmd" --format $fmt --carson=approx)" = 0 ] || fail "$cmd --carson=approx exited non-zero"
    cmp -s "$work/$cmd-full.out" "$work/$cmd-complete.out" || fail "$cmd: --carson full differs from --earth-return complete"
    cmp -s "$work/$cmd-approx.out" "$work/$cmd-modified.out" || fail "$cmd: --carson approx differs from --earth-return modified"
    for old in full:complete approx:modified; do
        e="$work/$cmd-${old%%:*}.err"
        [ "$(wc -l <"$e")" -eq 1 ] || fail "$cmd --carson ${old%%:*}: expected one line on standard error, got: $(cat "$e")"
        grep -q "deprecated" "$e" && grep -q -- "--earth-return ${old#*:}" "$e" && grep -q "kilter 0\.2" "$e" ||
            fail "$cmd --carson ${old%%:*}: the note does not name --earth-return ${old#*:} and the release it goes in: $(cat "$e")"
    done

    # Refusals: exit 64, the accepted values named, nothing on standard output.
    [ "$(run "$cmd-bad" "$cmd" --earth-return exact)" = 64 ] || fail "$cmd --earth-return exact: not a usage error (64)"
    grep -q "exact" "$work/$cmd-bad.err" && grep -q "complete" "$work/$cmd-bad.err" && grep -q "modified" "$work/$cmd-bad.err" ||
        fail "$cmd --earth-return exact: message does not name the value and the accepted ones: $(cat "$work/$cmd-bad.err")"
    [ -s "$work/$cmd-bad.out" ] && fail "$cmd --earth-return exact: printed output anyway"
    [ "$(run "$cmd-badold" "$cmd" --carson exact)" = 64 ] || fail "$cmd --carson exact: not a usage error (64)"
    grep -q "full or approx" "$work/$cmd-badold.err" && grep -q -- "--earth-return complete|modified" "$work/$cmd-badold.err" ||
        fail "$cmd --carson exact: message does not name the accepted values and the new spelling: $(cat "$work/$cmd-badold.err")"
    "$kilter" "$cmd" "$ieee" --earth-return >/dev/null 2>"$work/$cmd-none.err"
    [ $? -eq 64 ] || fail "$cmd --earth-return without a value: not a usage error (64)"
    grep -q "complete|modified" "$work/$cmd-none.err" || fail "$cmd --earth-return without a value: $(cat "$work/$cmd-none.err")"
done

# check derives no line constants: neither spelling is its option.
[ "$(run check-old check --carson full)" = 64 ] || fail "check --carson full: not a usage error (64)"
grep -q "unknown option '--carson'" "$work/check-old.err" || fail "check --carson: $(cat "$work/check-old.err")"
[ "$(run check-new check --earth-return complete)" = 64 ] || fail "check --earth-return: not a usage error (64)"

# The JSON metadata key.
"$kilter" lines "$ieee" --format json >"$work/c.json" && "$kilter" lines "$ieee" --format json --earth-return modified >"$work/m.json" ||
    fail "lines --format json exited non-zero"
grep -q '"earth_return": "complete"' "$work/c.json" || fail "lines JSON: no \"earth_return\": \"complete\""
grep -q '"earth_return": "modified"' "$work/m.json" || fail "lines JSON: no \"earth_return\": \"modified\""
grep -q '"carson"' "$work/c.json" "$work/m.json" && fail "lines JSON still has a \"carson\" key"

# The help of each command shows the new spelling only.
for cmd in lines flow study rebalance; do
    "$kilter" "$cmd" --help >"$work/help" || fail "$cmd --help"
    grep -q -- "--earth-return complete|modified" "$work/help" || fail "$cmd --help lacks --earth-return"
    grep -q -- "--carson" "$work/help" && fail "$cmd --help still shows --carson"
done

[ $fails -eq 0 ] && echo "cli_earth_return: all checks passed"
exit $((fails > 0))
