#!/bin/sh
# kill -9 at random moments during a large import, 10 trials into an existing archive and 10 into
# a new one: the archive then holds either all of the import or none of it (no lost or doubled
# rows), a new archive appears only complete, and analysis explains a hot journal in words of its
# own instead of SQLite's "attempt to write a readonly database". Rows are counted with the
# sqlite3 shell, which (opening read-write) rolls an interrupted import back first.
: "${SHOAL:=build/shoal}" "${PYTHON:=/usr/bin/python3}"
fails=0
ok() { echo "PASS: $1"; }
bad() { echo "FAIL: $1"; fails=$((fails + 1)); }
tmp=$(mktemp -d) || exit 1
trap 'rm -rf "$tmp"' EXIT
TRIALS=${TRIALS:-10}
printf 'input load real [0, 10]\noutput wait real\ndefault effect 1\nload -> wait\n' >"$tmp/g.graph"
# Invented runs: 200,000 rows with a unique id.
awk 'BEGIN { print "id,load,wait"; for (i = 1; i <= 200000; i++) printf "r%d,%.3f,%.3f\n", i, (i % 1000) / 100, i / 7 }' >"$tmp/big.csv"
printf 'id,load,wait\nbase1,1,2\nbase2,3,4\n' >"$tmp/base.csv"
"$SHOAL" import "$tmp/base.csv" --archive "$tmp/base.db" -q || bad "base import"
# How long one import takes here, to spread the kills over it.
start=$(date +%s%N)
cp "$tmp/base.db" "$tmp/t.db"; "$SHOAL" import "$tmp/big.csv" --archive "$tmp/t.db" -q
ms=$(( ($(date +%s%N) - start) / 1000000 ))
echo "# one import of 200,000 rows takes $ms ms here"
counts() { sqlite3 "$1" "SELECT count(*) || ' ' || count(DISTINCT id) FROM runs" 2>&1; }
partial=0 lost=0 notes=0 killed=0
for mode in existing new; do
  t=1
  while [ "$t" -le "$TRIALS" ]; do
    rm -f "$tmp/t.db" "$tmp/t.db-journal" "$tmp"/.t.db.*
    [ "$mode" = existing ] && cp "$tmp/base.db" "$tmp/t.db"
    delay=$(awk -v s="$t$mode" -v ms="$ms" 'BEGIN { srand(length(s) * 7919 + s); printf "%.3f", rand() * ms * 1.1 / 1000 }')
    "$SHOAL" import "$tmp/big.csv" --archive "$tmp/t.db" -q & pid=$!
    sleep "$delay"
    kill -9 "$pid" 2>/dev/null && killed=$((killed + 1))
    wait "$pid" 2>/dev/null
    if [ -e "$tmp/t.db" ]; then
      # Analysis first, read-only: it works, or it explains the unfinished import.
      "$SHOAL" check "$tmp/g.graph" "$tmp/t.db" -q 2>"$tmp/err"; rc=$?
      if [ "$rc" -ne 0 ] && ! grep -q "unfinished write" "$tmp/err"; then
        notes=$((notes + 1)); bad "$mode trial $t: check after the kill: $(head -c 200 "$tmp/err")"
      fi
      set -- $(counts "$tmp/t.db")
      # An existing archive holds all or none of the import; a new one appears only complete.
      base=2 none=2; [ "$mode" = new ] && base=0 none=x
      case "$1" in
        "$none"|$((base + 200000))) [ "$1" = "$2" ] || { lost=$((lost + 1)); bad "$mode trial $t: doubled rows: $*"; } ;;
        *) partial=$((partial + 1)); bad "$mode trial $t (kill after ${delay}s): $* rows, expected $base or $((base + 200000))" ;;
      esac
    else
      [ "$mode" = existing ] && { lost=$((lost + 1)); bad "$mode trial $t: the archive is gone"; }
    fi
    t=$((t + 1))
  done
done
# A hot journal made on purpose (a writer that spills pages and dies mid-transaction).
cp "$tmp/base.db" "$tmp/hot.db"
"$PYTHON" - "$tmp/hot.db" <<'PY'
import os, sqlite3, sys
con = sqlite3.connect(sys.argv[1], isolation_level=None)
con.execute("PRAGMA cache_size=1")
con.execute("BEGIN")
for i in range(5000):
    con.execute("INSERT INTO runs(id, load, wait) VALUES (?, 1, 1)", ("x%d" % i,))
os._exit(0)
PY
if [ -s "$tmp/hot.db-journal" ]; then
  "$SHOAL" power "$tmp/g.graph" "$tmp/hot.db" 2>"$tmp/err"; rc=$?
  [ "$rc" -eq 2 ] && grep -q "unfinished write" "$tmp/err" && ! grep -q "readonly database" "$tmp/err" &&
    ok "analysis explains a hot journal in its own words" || bad "analysis with a hot journal: $rc $(cat "$tmp/err")"
  [ -s "$tmp/hot.db-journal" ] && ok "analysis leaves the hot journal alone" || bad "analysis touched the journal"
  [ "$(counts "$tmp/hot.db")" = "2 2" ] && ok "after recovery the archive holds its 2 committed rows" || bad "after recovery: $(counts "$tmp/hot.db")"
else
  bad "could not make a hot journal"
fi
[ $((partial + lost + notes)) -eq 0 ] && ok "kill -9 during import: $((2 * TRIALS)) trials ($killed killed mid-import): 0 partial, 0 lost or doubled, 0 unexplained analysis failures"
[ "$fails" -eq 0 ]
