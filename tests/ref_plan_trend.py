# The plan sizes an ordered level treatment by its linear trend, as the assessment tests it: the
# predicted power after the planned runs equals the trend test's power on the archive's runs plus
# the planned ones, computed here apart from shoal (numpy least squares for the contrast's
# variance, scipy.stats.nct for the power; tests/REFERENCES.md 12a). See LICENSE.
#
# The archive is invented (fixed seed): an ordered input run unevenly at five positions, a numeric
# input, skewed (gamma) noise.
import json
import os
import subprocess
import sys
import tempfile

import numpy as np
import pandas as pd
from scipy import stats

shoal = os.environ.get("SHOAL", "build/shoal")
SEED = 20261205
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import refcheck  # noqa: E402

check = refcheck.report


POS = np.array([30.0, 40.0, 50.0, 60.0, 70.0])
NAMES = ["l30", "l40", "l50", "l60", "l70"]
GRAPH = ("# invented graph for ref_plan_trend.py\n"
         "input lim levels {l30, l40, l50, l60, l70} ordered at {30, 40, 50, 60, 70}\n"
         "input s real [0, 1]\noutput y real\ndesign independent\n"
         "lim -> y effect 0.01\ns -> y effect 1\n")


def trend_power(lim, s, sigma, effect, alpha):
    """The trend t test's power on runs (lim level index, s): q^2 = S_xx^2 / (c' V c) with V the
    dummies' block of (X'X)^-1, X = [1, s, dummies of the levels present], c the centred
    positions of the levels present; df = n - 2 - (L_present - 1) (README, "Ordered levels")."""
    present = sorted(set(lim.tolist()))
    ref = present[0]
    cols = [np.ones(len(lim)), s] + [(lim == l).astype(float) for l in present[1:]]
    X = np.column_stack(cols)
    V = np.linalg.inv(X.T @ X)[2:, 2:]
    x = POS[present]
    c = (x - x.mean())[1:]
    sxx = ((x - x.mean()) ** 2).sum()
    q = sxx / np.sqrt(c @ V @ c)
    df = len(lim) - 2 - (len(present) - 1)
    ncp = effect * q / sigma
    tc = stats.t.isf(alpha / 2, df)
    return stats.nct.sf(tc, df, ncp) + stats.nct.cdf(-tc, df, ncp)


with tempfile.TemporaryDirectory() as tmp:
    rng = np.random.default_rng(SEED)
    n = 100
    lim = rng.choice(5, n, p=[0.1, 0.3, 0.3, 0.2, 0.1])
    s = rng.uniform(0, 1, n)
    y = 0.01 * POS[lim] + s + (rng.gamma(2.0, 1.0, n) - 2.0) / np.sqrt(2.0)
    csv, db, gp = (os.path.join(tmp, f) for f in ("runs.csv", "runs.db", "g.graph"))
    pd.DataFrame({"lim": [NAMES[i] for i in lim], "s": s, "y": y}).to_csv(csv, index=False)
    with open(gp, "w") as f:
        f.write(GRAPH)
    r = subprocess.run([shoal, "import", csv, "--archive", db, "-q"], capture_output=True,
                       text=True)
    check(r.returncode == 0, "the invented archive imports (%s)" % r.stderr.strip())
    # The classic test and the formula: the figures checked here are the noncentral t's at the
    # residual sigma (the robust test moves sigma by an HC3 ratio, resampling by the bootstrap).
    classic = ["--test", "classic", "--power-by", "formula"]
    r = subprocess.run([shoal, "power", gp, db, "--json"] + classic, capture_output=True,
                       text=True)
    a = [c for c in json.loads(r.stdout)["claims"] if c["treatment"] == "lim"][0]
    check(a["test"] == "trend t", "the assessment tests lim by its trend (%s)" % a["test"])
    # Power on the archive alone, apart from shoal (a check of this file's own formula).
    p0 = trend_power(lim, s, a["sigma"], a["effect_raw"], a["alpha"])
    check(abs(p0 - a["power"]) <= 1e-8, "trend power on the archive %s vs numpy/scipy %.10f "
          "(abs 1e-8)" % (a["power"], p0))
    for budget in (1, 60, 250):
        out = os.path.join(tmp, "plan.csv")
        r = subprocess.run([shoal, "plan", gp, db, "--budget", str(budget), "-o", out, "--json"]
                           + classic, capture_output=True, text=True)
        if r.returncode not in (0, 1):
            check(False, "shoal plan --budget %d: exit %d %s" % (budget, r.returncode, r.stderr))
            continue
        pc = [c for c in json.loads(r.stdout)["claims"] if c["treatment"] == "lim"][0]
        plan = pd.read_csv(out)
        lim2 = np.concatenate([lim, plan["lim"].map(NAMES.index).to_numpy()])
        s2 = np.concatenate([s, plan["s"].to_numpy(dtype=float)])
        p1 = trend_power(lim2, s2, a["sigma"], a["effect_raw"], a["alpha"])
        # Tolerance 1e-6: the plan's exact cross-products (no ridge in its predictions) against
        # numpy's inverse; the JSON carries 10 significant digits. (Measuring the claim by the
        # omnibus F, as the plan did before, was off by 0.11 after one run.)
        check(abs(pc["power_after"] - p1) <= 1e-6,
              "plan of %d runs: predicted power %s vs the trend test's power %.10f on the archive "
              "and the planned runs (numpy/scipy, abs 1e-6)" % (budget, pc["power_after"], p1))

sys.exit(1 if refcheck.failures else 0)
