#!/usr/bin/python3
# Reference checks of the coverage figures against scipy and an independent brute force.
# See LICENSE.
"""Drives build/tests/probe_coverage and compares with:
- scipy.stats.qmc.discrepancy(method='CD') (squared value; tests/REFERENCES.md section 8), to 1e-10
  absolute as the lead set (both sum the same O(n^2) terms; rounding stays near 1e-14);
- a brute-force t-way count written here from the definitions of Kuhn, Kacker & Lei (2012,
  NISTIR 7878): every t-subset of inputs, every run, a dictionary of configurations; exact
  agreement of every count, shares to 1e-15 (ratios of the same integers);
- scipy.stats.pearsonr and scipy.stats.chi2_contingency(correction=False) for |r| and Cramer's V
  (no bias correction), to 1e-10 (one-pass blocked sums against scipy's two-pass formula);
- a brute-force nearest-run search over the probe points the probe prints, for the fill distance
  and the 20 gap distances, to 1e-12 (the same squared distances, summed in another order).
Random campaigns are invented, drawn with numpy's default_rng(20261202)."""
import itertools
import math
import os
import subprocess
import sys

import numpy as np
from scipy import stats
from scipy.stats import qmc

BUILD = os.environ.get("BUILD", "build")
PROBE = os.path.join(BUILD, "tests", "probe_coverage")
failed = 0


def check(ok, desc):
    global failed
    print(("PASS: " if ok else "FAIL: ") + desc)
    if not ok:
        failed += 1


def run_probe(mode, text):
    r = subprocess.run([PROBE, mode], input=text, capture_output=True, text=True, check=False)
    if r.returncode != 0:
        raise RuntimeError("probe failed: " + r.stderr)
    return r.stdout


# ---- discrepancy -------------------------------------------------------------------------------

def probe_cd2(x):
    n, d = x.shape
    text = "%d %d\n" % (n, d) + "\n".join(" ".join(repr(float(v)) for v in row) for row in x)
    return float(run_probe("cd2", text))


def check_discrepancy(rng):
    s4 = qmc.scale(np.array([[1, 3], [2, 6], [3, 2], [4, 5], [5, 1], [6, 4]], float),
                   [0.5, 0.5], [6.5, 6.5], reverse=True)
    got = probe_cd2(s4)
    check(abs(got - 1013 / 124416) < 1e-10,
          "CD^2 of the scipy docstring set (tests/REFERENCES.md 8, S4) = 1013/124416: %.15g" % got)
    for n, d in [(1, 1), (7, 1), (20, 2), (50, 3), (300, 5), (64, 8)]:
        x = rng.random((n, d))
        ref = qmc.discrepancy(x, method="CD")
        got = probe_cd2(x)
        check(abs(got - ref) < 1e-10,
              "CD^2 vs scipy qmc.discrepancy(method='CD'), n=%d d=%d: %.15g vs %.15g"
              % (n, d, got, ref))


# ---- campaigns ---------------------------------------------------------------------------------

def bin_of(spec, x, bins):
    """The binning rules of issue 4, written independently of coverage/measure/space.c."""
    if x is None or math.isnan(x):
        return None
    kind = spec[0]
    if kind == "bool":
        return int(x) if x in (0.0, 1.0) else None
    if kind == "levels":
        return int(x) if x == int(x) and 0 <= x < spec[1] else None
    lo, hi = spec[1], spec[2]
    if kind == "integer" and math.floor(hi) - math.ceil(lo) + 1 <= 10:
        return int(x - math.ceil(lo)) if lo <= x <= hi and x == int(x) else None
    if not lo <= x <= hi:
        return None
    b = math.floor((x - lo) * (bins / (hi - lo)))   # the scale first, as coverage/measure/space.c does
    return min(max(b, 0), bins - 1)


def n_bins(spec, bins):
    if spec[0] == "bool":
        return 2
    if spec[0] == "levels":
        return spec[1]
    if spec[0] == "integer" and math.floor(spec[2]) - math.ceil(spec[1]) + 1 <= 10:
        return int(math.floor(spec[2]) - math.ceil(spec[1]) + 1)
    return bins


