#!/bin/sh
# `shoal survey --threads N`: the stages after the read (assessment, coverage, support, the runs'
# digest) run concurrently from 2 threads on; every output must be the same bytes as with one
# thread: terminal text, summary.json, claims.csv, index.html, report.md, the plots, the history
# row. Only the survey time and the command line (which names --threads) may differ. See LICENSE.
#
# Campaigns: the demo (fixtures/demo, invented: skewed waits, a level set, seeds, replicates), the
# kiln fixture (fixtures/cautions, invented: it trips every caution, resampled power), and a larger
# campaign of the invented triage simulator (fixtures/triage.c, fixed seed) with repeated rows,
# seeds shared across configurations (common random numbers) and missing output cells, surveyed
# with 3-way coverage; and the scale benchmark's invented mixed campaign.
: "${SHOAL:=build/shoal}" "${BUILD:=build}"
fails=0
ok() { echo "PASS: $1"; }
bad() { echo "FAIL: $1"; fails=$((fails + 1)); }
tmp=$(mktemp -d) || exit 1
trap 'rm -rf "$tmp"' EXIT
here=$(pwd)
SHOAL=$(cd "$(dirname "$SHOAL")" && pwd)/$(basename "$SHOAL")

# The larger triage campaign: 2,500 runs, then every 17th row's seed replaced by one of 40 shared
# seeds, every 53rd row's wait left empty, and the first 200 rows repeated at the end.
"$BUILD/fixtures/triage" campaign --runs 2500 --seed 11 >"$tmp/big0.csv" || bad "triage campaign"
awk -F, 'BEGIN { OFS = "," }
  NR > 1 && NR % 17 == 0 { $2 = 7000 + NR % 40 }
  NR > 1 && NR % 53 == 0 { $8 = "" }
  { print; if (NR > 1 && NR <= 201) rep[NR] = $0 }
  END { for (i = 2; i <= 201; i++) print rep[i] }' "$tmp/big0.csv" >"$tmp/big.csv"

# Times and the --threads word of the command line are the only expected differences.
norm() {
  sed -E 's/[0-9]{4}-[0-9]{2}-[0-9]{2}T[0-9]{2}:[0-9]{2}:[0-9]{2}Z/TIME/g;
          s/--threads(", "| )[0-9]+/--threads\1N/g' "$1"
}

