# Seed blocks against statsmodels OLS with seed fixed effects (Debian python3-statsmodels): on an
# invented parcel-sorting campaign that shares seeds across configurations (common random
# numbers), `shoal power --json` gives, for every testable claim, the F test of the seed blocks
# (F, df, p) and their share of the residual sum of squares equal to anova_lm of the claim's
# regression without and with C(block); where shoal uses the blocks, the estimate, SE and residual
# df equal the C(block) model's, and the power equals scipy's noncentral t at that model's SE;
# where it does not, they equal the model without blocks. Tolerance 1e-8 relative (shoal prints
# 10 significant digits; both fits are backward stable, and the design's condition number is
# below 1e3, so they agree to about 1e-12; tests/REFERENCES.md 13). The blocks are formed here
# independently of shoal, one effect per seed: a run whose seed no other of the claim's runs used
# is a block of its own.
# See LICENSE.
import json
import os
import sqlite3
import subprocess
import sys
import tempfile

import numpy as np                        # Debian python3-numpy
import pandas as pd                       # Debian python3-pandas
import statsmodels.formula.api as smf     # Debian python3-statsmodels
from scipy import stats                   # Debian python3-scipy
from statsmodels.stats.anova import anova_lm

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from refcheck import report  # noqa: E402

SHOAL = os.environ.get("SHOAL", "build/shoal")
REL = 1e-8

GRAPH = """# Invented parcel-sorting line (not a real one): the seed draws the parcel stream, shared
# across configurations (common random numbers).
input speed real [0.5, 2]
input sorters integer [2, 8]
input express bool
output delay real
output misroutes real
default effect 0.15 sd
default margin 0.1 sd
design independent
runseed seed
ledger wall cost
speed, sorters, express -> delay
speed, express -> misroutes
"""


def simulate(seed, speed, sorters, express):
    """The invented simulator, deterministic under its seed: the seed's parcel stream (shared by
    every configuration run with that seed) makes a big additive part of the delay and a small
    part of the misroutes; the rest of the noise is skewed and grows with the load."""
    stream = np.random.default_rng(seed)
    burst = stream.gamma(2.0, 3.0)                     # the stream's burstiness, skewed
    mis_bias = stream.normal(0.0, 0.05)
    own = np.random.default_rng([seed, int(speed * 1000), sorters, express])
    load = speed * 6.0 / sorters
    delay = 4.0 + 3.0 * speed - 0.6 * sorters - 1.5 * express + 2.0 * burst \
        + (1.0 + load) * (own.gamma(3.0, 0.5) - 1.5)
    mis = max(0.0, 0.3 * speed + 0.2 * express + mis_bias + own.lognormal(-1.0, 0.8))
    wall = 20.0 * (1.0 + load) * own.lognormal(0.0, 0.3)
    return round(delay, 9), round(mis, 9), round(wall, 3)


def campaign():
    rng = np.random.default_rng(20261205)
    rows = []
    crn = list(range(501, 513))                        # 12 seeds shared across configurations
    for c in range(40):
        speed = round(float(rng.uniform(0.5, 2.0)), 3)
        sorters = int(rng.integers(2, 9))
        express = int(rng.random() < 0.4)
        for s in rng.choice(crn, size=int(rng.integers(2, 5)), replace=False):
            rows.append((int(s), speed, sorters, express))
    for s in range(9001, 9016):                        # 15 runs on seeds of their own
        rows.append((s, round(float(rng.uniform(0.5, 2.0)), 3), int(rng.integers(2, 9)),
                     int(rng.random() < 0.4)))
    out = []
    for s, speed, sorters, express in rows:
        d, m, w = simulate(s, speed, sorters, express)
        out.append((s, speed, sorters, express, d, m, w))
    df = pd.DataFrame(out, columns=["seed", "speed", "sorters", "express", "delay", "misroutes",
                                    "wall"])
    return pd.concat([df, df.iloc[5:9]], ignore_index=True)   # 4 rows imported twice


def rel(a, b):
    return abs(a - b) / max(abs(b), 1e-300)


def close(a, b):
    return a is not None and b is not None and rel(a, b) <= REL