def campaign_text(specs, rows, bins, m, way):
    out = ["%d %d %d %d %d" % (len(specs), len(rows), bins, m, way)]
    for s in specs:
        if s[0] == "bool":
            out.append("bool")
        elif s[0] == "levels":
            out.append("levels %d" % s[1])
        else:
            out.append("%s %r %r" % (s[0], float(s[1]), float(s[2])))
    for r in rows:
        out.append(" ".join("nan" if (v is None or math.isnan(v)) else repr(float(v)) for v in r))
    return "\n".join(out) + "\n"


def parse(out):
    res = {"pairs": [], "marginal": [], "dep": {}, "gaps": [], "probes": []}
    for line in out.splitlines():
        f = line.split()
        if f[0] in ("marginal_share", "pairwise_share"):
            res[f[0]] = float(f[1])
        elif f[0] == "threeway_share":
            res["threeway"] = (float(f[1]), int(f[2]), int(f[3]))
        elif f[0] == "marginal":
            res["marginal"].append((int(f[1]), float(f[2]), [int(v) for v in f[3:]]))
        elif f[0] == "pair":
            a, b, na, nb = (int(v) for v in f[1:5])
            res["pairs"].append((a, b, na, nb, float(f[5]), int(f[6]), [int(v) for v in f[7:]]))
        elif f[0] == "worst":
            res["worst"] = [int(v) for v in f[1:]]
        elif f[0] == "dep":
            res["dep"][(int(f[1]), int(f[2]))] = float(f[3])
        elif f[0] == "cd2":
            res["cd2"] = (float(f[1]), float(f[2]), int(f[3]), int(f[4]))
        elif f[0] == "fill":
            res["fill"] = (float(f[1]), int(f[2]), int(f[3]))
        elif f[0] == "gap":
            res["gaps"].append([float(v) for v in f[1:]])
        elif f[0] == "probe":
            res["probes"].append([float(v) for v in f[1:]])
    return res


def brute_tway(specs, rows, bins, m, t):
    """Pooled share, and per combination (counts dict, cells, covered)."""
    K = len(specs)
    binned = [[bin_of(specs[k], r[k], bins) for k in range(K)] for r in rows]
    total_cells = total_cov = 0
    per = {}
    for combo in itertools.combinations(range(K), t):
        counts = {}
        for br in binned:
            key = tuple(br[k] for k in combo)
            if None in key:
                continue
            counts[key] = counts.get(key, 0) + 1
        cells = 1
        for k in combo:
            cells *= n_bins(specs[k], bins)
        cov = sum(1 for v in counts.values() if v >= m)
        per[combo] = (counts, cells, cov)
        total_cells += cells
        total_cov += cov
    return (total_cov / total_cells if total_cells else float("nan")), per


def random_campaign(rng):
    K = int(rng.integers(3, 7))
    specs = []
    for _ in range(K):
        kind = rng.choice(["real", "integer", "bool", "levels"])
        if kind == "real":
            lo = float(rng.integers(-5, 5))
            specs.append(("real", lo, lo + float(rng.integers(1, 20))))
        elif kind == "integer":
            lo = float(rng.integers(0, 4))
            specs.append(("integer", lo, lo + float(rng.choice([3, 7, 9, 30]))))
        elif kind == "bool":
            specs.append(("bool",))
        else:
            specs.append(("levels", int(rng.integers(2, 5))))
    n = int(rng.integers(5, 400))
    # Concentrate the runs so that some cells stay sparse or empty.
    rows = []
    for _ in range(n):
        r = []
        for s in specs:
            u = rng.random() ** 2
            if s[0] == "real":
                v = s[1] + u * (s[2] - s[1])
                e = rng.random()
                if e < 0.02:
                    v = s[2]                      # the top edge belongs to the last bin
                elif e < 0.04:
                    v = s[1]
            elif s[0] == "integer":
                v = float(int(s[1] + u * (s[2] - s[1] + 1)))
                v = min(v, s[2])
            elif s[0] == "bool":
                v = float(u < 0.3)
            else:
                v = float(int(u * s[1]))
            if rng.random() < 0.03:
                v = float("nan")
            r.append(v)
        rows.append(r)
    return specs, rows


