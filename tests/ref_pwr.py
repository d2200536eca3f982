#!/usr/bin/python3
# Power of shoal's tests against R's pwr (r-cran-pwr) and statsmodels, computed at test time.
# See LICENSE.
"""Drives build/tests/probe_power with t, F, ANOVA and two-proportion cases and compares the
power with R's pwr 1.3-0 (pwr.t2n.test, pwr.f2.test, pwr.2p2n.test) and statsmodels 0.13.5
(TTestIndPower, FTestAnovaPower, NormalIndPower).

Tolerance 1e-6 absolute in power: both references and shoal evaluate the same closed forms with
noncentral t / F CDFs good to ~1e-9 (R's pt/pf series stop at errmax 1e-12 / 1e-9, Boost to
~1e-14), so 1e-6 leaves room only for those series errors, not for a different formula.
pwr's own root-finding (n or effect solved by uniroot) is not compared: its tolerance is ~1e-4."""
import os
import shutil
import subprocess
import sys
import warnings

import refcheck
from refcheck import report

TOL = 1e-6
PROBE = refcheck.probe_path("probe_power")


def probe(lines):
    out = refcheck.probe_output(PROBE, lines).split("\n")
    vals = []
    for line in out[:len(lines)]:
        vals.append(float("nan") if line.startswith("error") else float(line))
    return vals


# Cases: (d, n1, n2, alpha, sides) for the two-sample t test. Several come from Cohen (1988) as
# cited in pwr's help pages (e.g. d = 0.6, n 90/60, one-sided: Ex. 2.3).
T_CASES = [(0.5, 50, 100, 0.05, 2), (0.3, 30, 90, 0.05, 1), (0.8, 10, 40, 0.01, 2),
           (0.6, 90, 60, 0.05, 1), (0.2, 393, 393, 0.05, 2), (0.5, 64, 64, 0.05, 2),
           (0.8, 26, 26, 0.05, 2), (0.5, 20, 20, 0.05, 2), (0.8, 10, 10, 0.01, 2),
           (0.2, 100, 100, 0.05, 1), (1.2, 5, 7, 0.05, 2), (0.1, 2000, 500, 0.005, 2),
           (0.35, 45, 45, 0.001, 1)]
# (u, v, f2, alpha): Cohen (1988) Ex. 9.1 (u 5, v 89, f2 .1/.9) and the pwr vignette (u 2, v 37).
F2_CASES = [(5, 89, 0.1 / 0.9, 0.05), (2, 37, 0.3 / 0.7, 0.01), (1, 52, 0.15, 0.05),
            (3, 72, 0.15, 0.05), (8, 99, 0.15, 0.05), (2, 481, 0.02, 0.05), (1, 20, 0.5, 0.001),
            (4, 300, 0.03, 0.0125)]
# (h, n1, n2, alpha, sides): Cohen (1988) Ex. 6.1 / 6.3 via pwr's help and the pwr vignette.
H_CASES = [(0.3, 80, 80, 0.05, 1), (0.3, 80, 245, 0.05, 1), (0.2, 543, 675, 0.05, 2),
           (0.5, 30, 30, 0.05, 2), (0.1, 1000, 3000, 0.01, 2), (0.8, 12, 20, 0.05, 2)]
# (p1, p2, n1, n2, alpha, sides): proportions through pw_power (base -+ effect/2).
P_CASES = [(0.45, 0.65, 60, 120, 0.05, 2), (0.05, 0.10, 424, 424, 0.05, 2),
           (0.50, 0.55, 1565, 1565, 0.05, 2), (0.2, 0.35, 100, 50, 0.01, 1)]
# (f, k groups, nobs, alpha) for statsmodels' FTestAnovaPower.
ANOVA_CASES = [(0.25, 3, 60, 0.05), (0.1, 4, 400, 0.05), (0.4, 5, 50, 0.01), (0.25, 2, 128, 0.05),
               (0.15, 6, 240, 0.005)]


