#!/usr/bin/env bash
# The bundled feeder files and the synthetic feeder generator.
#   bash tests/cli_feeders.sh KILTER_BINARY SOURCE_DIR
# Checks that:
#  - every feeder file under feeders/ passes `kilter check` (exit 0);
#  - kl_synth output passes `kilter check` (2,000 buses, and a few small sizes where
#    the generator's layering degenerates);
#  - kl_synth is reproducible (same buses and seed: identical bytes; another seed: different);
#  - kl_synth writes exactly N buses (N-1 sections from a single source) and rejects bad arguments;
#  - the demo feeder is what scripts/make_demo.py writes (when python3 is present).
set -u
kilter=$1
src=$2
synth="$(dirname "$kilter")/kl_synth"
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
fails=0

fail() { echo "FAIL: $*"; fails=$((fails + 1)); }

check_file() {
    if ! "$kilter" check "$1" >"$work/check.out" 2>&1; then
        fail "kilter check $1"
        sed 's/^/    /' "$work/check.out" | head -20
    fi
}

# 1. Every feeder file under feeders/.
count=0
while IFS= read -r f; do
    check_file "$f"
    count=$((count + 1))
done < <(find "$src/feeders" -name '*.yaml' | sort)
[ "$count" -ge 5 ] || fail "expected at least 5 feeder files under feeders/, found $count"

# 2. Synthetic feeders.
[ -x "$synth" ] || { fail "kl_synth not found beside $kilter"; echo "$fails failure(s)"; exit 1; }
for n in 2 3 12 2000; do
    "$synth" --buses "$n" --seed 11 -o "$work/synth-$n.yaml" || fail "kl_synth --buses $n failed"
    check_file "$work/synth-$n.yaml"
    sections=$(grep -c '^  - {name: s[0-9]*, from:' "$work/synth-$n.yaml")
    [ "$sections" -eq $((n - 1)) ] || fail "kl_synth --buses $n wrote $sections sections, expected $((n - 1))"
done

# 3. Reproducible from the seed, through -o and through standard output alike.
"$synth" --buses 2000 --seed 11 >"$work/again.yaml" || fail "kl_synth to standard output failed"
cmp -s "$work/synth-2000.yaml" "$work/again.yaml" || fail "kl_synth --seed 11 twice gave different files"
"$synth" --buses 2000 --seed 12 -o "$work/other.yaml" || fail "kl_synth --seed 12 failed"
cmp -s "$work/synth-2000.yaml" "$work/other.yaml" && fail "kl_synth seeds 11 and 12 gave the same file"

# 4. Bad arguments: a message and exit status 2, and no output file left behind.
for args in "--buses 1 --seed 1" "--buses 10x --seed 1" "--buses 10" "--seed 1" "--buses 10 --seed -3" "--colour red"; do
    # shellcheck disable=SC2086
    "$synth" $args -o "$work/bad.yaml" 2>"$work/err.txt"
    rc=$?
    [ "$rc" -eq 2 ] || fail "kl_synth $args: exit $rc, expected 2"
    [ -s "$work/err.txt" ] || fail "kl_synth $args: no message"
    [ -e "$work/bad.yaml" ] && fail "kl_synth $args: left an output file"
done
"$synth" --buses 10 --seed 1 -o "$work/no-such-dir/x.yaml" 2>/dev/null && fail "kl_synth wrote into a missing directory"

# 5. The committed demo feeder is the generator's output.
if command -v python3 >/dev/null 2>&1; then
    python3 "$src/scripts/make_demo.py" >"$work/demo.yaml" || fail "scripts/make_demo.py failed"
    cmp -s "$work/demo.yaml" "$src/feeders/demo/quillmere-f3.yaml" ||
        fail "feeders/demo/quillmere-f3.yaml differs from scripts/make_demo.py's output: run it again"
else
    echo "note: python3 not found; demo generator comparison skipped"
fi

if [ "$fails" -ne 0 ]; then
    echo "$fails failure(s)"
    exit 1
fi
echo "cli_feeders: all checks passed ($count feeder files)"