def check_campaign(specs, rows, bins, m, way, label):
    res = parse(run_probe("campaign", campaign_text(specs, rows, bins, m, way)))
    K = len(specs)
    share2, per2 = brute_tway(specs, rows, bins, m, 2)
    share1, per1 = brute_tway(specs, rows, bins, m, 1)
    ok_counts = True
    for (a, b, na, nb, share, n_empty, counts) in res["pairs"]:
        ref, cells, cov = per2[(a, b)]
        full = [ref.get((i, j), 0) for i in range(na) for j in range(nb)]
        if full != counts or cells != na * nb or share != cov / cells \
                or n_empty != sum(1 for v in full if v == 0):
            ok_counts = False
    check(ok_counts and len(res["pairs"]) == K * (K - 1) // 2,
          "%s: every pair's cell counts and share equal the brute force" % label)
    check(res["pairwise_share"] == share2,
          "%s: pooled 2-way share %.6f equals brute force %.6f" % (label, res["pairwise_share"], share2))
    check(res["marginal_share"] == share1,
          "%s: marginal share %.6f equals brute force %.6f" % (label, res["marginal_share"], share1))
    shares = [p[4] for p in res["pairs"]]
    check(all(shares[res["worst"][i]] <= shares[res["worst"][i + 1]] for i in range(len(shares) - 1)),
          "%s: pairs listed worst share first" % label)
    if way == 3 or (way == 0 and K <= 20):
        share3, _ = brute_tway(specs, rows, bins, m, 3)
        check(res["threeway"][0] == share3,
              "%s: 3-way share %.6f equals brute force %.6f" % (label, res["threeway"][0], share3))
    return res


def check_dependence(specs, rows, bins, res, label):
    K = len(specs)
    worst = 0.0
    for a in range(K):
        for b in range(a + 1, K):
            got = res["dep"][(a, b)]
            num = all(specs[k][0] in ("real", "integer") for k in (a, b))
            if num:
                x = np.array([r[a] for r in rows])
                y = np.array([r[b] for r in rows])
                keep = np.isfinite(x) & np.isfinite(y)
                if np.ptp(x[keep]) == 0 or np.ptp(y[keep]) == 0:
                    continue
                ref = abs(stats.pearsonr(x[keep], y[keep])[0])
            else:
                na, nb = n_bins(specs[a], bins), n_bins(specs[b], bins)
                tab = np.zeros((na, nb))
                for r in rows:
                    i, j = bin_of(specs[a], r[a], bins), bin_of(specs[b], r[b], bins)
                    if i is not None and j is not None:
                        tab[i, j] += 1
                tab = tab[tab.sum(axis=1) > 0][:, tab.sum(axis=0) > 0]
                if min(tab.shape) < 2:
                    continue
                chi2 = stats.chi2_contingency(tab, correction=False)[0]
                ref = math.sqrt(chi2 / (tab.sum() * (min(tab.shape) - 1)))
            worst = max(worst, abs(got - ref))
    check(worst < 1e-10, "%s: |r| vs scipy pearsonr and Cramer's V vs chi2_contingency "
          "(no correction), largest difference %.2g < 1e-10" % (label, worst))


def unit_points(specs, rows):
    num = [k for k, s in enumerate(specs) if s[0] in ("real", "integer")]
    pts = []
    for r in rows:
        if all(not math.isnan(r[k]) and specs[k][1] <= r[k] <= specs[k][2] for k in num):
            pts.append([(r[k] - specs[k][1]) / (specs[k][2] - specs[k][1]) for k in num])
    return np.array(pts), num


