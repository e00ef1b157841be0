#!/usr/bin/env bash
# The main job on the bundled demo feeder: installs what is missing, builds kilter,
# then runs the unbalance study of Quillmere feeder 3 and writes its HTML report.
# Extra arguments are passed to `kilter study` (e.g. --format csv).
set -eu
cd "$(dirname "$0")/.."
bash scripts/setup.sh
cmake -S . -B build -DCMAKE_BUILD_TYPE=Release -DKILTER_TESTS=OFF >/dev/null
cmake --build build -j "$(nproc 2>/dev/null || echo 2)" >/dev/null
feeder=feeders/demo/quillmere-f3.yaml
./build/kilter check "$feeder"
echo
./build/kilter study "$feeder" --html quillmere-f3-study.html "$@"
echo
echo "HTML report written to quillmere-f3-study.html"
