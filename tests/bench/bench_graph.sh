#!/bin/sh
# Benchmark of the graph area: parsing a large graph file and deriving every claim of a large
# graph, each the median of 5 runs against a target; and the claims of large graphs (issue 12). See LICENSE.

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
# Claims at scale (issue 12): a chain of 800 variables (one input, 799 outputs: 319,600 claims),
# and wide graphs of 1,500 and 3,000 variables: inputs set independently by the design, 40
# outputs each caused by an equal share of the inputs and by the output before it. Outputs' noise
# is declared independent, so every pair of outputs makes a claim (the most work).
with open(d + "/chain800.graph", "w") as f:
    f.write("# Invented chain.\ndefault effect 0.2 sd\ndefault margin 0.1 sd\nnoise independent\n"
            "input v0 real [0, 1]\n")
    f.writelines("output v%d real\n" % i for i in range(1, 800))
    f.writelines("v%d -> v%d\n" % (i, i + 1) for i in range(799))
# A graph records at most 1,000 inputs and outputs (COV_MAX_RECORDED): past that, the rest are
# hidden mediators, each between an input and that input's output.
for n in (1500, 3000):
    n_out = 40
    n_in = min(n, 1000) - n_out
    n_hid = n - n_in - n_out
    per = n_in // n_out
    with open(d + "/wide%d.graph" % n, "w") as f:
        f.write("# Invented wide graph.\ndefault effect 0.2 sd\ndefault margin 0.1 sd\n"
                "design independent\nnoise independent\n")
        f.writelines("input x%d real [0, 1]\n" % i for i in range(n_in))
        f.writelines("output y%d real\n" % j for j in range(n_out))
        f.writelines("hidden h%d real\n" % k for k in range(n_hid))
        for j in range(n_out):
            f.writelines("x%d -> y%d\n" % (per * j + i, j) for i in range(per))
            if j:
                f.write("y%d -> y%d\n" % (j - 1, j))
        for k in range(n_hid):
            i = k % n_in
            f.write("x%d -> h%d\nh%d -> y%d\n" % (i, k, k, i // per))
EOF

# Median wall time of 5 runs against a target (Python's clock, so no bc is needed); with
# CLOCK=cpu the target is on the child's processor time (user + system), the steadier figure on a
# shared machine, with the wall time beside it. REPS sets the runs (5).
check() {
  desc=$1 target=$2
  shift 2
  "$PYTHON" - "$desc" "$target" "${CLOCK:-wall}" "${REPS:-5}" "$@" <<'EOF'
import os, statistics, subprocess, sys, time
desc, target, clock, reps, cmd = sys.argv[1], float(sys.argv[2]), sys.argv[3], int(sys.argv[4]), sys.argv[5:]
walls, cpus = [], []
for _ in range(reps):
    c0 = os.times()
    t0 = time.perf_counter()
    rc = subprocess.run(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL).returncode
    walls.append(time.perf_counter() - t0)
    if rc > 1:   # a failed command measures nothing: never a pass
        print("FAIL: %s: the command exited with status %d: %s" % (desc, rc, " ".join(cmd)))
        sys.exit(1)
    c1 = os.times()
    cpus.append(c1.children_user + c1.children_system - c0.children_user - c0.children_system)
w, c = statistics.median(walls), statistics.median(cpus)
t = c if clock == "cpu" else w
print("%s: %s: median %.3f s %s of %d runs (%.3f s %s; target < %g s %s)"
      % ("PASS" if t < target else "FAIL", desc, t, clock, reps, c if clock != "cpu" else w,
         "cpu" if clock != "cpu" else "wall", target, clock))
sys.exit(0 if t < target else 1)
EOF
  [ $? -eq 0 ] || fails=$((fails + 1))
}

check "graph: parse 5,000 variables and 15,000 edges" 1 "$SHOAL" claims -q "$tmp/parse.graph"
n=$("$SHOAL" claims --csv "$tmp/claims.graph" | wc -l)
check "graph: $((n - 1)) claims of a 300-variable, 900-edge graph as JSON" 2 \
  "$SHOAL" claims --json "$tmp/claims.graph"
# Issue 12: the whole derivation (d-separation and a minimal separator for every pair) and the
# CSV of every claim, judged on processor time, medians of 3.
for gr in chain800 wide1500 wide3000; do
  n=$("$SHOAL" claims --csv "$tmp/$gr.graph" | wc -l)
  case $gr in chain800) t=1 ;; *) t=5 ;; esac
  CLOCK=cpu REPS=3 check "graph: $((n - 1)) claims of $gr as CSV" $t \
    "$SHOAL" claims --csv "$tmp/$gr.graph"
done
[ "$fails" -eq 0 ]
