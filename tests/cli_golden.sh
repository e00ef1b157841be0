#!/usr/bin/env bash
# Byte-identity of the program's outputs: every case of tests/golden/cases.sh (check, lines,
# flow, study, rebalance on the demo and reference feeders, every format, the HTML report,
# the complaint check, the written feeder, two errors) must equal the files kept in
# tests/golden/expected/.  A change that means to alter an output regenerates them with
# `bash tests/golden/update.sh BUILD_DIR` and shows the difference in its commit.
#   bash tests/cli_golden.sh KILTER_BINARY SOURCE_DIR
set -u
kilter=$1
src=$2
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
bash "$src/tests/golden/cases.sh" "$kilter" "$src" "$work/out" || { echo "FAIL: cases.sh exited $?"; exit 1; }
if ! diff -r "$src/tests/golden/expected" "$work/out" >"$work/diff"; then
  echo "FAIL: outputs differ from tests/golden/expected (first 60 lines of the difference):"
  head -60 "$work/diff"
  exit 1
fi
echo "ok: $(ls "$work/out" | wc -l) output files byte-identical"
