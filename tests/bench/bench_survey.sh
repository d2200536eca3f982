#!/bin/sh
# Benchmark of `shoal survey` (demo and survey area): wall time and peak memory of the whole pass
# (claims, power, coverage, support, plots, report, history) on the invented demo (600 runs) and on
# a 100,000-run campaign of the same simulator. Medians of 5 runs. See LICENSE.
# Targets (ours): 100,000 runs surveyed within 20 s and 300 MB peak resident memory, plots included.
: "${BUILD:=build}" "${SHOAL:=$BUILD/shoal}"
TARGET_S=20
TARGET_KB=307200
REPEATS=5
tmp=$(mktemp -d) || exit 1
trap 'rm -rf "$tmp"' EXIT
[ -x /usr/bin/time ] || { echo "bench_survey: /usr/bin/time is missing (Debian package time)"; exit 1; }

median() { sort -n | awk '{ v[NR] = $1 } END { print v[int((NR + 1) / 2)] }'; }

measure() {   # label archive
  : >"$tmp/t"; : >"$tmp/m"
  i=0
  while [ "$i" -lt "$REPEATS" ]; do
    /usr/bin/time -f "%e %M" -o "$tmp/one" "$SHOAL" survey fixtures/demo/triage.graph "$2" \
      -o "$tmp/report" -q
    rc=$?
    [ "$rc" -le 1 ] || { echo "bench_survey: survey failed with exit $rc"; exit 1; }
    tail -1 "$tmp/one" | awk '{ print $1 >> "'"$tmp/t"'"; print $2 >> "'"$tmp/m"'" }'
    i=$((i + 1))
  done
  t=$(median <"$tmp/t"); m=$(median <"$tmp/m")
  echo "survey $1: median $t s, peak $m KB over $REPEATS runs"
}

"$SHOAL" import fixtures/demo/triage-runs.csv --archive "$tmp/demo.db" >/dev/null || exit 1
measure "demo (600 runs)" "$tmp/demo.db"
"$BUILD/fixtures/triage" campaign --runs 100000 --seed 7 >"$tmp/big.csv" || exit 1
"$SHOAL" import "$tmp/big.csv" --archive "$tmp/big.db" >/dev/null || exit 1
measure "100,000 runs" "$tmp/big.db"
if awk -v t="$t" -v m="$m" -v ts="$TARGET_S" -v tm="$TARGET_KB" 'BEGIN { exit !(t <= ts && m <= tm) }'
then echo "survey 100,000 runs: within the targets ($TARGET_S s, $TARGET_KB KB)"
else echo "survey 100,000 runs: MISSED the targets ($TARGET_S s, $TARGET_KB KB)"; exit 1; fi
