#!/bin/sh
# Two imports into one archive at once, 20 trials each way: a new archive (both racing to create
# it) and an existing one; in each trial one import is good and one fails on its last row, and in
# a third set both are good. No row may be lost or doubled, a failed import must leave nothing,
# and the archive must never disappear. Rows are counted with the sqlite3 shell.
: "${SHOAL:=build/shoal}"
tmp=$(mktemp -d); trap 'rm -rf "$tmp"' EXIT
TRIALS=${TRIALS:-20}
# Invented runs, 3000 and 20000 rows; the bad file has a short last row, so it fails after inserting.
awk 'BEGIN { print "run,load,wait"; for (i = 1; i <= 3000; i++) printf "a%d,%d,%.3f\n", i, i % 7, i / 13 }' >"$tmp/good1.csv"
awk 'BEGIN { print "run,load,wait"; for (i = 1; i <= 20000; i++) printf "b%d,%d,%.3f\n", i, i % 5, i / 11 }' >"$tmp/good2.csv"
{ cat "$tmp/good2.csv"; echo "short"; } >"$tmp/bad.csv"
count() { sqlite3 "$1" "SELECT count(*) || ' ' || count(DISTINCT run) FROM runs" 2>/dev/null; }
lost=0 doubled=0 gone=0 status_bad=0 leftovers=0
for mode in new existing; do
  for pair in goodbad goodgood; do
    t=1
    while [ "$t" -le "$TRIALS" ]; do
      db=$tmp/a.db; rm -f "$db" "$db-journal"
      base=0
      if [ "$mode" = existing ]; then
        printf 'run,load,wait\nz0,1,1.0\n' >"$tmp/seed.csv"
        "$SHOAL" import "$tmp/seed.csv" --archive "$db" -q || { echo "FAIL: seed import"; exit 1; }
        base=1
      fi
      second=$tmp/bad.csv; [ "$pair" = goodgood ] && second=$tmp/good2.csv
      # The second import starts first and the good one a moment later, while the second still
      # holds the write lock: the order in which a failing import used to remove the archive.
      "$SHOAL" import "$second" --archive "$db" -q 2>"$tmp/e2" & p2=$!
      [ $((t % 2)) -eq 0 ] && sleep 0.05
      "$SHOAL" import "$tmp/good1.csv" --archive "$db" -q 2>"$tmp/e1" & p1=$!
      wait $p1; r1=$?; wait $p2; r2=$?
      want=$((base + 3000)); [ "$pair" = goodgood ] && want=$((want + 20000))
      if [ "$r1" -ne 0 ] || { [ "$pair" = goodgood ] && [ "$r2" -ne 0 ]; }; then
        echo "FAIL: $mode/$pair trial $t: a good import failed ($r1 $r2): $(cat "$tmp/e1" "$tmp/e2")"
        status_bad=$((status_bad + 1))
      fi
      if [ "$pair" = goodbad ] && [ "$r2" -ne 2 ]; then
        echo "FAIL: $mode/$pair trial $t: the bad import exited $r2, expected 2"; status_bad=$((status_bad + 1))
      fi
      if [ ! -f "$db" ]; then
        gone=$((gone + 1)); echo "FAIL: $mode/$pair trial $t: the archive is gone"
      else
        set -- $(count "$db")
        [ "${1:-0}" -lt "$want" ] && { lost=$((lost + 1)); echo "FAIL: $mode/$pair trial $t: ${1:-0} rows, expected $want"; }
        [ "${1:-0}" -gt "$want" ] || [ "${1:-0}" != "${2:-x}" ] &&
          { doubled=$((doubled + 1)); echo "FAIL: $mode/$pair trial $t: $* rows/distinct, expected $want"; }
      fi
      n=$(find "$tmp" -name '.a.db.*' | wc -l)
      [ "$n" -gt 0 ] && { leftovers=$((leftovers + 1)); echo "FAIL: $mode/$pair trial $t: temporary files left"; }
      t=$((t + 1))
    done
    echo "PASS: $mode archive, $pair imports at once: $TRIALS trials run"
  done
done
tot=$((lost + doubled + gone + status_bad + leftovers))
if [ "$tot" -eq 0 ]; then
  echo "PASS: concurrent imports: 0 lost, 0 doubled, 0 vanished archives, 0 failed good imports in $((4 * TRIALS)) trials"
else
  echo "FAIL: concurrent imports: $lost lost, $doubled doubled, $gone vanished, $status_bad wrong statuses, $leftovers with leftovers"
fi
