#!/usr/bin/env bash
# reference-runs.sh BIN OUT [SERIES_DIR]
#
# The four runs whose outputs a change that keeps every bit must leave
# byte-identical: the demo, both real urethane series (absorbance exports,
# times from the file names) and the benchmarks' 2000 × 3001 single-beam
# series with its blank. SERIES_DIR holds series.csv and blank.csv; when it
# is missing they are written there first by
#   go test ./io/pipeline -run TestWriteBenchmarkSeries -args -series-out DIR
# Compare two OUT folders with: diff -r --exclude manifest.json OUT1 OUT2
# (the manifests differ in their start times, and the logs in the results
# folder they name). REAL_DATA names the real-data folder when the
# checkout is not beside shared/ (a worktree).
set -euo pipefail
bin=$(realpath "$1"); out=$(realpath -m "$2"); series=${3:-/tmp/bandsolve-series-2000x3001}
here=$(cd "$(dirname "$0")/../.." && pwd)
real=${REAL_DATA:-$here/../shared/real-data}/urethane-atr # read-only, beside the clone
if [ ! -s "$series/series.csv" ]; then
  (cd "$here" && go test ./io/pipeline -count=1 -run '^TestWriteBenchmarkSeries$' -args -series-out "$series")
fi
rm -rf "$out"; mkdir -p "$out"
"$bin" demo --out "$out/demo" > "$out/demo.log"
"$bin" resolve --data "$real/catalyst-1.00" --times-from-name --kind absorbance \
  --out "$out/cat100" > "$out/cat100.log"
"$bin" resolve --data "$real/catalyst-0.01" --times-from-name --kind absorbance \
  --out "$out/cat001" > "$out/cat001.log"
"$bin" resolve --data "$series/series.csv" --kind single-beam --blank "$series/blank.csv" \
  --out "$out/large" > "$out/large.log"
