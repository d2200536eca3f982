#!/bin/sh
# Coverage benchmark (issue 4): an invented 1,000,000-run archive with 64 real inputs (uniform,
# fixed seed), so all 2,016 input pairs at 10 x 10 cells are counted in one pass. Target: the whole
# `shoal coverage` command within 2x one bare SQLite scan of the same columns; medians of 3.
# A second, informational figure: the command with 8 claims' support on 1,000,000 runs.
: "${BUILD:=build}"
ROWS=${BENCH_COVERAGE_ROWS:-1000000}
COLS=64
SEED=20261202
B="$BUILD/bench/bench_coverage"
[ -x "$B" ] || { echo "bench_coverage: $B is not built (run make bench)"; exit 1; }
tmp=$(mktemp -d "${TMPDIR:-/tmp}/shoal-bench-coverage.XXXXXX") || exit 1
trap 'rm -rf "$tmp"' EXIT
trap 'exit 130' INT TERM

"$B" generate "$tmp/runs.db" "$ROWS" "$COLS" "$SEED" || exit 1
j=1
while [ "$j" -le "$COLS" ]; do
  echo "input c$j real [0, 1000]"
  j=$((j + 1))
done >"$tmp/inputs.graph"
echo "archive: $ROWS runs x $COLS real inputs (invented, seed $SEED); $(wc -c <"$tmp/runs.db") bytes"
"$B" time "$tmp/inputs.graph" "$tmp/runs.db" "$COLS"
status=$?

# Support on 1,000,000 runs: c1..c5 inputs, c6 an output with two effect edges, so the graph
# implies 2 effect claims and 3 absence claims, each regressed and stratified on every run.
rm -f "$tmp/runs.db"
"$B" generate "$tmp/small.db" "$ROWS" 6 "$SEED" || exit 1
cat >"$tmp/claims.graph" <<'GRAPH'
input c1 real [0, 1000]
input c2 real [0, 1000]
input c3 real [0, 1000]
input c4 real [0, 1000]
input c5 real [0, 1000]
output c6 real
default effect 0.1 sd
default margin 0.1 sd
c1 -> c6
c2 -> c6
GRAPH
echo "informational: 5 inputs, 1 output, 5 claims with support, $ROWS runs"
"$B" time "$tmp/claims.graph" "$tmp/small.db" 6 info || true
exit $status
