# A numeric treatment expected to turn (`expect turning`): the claim's basis F, its p, sigma and
# the turn's estimate against statsmodels (Debian python3-statsmodels: ols, compare_f_test,
# anova_lm) on a basis built here independently (raw powers of the treatment, numpy), and its
# power, MDE and runs needed against scipy.stats.ncf with the noncentrality computed here from the
# runs (tests/REFERENCES.md 12). End to end through `shoal import` and `shoal power --json`.
# See LICENSE.
#
# The archives are invented (fixed seed), shaped like a simulator's: replicated configurations,
# skewed (gamma) noise whose spread grows with the treatment.
import json
import os
import subprocess
import sys
import tempfile

import numpy as np
import pandas as pd
import statsmodels.api as sm
from scipy import stats
from statsmodels.stats.anova import anova_lm

shoal = os.environ.get("SHOAL", "build/shoal")
SEED = 20261205
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import refcheck  # noqa: E402

check = refcheck.report


def rel(a, b):
    return abs(a - b) / max(abs(b), 1e-300)


def run_power(tmp, graph, frame):
    """shoal power --json on frame imported into a fresh archive; the effect claims by pair."""
    csv, db, gp = (os.path.join(tmp, n) for n in ("runs.csv", "runs.db", "g.graph"))
    if os.path.exists(db):
        os.remove(db)
    frame.to_csv(csv, index=False)
    with open(gp, "w") as f:
        f.write(graph)
    r = subprocess.run([shoal, "import", csv, "--archive", db, "-q"], capture_output=True,
                       text=True)
    if r.returncode != 0:
        check(False, "import: %s" % r.stderr.strip())
        return {}, ""
    r = subprocess.run([shoal, "power", gp, db, "--json"], capture_output=True, text=True)
    if r.returncode not in (0, 1):
        check(False, "shoal power: exit %d %s" % (r.returncode, r.stderr))
        return {}, ""
    claims = {(c["treatment"], c["outcome"]): c for c in json.loads(r.stdout)["claims"]
              if c["kind"] == "effect"}
    text = subprocess.run([shoal, "power", gp, db], capture_output=True, text=True).stdout
    return claims, " ".join(text.split())


def design_of(frame, adjust, levels):
    """The reduced design: an intercept and the adjustment set (level sets as dummies)."""
    cols = [np.ones(len(frame))]
    for v in adjust:
        if v in levels:
            for lv in levels[v][1:]:
                cols.append((frame[v] == lv).astype(float).to_numpy())
        else:
            cols.append(frame[v].to_numpy(dtype=float))
    return np.column_stack(cols)


def power_at(lam, df1, df2, alpha):
    """Power of the F test: P(F'(df1, df2, lam) > F_{1-alpha}(df1, df2)), scipy.stats."""
    return stats.ncf.sf(stats.f.isf(alpha, df1, df2), df1, df2, lam)


