#!/bin/sh
# Scale benchmark (issue 12): the whole survey without plots of an invented 1,000,000-run x 80
# column archive (64 inputs, 16 outputs, 1,024 claims) beside a bare SQLite scan of every column of
# the same file, in the same run, alternating; then a mixed campaign of as many runs with a switch,
# a level set, shared seeds and skewed outputs (tests/bench/make_mixed.py); then a narrow, long
# campaign of 10,000,000 runs x 20 columns. Medians of 3; CPU (user + system) and wall ratios, peak
# resident memory against the raw bytes of the analysed columns. Targets: survey <= 1.5x the scan
# in CPU, memory <= 1.2x the raw column bytes. Beside them, the floor under any survey that holds
# the analysed columns in memory and digests them (as exact distinct counts, exact replication
# counts and the exact comparison of repeated runs need, and the content digest, column by
# column): the scan, plus a first write of that many bytes of fresh memory, plus their SHA-256, all
# measured in the same run (bench_scan touch). Scratch files live in a temporary directory that is
# deleted at the end. See LICENSE.
: "${BUILD:=build}" "${SHOAL:=$BUILD/shoal}" "${PYTHON:=/usr/bin/python3}"
ROWS=${BENCH_SCALE_ROWS:-1000000}
LONG_ROWS=${BENCH_SCALE_LONG_ROWS:-10000000}
THREADS=${BENCH_SCALE_THREADS:-1}
REPEATS=3
CPU_TARGET=1.5
MEM_TARGET=1.2
for p in "$SHOAL" "$BUILD/bench/bench_power" "$BUILD/bench/bench_scan" "$BUILD/bench/bench_coverage"; do
  [ -x "$p" ] || { echo "bench_scale: $p is not built (run make bench)"; exit 1; }
done
[ -x /usr/bin/time ] || { echo "bench_scale: /usr/bin/time is missing (Debian package time)"; exit 1; }
tmp=$(mktemp -d "${TMPDIR:-/tmp}/shoal-bench-scale.XXXXXX") || exit 1
trap 'rm -rf "$tmp"' EXIT
trap 'exit 130' INT TERM
mkdir "$tmp/nobin"   # PATH for the survey: no gnuplot, so no plots are drawn

median() { sort -g | awk '{ v[NR] = $1 } END { print v[int((NR + 1) / 2)] }'; }
load() { awk '{ printf "%s %s %s", $1, $2, $3 }' /proc/loadavg; }

# scale LABEL GRAPH ARCHIVE COLUMNS: REPEATS alternating pairs of (bare scan, survey).
scale() {
  label=$1 graph=$2 db=$3 cols=$4
  : >"$tmp/sc"; : >"$tmp/sw"; : >"$tmp/vc"; : >"$tmp/vw"; : >"$tmp/vm"; : >"$tmp/kc"
  : >"$tmp/fm"; : >"$tmp/fd"
  bytes=$(awk -v r="$(sqlite3 "$db" 'SELECT count(*) FROM runs')" -v c="$cols" \
          'BEGIN { printf "%.0f", r * c * 8 }')
  echo "$label: load average before $(load)"
  i=0
  while [ "$i" -lt "$REPEATS" ]; do
    "$BUILD/bench/bench_scan" bare "$db" >"$tmp/one" || exit 1
    awk '{ print $1 >> "'"$tmp/sc"'"; print $2 >> "'"$tmp/sw"'" }' "$tmp/one"
    PATH="$tmp/nobin" /usr/bin/time -f "%e %U %S %M" -o "$tmp/one" "$SHOAL" survey "$graph" "$db" \
      -o "$tmp/report" -q --threads "$THREADS"
    rc=$?
    [ "$rc" -le 1 ] || { echo "bench_scale: survey failed with exit $rc"; exit 1; }
    tail -1 "$tmp/one" | awk '{ print $1 >> "'"$tmp/vw"'"; print $2 + $3 >> "'"$tmp/vc"'";
                                print $4 >> "'"$tmp/vm"'" }'
    rm -rf "$tmp/report"
    # The floor under any survey that holds these columns and digests them: fresh memory of the
    # raw column bytes, first written (the cheaper of heap and huge pages), and their SHA-256.
    "$BUILD/bench/bench_scan" touch "$bytes" >"$tmp/one" || exit 1
    awk '{ print $1 >> "'"$tmp/fm"'"; print $2 >> "'"$tmp/fd"'" }' "$tmp/one"
    if [ -n "$classic" ]; then
      # The same survey with the classic test by formula: what the robust power (HC3, resampling
      # where the noise asks for it) costs on top.
      PATH="$tmp/nobin" /usr/bin/time -f "%e %U %S %M" -o "$tmp/one" "$SHOAL" survey "$graph" \
        "$db" -o "$tmp/report" -q --threads "$THREADS" --test classic --power-by formula
      [ $? -le 1 ] || { echo "bench_scale: classic survey failed"; exit 1; }
      tail -1 "$tmp/one" | awk '{ print $2 + $3 >> "'"$tmp/kc"'" }'
      rm -rf "$tmp/report"
    fi
    i=$((i + 1))
  done
  sc=$(median <"$tmp/sc"); sw=$(median <"$tmp/sw")
  vc=$(median <"$tmp/vc"); vw=$(median <"$tmp/vw"); vm=$(median <"$tmp/vm")
  raw=$(awk -v b="$bytes" 'BEGIN { printf "%.0f", b / 1024 }')
  fm=$(median <"$tmp/fm"); fd=$(median <"$tmp/fd")
  echo "$label: load average after $(load)"
  [ -n "$classic" ] && echo "$label: the same survey with --test classic --power-by formula:" \
    "median CPU $(median <"$tmp/kc") s (the robust power's cost is the difference)"
  echo "$label: bare scan median CPU $sc s, wall $sw s; survey (no plots, --threads $THREADS)" \
       "median CPU $vc s, wall $vw s, peak $vm KB (medians of $REPEATS)"
  awk -v vc="$vc" -v sc="$sc" -v vw="$vw" -v sw="$sw" -v vm="$vm" -v raw="$raw" -v l="$label" \
      -v ct="$CPU_TARGET" -v mt="$MEM_TARGET" 'BEGIN {
    printf "%s: ratio CPU %.2f (target <= %s), wall %.2f; memory %.2f x the raw column bytes " \
           "(%d KB; target <= %s)\n", l, vc / sc, ct, vw / sw, vm / raw, raw, mt }'
  awk -v vc="$vc" -v sc="$sc" -v vm="$vm" -v raw="$raw" -v ct="$CPU_TARGET" -v mt="$MEM_TARGET" \
      'BEGIN { exit !(vc <= ct * sc && vm <= mt * raw) }' || { echo "$label: MISSED a target"; status=1; }
  awk -v sc="$sc" -v fm="$fm" -v fd="$fd" -v l="$label" 'BEGIN {
    printf "%s: floor of any survey that holds the columns and digests them: scan %.2f s + first " \
           "write of the raw column bytes %.2f s + their SHA-256 %.2f s = %.2f x the scan CPU " \
           "(medians; nothing of the claims, coverage or runs counted yet)\n", l, sc, fm, fd,
           (sc + fm + fd) / sc }'
}