with tempfile.TemporaryDirectory() as tmp:
    graph = os.path.join(tmp, "line.graph")
    with open(graph, "w") as f:
        f.write(GRAPH)
    df = campaign()
    db = os.path.join(tmp, "line.db")
    con = sqlite3.connect(db)
    df.to_sql("runs", con, index=False)
    con.close()
    # The classic test by formula: the statsmodels fits below use classic standard errors.
    p = subprocess.run([SHOAL, "power", graph, db, "--json", "--test", "classic", "--power-by",
                        "formula"], capture_output=True, text=True)
    claims = json.loads(p.stdout)["claims"] if p.returncode in (0, 1) else []
    # With the default (robust) test, a blocked claim keeps the blocked model's classic test by
    # formula (HC3 and resampling are not formed with the blocks) and says so.
    r = subprocess.run([SHOAL, "power", graph, db, "--json"], capture_output=True, text=True)
    robust = json.loads(r.stdout)["claims"] if r.returncode in (0, 1) else []
    same = len(robust) == len(claims) > 0
    for a, b in zip(claims, robust):
        if a["seed_blocks_used"]:
            same &= b["seed_blocks_used"] and b["test_se"] == "classic" and \
                b["power_method"] == "formula" and b["power"] == a["power"] and \
                "seed blocks: the classic test of the blocked model" in (b["noise_note"] or "")
    report(same, "default robust test: the blocked claims keep the blocked classic test by "
           "formula, with the note")
    report(len(claims) > 0, "shoal power --json ran on the invented campaign (exit %d)"
           % p.returncode)
    runs = df.drop_duplicates(subset=["seed", "speed", "sorters", "express"])
    used_any = unused_any = 0
    for c in claims:
        if c["status"] != "testable":
            continue
        x, y, S = c["treatment"], c["outcome"], list(c["adjustment_set"])
        name = "%s %s %s" % (x, "->" if c["kind"] == "effect" else "-0->", y)
        d = runs.dropna(subset=[x, y] + S).copy()
        counts = d["seed"].map(d["seed"].value_counts())
        own = counts < 2
        d["block"] = np.where(own, "own" + d.index.astype(str), d["seed"].astype(str))
        blocks = d.loc[~own, "block"].nunique()
        rhs = " + ".join([x] + S)
        small = smf.ols("%s ~ %s" % (y, rhs), data=d).fit()
        big = smf.ols("%s ~ %s + C(block)" % (y, rhs), data=d).fit()
        an = anova_lm(small, big)
        f_sm, df1_sm, p_sm = an["F"][1], an["df_diff"][1], an["Pr(>F)"][1]
        share_sm = (small.ssr - big.ssr) / small.ssr
        report(c["seed_blocks"] == blocks and c["seed_unblocked_runs"] == int(own.sum()),
               "%s: %s shared seed blocks and %s runs on seeds of their own (pandas %d, %d)"
               % (name, c["seed_blocks"], c["seed_unblocked_runs"], blocks, own.sum()))
        report(close(c["seed_f"], f_sm) and c["seed_df1"] == df1_sm and
               c["seed_df2"] == big.df_resid and close(c["seed_p"], p_sm) if p_sm > 1e-300
               else c["seed_p"] == 0 or c["seed_p"] < 1e-290,
               "%s: seed-block F %.10g on %s and %s df, p %.4g (statsmodels anova_lm %.10g on "
               "%g and %g, p %.4g; 1e-8 relative)" % (name, c["seed_f"] or float("nan"),
                                                      c["seed_df1"], c["seed_df2"],
                                                      c["seed_p"] or float("nan"), f_sm, df1_sm,
                                                      big.df_resid, p_sm))
        report(close(c["seed_share"], share_sm), "%s: seed share %.10g (statsmodels %.10g)"
               % (name, c["seed_share"], share_sm))
        s2s, s2b = small.ssr / small.df_resid, big.ssr / big.df_resid

        def t_power(fit):
            # Power of the two-sided t test at the effect of interest: ncp = effect / SE
            # (scipy's noncentral t; tests/REFERENCES.md 2b's method, and 13).
            ncp = c["effect_raw"] / fit.bse[x]
            tc = stats.t.isf(c["alpha"] / 2, fit.df_resid)
            return stats.nct.sf(tc, fit.df_resid, ncp) + stats.nct.cdf(-tc, fit.df_resid, ncp)
        material = p_sm < c["alpha"] and 1 - s2b / s2s >= 0.10
        stronger = t_power(big) >= t_power(small) if c["test"] == "coefficient t" else True
        report(c["seed_blocks_used"] == (material and stronger),
               "%s: blocks used %s; the rule (F p %.3g < alpha %.4g, variance drop %.3f >= "
               "0.10, blocked power not lower) says %s" % (name, c["seed_blocks_used"], p_sm,
                                                          c["alpha"], 1 - s2b / s2s,
                                                          material and stronger))
        ref = big if c["seed_blocks_used"] else small
        used_any += c["seed_blocks_used"]
        unused_any += not c["seed_blocks_used"]
        report(close(c["estimate"], ref.params[x]) and close(c["se"], ref.bse[x]) and
               c["df"] == ref.df_resid and close(c["sigma"], np.sqrt(ref.scale)),
               "%s: estimate %.10g, SE %.10g, df %s, sigma %.10g equal statsmodels' %s model "
               "(%.10g, %.10g, %g, %.10g; 1e-8 relative)"
               % (name, c["estimate"], c["se"], c["df"], c["sigma"],
                  "C(block)" if c["seed_blocks_used"] else "unblocked", ref.params[x],
                  ref.bse[x], ref.df_resid, np.sqrt(ref.scale)))
        if c["test"] == "coefficient t":
            pw = t_power(ref)
            report(rel(c["power"], pw) <= 1e-6,
                   "%s: power %.8g equals scipy's noncentral t %.8g on the %s model (1e-6, the "
                   "root searches' tolerance)" % (name, c["power"], pw,
                                                 "blocked" if c["seed_blocks_used"] else
                                                 "unblocked"))
            if c["seed_blocks_used"]:
                pu = t_power(small)
                report(rel(c["power_unblocked"], pu) <= 1e-6, "%s: power without blocks %.8g "
                       "equals scipy's %.8g on the unblocked model (1e-6)"
                       % (name, c["power_unblocked"], pu))
    # Per outcome: the outcome on every input, without and with C(block) over all runs.
    seeds = json.loads(p.stdout)["seed_blocks"] if claims else []
    counts = runs["seed"].map(runs["seed"].value_counts())
    runs = runs.assign(block=np.where(counts >= 2, runs["seed"].astype(str),
                                      "own" + runs.index.astype(str)))
    for o in ("delay", "misroutes"):
        got = [e for e in seeds if e["outcome"] == o]
        small = smf.ols("%s ~ speed + sorters + express" % o, data=runs).fit()
        big = smf.ols("%s ~ speed + sorters + express + C(block)" % o, data=runs).fit()
        an = anova_lm(small, big)
        share = (small.ssr - big.ssr) / small.ssr
        report(len(got) == 1 and close(got[0]["share"], share) and close(got[0]["f"], an["F"][1])
               and got[0]["df1"] == an["df_diff"][1] and got[0]["df2"] == big.df_resid,
               "outcome %s: seed share %s and F %s on every input equal statsmodels' %.10g, %.10g "
               "(1e-8 relative)" % (o, got[0]["share"] if got else None,
                                    got[0]["f"] if got else None, share, an["F"][1]))
    # Every reader format says whether blocks were used, the share, and the assumption.
    t = " ".join(subprocess.run([SHOAL, "power", graph, db], capture_output=True,
                                text=True).stdout.split())
    report("seed blocks used (seed explains" in t and "seed blocks not used (seed explains" in t
           and "seeds: the seed explains" in t and "assume further runs reuse these" in t,
           "shoal power's table: blocks used / not used with the share, per-outcome lines, and "
           "the assumption that further runs reuse the seeds")
    out = os.path.join(tmp, "rep")
    subprocess.run([SHOAL, "survey", graph, db, "-o", out, "--history",
                    os.path.join(tmp, "h.db")], capture_output=True, text=True)
    summ = json.load(open(os.path.join(out, "summary.json")))
    kinds = [c for c in summ["caveats"] if c["kind"] == "seed-blocks"]
    texts = [open(os.path.join(out, f)).read() for f in ("report.md", "index.html")]
    report(summ["seed_blocks"] == seeds and len(kinds) == 2 + used_any and
           all("Shared seeds" in x and "reuse these 12 seeds" in x for x in texts),
           "survey: summary.json's seed_blocks equal power's, %d seed-block cautions (2 outcomes "
           "+ %d claims), in report.md and index.html with the assumption" % (len(kinds),
                                                                               used_any))
    # The plan's runs carry fresh seeds: it sizes a blocked claim by the test without blocks.
    q = subprocess.run([SHOAL, "plan", graph, db, "--json", "--test", "classic", "--power-by",
                        "formula", "-o", os.path.join(tmp, "plan.csv")],
                       capture_output=True, text=True)
    plan = json.loads(q.stdout)["claims"] if q.returncode in (0, 1) else []
    byname = {(c["kind"], c["treatment"], c["outcome"]): c for c in claims}
    good = len(plan) == len(claims)
    for pc in plan:
        c = byname[(pc["kind"], pc["treatment"], pc["outcome"])]
        want = c["power_unblocked"] if c["seed_blocks_used"] else c["power"]
        good &= pc["sized_without_seed_blocks"] == c["seed_blocks_used"] and \
            pc["power_now"] is not None and rel(pc["power_now"], want) <= 1e-8
    report(good, "plan: the claims whose test uses seed blocks are sized without them "
           "(power_now equals power_unblocked), the others as assessed")
    report(used_any >= 1 and unused_any >= 1, "the campaign has claims with seed blocks used (%d) "
           "and not used (%d)" % (used_any, unused_any))

sys.exit(1 if __import__("refcheck").failures else 0)
