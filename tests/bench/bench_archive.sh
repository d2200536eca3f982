#!/bin/sh
# Archive benchmarks on an invented 1,000,000 x 80 CSV of random numbers (fixed seed): `shoal
# import` against the sqlite3 shell's .import, and cov_data_read against a bare sqlite3_step scan.
# Targets (issue 2): import within 2x the shell, reading within 1.5x the bare scan; medians of 3.
: "${BUILD:=build}" "${SHOAL:=$BUILD/shoal}"
ROWS=${BENCH_ARCHIVE_ROWS:-1000000}
COLS=80
SEED=20261202
REPEATS=3
IMPORT_TARGET=2.0
READ_TARGET=1.5

if ! command -v sqlite3 >/dev/null 2>&1; then
  echo "SKIP: the sqlite3 shell is not installed (Debian package sqlite3)"
  exit 0
fi
for p in "$SHOAL" "$BUILD/bench/bench_gencsv" "$BUILD/bench/bench_scan"; do
  [ -x "$p" ] || { echo "bench_archive: $p is not built (run make bench)"; exit 1; }
done
tmp=$(mktemp -d "${TMPDIR:-/tmp}/shoal-bench-archive.XXXXXX") || exit 1
trap 'rm -rf "$tmp"' EXIT
trap 'exit 130' INT TERM

# Median of the numbers on standard input.
median() { sort -g | awk '{ v[NR] = $1 } END { print v[int((NR + 1) / 2)] }'; }

"$BUILD/bench/bench_gencsv" "$ROWS" "$COLS" "$SEED" >"$tmp/runs.csv" || exit 1
echo "CSV: $ROWS rows x $COLS columns, $(wc -c <"$tmp/runs.csv") bytes (invented, seed $SEED)"

: >"$tmp/t_shoal"
: >"$tmp/t_shell"
# One timed command: appends "wall cpu" (cpu = user + system seconds of the command) to file $1.
# The targets are judged on wall-clock time; CPU time is printed beside it because on a shared,
# busy machine it shows whether a slow run was the program or the neighbours.
timed() {
  out=$1; shift
  if [ -x /usr/bin/time ]; then
    /usr/bin/time -f "%e %U %S" -o "$tmp/time" "$@" || return 1
    awk '{ printf "%.3f %.3f\n", $1, $2 + $3 }' "$tmp/time" >>"$out"
  else
    t0=$(date +%s.%N)
    "$@" || return 1
    t1=$(date +%s.%N)
    echo "$t1 $t0" | awk '{ printf "%.3f %.3f\n", $1 - $2, $1 - $2 }' >>"$out"
  fi
}
i=0
while [ $i -lt $REPEATS ]; do
  rm -f "$tmp/shoal.db" "$tmp/shell.db"
  timed "$tmp/t_shoal" "$SHOAL" import -q "$tmp/runs.csv" --archive "$tmp/shoal.db" || exit 1
  timed "$tmp/t_shell" sqlite3 "$tmp/shell.db" '.mode csv' ".import $tmp/runs.csv runs" || exit 1
  i=$((i + 1))
done
rm -f "$tmp/shell.db"
sw=$(cut -d' ' -f1 "$tmp/t_shoal" | median)
sc=$(cut -d' ' -f2 "$tmp/t_shoal" | median)
qw=$(cut -d' ' -f1 "$tmp/t_shell" | median)
qc=$(cut -d' ' -f2 "$tmp/t_shell" | median)
status=0
verdict=$(awk -v sw="$sw" -v sc="$sc" -v qw="$qw" -v qc="$qc" -v t="$IMPORT_TARGET" 'BEGIN {
  printf "ratio wall %.2f, cpu %.2f (target <= %.1f): %s", sw / qw, sc / qc, t,
         sw / qw <= t ? "met" : "MISSED" }')
echo "import (median of $REPEATS): shoal import ${sw} s wall ${sc} s cpu," \
  "sqlite3 .import ${qw} s wall ${qc} s cpu; $verdict"
case "$verdict" in *MISSED*) status=1 ;; esac

out=$("$BUILD/bench/bench_scan" "$tmp/shoal.db" "$COLS") || exit 1
ratio=$(echo "$out" | sed -n 's/.*ratio wall \([0-9.]*\),.*/\1/p')
verdict=$(awk -v r="$ratio" -v t="$READ_TARGET" \
  'BEGIN { printf "(target <= %.1f on wall time): %s", t, r <= t ? "met" : "MISSED" }')
echo "$out $verdict"
case "$verdict" in *MISSED*) status=1 ;; esac
exit $status
