#!/usr/bin/env bash
# bench.sh: `make bench`. Runs the chosen Go benchmarks (with -benchtime bounds, so the whole run
# stays within a few minutes), then the load test (scripts/loadtest.sh), and writes
# docs/benchmarks.md with cmd/ridgeflank-benchreport, adding the import figures of
# `make bench-scale` when build/scale/report.md exists. The raw output is kept in build/bench/.
# BENCH_OUT overrides the report's path; LOAD_STORES=sqlite skips the PostGIS load run.
# Exit status: 1 when a benchmark or the load test failed (the report is written all the same).
set -uo pipefail

root="$(cd "$(dirname "$0")/.." && pwd)"
cd "$root"
export PATH="/usr/local/go/bin:$PATH"
out="${BENCH_OUT:-docs/benchmarks.md}"
raw=build/bench/go-bench.txt
mkdir -p build/bench "$(dirname "$out")"
: >"$raw"
rc=0

bench() { # bench PACKAGE PATTERN BENCHTIME [go test flags...]
	local pkg=$1 pattern=$2 benchtime=$3
	shift 3
	echo "bench: $pkg $pattern" >&2
	go test -run '^$' -bench "$pattern" -benchtime "$benchtime" -benchmem "$@" "$pkg" | tee -a "$raw" || rc=1
}

# The residual kernel against a streaming pass, and core scaling (GOMAXPROCS 1 and 2).
bench ./geo/ 'BenchmarkResidualGlobal$' 3x -cpu 1,2
bench ./evaluate/ 'BenchmarkStatistics10M$' 2x -cpu 1,2
# Tiles at several zooms, areas against a plain read, the survey plan check.
bench ./evaluate/ 'BenchmarkTileResidual$|BenchmarkAreaMillionCells$|BenchmarkCheckPlan$' 1s
# The grid command against gdal_calc.py (whose Python needs GDAL's bindings and numpy),
# alternating in each iteration.
scripts/apt-ensure.sh python3-gdal python3-numpy || echo "bench: gdal_calc.py's Python modules are missing: that peer is skipped" >&2
bench ./cmd/ridgeflank/ 'BenchmarkGridResidual$/^paired-in-place-vs-gdal_calc$' 4x
# Position queries against a bare chi handler, and a tile through the HTTP stack.
bench ./server/ 'BenchmarkPosition$|BenchmarkResidualTile$' 2s

status=""
rm -f build/load/load.md build/load/load.json
if ! scripts/loadtest.sh; then
	rc=1
	status="The load test failed in this run (unintended answers, a server failure or memory growth beyond its bound): see the figures below."
fi
# Every report of make bench-scale under build/ (build/scale, or another SCALE_DIR such as
# build/scale15 for a size measured apart).
scales=$(ls build/scale*/report.md 2>/dev/null | paste -sd, -)
go run ./cmd/ridgeflank-benchreport -bench "$raw" -load build/load/load.md -load-status "$status" \
	-scale "${scales:-build/scale/report.md}" -out "$out" || rc=1
exit $rc
