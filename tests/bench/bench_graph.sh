#!/bin/sh
# Benchmark of the graph area: parsing a large graph file and deriving every claim of a large
# graph, each the median of 5 runs against a target. See LICENSE.

# Targets (why): a 5,000-variable, 15,000-edge file parses in under 1 s, so the parser is never
# what a user waits for; the claims of an invented 300-variable, 900-edge graph (about 32,000
# claims, far beyond a hand-written model) are derived and printed as JSON in under 2 s.
: "${SHOAL:=build/shoal}" "${PYTHON:=/usr/bin/python3}"
tmp=$(mktemp -d) || exit 1
trap 'rm -rf "$tmp"' EXIT
fails=0

# Invented random graphs with a fixed seed: variables in topological order, edges forward.
"$PYTHON" - "$tmp" <<'EOF'
import random, sys
d = sys.argv[1]
rng = random.Random(20261202)
def write(path, n, m, hidden_only):
    roles = []
    with open(path, "w") as f:
        f.write("# Invented benchmark graph.\ndefault effect 0.2 sd\ndefault margin 0.1 sd\n")
        for v in range(n):
            r = "hidden" if hidden_only else (
                "input" if v < n // 10 else ("hidden" if rng.random() < 0.15 else "output"))
            roles.append(r)
            f.write("%s v%d %s\n" % (r, v, "real [0, 1]" if r == "input" else "real"))
        edges = set()
        while len(edges) < m:
            a, b = sorted(rng.sample(range(n), 2))
            if roles[b] != "input":
                edges.add((a, b))
        for a, b in sorted(edges):
            f.write("v%d -> v%d\n" % (a, b))
write(d + "/parse.graph", 5000, 15000, True)    # hidden only: no claims, parsing alone
write(d + "/claims.graph", 300, 900, False)
EOF

# Median wall time of 5 runs against a target (Python's clock, so no bc is needed).
check() {
  desc=$1 target=$2
  shift 2
  "$PYTHON" - "$desc" "$target" "$@" <<'EOF'
import statistics, subprocess, sys, time
desc, target, cmd = sys.argv[1], float(sys.argv[2]), sys.argv[3:]
times = []
for _ in range(5):
    t0 = time.perf_counter()
    subprocess.run(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    times.append(time.perf_counter() - t0)
t = statistics.median(times)
print("%s: %s: median %.3f s of 5 runs (target < %g s)" % ("PASS" if t < target else "FAIL",
                                                          desc, t, target))
sys.exit(0 if t < target else 1)
EOF
  [ $? -eq 0 ] || fails=$((fails + 1))
}

check "graph: parse 5,000 variables and 15,000 edges" 1 "$SHOAL" claims -q "$tmp/parse.graph"
n=$("$SHOAL" claims --csv "$tmp/claims.graph" | wc -l)
check "graph: $((n - 1)) claims of a 300-variable, 900-edge graph as JSON" 2 \
  "$SHOAL" claims --json "$tmp/claims.graph"
[ "$fails" -eq 0 ]