def r_values():
    """pwr's figures for every case, from one Rscript run; None when R is missing."""
    if shutil.which("Rscript") is None:
        return None
    expr = ["library(pwr)"]
    for d, n1, n2, a, s in T_CASES:
        alt = "two.sided" if s == 2 else "greater"
        expr.append(f"cat(sprintf('%.17g\\n', pwr.t2n.test(n1={n1}, n2={n2}, d={d}, "
                    f"sig.level={a}, alternative='{alt}')$power))")
    for u, v, f2, a in F2_CASES:
        expr.append(f"cat(sprintf('%.17g\\n', pwr.f2.test(u={u}, v={v}, f2={f2!r}, "
                    f"sig.level={a})$power))")
    for h, n1, n2, a, s in H_CASES:
        alt = "two.sided" if s == 2 else "greater"
        expr.append(f"cat(sprintf('%.17g\\n', pwr.2p2n.test(h={h}, n1={n1}, n2={n2}, "
                    f"sig.level={a}, alternative='{alt}')$power))")
    for p1, p2, n1, n2, a, s in P_CASES:
        alt = "two.sided" if s == 2 else "greater"
        expr.append(f"cat(sprintf('%.17g\\n', pwr.2p2n.test(h=ES.h({p2}, {p1}), n1={n1}, "
                    f"n2={n2}, sig.level={a}, alternative='{alt}')$power))")
    res = subprocess.run(["Rscript", "-e", ";".join(expr)], capture_output=True, text=True)
    if res.returncode != 0:
        print("FAIL: Rscript with library(pwr) ran: " + res.stderr.strip()[:300])
        return []
    return [float(x) for x in res.stdout.split()]


def main():
    if not os.access(PROBE, os.X_OK):
        print(f"FAIL: probe {PROBE} is built (run make check)")
        return 1
    lines = [f"t2n {d} {n1} {n2} {a} {s}" for d, n1, n2, a, s in T_CASES]
    lines += [f"f2 {u} {v} {f2!r} {a}" for u, v, f2, a in F2_CASES]
    lines += [f"h {h} {n1} {n2} {a} {s}" for h, n1, n2, a, s in H_CASES]
    lines += [f"p2n {p1} {p2} {n1} {n2} {a} {s}" for p1, p2, n1, n2, a, s in P_CASES]
    lines += [f"anova {f} {k} {n} {a}" for f, k, n, a in ANOVA_CASES]
    ours = probe(lines)
    labels = ([f"t2n d={c[0]} n1={c[1]} n2={c[2]} alpha={c[3]} sides={c[4]}" for c in T_CASES] +
              [f"f2 u={c[0]} v={c[1]} f2={c[2]:.6g} alpha={c[3]}" for c in F2_CASES] +
              [f"2p2n h={c[0]} n1={c[1]} n2={c[2]} alpha={c[3]} sides={c[4]}" for c in H_CASES] +
              [f"2p2n p={c[0]} vs {c[1]} n1={c[2]} n2={c[3]} alpha={c[4]} sides={c[5]}"
               for c in P_CASES])
    r = r_values()
    n_r = len(labels)
    if r is None:
        print("SKIP: Rscript is not installed, so R's pwr cannot be compared (apt-get install "
              "r-cran-pwr)")
    elif len(r) != n_r:
        report(False, f"R pwr returned {len(r)} values for {n_r} cases")
    else:
        for lab, mine, ref in zip(labels, ours[:n_r], r):
            report(abs(mine - ref) <= TOL,
                   f"R pwr 1.3-0 {lab}: shoal {mine:.10f} vs pwr {ref:.10f} (tol {TOL})")

    from statsmodels.stats.power import FTestAnovaPower, NormalIndPower, TTestIndPower
    with warnings.catch_warnings():
        # scipy 1.10's Boost nct warns spuriously during these evaluations (statsmodels #8624).
        warnings.simplefilter("ignore")
        sm = []
        for d, n1, n2, a, s in T_CASES:
            alt = "two-sided" if s == 2 else "larger"
            sm.append(("statsmodels TTestIndPower " + labels[T_CASES.index((d, n1, n2, a, s))],
                       TTestIndPower().power(d, n1, a, ratio=n2 / n1, alternative=alt)))
        off = len(T_CASES) + len(F2_CASES)
        for i, (h, n1, n2, a, s) in enumerate(H_CASES):
            alt = "two-sided" if s == 2 else "larger"
            sm.append(("statsmodels NormalIndPower " + labels[off + i],
                       NormalIndPower().power(h, n1, a, ratio=n2 / n1, alternative=alt)))
        for f, k, n, a in ANOVA_CASES:
            sm.append((f"statsmodels FTestAnovaPower f={f} k={k} nobs={n} alpha={a}",
                       FTestAnovaPower().power(f, n, a, k_groups=k)))
    mine_sm = ours[:len(T_CASES)] + ours[off:off + len(H_CASES)] + ours[n_r:]
    for (lab, ref), mine in zip(sm, mine_sm):
        report(abs(mine - float(ref)) <= TOL,
               f"{lab}: shoal {mine:.10f} vs {float(ref):.10f} (tol {TOL})")
    return 1 if refcheck.failures else 0


if __name__ == "__main__":
    sys.exit(main())
