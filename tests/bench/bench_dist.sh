#!/bin/sh
# Benchmark of power/'s noncentral distributions: CPU time per call through tests/probe_dist at
# power-type points, median of 3 runs, beside scipy 1.10.1 (Boost.Math) on the same points.
# See LICENSE.
: "${BUILD:=build}" "${PYTHON:=/usr/bin/python3}"
PROBE="$BUILD/tests/probe_dist"
[ -x "$PROBE" ] || make --no-print-directory "$PROBE" >/dev/null || exit 1
[ -x /usr/bin/time ] || { echo "bench_dist: needs /usr/bin/time (Debian package time)"; exit 1; }
tmp=$(mktemp -d) || exit 1
trap 'rm -rf "$tmp"' EXIT
N=20000
median3() { sort -g | sed -n 2p; }

# Points where power searches spend their time: the critical value of the central test, ncp or
# lambda from 0 to 40, df from 10 to 1e4. Invented, deterministic.
awk -v n=$N 'BEGIN{for (i = 0; i < n; i++) {
  df = (i % 3 == 0) ? 10 : ((i % 3 == 1) ? 100 : 10000)
  print "nct", 1.96 + (i % 7) * 0.05, df, (i % 41) - 20 }}' >"$tmp/nct"
awk -v n=$N 'BEGIN{for (i = 0; i < n; i++)
  print "ncf", 2.5 + (i % 5) * 0.3, 1 + i % 5, (i % 2) ? 30 : 1000, i % 41 }' >"$tmp/ncf"
awk -v n=$N 'BEGIN{for (i = 0; i < n; i++) {
  df = 1 + i % 30; l = i % 41; print "ncx2", df + l + (i % 9) - 4, df, l }}' >"$tmp/ncx2"
awk -v n=$((N / 4)) 'BEGIN{for (i = 0; i < n; i++)
  print "nctq", 0.05, i % 2, 10 + i % 90, (i % 21) - 10 }' >"$tmp/nctq"
awk -v n=$((N / 4)) 'BEGIN{for (i = 0; i < n; i++)
  print "tost", (i % 11) * 0.05, -0.5, 0.5, 0.15 + (i % 5) * 0.05, 4 + i % 200, 0.05 }' >"$tmp/tost"

printf '%-6s %8s %14s %16s\n' query calls "us/call (C)" "us/call (scipy)"
for q in nct ncf ncx2 nctq tost; do
  calls=$(wc -l <"$tmp/$q")
  for r in 1 2 3; do
    # CPU (user + system) seconds of the probe alone, so other load on the machine does not count.
    /usr/bin/time -f '%U %S' -o "$tmp/time" "$PROBE" <"$tmp/$q" >"$tmp/out" || exit 1
    awk -v n="$calls" '{printf "%.3f\n", ($1 + $2) * 1e6 / n}' "$tmp/time"
  done | median3 >"$tmp/c_$q"
  if grep -q ERR "$tmp/out"; then echo "bench_dist: $q: a call failed"; exit 1; fi
  py=$("$PYTHON" - "$tmp/$q" "$q" <<'EOF'
import sys, time, warnings
import numpy as np
from scipy import stats
warnings.simplefilter("ignore")
rows = np.array([[float(v) for v in l.split()[1:]] for l in open(sys.argv[1])])
q = sys.argv[2]
def run():
    if q == "nct":
        stats.nct.cdf(*rows.T)
        stats.nct.sf(*rows.T)
    elif q == "ncf":
        stats.ncf.cdf(*rows.T)
        stats.ncf.sf(*rows.T)
    elif q == "ncx2":
        stats.ncx2.cdf(*rows.T)
        stats.ncx2.sf(*rows.T)
    elif q == "nctq":
        stats.nct.ppf(rows[:, 0], rows[:, 2], rows[:, 3])
    else:
        return None
    return True
ts = []
for _ in range(3):
    t0 = time.process_time()
    if run() is None:
        print("-"); sys.exit()
    ts.append(time.process_time() - t0)
print("%.3f" % (sorted(ts)[1] * 1e6 / len(rows)))
EOF
)
  printf '%-6s %8s %14s %16s\n' "$q" "$calls" "$(cat "$tmp/c_$q")" "$py"
done
echo "C figures are CPU time and include the probe's start, parsing and %.17g printing (about"
echo "1 us a line). scipy: CPU time of cdf and sf as two vectorized calls (ppf alone for nctq)."
echo "nct rows run ncp from -20 to 20: with ncp < 0 and t > 0 a small upper tail comes from Owen's"
echo "Q by quadrature (20 to 50 us), where the series would cancel. scipy has no TOST power."