def check_space_filling(specs, rows, res, label):
    pts, num = unit_points(specs, rows)
    if not num or len(pts) == 0:
        return
    cd2, cd2r, sub, cdn = res["cd2"]
    ref = qmc.discrepancy(pts, method="CD") if len(pts) <= 4000 else None
    if ref is not None:
        check(abs(cd2 - ref) < 1e-10 and cdn == len(pts),
              "%s: CD^2 of the scaled numeric inputs vs scipy: %.12g vs %.12g" % (label, cd2, ref))
    d = len(num)
    check(abs(cd2r - ((1.25 ** d - (13 / 12) ** d) / cdn)) < 1e-15,
          "%s: random expectation ((5/4)^d - (13/12)^d)/n" % label)
    probes = np.array(res["probes"])
    dist = np.sqrt(((probes[:, None, :] - pts[None, :, :]) ** 2).sum(axis=2)).min(axis=1)
    fill = res["fill"][0]
    check(abs(fill - dist.max()) < 1e-12,
          "%s: fill distance %.9f vs brute force over the %d probes %.9f"
          % (label, fill, len(probes), dist.max()))
    top = np.sort(dist)[::-1][:len(res["gaps"])]
    got = np.array([g[0] for g in res["gaps"]])
    check(len(got) == min(20, len(probes)) and np.allclose(got, top, rtol=0, atol=1e-12),
          "%s: the %d gap distances are the largest probe distances" % (label, len(got)))


def check_command(rng):
    """`shoal coverage --json` on an invented archive made with `shoal import`: the figures agree
    with the brute force, an out-of-domain cell is reported, and the gates set the exit status."""
    import json
    import shutil
    import tempfile
    shoal = os.environ.get("SHOAL", os.path.join(BUILD, "shoal"))
    if not os.path.exists(shoal):
        print("SKIP: %s is not built" % shoal)
        return
    tmp = tempfile.mkdtemp(prefix="shoal-ref-coverage-")
    try:
        graph = os.path.join(tmp, "invented.graph")
        with open(graph, "w") as f:
            f.write("# invented\ninput load real [0, 10]\ninput crew integer [1, 4]\n"
                    "input mode levels {a, b, c}\ninput rush bool\noutput delay real\n"
                    "default effect 0.2 sd\ndefault margin 0.1 sd\n"
                    "load -> delay\ncrew -> delay\nrush -> delay\n")
        n = 300
        specs = [("real", 0.0, 10.0), ("integer", 1.0, 4.0), ("levels", 3), ("bool",)]
        rows = []
        with open(os.path.join(tmp, "runs.csv"), "w") as f:
            f.write("load,crew,mode,rush,delay\n")
            for i in range(n):
                load = float(rng.random() * 10)
                if i == 7:
                    load = 12.5                      # outside [0, 10]: a data error
                crew, mode, rush = int(rng.integers(1, 5)), int(rng.integers(0, 3)), int(rng.random() < 0.3)
                f.write("%r,%d,%s,%d,%r\n" % (load, crew, "abc"[mode], rush, float(rng.random())))
                rows.append([load if load <= 10 else float("nan"), float(crew), float(mode), float(rush)])
        db = os.path.join(tmp, "runs.db")
        r = subprocess.run([shoal, "import", os.path.join(tmp, "runs.csv"), "--archive", db],
                           capture_output=True, text=True, check=False)
        check(r.returncode == 0, "shoal import of the invented runs: exit %d %s" % (r.returncode, r.stderr.strip()))
        r = subprocess.run([shoal, "coverage", graph, db, "--json"], capture_output=True, text=True,
                           check=False)
        check(r.returncode == 0, "shoal coverage --json exits 0 without gates (got %d)" % r.returncode)
        out = json.loads(r.stdout)
        share2, _ = brute_tway(specs, rows, 10, 5, 2)
        share3, _ = brute_tway(specs, rows, 10, 5, 3)
        check(out["schema_version"] == 2 and abs(out["pairwise"]["share"] - share2) < 1e-9,
              "shoal coverage --json: pairwise share %.6f equals brute force %.6f"
              % (out["pairwise"]["share"], share2))
        check(out["threeway"] is not None and abs(out["threeway"]["share"] - share3) < 1e-9,
              "shoal coverage --json: 3-way share equals brute force (4 inputs <= 20)")
        check(out["data_errors"]["cells_outside_domain"] == 1,
              "shoal coverage --json: the out-of-domain load is reported as a data error")
        claims = json.loads(subprocess.run([shoal, "claims", graph, "--json"], capture_output=True,
                                           text=True, check=False).stdout)["claims"]
        check(len(out["support"]) == len(claims) and
              all(a["treatment"] == b["treatment"] for a, b in zip(out["support"], claims)),
              "shoal coverage --json: one support entry per claim, in claim order")
        gate = lambda *a: subprocess.run([shoal, "coverage", graph, db, "-q"] + list(a),
                                         capture_output=True, check=False).returncode
        check(gate("--need-pairwise", "%.6f" % max(share2 - 0.01, 0)) == 0,
              "--need-pairwise just below the share: exit 0")
        check(gate("--need-pairwise", "%.6f" % min(share2 + 0.01, 1)) == 1 or share2 >= 0.99,
              "--need-pairwise just above the share: exit 1")
        check(gate("--need-marginal", "1.5") == 2, "--need-marginal 1.5 is a usage error: exit 2")
    finally:
        shutil.rmtree(tmp)


