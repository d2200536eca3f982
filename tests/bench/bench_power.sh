#!/bin/sh
# Power benchmark on an invented 1,000,000-run archive (64 inputs, 16 outputs, 1144 claims): the
# power, MDE and runs needed of every claim against one bare SQLite scan of the 80 columns, and the
# same analysis in numpy/statsmodels beside it. Target (issue 3): within 3x the scan; medians of 3.
: "${BUILD:=build}" "${SHOAL:=$BUILD/shoal}" "${PYTHON:=/usr/bin/python3}"
ROWS=${BENCH_POWER_ROWS:-1000000}
REPEATS=3
TARGET=3.0
BENCH="$BUILD/bench/bench_power"

for p in "$SHOAL" "$BENCH"; do
  [ -x "$p" ] || { echo "bench_power: $p is not built (run make bench)"; exit 1; }
done
# The archive takes about 20 s to write, so it is kept between runs in the build directory.
dir="$BUILD/bench/power-data"
db="$dir/runs-$ROWS.db"
graph="$dir/bench.graph"
mkdir -p "$dir" || exit 1
if [ ! -f "$db" ] || [ ! -f "$graph" ]; then
  rm -f "$db"
  "$BENCH" make "$db.tmp" "$graph" "$ROWS" && mv "$db.tmp" "$db" || exit 1
fi

now() { date +%s.%N; }
median() { sort -g | awk '{ v[NR] = $1 } END { print v[int((NR + 1) / 2)] }'; }

out=$("$BENCH" time "$db" "$graph") || exit 1
echo "$out"
ratio=$(echo "$out" | sed -n 's/.*wall ratio \([0-9.]*\).*/\1/p')
cratio=$(echo "$out" | sed -n 's/.*cpu ratio \([0-9.]*\).*/\1/p')
scan=$(echo "$out" | sed -n 's/.*wall: bare scan \([0-9.]*\) s.*/\1/p')
status=0
# The target is on wall time; the processor-time ratio is printed beside it because on a shared,
# loaded machine the wall clock mostly measures the run queue.
awk -v r="$ratio" -v t="$TARGET" 'BEGIN { exit !(r <= t) }' || {
  echo "bench_power: wall ratio $ratio MISSED the target $TARGET (cpu ratio $cratio)"
  status=1
}

# The whole command, as a user runs it (parse, claims, read, assess, print).
tfile=$(mktemp) || exit 1
i=0
while [ $i -lt $REPEATS ]; do
  t0=$(now)
  "$SHOAL" power "$graph" "$db" --json >/dev/null
  rc=$?
  t1=$(now)
  [ $rc -le 1 ] || { echo "bench_power: shoal power failed ($rc)"; rm -f "$tfile"; exit 1; }
  echo "$t1 $t0" | awk '{ printf "%.3f\n", $1 - $2 }' >>"$tfile"
  i=$((i + 1))
done
tc=$(median <"$tfile")
rm -f "$tfile"
echo "shoal power end to end: ${tc} s (median of $REPEATS); $(awk -v a="$tc" -v b="$scan" \
  'BEGIN { printf "%.2f", a / b }') x the bare scan"

# The same analysis in numpy/statsmodels: read the columns, centred cross-products once, each
# claim solved from its block, t-test power, MDE and runs by statsmodels' TTestPower (its root
# finder), absence claims by the shifted noncentral-t TOST approximation (statsmodels has no TOST
# power). Median of REPEATS runs.
"$SHOAL" claims "$graph" --json >"$dir/claims.json" || exit 1
"$PYTHON" - "$db" "$dir/claims.json" "$REPEATS" <<'EOF'
import json, sqlite3, sys, time, warnings
import numpy as np
from scipy import stats
from statsmodels.stats.power import TTestPower

db, claims_path, repeats = sys.argv[1], sys.argv[2], int(sys.argv[3])
claims = json.load(open(claims_path))["claims"]
names = [f"x{i}" for i in range(64)] + [f"y{j}" for j in range(16)]
col = {n: i for i, n in enumerate(names)}
warnings.simplefilter("ignore")

def run():
    t0 = time.time()
    con = sqlite3.connect(f"file:{db}?mode=ro", uri=True)
    n = con.execute("SELECT count(*) FROM runs").fetchone()[0]
    X = np.empty((n, len(names)))
    for j, name in enumerate(names):
        X[:, j] = np.fromiter((r[0] for r in con.execute(f'SELECT "{name}" FROM runs')), float, n)
    con.close()
    t1 = time.time()
    mean = X.mean(axis=0)
    Xc = X - mean
    C = Xc.T @ Xc
    testable = [c for c in claims if c["status"] == "testable"]
    alpha = 0.05 / len(testable)
    tp = TTestPower()
    for c in testable:
        idx = [col[v] for v in c["adjustment_set"]] + [col[c["treatment"]]]
        y = col[c["outcome"]]
        A = C[np.ix_(idx, idx)]
        b = np.linalg.solve(A, C[idx, y])
        rss = C[y, y] - b @ C[idx, y]
        df = n - len(idx) - 1
        sigma = np.sqrt(rss / df)
        info = 1.0 / np.linalg.inv(A)[-1, -1]
        sdx = np.sqrt(info / n)
        eff = c["effect_of_interest"] * (np.sqrt(C[y, y] / (n - 1)) if c["effect_unit"] == "sd" else 1)
        es = eff * sdx / sigma
        if c["kind"] == "effect":
            tp.power(es, n, alpha, df=df)
            tp.solve_power(None, n, alpha, 0.8)
            tp.solve_power(es, None, alpha, 0.8)
        else:
            se = sigma / (sdx * np.sqrt(n))
            tc = stats.t.isf(alpha, df)
            stats.nct.cdf(-tc, df, -eff / se) - stats.nct.cdf(tc, df, eff / se)
    return t1 - t0, time.time() - t1

res = sorted(run() for _ in range(repeats))
read, analysis = res[len(res) // 2]
print(f"numpy/statsmodels, same claims: read {read:.2f} s + analysis {analysis:.2f} s = "
      f"{read + analysis:.2f} s (median of {repeats})")
EOF

# The claims' assessment alone on BENCH_POWER_THREADS threads (default 2) against one, alternating
# (issue 12): every claim's record must be the same bytes. The CPU and wall times are printed with
# no target: on a machine shared with other work the wall clock measures the run queue as much as
# the threads.
"$BENCH" threads "$db" "$graph" "${BENCH_POWER_THREADS:-2}" || {
  echo "bench_power: the claims' records differ between thread counts (or the run failed)"
  status=1
}
exit $status