def check_case(name, c, frame, x, y, lo, hi, height, adjust, levels):
    """Every figure of one turning claim c against statsmodels and scipy."""
    if c is None:
        check(False, "%s: the claim is missing" % name)
        return
    xs = frame[x].to_numpy(dtype=float)
    yv = frame[y].to_numpy(dtype=float)
    distinct = len(np.unique(xs))
    deg = min(3, distinct - 2)      # README, "Turning effects": degree min(3, distinct - 2)
    X0 = design_of(frame, adjust, levels)
    # An independent basis: raw powers of the centred, scaled treatment (the same column space
    # as the Legendre polynomials shoal uses).
    zc = (xs - xs.mean()) / xs.std()
    X1 = np.column_stack([X0] + [zc ** k for k in range(1, deg + 1)])
    full, red = sm.OLS(yv, X1).fit(), sm.OLS(yv, X0).fit()
    f_ref, p_ref, df_diff = full.compare_f_test(red)
    aov = anova_lm(red, full)
    check(c["test"] == "basis F" and c["omnibus_df1"] == deg and c["df"] == full.df_resid,
          "%s: test %s on %s and %s df (expected basis F on %d and %.0f)" % (
              name, c["test"], c["omnibus_df1"], c["df"], deg, full.df_resid))
    # Tolerance 1e-8 relative: shoal solves from centred cross-products by Cholesky, statsmodels
    # by a pseudo-inverse (QR); the JSON carries 10 significant digits.
    check(c["omnibus_f"] is not None and rel(c["omnibus_f"], f_ref) <= 1e-8 and
          rel(c["omnibus_f"], aov["F"].iloc[1]) <= 1e-8,
          "%s: basis F %s vs statsmodels compare_f_test %.10g, anova_lm %.10g (rel 1e-8)" % (
              name, c["omnibus_f"], f_ref, aov["F"].iloc[1]))
    check(c["omnibus_p"] is not None and rel(c["omnibus_p"], p_ref) <= 1e-8,
          "%s: p %s vs statsmodels %.10g (rel 1e-8)" % (name, c["omnibus_p"], p_ref))
    sigma = np.sqrt(full.mse_resid)
    check(rel(c["sigma"], sigma) <= 1e-9,
          "%s: sigma %s vs statsmodels %.10g (rel 1e-9)" % (name, c["sigma"], sigma))
    # The turn's height from the P_2 coefficient, P_2 = (3 z^2 - 1) / 2 with z over [lo, hi]
    # (numpy.polynomial.legendre), and its SE.
    z = (2 * xs - lo - hi) / (hi - lo)
    XL = np.column_stack([X0, np.polynomial.legendre.legvander(z, deg)[:, 1:]])
    fl = sm.OLS(yv, XL).fit()
    j = X0.shape[1] + 1
    check(rel(c["estimate"], -1.5 * fl.params[j]) <= 1e-8 and rel(c["se"], 1.5 * fl.bse[j]) <= 1e-8,
          "%s: height %s (SE %s) vs -1.5 x the P_2 coefficient %.10g (SE %.10g) (rel 1e-8)" % (
              name, c["estimate"], c["se"], -1.5 * fl.params[j], 1.5 * fl.bse[j]))
    # The noncentrality at the declared turn h (1 - z^2), h = the effect over the declared range:
    # lambda = ||(I - H_0) f||^2 / sigma^2 (Searle 1971, sec. 5.5), computed from the runs here.
    f = height * (1 - z ** 2)
    resid = f - X0 @ np.linalg.lstsq(X0, f, rcond=None)[0]
    lam = resid @ resid / sigma ** 2
    alpha, df2, n = c["alpha"], full.df_resid, len(yv)
    p_ref = power_at(lam, deg, df2, alpha)
    check(rel(c["effect_raw"], height) <= 1e-12,
          "%s: the effect of interest is the turn's height %s (expected %g)" % (
              name, c["effect_raw"], height))
    check(abs(c["power"] - p_ref) <= 1e-9,
          "%s: power %s vs scipy.stats.ncf %.12f at lambda %.6g (abs 1e-9)" % (
              name, c["power"], p_ref, lam))
    p_mde = power_at(lam * (c["mde"] / height) ** 2, deg, df2, alpha)
    check(abs(p_mde - 0.8) <= 1e-7,
          "%s: scipy power at the MDE %s is %.10f (target 0.8, abs 1e-7)" % (name, c["mde"], p_mde))
    # Runs needed: more runs like these keep lambda per run and the parameters.
    k = n - df2
    N = c["runs_needed"]
    at = power_at(lam * N / n, deg, N - k, alpha)
    below = power_at(lam * (N - 1) / n, deg, N - 1 - k, alpha) if N - 1 - k > 0 else 0
    check(at >= 0.8 > below,
          "%s: scipy power %.6f at %s runs needed, %.6f at one fewer (target 0.8)" % (
              name, at, N, below))


