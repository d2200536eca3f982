#!/usr/bin/python3
# HC3 standard errors (power/hc.c) against statsmodels' OLS(...).fit(cov_type='HC3').
# See LICENSE.
"""Reference: statsmodels (Debian's python3-statsmodels), OLS fitted with cov_type='HC3', the
MacKinnon & White (1985) / Long & Ervin (2000) form (X'X)^-1 X' diag(e_i^2 / (1 - h_ii)^2) X (X'X)^-1,
computed at test time. Classic SEs are checked against the same fit's cov_type='nonrobust'.

Data: invented fixtures drawn here with a fixed numpy seed (heteroscedastic, heavy-tailed, a bool
regressor, a mostly-zero count outcome, a high-leverage run), and the Longley data that statsmodels
ships (statsmodels.datasets.longley).

Tolerance: relative 1e-8 on every HC3 and classic SE of the invented fixtures (condition numbers
below 1e3, so both QR and statsmodels' pinv keep 12+ digits). Longley's condition number is about
5e9: there the bar is 1e-6 relative (statsmodels' pinv itself keeps only about 7-9 digits of its
SEs against the NIST certified values)."""
import os
import subprocess
import sys

import numpy as np
import statsmodels.api as sm

BUILD = os.environ.get("BUILD", "build")
PROBE = os.path.join(BUILD, "tests", "probe_hc")


def probe(y, X):
    n, p = X.shape[0], X.shape[1] + 1
    lines = [f"{n} {p}"] + [" ".join(repr(float(v)) for v in [y[i], *X[i]]) for i in range(n)]
    out = subprocess.run([PROBE], input="\n".join(lines) + "\n", capture_output=True, text=True,
                         check=True).stdout.split()
    if out and out[0] == "error":
        return None
    v = [float(x) for x in out]
    return v[:p], v[p:2 * p], v[2 * p:3 * p]


def check(name, y, X, rel):
    fails = 0
    got = probe(y, X)
    if got is None:
        print(f"FAIL: {name}: probe answered an error")
        return 1
    coef, hc3, classic = got
    Xc = sm.add_constant(X, has_constant="add")
    ref_hc = sm.OLS(y, Xc).fit(cov_type="HC3")
    ref_cl = sm.OLS(y, Xc).fit()
    for label, mine, ref in (("HC3 SE", hc3, ref_hc.bse), ("classic SE", classic, ref_cl.bse),
                             ("coefficient", coef, ref_cl.params)):
        err = max(abs(a - b) / max(abs(b), 1e-300) for a, b in zip(mine, ref))
        ok = err <= rel
        fails += not ok
        print(f"{'PASS' if ok else 'FAIL'}: {name}: {label}s equal statsmodels "
              f"(cov_type='HC3' / nonrobust) to relative {err:.2e} (tolerance {rel:g})")
    return fails


def main():
    if not os.access(PROBE, os.X_OK):
        print(f"FAIL: probe {PROBE} is built (run make check)")
        return 1
    rng = np.random.default_rng(20261205)
    fails = 0
    # Invented fixtures.
    n = 40
    x = rng.uniform(0, 2, n)
    s = rng.uniform(0, 1, n)
    y = 1 + 0.5 * x + 0.3 * s + (0.2 + x) * rng.standard_normal(n)
    fails += check("heteroscedastic (spread grows with x), n=40", y, np.column_stack([x, s]), 1e-8)
    n = 120
    x = rng.uniform(0, 1, n)
    b = (rng.uniform(size=n) < 0.4).astype(float)
    y = 2 * b + rng.standard_t(3, n) + rng.exponential(2, n)
    fails += check("heavy-tailed skewed noise, bool regressor, n=120", y, np.column_stack([x, b]),
                   1e-8)
    n = 200
    x = rng.uniform(0, 1, n)
    y = np.where(rng.uniform(size=n) < 0.9, 0.0, rng.poisson(3 + 2 * x))
    fails += check("mostly-zero count outcome, n=200", y, x.reshape(-1, 1), 1e-8)
    n = 30
    x = rng.uniform(0, 1, n)
    x[0] = 6.0
    y = x + rng.standard_normal(n)
    fails += check("one high-leverage run, n=30", y, x.reshape(-1, 1), 1e-8)
    from statsmodels.datasets import longley
    df = longley.load_pandas().data
    cols = ["GNPDEFL", "GNP", "UNEMP", "ARMED", "POP", "YEAR"]
    fails += check("Longley (statsmodels.datasets)", df["TOTEMP"].to_numpy(float),
                   df[cols].to_numpy(float), 1e-6)
    return 1 if fails else 0


if __name__ == "__main__":
    sys.exit(main())
