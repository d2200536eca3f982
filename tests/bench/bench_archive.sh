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

now() { date +%s.%N; }
# Median of the numbers on standard input.
median() { sort -g | awk '{ v[NR] = $1 } END { print v[int((NR + 1) / 2)] }'; }

"$BUILD/bench/bench_gencsv" "$ROWS" "$COLS" "$SEED" >"$tmp/runs.csv" || exit 1
echo "CSV: $ROWS rows x $COLS columns, $(wc -c <"$tmp/runs.csv") bytes (invented, seed $SEED)"

: >"$tmp/t_shoal"
: >"$tmp/t_shell"
i=0
while [ $i -lt $REPEATS ]; do
  rm -f "$tmp/shoal.db" "$tmp/shell.db"
  t0=$(now)
  "$SHOAL" import -q "$tmp/runs.csv" --archive "$tmp/shoal.db" || exit 1
  t1=$(now)
  sqlite3 "$tmp/shell.db" '.mode csv' ".import $tmp/runs.csv runs" || exit 1
  t2=$(now)
  echo "$t1 $t0" | awk '{ printf "%.3f\n", $1 - $2 }' >>"$tmp/t_shoal"
  echo "$t2 $t1" | awk '{ printf "%.3f\n", $1 - $2 }' >>"$tmp/t_shell"
  i=$((i + 1))
done
rm -f "$tmp/shell.db"
ts=$(median <"$tmp/t_shoal")
tq=$(median <"$tmp/t_shell")
status=0
verdict=$(awk -v a="$ts" -v b="$tq" -v t="$IMPORT_TARGET" \
  'BEGIN { r = a / b; printf "ratio %.2f (target <= %.1f): %s", r, t, r <= t ? "met" : "MISSED" }')
echo "import: shoal import ${ts} s, sqlite3 .import ${tq} s (median of $REPEATS); $verdict"
case "$verdict" in *MISSED*) status=1 ;; esac

out=$("$BUILD/bench/bench_scan" "$tmp/shoal.db" "$COLS") || exit 1
echo "$out"
ratio=$(echo "$out" | sed -n 's/.*ratio \([0-9.]*\).*/\1/p')
awk -v r="$ratio" -v t="$READ_TARGET" 'BEGIN { exit !(r <= t) }' || {
  echo "read: ratio $ratio MISSED the target $READ_TARGET"
  status=1
}
exit $status
