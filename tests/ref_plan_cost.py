# Run cost in `shoal plan`: a cost column moves runs to cheap regions when the information is equal,
# and the printed total cost is the sum of the fitted costs, recomputed here with numpy's least
# squares and Duan's (1983) smearing. The archive is invented and drawn here. See LICENSE.
import json
import math
import os
import re
import subprocess
import sys
import tempfile

import numpy as np

SHOAL = os.environ.get("SHOAL", "build/shoal")
failed = 0


def check(ok, desc):
    global failed
    print(("PASS: " if ok else "FAIL: ") + desc)
    if not ok:
        failed += 1


def run(args):
    return subprocess.run([SHOAL] + args, capture_output=True, text=True)


# A straight line with constant noise: the slope of x is learnt equally well from runs at either
# end of its domain, so without costs the plan splits its runs evenly; the cost grows tenfold
# from x = 0 to x = 10.
GRAPH = """# invented: one numeric and one bool input, a straight response, cost rising with x
input x real [0, 10]
input b bool
output y real
x -> y effect 0.1
b -> y effect 0.5
"""
rng = np.random.default_rng(7)
n0 = 60
x = np.concatenate([[0.0, 10.0, 0.0, 10.0], rng.uniform(0, 10, n0 - 4)])
b = np.concatenate([[0, 0, 1, 1], rng.integers(0, 2, n0 - 4)])
y = 0.1 * x + 0.5 * b + rng.normal(0, 1.5, n0)
cost = np.exp(0.1 + 0.23 * x) * rng.lognormal(0, 0.15, n0)
# The archive holds what the CSV holds: six decimals.
x, y, cost = np.round(x, 6), np.round(y, 6), np.round(cost, 6)

with tempfile.TemporaryDirectory() as d:
    g = os.path.join(d, "cost.graph")
    with open(g, "w") as fh:
        fh.write(GRAPH)
    csv = os.path.join(d, "runs.csv")
    with open(csv, "w") as fh:
        fh.write("x,b,y,cpu_s,seed\n")
        for i in range(n0):
            fh.write("%.6f,%d,%.6f,%.6f,%d\n" % (x[i], b[i], y[i], cost[i], 1000 + i))
    db = os.path.join(d, "a.db")
    r = run(["import", csv, "--archive", db])
    check(r.returncode == 0, "the invented archive imports (%s)" % r.stderr.strip())

    def plan(extra, name):
        out = os.path.join(d, name)
        r = run(["plan", g, db, "--budget", "40", "-o", out, "--json"] + extra)
        rows = np.genfromtxt(out, delimiter=",", names=True)
        return r, rows

    r0, p0 = plan([], "plain.csv")
    r1, p1 = plan(["--cost-column", "cpu_s"], "cost.csv")
    check(r0.returncode in (0, 1) and r1.returncode in (0, 1),
          "plan runs with and without --cost-column (exit %d, %d)" % (r0.returncode, r1.returncode))
    cheap0 = float(np.mean(p0["x"] < 5))
    cheap1 = float(np.mean(p1["x"] < 5))
    check(0.3 <= cheap0 <= 0.7,
          "without costs the plan splits runs between the ends of x (%.2f at the cheap end, "
          "0.3 to 0.7 expected by symmetry)" % cheap0)
    check(cheap1 >= cheap0 + 0.15,
          "with the cost column more runs go to the cheap end: %.2f vs %.2f (at least 0.15 more)"
          % (cheap1, cheap0))
    true_cost = lambda rows: float(np.sum(np.exp(0.1 + 0.23 * rows["x"])))
    check(true_cost(p1) < 0.85 * true_cost(p0),
          "the planned runs cost less with the cost column: %.1f vs %.1f (true cost; < 0.85x)"
          % (true_cost(p1), true_cost(p0)))

    # The total the plan prints: the sum over planned runs of smear * exp(z'gamma), gamma from the
    # least-squares fit of log cost on the coded inputs (x scaled to [-1, 1], b 0/1); numpy lstsq,
    # 1e-9 relative on the JSON (10 significant digits), 1e-5 on the text (6 digits).
    Z = np.column_stack([np.ones(n0), 2 * x / 10 - 1, b])
    gamma, *_ = np.linalg.lstsq(Z, np.log(cost), rcond=None)
    smear = float(np.mean(np.exp(np.log(cost) - Z @ gamma)))
    Zp = np.column_stack([np.ones(len(p1)), 2 * p1["x"] / 10 - 1, p1["b"]])
    want = float(np.sum(smear * np.exp(Zp @ gamma)))
    got = json.loads(r1.stdout)["total_cost"] if r1.stdout.startswith("{") else float("nan")
    check(abs(got - want) <= 1e-9 * want,
          "JSON total_cost %.10g = sum of fitted costs %.10g (numpy lstsq + Duan smearing, 1e-9)" % (got, want))
    rt = run(["plan", g, db, "--budget", "40", "-o", os.path.join(d, "t.csv"), "--cost-column", "cpu_s",
              "--replicates", "2"])
    m = re.search(r"predicted total cost: ([0-9.e+]+)", rt.stdout)
    p2 = np.genfromtxt(os.path.join(d, "t.csv"), delimiter=",", names=True)
    Zp = np.column_stack([np.ones(len(p2)), 2 * p2["x"] / 10 - 1, p2["b"]])
    want2 = float(np.sum(smear * np.exp(Zp @ gamma)))
    check(m is not None and abs(float(m.group(1)) - want2) <= 1e-5 * want2 and len(p2) == 80,
          "printed total cost %s = sum over the 80 planned runs (2 replicates) of the fitted cost "
          "%.6g (1e-5, six printed digits)" % (m.group(1) if m else None, want2))

    # The graph's own declaration of the cost column (`ledger NAME cost`) stands for --cost-column.
    g2 = os.path.join(d, "ledger.graph")
    with open(g2, "w") as fh:
        fh.write(GRAPH + "ledger cpu_s cost\n")
    rl = run(["plan", g2, db, "--budget", "40", "-o", os.path.join(d, "l.csv"), "--json"])
    tl = json.loads(rl.stdout)["total_cost"] if rl.stdout.startswith("{") else float("nan")
    check(rl.returncode in (0, 1) and abs(tl - got) <= 1e-9 * got,
          "with `ledger cpu_s cost` in the graph the plan fits the same cost model (total %.10g, "
          "1e-9) without --cost-column (%s)" % (tl, rl.stderr.strip()))

    # A cost budget: the plan stops before its fitted cost would pass it.
    rb = run(["plan", g, db, "--cost-column", "cpu_s", "--cost-budget", "50", "-o",
              os.path.join(d, "b.csv"), "--json"])
    tot = json.loads(rb.stdout)["total_cost"] if rb.stdout.startswith("{") else float("nan")
    runs = json.loads(rb.stdout)["runs"] if rb.stdout.startswith("{") else 0
    check(tot <= 50 and runs > 5, "--cost-budget 50: %d runs with fitted cost %.3f <= 50" % (runs, tot))

    # Bad input: an absent column is the user's error, exit 2, named.
    rbad = run(["plan", g, db, "--budget", "5", "--cost-column", "wall_time", "-o", os.path.join(d, "x.csv")])
    check(rbad.returncode == 2 and "wall_time" in rbad.stderr,
          "--cost-column naming no column exits 2 and names it (%s)" % rbad.stderr.strip())
    rnoarch = run(["plan", g, "--budget", "5", "--cost-column", "cpu_s", "-o", os.path.join(d, "y.csv")])
    check(rnoarch.returncode == 2, "--cost-column without an archive exits 2")

sys.exit(1 if failed else 0)