with tempfile.TemporaryDirectory() as tmp:
    rng = np.random.default_rng(SEED)
    # Case 1: a real treatment on [0, 10] run at 7 values with replicates, a numeric adjustment
    # set, a hump of height 1.2 (the true shape is the reference turn), gamma noise growing with x.
    n = 140
    x = rng.choice(np.linspace(0, 10, 7), n)
    s = rng.uniform(0, 1, n) + 0.05 * x        # the adjustment variable leans on x a little
    noise = (rng.gamma(2.0, 1.0, n) - 2.0) * (0.6 + 0.06 * x)
    y = 2 + 1.2 * 4 * x * (10 - x) / 100 + 1.5 * s + noise
    graph = ("# invented graph for ref_turning.py\ninput x real [0, 10]\ninput s real [0, 2]\n"
             "output y real\ndesign independent\nx -> y expect turning effect 1 over range\n"
             "s -> y effect 1\n")
    frame = pd.DataFrame({"x": x, "s": s, "y": y})
    cl, text = run_power(tmp, graph, frame)
    c = cl.get(("x", "y"))
    check_case("real x, 7 values, adjusting for s", c, frame, "x", "y", 0.0, 10.0, 1.0, ["s"], {})
    check(c is not None and 0.2 < c["power"] < 0.95,
          "real x: the power %s lies where the checks can tell (0.2 .. 0.95)" %
          (c and c["power"]))
    check("a turn of height 1 over [0, 10]" in text and "degree-3 polynomial basis" in text,
          "the power table says what the effect of a turning claim means")

    # Case 2: an integer treatment at 4 values (degree 2), a level-set adjustment, the effect
    # written per unit (0.2 per unit over the range 1..4 = a turn of height 0.6).
    n = 90
    x = rng.integers(1, 5, n)
    lv = rng.choice(["low", "mid", "high"], n)
    shift = pd.Series(lv).map({"low": 0.0, "mid": 0.7, "high": 1.1}).to_numpy()
    z = (2 * x - 5) / 3.0
    y = 1 + 0.9 * (1 - z ** 2) + shift + (rng.gamma(1.5, 1.0, n) - 1.5) * (0.5 + 0.1 * x)
    graph = ("# invented graph for ref_turning.py\ninput x integer [1, 4]\n"
             "input l levels {low, mid, high}\noutput y real\ndesign independent\n"
             "x -> y expect turning effect 0.2\nl -> y effect 1\n")
    frame = pd.DataFrame({"x": x, "l": lv, "y": y})
    cl, _ = run_power(tmp, graph, frame)
    check_case("integer x, 4 values, adjusting for a level set", cl.get(("x", "y")), frame, "x",
               "y", 1.0, 4.0, 0.6, ["l"], {"l": ["low", "mid", "high"]})

    # Case 3: three distinct values cannot carry a degree-2 basis plus one: untestable, and the
    # reason names the count.
    frame = pd.DataFrame({"x": np.minimum(x, 3), "l": lv, "y": y})
    graph = graph.replace("integer [1, 4]", "integer [1, 3]")
    cl, _ = run_power(tmp, graph, frame)
    c = cl.get(("x", "y"))
    check(c is not None and c["verdict"] == "untestable" and
          "at least 4 distinct values" in (c["verdict_reason"] or "") and
          "these runs have 3" in (c["verdict_reason"] or ""),
          "three distinct values: untestable, naming the count (%s)" %
          (c and c["verdict_reason"]))

    # Case 4: before any usable run (one complete run), sized from the declared noise SD over the declared
    # range, spread evenly: lambda = N (4/45) (h / sigma)^2 for a real treatment (Var(1 - z^2)
    # with z uniform on [-1, 1]).
    graph = ("# invented graph for ref_turning.py\ninput x real [0, 10]\n"
             "output y real noise 2\nx -> y expect turning effect 1.5 over range\n")
    cl, _ = run_power(tmp, graph, pd.DataFrame({"x": [3.0, 5.0], "y": [np.nan, 1.0]}))
    c = cl.get(("x", "y"))
    ok = c is not None and c["test"] == "basis F" and c["runs_needed"] is not None
    if ok:
        N = c["runs_needed"]
        lam = lambda m: m * (4 / 45) * (1.5 / 2) ** 2
        at = power_at(lam(N), 3, N - 4, c["alpha"])
        below = power_at(lam(N - 1), 3, N - 5, c["alpha"])
        ok = at >= 0.8 > below
    check(ok, "planned from the declared noise: scipy power %s at %s runs needed, %s at one "
          "fewer (target 0.8)" % (ok and at, c and c["runs_needed"], ok and below))

    # Case 5: the plan sized from the declared noise (no complete run): its predicted power after
    # as many runs as the assessment needs, against scipy's power at the noncentrality of the
    # planned runs themselves, lambda = N Var(1 - z^2) (h / sigma)^2. The plan measures a planned
    # run by the slope's information, scaled to the basis's for evenly spread runs (README,
    # "Turning effects"): tolerance 0.02 in power for that stand-in.
    frame = pd.DataFrame({"x": [3.0, 5.0], "y": [np.nan, np.nan]})
    cl, _ = run_power(tmp, graph, frame)
    c = cl.get(("x", "y"))
    N = c and c["runs_needed"]
    ok, pa, pr = False, None, None
    if N:
        out = os.path.join(tmp, "plan.csv")
        r = subprocess.run([shoal, "plan", os.path.join(tmp, "g.graph"), os.path.join(tmp, "runs.db"),
                            "--budget", str(int(N)), "-o", out, "--json"], capture_output=True,
                           text=True)
        if r.returncode in (0, 1):
            pa = json.loads(r.stdout)["claims"][0]["power_after"]
            xs = pd.read_csv(out)["x"].to_numpy(dtype=float)
            z = (2 * xs - 10) / 10
            pr = power_at(len(xs) * np.var(1 - z ** 2) * (1.5 / 2) ** 2, 3, len(xs) - 4,
                          c["alpha"])
            ok = abs(pa - pr) <= 0.02
    check(ok, "the plan from the declared noise predicts power %s after %s runs; scipy at the "
          "planned runs' own lambda: %s (abs 0.02)" % (pa, N, pr))

sys.exit(1 if refcheck.failures else 0)
