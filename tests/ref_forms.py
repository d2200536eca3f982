# The graph's own forms (effects per a step or over the range, ordered levels, the shape of an
# effect) checked end to end through `shoal import` and `shoal power --json`, against identities
# and statsmodels (Debian python3-statsmodels: ols, anova_lm). See LICENSE.
#
# The archive is invented (fixed seed), shaped like a simulator's: skewed (gamma) noise, noise that
# grows with load, replicated configurations.
import json
import os
import subprocess
import sys
import tempfile

import numpy as np
import pandas as pd
import statsmodels.formula.api as smf
from statsmodels.stats.anova import anova_lm

shoal = os.environ.get("SHOAL", "build/shoal")
SEED = 20261205
N = 360
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import refcheck  # noqa: E402

check = refcheck.report


def grouped(c):
    """The claim record's flat omnibus_* and shape_* fields (README, "The claim record") as the
    groups the checks below read: omnibus {df1, f, p, power} for a trend test, shape_lack_of_fit
    {f, df1, df2, p, pure_error} when that test was formed, else None."""
    c = dict(c)
    c["omnibus"] = ({k: c["omnibus_" + k] for k in ("df1", "f", "p", "power")}
                    if c.get("trend") and c.get("omnibus_df1") is not None else None)
    c["shape_lack_of_fit"] = ({"f": c["shape_f"], "df1": c["shape_df1"], "df2": c["shape_df2"],
                               "p": c["shape_p"], "pure_error": c["shape_pure_error"]}
                              if c.get("shape_f") is not None else None)
    return c


def rel(a, b):
    return abs(a - b) / max(abs(b), 1e-300)


rng = np.random.default_rng(SEED)
pos = np.array([30, 40, 50, 60, 70])
names = ["l30", "l40", "l50", "l60", "l70"]
lim = rng.integers(0, 5, N)                                # ordered level index
share = rng.uniform(0, 0.4, N)                             # an input on [0, 0.4]
flow = rng.integers(400, 5001, N)                          # an input on [400, 5000]
two = rng.choice([1.0, 3.0], N)                            # a numeric input run at two values
three = rng.choice([1.0, 2.0, 3.0], N)                     # ... and at three, replicated
gamma = lambda scale: rng.gamma(2.0, scale, N) - 2.0 * scale   # skewed, mean 0
y = 3 + 4 * share + 0.002 * flow + gamma(1.0)
trend = 5 + 0.05 * pos[lim] + gamma(0.3 + 0.01 * pos[lim])  # noise grows with the level
shp2 = 1 + 0.7 * two + gamma(0.8)
shp3 = 1 + 0.4 * three + 0.5 * (three - 2) ** 2 + gamma(0.5)