def main():
    if not os.path.exists(PROBE):
        print("SKIP: %s is not built (make check builds it)" % PROBE)
        return 0
    rng = np.random.default_rng(20261202)
    check_discrepancy(rng)

    # NIST example (NISTIR 7878; tests/REFERENCES.md section 10) through the probe, m = 1, 3-way.
    specs = [("bool",)] * 4
    rows = [[0, 0, 0, 0], [0, 1, 1, 0], [1, 0, 0, 1], [0, 1, 1, 1]]
    res = check_campaign(specs, rows, 10, 1, 3, "NIST example")
    check(res["pairwise_share"] == 19 / 24, "NIST example: 19/24 configurations (NIST's figure)")
    check(res["threeway"][0] == 15 / 32, "NIST example: 3-way 15/32 (tests/REFERENCES.md 10)")

    for k in range(12):
        specs, rows = random_campaign(rng)
        bins = int(rng.integers(3, 15))   # above 10 bins the pairs are counted one by one
        m = int(rng.integers(1, 6))
        way = int(rng.choice([0, 2, 3]))
        label = "random campaign %d (%d inputs, %d runs, m=%d, bins=%d)" % (
            k, len(specs), len(rows), m, bins)
        res = check_campaign(specs, rows, bins, m, way, label)
        check_dependence(specs, rows, bins, res, label)
        check_space_filling(specs, rows, res, label)

    # A numeric campaign with correlated inputs and a larger run count.
    n = 3000
    x = rng.random(n)
    rows = [[10 * x[i], 4 * x[i] + rng.random(), float(int(rng.random() * 50)), rng.random() < 0.5]
            for i in range(n)]
    rows = [[r[0], r[1], r[2], float(r[3])] for r in rows]
    specs = [("real", 0.0, 10.0), ("real", 0.0, 5.0), ("integer", 0.0, 49.0), ("bool",)]
    res = check_campaign(specs, rows, 10, 5, 0, "3000 correlated runs")
    check_dependence(specs, rows, 10, res, "3000 correlated runs")
    check_space_filling(specs, rows, res, "3000 correlated runs")

    # Above 4000 runs the discrepancy is computed on a 4000-run subsample, and says so.
    rows = [[float(v)] for v in rng.random(4500)]
    res = parse(run_probe("campaign", campaign_text([("real", 0.0, 1.0)], rows, 10, 5, 0)))
    check(res["cd2"][2] == 1 and res["cd2"][3] == 4000,
          "4500 runs: discrepancy flagged as subsampled, on 4000 runs")
    # More than 11 codes per input: pairs are counted one by one rather than through groups.
    specs = [("real", 0.0, 1.0)] * 5
    rows = [[float(v) for v in rng.random(5) ** 2] for _ in range(500)]
    check_campaign(specs, rows, 12, 3, 2, "5 inputs at 12 bins (per-pair counting)")

    check_command(rng)
    print("%d failed" % failed)
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