status=0
# BENCH_SCALE_DIR: reuse (or keep) the generated archives there instead of a fresh temporary copy.
# The links made to them live in the temporary directory, so a relative directory is made absolute.
case ${BENCH_SCALE_DIR:-} in
''|/*) ;;
*) BENCH_SCALE_DIR=$(pwd)/$BENCH_SCALE_DIR ;;
esac
if [ -n "${BENCH_SCALE_DIR:-}" ] && [ -f "$BENCH_SCALE_DIR/wide.db" ]; then
  cp "$BENCH_SCALE_DIR/wide.graph" "$tmp/wide.graph" && ln -s "$BENCH_SCALE_DIR/wide.db" "$tmp/wide.db"
else
  "$BUILD/bench/bench_power" make "$tmp/wide.db" "$tmp/wide.graph" "$ROWS" || exit 1
fi
classic=1 scale "survey $ROWS x 80" "$tmp/wide.graph" "$tmp/wide.db" 80
rm -f "$tmp/wide.db"

# A mixed campaign as simulators write them (tests/bench/make_mixed.py, invented, seed fixed): a
# switch, a level set, an integer and three continuous inputs, three seeds per configuration shared
# across configurations, skewed, zero-inflated and bending outputs, a cost, repeated imports.
if [ -n "${BENCH_SCALE_DIR:-}" ] && [ -f "$BENCH_SCALE_DIR/mixed.db" ]; then
  cp "$BENCH_SCALE_DIR/mixed.graph" "$tmp/mixed.graph" && ln -s "$BENCH_SCALE_DIR/mixed.db" "$tmp/mixed.db"
else
  "$PYTHON" tests/bench/make_mixed.py "$tmp/mixed.db" "$tmp/mixed.graph" "$ROWS" || exit 1
fi
classic= scale "mixed survey $ROWS x 9" "$tmp/mixed.graph" "$tmp/mixed.db" 9
rm -f "$tmp/mixed.db"
[ "$LONG_ROWS" -gt 0 ] || exit $status   # BENCH_SCALE_LONG_ROWS=0: the wide archive only

# A narrow, long campaign: 16 inputs on [0, 1000], 4 outputs, 10,000,000 runs (invented, seed
# fixed), reported in the note with the same ratios.
if [ -n "${BENCH_SCALE_DIR:-}" ] && [ -f "$BENCH_SCALE_DIR/long.db" ]; then
  ln -s "$BENCH_SCALE_DIR/long.db" "$tmp/long.db"
else
  "$BUILD/bench/bench_coverage" generate "$tmp/long.db" "$LONG_ROWS" 20 20261205 || exit 1
fi
{
  echo "# Invented narrow campaign: 16 inputs, 4 outputs."
  echo "design independent"
  echo "default effect 0.1 sd"
  echo "default margin 0.1 sd"
  j=1
  while [ "$j" -le 16 ]; do echo "input c$j real [0, 1000]"; j=$((j + 1)); done
  while [ "$j" -le 20 ]; do echo "output c$j real"; j=$((j + 1)); done
  j=1
  while [ "$j" -le 16 ]; do echo "c$j -> c$((17 + (j - 1) / 4))"; j=$((j + 1)); done
} >"$tmp/long.graph"
classic= scale "survey $LONG_ROWS x 20" "$tmp/long.graph" "$tmp/long.db" 20
exit $status