# survey NAME GRAPH CSV [OPTIONS]: one fresh archive per thread count, each surveyed from a
# directory of its own with the same relative names, so paths in the outputs agree.
survey() {
  name=$1 graph=$2 csv=$3
  case $graph in /*) ;; *) graph=$here/$graph ;; esac
  shift 3
  # An archive made elsewhere (.db) is not shoal's own: its history goes to a side file.
  hist=runs.db
  case $csv in
    *.db) cp "$csv" "$tmp/$name.db"; hist=hist.db; set -- "$@" --history hist.db ;;
    *) "$SHOAL" import "$csv" --archive "$tmp/$name.db" -q || { bad "$name: import"; return; } ;;
  esac
  for t in 1 2 4; do
    d=$tmp/$name-t$t
    mkdir "$d" && cp "$tmp/$name.db" "$d/runs.db"
    (cd "$d" && "$SHOAL" survey "$graph" runs.db -o rep --threads "$t" "$@" >out.txt 2>err.txt)
    echo $? >"$d/rc"
  done
  a=$tmp/$name-t1
  for f in summary.json claims.csv index.html report.md; do
    [ -s "$a/rep/$f" ] || bad "$name: --threads 1 wrote no $f (exit $(cat "$a/rc"))"
  done
  grep -q "^report: rep/index.html" "$a/out.txt" || bad "$name: --threads 1 printed no verdict"
  for t in 2 4; do
    b=$tmp/$name-t$t
    if cmp -s "$a/rc" "$b/rc"; then ok "$name: --threads $t exits as --threads 1 ($(cat "$a/rc"))"
    else bad "$name: --threads $t exits $(cat "$b/rc"), --threads 1 $(cat "$a/rc")"; fi
    files="out.txt err.txt $(cd "$a" && ls rep | sed 's|^|rep/|')"
    n=0 differ=""
    for f in $files; do
      n=$((n + 1))
      if [ ! -f "$b/$f" ]; then differ="$differ $f(missing)"; continue; fi
      norm "$a/$f" >"$tmp/n1"; norm "$b/$f" >"$tmp/n2"
      cmp -s "$tmp/n1" "$tmp/n2" || differ="$differ $f"
    done
    [ "$(ls "$b/rep" | wc -l)" -eq "$(ls "$a/rep" | wc -l)" ] || differ="$differ (file count)"
    if [ -z "$differ" ]; then ok "$name: --threads $t writes the same $n files and terminal text as --threads 1"
    else bad "$name: --threads $t differs from --threads 1 in:$differ"; fi
  done
  # The history row each survey added: the same digest, counts and shares (time aside).
  for t in 1 2 4; do
    sqlite3 "$tmp/$name-t$t/$hist" "SELECT name FROM sqlite_master WHERE type = 'table'" |
      grep -i -e snapshot -e history | sort | while read -r tab; do
        sqlite3 "$tmp/$name-t$t/$hist" "SELECT * FROM \"$tab\"" | norm /dev/stdin
      done >"$tmp/$name-t$t/hist.txt"
  done
  if [ -s "$tmp/$name-t1/hist.txt" ] && cmp -s "$tmp/$name-t1/hist.txt" "$tmp/$name-t2/hist.txt" &&
     cmp -s "$tmp/$name-t1/hist.txt" "$tmp/$name-t4/hist.txt"; then
    ok "$name: the history rows recorded are the same on 1, 2 and 4 threads"
  else bad "$name: the history rows differ between thread counts (or none was recorded)"; fi
}

survey demo fixtures/demo/triage.graph fixtures/demo/triage-runs.csv
survey kiln fixtures/cautions/kiln.graph fixtures/cautions/kiln-runs.csv
survey triage-2500 fixtures/demo/triage.graph "$tmp/big.csv" --way 3
# The benchmark's mixed campaign (tests/bench/make_mixed.py, invented): a switch, a level set, an
# integer, seeds shared across configurations, skewed, zero-inflated and bending outputs, a cost.
/usr/bin/python3 tests/bench/make_mixed.py "$tmp/mixed-src.db" "$tmp/mixed.graph" 4000 ||
  bad "make_mixed.py"
survey mixed-4000 "$tmp/mixed.graph" "$tmp/mixed-src.db"
# The larger campaign did exercise what it is made for (else the comparison above proves less).
grep -q "2700 rows: 200 repeated" "$tmp/triage-2500-t1/out.txt" &&
  grep -Eq "[1-9][0-9]* shared by several" "$tmp/triage-2500-t1/out.txt" &&
  grep -q "3-way" "$tmp/triage-2500-t1/out.txt" &&
  ok "the larger campaign has repeated rows, shared seeds and 3-way coverage" ||
  bad "the larger campaign lacks repeated rows, shared seeds or 3-way coverage: $(head -c 600 "$tmp/triage-2500-t1/out.txt")"

# A stage that fails (coverage: 30 inputs at 1,000 bins pass the pair-cell limit) gives the same
# message and exit status on every thread count, and leaves no report behind.
awk 'BEGIN { for (i = 1; i <= 30; i++) printf "input x%d real [0, 1]\n", i
             print "output y real"; print "default effect 0.5"
             s = ""; for (i = 1; i <= 30; i++) s = s (i > 1 ? ", " : "") "x" i; print s " -> y" }' \
  >"$tmp/many.graph"
awk 'BEGIN { srand(5); for (i = 1; i <= 30; i++) printf "x%d,", i; print "y"
             for (r = 0; r < 60; r++) { s = 0; for (i = 1; i <= 30; i++) { v = rand(); s += v
             printf "%.4f,", v }; printf "%.4f\n", s + rand() } }' >"$tmp/many.csv"
"$SHOAL" import "$tmp/many.csv" --archive "$tmp/many.db" -q || bad "many: import"
for t in 1 2 4; do
  "$SHOAL" survey "$tmp/many.graph" "$tmp/many.db" -o "$tmp/many-rep" --bins 1000 --threads "$t" \
    >"$tmp/many-$t.out" 2>"$tmp/many-$t.err"
  echo "$?" >>"$tmp/many-$t.err"
done
if grep -q "pair cells" "$tmp/many-1.err" && [ "$(tail -1 "$tmp/many-1.err")" = 2 ] &&
   cmp -s "$tmp/many-1.err" "$tmp/many-2.err" && cmp -s "$tmp/many-1.err" "$tmp/many-4.err" &&
   [ ! -e "$tmp/many-rep" ]; then
  ok "a failing coverage stage: the same message and exit 2 on 1, 2 and 4 threads, no report"
else bad "a failing coverage stage: $(cat "$tmp/many-1.err" "$tmp/many-2.err" "$tmp/many-4.err")"; fi

exit $((fails > 0))
