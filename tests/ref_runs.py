# What counts as one run, counted independently with pandas (Debian python3-pandas) on three invented
# archives of known replicate structure: the repeated rows, configurations and replicated
# configurations of `shoal check --json`, and the lack-of-fit note's counts of `shoal power --json`
# (repeated configurations, distinct configurations and runs of the claim's regressors among the
# runs counted once). Exact integer agreement is required. See LICENSE.
import json
import os
import re
import sqlite3
import subprocess
import sys
import tempfile

import numpy as np   # Debian python3-numpy: the invented archives' noise, fixed seeds
import pandas as pd  # Debian python3-pandas: the independent grouping and duplicate removal

SHOAL = os.environ.get("SHOAL", "build/shoal")
failed = 0


def check(ok, desc):
    global failed
    print(("PASS: " if ok else "FAIL: ") + desc)
    if not ok:
        failed += 1


GRAPH = """# Invented: one integer input, one level set, one output; the output bends with x, so the
# straight line misses structure and the lack-of-fit note appears.
input x integer [0, 4]
input z levels {a, b, c}
output y real
default effect 0.5 sd
design independent
x -> y
z -> y
"""


def archive_a(rng):
    """Seeded: every configuration run 1 to 4 times with distinct seeds, then 40 rows imported
    twice (same seed, same outputs)."""
    rows, seed = [], 1000
    for x in range(5):
        for z in "abc":
            for _ in range(1 + (x + "abc".index(z)) % 4):
                seed += 7
                rows.append((seed, x, z, x * x + rng.lognormal(0, 0.5)))
    df = pd.DataFrame(rows, columns=["seed", "x", "z", "y"])
    return pd.concat([df, df.iloc[:40]], ignore_index=True), True


def archive_b(rng):
    """Seeded, common random numbers: the same 6 seeds run at every configuration (heavy-tailed
    noise shared by seed), and 25 rows repeated."""
    rows = []
    for x in range(5):
        for z in "abc":
            for s in range(6):
                rows.append((100 + s, x, z, x * x + (s - 2.5) + rng.standard_t(3)))
    df = pd.DataFrame(rows, columns=["seed", "x", "z", "y"])
    return pd.concat([df, df.sample(25, random_state=3)], ignore_index=True), True


def archive_c(rng):
    """No seed column: replicates differ in y (zero-inflated), and 30 full rows repeat."""
    rows = []
    for i in range(120):
        x, z = int(rng.integers(0, 5)), "abc"[int(rng.integers(0, 3))]
        y = 0.0 if rng.random() < 0.2 else 3 * (x - 2) ** 2 + rng.exponential(1.0)
        rows.append((x, z, round(y, 6)))
    df = pd.DataFrame(rows, columns=["x", "z", "y"])
    return pd.concat([df, df.iloc[10:40]], ignore_index=True), False


def expected(df, seeded):
    """Runs counted once, independently of shoal: pandas' drop_duplicates on the identity."""
    key = ["x", "z", "seed"] if seeded else ["x", "z", "y"]
    runs = df.drop_duplicates(subset=key, keep="first")
    g = runs.groupby(["x", "z"]).size()
    return runs, {"rows": len(df), "runs": len(runs), "repeated_rows": len(df) - len(runs),
                  "configurations": len(g), "configurations_repeated": int((g >= 2).sum())}


def run(args):
    return subprocess.run([SHOAL] + args, capture_output=True, text=True)


rng = np.random.default_rng(20261205)
with tempfile.TemporaryDirectory() as tmp:
    for name, make in (("A", archive_a), ("B", archive_b), ("C", archive_c)):
        df, seeded = make(rng)
        graph = os.path.join(tmp, name + ".graph")
        with open(graph, "w") as f:
            f.write(GRAPH + ("runseed seed\n" if seeded else ""))
        db = os.path.join(tmp, name + ".db")
        con = sqlite3.connect(db)
        df.to_sql("runs", con, index=False)
        con.close()
        runs, want = expected(df, seeded)
        p = run(["check", graph, db, "--json"])
        got = json.loads(p.stdout)["run_identity"] if p.returncode in (0, 1) else {}
        same = all(got.get(k) == v for k, v in want.items())
        check(same, "archive %s: check's run figures equal pandas' count %s (shoal %s)"
              % (name, want, {k: got.get(k) for k in want}))
        if seeded:
            shared = runs.groupby("seed")[["x", "z"]].apply(
                lambda s: len(s.drop_duplicates())).gt(1).sum()
            check(got.get("seeds") == runs["seed"].nunique()
                  and got.get("seeds_shared") == int(shared),
                  "archive %s: %s seeds, %s shared by several configurations (pandas %d, %d)"
                  % (name, got.get("seeds"), got.get("seeds_shared"), runs["seed"].nunique(),
                     shared))
        p = run(["power", graph, db, "--json"])
        claims = json.loads(p.stdout)["claims"] if p.returncode in (0, 1) else []
        notes = 0
        for c in claims:
            note = c.get("fit_note") or ""
            m = re.search(r"pure error from (\d+) repeated configurations? \(of (\d+) distinct in "
                          r"(\d+) runs\)", note)
            if not m:
                continue
            notes += 1
            keys = [c["treatment"]] + list(c.get("adjustment_set") or [])
            used = runs.dropna(subset=keys + [c["outcome"]])
            g = used.groupby(keys).size()
            want_n = (int((g >= 2).sum()), len(g), len(used))
            got_n = tuple(int(v) for v in m.groups())
            check(got_n == want_n, "archive %s, %s -> %s: the lack-of-fit note's repeated, distinct "
                  "configurations and runs %s equal pandas' %s" % (name, c["treatment"],
                                                                  c["outcome"], got_n, want_n))
        check(notes > 0, "archive %s: the lack-of-fit note appears (%d claims)" % (name, notes))

sys.exit(1 if failed else 0)