with tempfile.TemporaryDirectory() as tmp:
    csv = os.path.join(tmp, "runs.csv")
    pd.DataFrame({"share": share, "flow": flow, "lim": [names[i] for i in lim],
                  "lim6": [names[i] for i in lim], "two": two,
                  "three": three, "y": y, "trend": trend, "shp2": shp2,
                  "shp3": shp3}).to_csv(csv, index=False)
    db = os.path.join(tmp, "runs.db")
    r = subprocess.run([shoal, "import", csv, "--archive", db], capture_output=True, text=True)
    check(r.returncode == 0, "the invented archive imports (%s)" % r.stderr.strip())

    def power(edges, extra_decl=""):
        text = ("# invented graph for ref_forms.py\n"
                "input share real [0, 0.4]\ninput flow integer [400, 5000]\n"
                "input lim levels {l30, l40, l50, l60, l70} ordered at {30, 40, 50, 60, 70}\n"
                + (extra_decl or "input lim6 levels {l30, l40, l50, l60, l70, l80} ordered\n") +
                "input two real [0, 4]\ninput three real [0, 4]\n"
                "output y real\noutput trend real\noutput shp2 real\noutput shp3 real\n"
                "default effect 0.5 sd\ndefault margin 0.1 sd\n" + edges)
        path = os.path.join(tmp, "g.graph")
        with open(path, "w") as f:
            f.write(text)
        r = subprocess.run([shoal, "power", path, db, "--json"], capture_output=True, text=True)
        if r.returncode not in (0, 1):
            check(False, "shoal power on %r: exit %d %s" % (edges, r.returncode, r.stderr))
            return {}
        out = {}
        for c in json.loads(r.stdout)["claims"]:
            if c["kind"] == "effect":
                out[(c["treatment"], c["outcome"])] = grouped(c)
        return out

    base = "lim -> trend effect 0.015\ntwo -> shp2\nthree -> shp3\n"
    # 1. Effects per a step and over the declared range (identities; tolerance 1e-12 relative).
    p_unit = power(base + "share -> y effect 0.005\nflow -> y effect 0.0004\n")
    p_step = power(base + "share -> y effect 5 per 1000\nflow -> y effect 4 per 10000\n")
    p_rng1 = power(base + "share -> y effect 0.002 over range\nflow -> y effect 1.84 over range\n")
    p_rng0 = power(base + "share -> y effect 0.005\nflow -> y effect %r\n" % (1.84 / 4600))
    for key, what in ((("share", "y"), "share (0..0.4)"), (("flow", "y"), "flow (400..5000)")):
        a, b = p_unit.get(key), p_step.get(key)
        check(a is not None and b is not None and rel(b["power"], a["power"]) <= 1e-12 and
              rel(b["effect_raw"], a["effect_raw"]) <= 1e-12,
              "%s: 'effect K per STEP' gives the power of 'effect K/STEP' (%s vs %s, rel 1e-12)"
              % (what, b and b["power"], a and a["power"]))
    a, b = p_rng1.get(("share", "y")), p_unit.get(("share", "y"))
    check(a is not None and rel(a["effect_raw"], 0.002 / 0.4) <= 1e-12 and
          rel(a["power"], b["power"]) <= 1e-12,
          "share: 'effect 0.002 over range' is 0.002 / (0.4 - 0) per unit: effect_raw %s, power "
          "%s vs %s (rel 1e-12)" % (a and a["effect_raw"], a and a["power"], b and b["power"]))
    a, b = p_rng1.get(("flow", "y")), p_rng0.get(("flow", "y"))
    check(a is not None and b is not None and rel(a["power"], b["power"]) <= 1e-12 and
          rel(a["effect_raw"], 1.84 / 4600) <= 1e-12,
          "flow: 'effect 1.84 over range' equals the per-unit form scaled by the range 4600 "
          "(power %s vs %s, rel 1e-12)" % (a and a["power"], b and b["power"]))
    p_step = power(base + "share -> y effect 5 per 1000\nflow -> y effect 4 per 10000\n")
    r = subprocess.run([shoal, "power", os.path.join(tmp, "g.graph"), db], capture_output=True,
                       text=True)
    # Terminal text is wrapped to 80 columns, so the line is compared with its wrapping undone.
    check("share -> y [flow]: effect of interest as written: 5 per 1000 = 5 raw per step = 0.005 "
          "per unit" in " ".join(r.stdout.split()),
          "the power table shows the effect as written and per unit")
    a = p_step.get(("share", "y"))
    check(a is not None and a["effect_written"] == "5 per 1000" and
          rel(a["effect_written_raw"], 5) <= 1e-12 and rel(a["effect_raw"], 0.005) <= 1e-12,
          "every output shows the effect as written ('%s', %s raw per step) and per raw unit (%s)"
          % (a and a["effect_written"], a and a["effect_written_raw"], a and a["effect_raw"]))

    # 2. Ordered levels: the trend test beside the omnibus F, which must match statsmodels'
    # anova_lm on the same runs (one-way, so type I = type II; tolerance 1e-8 relative, the
    # Cholesky solve against QR).
    t = p_unit.get(("lim", "trend"))
    df = pd.DataFrame({"y": trend, "lim": lim})
    aov = anova_lm(smf.ols("y ~ C(lim)", df).fit())
    f_ref, p_ref = aov["F"].iloc[0], aov["PR(>F)"].iloc[0]
    check(t is not None and t["test"] == "trend t" and t["omnibus"] is not None and
          rel(t["omnibus"]["f"], f_ref) <= 1e-8 and rel(t["omnibus"]["p"], p_ref) <= 1e-6,
          "ordered levels: omnibus F %s, p %s vs statsmodels anova_lm F %.10g, p %.6g" % (
              t and t["omnibus"] and t["omnibus"]["f"], t and t["omnibus"] and t["omnibus"]["p"],
              f_ref, p_ref))
    # The slope estimate is the orthogonal-polynomial contrast over the level means divided by
    # S_xx; computed here from the group means directly (equal weights).
    means = np.array([trend[lim == k].mean() for k in range(5)])
    c = pos - pos.mean()
    slope = (c @ means) / (c @ c)
    check(t is not None and rel(t["estimate"], slope) <= 1e-9,
          "ordered levels: trend slope %s vs the linear contrast of the level means %.10g "
          "(rel 1e-9)" % (t and t["estimate"], slope))
    check(t is not None and 0.05 < t["omnibus"]["power"] < t["power"] < 0.999,
          "ordered levels: at a straight-line effect the 1-df trend test has at least the "
          "omnibus F's power (%s vs %s)" % (t and t["power"], t and t["omnibus"]["power"]))
    # A declared level never run is named in the reason.
    p6 = power(base.replace("lim -> trend", "lim6 -> trend"),
               "input lim6 levels {l30, l40, l50, l60, l70, l80} ordered "
               "at {30, 40, 50, 60, 70, 80}\n")
    t6 = p6.get(("lim6", "trend"))
    check(t6 is not None and "never run: l80" in (t6["verdict_reason"] or "") and
          t6["test"] == "trend t",
          "a declared level never run is named in the claim's reason (%r)" % (
              t6 and t6["verdict_reason"]))
    # 3. Shape: two values get the caution; three values get the lack of fit, which must match
    # statsmodels' comparison of the straight line with one mean per value (pure error, since
    # the values are replicated; tolerance 1e-8 relative).
    s2 = p_unit.get(("two", "shp2"))
    check(s2 is not None and s2["distinct_values"] == 2 and not s2["shape_checkable"] and
          s2["caution"] is not None and "cannot be checked" in s2["caution"] and
          "cannot be checked" in (s2["verdict_reason"] or ""),
          "two-valued treatment: caution that the shape cannot be checked, in the caution and "
          "the reason (%r)" % (s2 and s2["caution"]))
    s3 = p_unit.get(("three", "shp3"))
    d3 = pd.DataFrame({"y": shp3, "x": three})
    cmp = anova_lm(smf.ols("y ~ x", d3).fit(), smf.ols("y ~ C(x)", d3).fit())
    f3, p3 = cmp["F"].iloc[1], cmp["Pr(>F)"].iloc[1]
    lof = s3 and s3["shape_lack_of_fit"]
    check(s3 is not None and s3["distinct_values"] == 3 and lof is not None and
          rel(lof["f"], f3) <= 1e-8 and rel(lof["p"], p3) <= 1e-6 and lof["df1"] == 1,
          "three-valued treatment: lack of fit F %s, p %s vs statsmodels anova_lm(line, means) "
          "F %.10g, p %.6g" % (lof and lof["f"], lof and lof["p"], f3, p3))

print("ref_forms: %d failed" % refcheck.failures)
sys.exit(1 if refcheck.failures else 0)
