#!/bin/sh
# The claims' assessment on several threads (`--threads N` of power and survey) gives the same
# bytes as one thread: `shoal power` as a table, --json and --csv, power by the noise and by
# resampling, and the survey's summary.json, claims.csv and report.md (its time stamps and the
# --threads argument aside). Fixtures: fixtures/threads/glasshouse.graph with the runs of
# glasshouse.py (invented: replicates, shared seeds, skewed, heavy-tailed, zero-inflated and
# heteroscedastic noise, a bool, an output missing in some runs), the kiln and the demo (invented).
# See LICENSE.
: "${SHOAL:=build/shoal}" "${PYTHON:=/usr/bin/python3}"
SHOAL=$(cd "$(dirname "$SHOAL")" && pwd)/$(basename "$SHOAL")   # the surveys run elsewhere
tmp=$(mktemp -d) || exit 1
trap 'rm -rf "$tmp"' EXIT
fails=0
ok() { echo "PASS: $1"; }
bad() { echo "FAIL: $1"; fails=$((fails + 1)); }

"$PYTHON" fixtures/threads/glasshouse.py >"$tmp/glasshouse.csv" || bad "glasshouse.py writes the runs"
for f in glasshouse:fixtures/threads/glasshouse.graph:"$tmp/glasshouse.csv" \
         kiln:fixtures/cautions/kiln.graph:fixtures/cautions/kiln-runs.csv \
         demo:fixtures/demo/triage.graph:fixtures/demo/triage-runs.csv; do
  name=${f%%:*}; rest=${f#*:}; graph=${rest%%:*}; csv=${rest#*:}
  "$SHOAL" import "$csv" --archive "$tmp/$name.db" -q || bad "$name: import"

  # shoal power: every format, power by the noise (auto) and by resampling (every claim that can
  # be resampled is), threads 1, 2 and 4.
  for by in auto resampling; do
    for fmt in table json csv; do
      flag=; [ "$fmt" = table ] || flag=--$fmt
      for t in 1 2 4; do
        "$SHOAL" power "$graph" "$tmp/$name.db" $flag --power-by "$by" --threads "$t" \
          >"$tmp/p-$t" 2>"$tmp/e-$t"
        echo $? >>"$tmp/e-$t"
      done
      if [ ! -s "$tmp/p-1" ]; then
        bad "$name: power --power-by $by ($fmt) printed nothing: $(head -c 300 "$tmp/e-1")"
      elif cmp -s "$tmp/p-1" "$tmp/p-2" && cmp -s "$tmp/p-1" "$tmp/p-4" &&
           cmp -s "$tmp/e-1" "$tmp/e-2" && cmp -s "$tmp/e-1" "$tmp/e-4"; then
        ok "$name: power --power-by $by ($fmt): threads 1, 2 and 4 print the same bytes and exit alike ($(wc -c <"$tmp/p-1") bytes)"
      else
        bad "$name: power --power-by $by ($fmt) differs between thread counts"
        diff "$tmp/p-1" "$tmp/p-2" | head -5
        diff "$tmp/p-1" "$tmp/p-4" | head -5
      fi
    done
  done
  # How many claims were resampled, so that the comparison above is known to cover them.
  "$PYTHON" - "$tmp/p-1" "$name" <<'PY' || fails=$((fails + 1))
import csv, sys
rows = list(csv.DictReader(open(sys.argv[1])))
n = sum(1 for r in rows if r.get("power_method") == "resampled")
print(("PASS" if n >= 3 else "FAIL") + ": %s: %d of %d claims resampled in the comparison" % (
    sys.argv[2], n, len(rows)))
sys.exit(n < 3)
PY

  # shoal survey: each thread count on its own copy of the archive (the history differs
  # otherwise), in a directory of its own so that every path in the report reads the same.
  for t in 1 2 4; do
    mkdir "$tmp/s$t" && cp "$tmp/$name.db" "$tmp/s$t/runs.db"
    (cd "$tmp/s$t" && PATH=/nonexistent "$SHOAL" survey "$OLDPWD/$graph" runs.db -o report -q \
       --power-by resampling --threads "$t")
    echo "exit $?" >"$tmp/s$t/exit"
    for file in summary.json claims.csv report.md; do
      sed -e 's/[0-9]\{4\}-[0-9][0-9]-[0-9][0-9]T[0-9][0-9]:[0-9][0-9]:[0-9][0-9]Z/TIME/g' \
          -e 's/"--threads", "[0-9]*"/"--threads", "N"/; s/--threads [0-9]*/--threads N/g' \
          -e 's/"name": "threads", "value": "[0-9]*"/"name": "threads", "value": "N"/' \
          "$tmp/s$t/report/$file" >"$tmp/s$t/$file" 2>/dev/null
    done
  done
  for file in exit summary.json claims.csv report.md; do
    if [ ! -s "$tmp/s1/$file" ]; then
      bad "$name: survey wrote no $file"
    elif cmp -s "$tmp/s1/$file" "$tmp/s2/$file" && cmp -s "$tmp/s1/$file" "$tmp/s4/$file"; then
      ok "$name: survey --power-by resampling: $file the same with threads 1, 2 and 4"
    else
      bad "$name: survey --power-by resampling: $file differs between thread counts"
      diff "$tmp/s1/$file" "$tmp/s2/$file" | head -5
      diff "$tmp/s1/$file" "$tmp/s4/$file" | head -5
    fi
  done
  rm -rf "$tmp/s1" "$tmp/s2" "$tmp/s4"
done
[ "$fails" -eq 0 ]
