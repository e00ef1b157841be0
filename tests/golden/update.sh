#!/usr/bin/env bash
# Regenerates tests/golden/expected/ from a build's program, for a change that means to
# alter an output (look at `git diff tests/golden/expected` before committing it).
#   bash tests/golden/update.sh [BUILD_DIR]   (default build)
set -eu
cd "$(dirname "$0")/../.."
build=${1:-build}
rm -rf tests/golden/expected
bash tests/golden/cases.sh "$PWD/$build/kilter" "$PWD" tests/golden/expected
echo "tests/golden/expected: $(ls tests/golden/expected | wc -l) files"
