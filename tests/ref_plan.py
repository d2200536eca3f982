# The plan's loop on the invented demo: plan, run the planned configurations through the demo
# simulator, import, assess again; the claims predicted to reach the target must succeed at the rate
# their predicted power implies. See LICENSE.
import json
import math
import os
import shutil
import subprocess
import sys
import tempfile

from scipy import stats  # Debian python3-scipy: the t quantiles of the tests' decisions

SHOAL = os.environ.get("SHOAL", "build/shoal")
BUILD = os.environ.get("BUILD", "build")
TRIAGE = os.path.join(BUILD, "fixtures", "triage")
GRAPH = "fixtures/demo/triage.graph"
CSV = "fixtures/demo/triage-runs.csv"
SLOW = os.environ.get("SHOAL_SLOW") == "1"
# Trials with different seeds: each plans --budget auto (about 5,000 runs on the demo), simulates,
# imports and assesses, a few seconds each; SHOAL_SLOW=1 runs five times as many.
TRIALS = 20 if SLOW else 4

failed = 0


def check(ok, desc):
    global failed
    print(("PASS: " if ok else "FAIL: ") + desc)
    if not ok:
        failed += 1


def run(args, ok_codes=(0, 1)):
    p = subprocess.run(args, capture_output=True, text=True)
    if p.returncode not in ok_codes:
        raise RuntimeError("%s exited %d: %s" % (" ".join(args), p.returncode, p.stderr.strip()))
    return p.stdout


def decision(c, sides):
    """The claim's test on the archive: a significant estimate (effect claims) or equivalence
    shown by two one-sided tests against +-margin (absence claims; Schuirmann 1987)."""
    if c.get("estimate") is None or c.get("se") in (None, 0) or c.get("df") in (None, 0):
        return None
    est, se, df, alpha = c["estimate"], c["se"], c["df"], c["alpha"]
    if c["kind"] == "effect":
        tc = stats.t.isf(alpha / sides, df)
        return abs(est / se) > tc if sides == 2 else (est * (c["sign"] or 1)) / se > tc
    m = c["effect_raw"]
    tc = stats.t.isf(alpha, df)
    return (est + m) / se > tc and (m - est) / se > tc


def key(c):
    return (c["kind"], c["treatment"], c["outcome"])


def main():
    if not (os.path.exists(SHOAL) and os.path.exists(TRIAGE)):
        print("SKIP: needs %s and %s (make all)" % (SHOAL, TRIAGE))
        return 0
    tmp = tempfile.mkdtemp(prefix="shoal-plan-loop-")
    try:
        base = os.path.join(tmp, "demo.db")
        run([SHOAL, "import", CSV, "--archive", base], (0,))
        # Effect claims only: the demo simulator's effects are at least as large as the graph's
        # effects of interest for the edges it declares (fixtures/triage.c), so the predicted power
        # at the effect of interest is a lower bound on how often the test detects them. Absence
        # claims are left out of the rate: some of the demo's absences are deliberately false (the
        # invented graph misses edges), and no power makes a false claim pass.
        n_pred = 0
        sum_p = 0.0
        sum_var = 0.0
        n_ok = 0
        reassessed = 0
        reassessed_ok = 0
        per_claim = {}
        for trial in range(TRIALS):
            seed = 101 + trial
            plan_csv = os.path.join(tmp, "plan-%d.csv" % trial)
            plan = json.loads(run([SHOAL, "plan", GRAPH, base, "--budget", "auto", "--seed",
                                   str(seed), "-o", plan_csv, "--json"]))
            runs_csv = os.path.join(tmp, "runs-%d.csv" % trial)
            with open(runs_csv, "w") as f:
                subprocess.run([TRIAGE, "run", plan_csv], stdout=f, check=True)
            db = os.path.join(tmp, "after-%d.db" % trial)
            shutil.copyfile(base, db)
            run([SHOAL, "import", runs_csv, "--archive", db], (0,))
            after = json.loads(run([SHOAL, "power", GRAPH, db, "--json"]))
            # Two-sided by default ("sides" is a number or a phrase such as "two-sided").
            sides = 1 if "one" in str(after.get("sides", "two")) or after.get("sides") == 1 else 2
            by_key = {key(c): c for c in after["claims"]}
            for pc in plan["claims"]:
                c = by_key.get(key(pc))
                if c is None or not pc["reaches"]:
                    continue
                if pc["how"] == "steered":
                    reassessed += 1
                    reassessed_ok += c.get("power") is not None and c["power"] >= plan["target_power"]
                if pc["kind"] != "effect":
                    continue
                d = decision(c, sides)
                if d is None:
                    continue
                n_pred += 1
                p = pc["power_after"]
                sum_p += p
                sum_var += p * (1 - p)
                n_ok += bool(d)
                tally = per_claim.setdefault("%s -> %s" % (pc["treatment"], pc["outcome"]), [0, 0, 0.0])
                tally[0] += 1
                tally[1] += bool(d)
                tally[2] += p
            os.remove(db)
        check(n_pred > 0, "loop: %d trials planned, simulated and re-assessed (%d claim outcomes "
              "predicted to reach the target)" % (TRIALS, n_pred))
        if n_pred > 0:
            expected = sum_p / n_pred
            # Binomial SE of the success count, sqrt(sum p (1 - p)), as a rate; 3 SE, one-sided:
            # a rate below the predicted one by more than that would say the plan over-predicts.
            # A small floor keeps the check meaningful when every prediction is near 1.
            se = max(math.sqrt(sum_var) / n_pred, 1.0 / n_pred)
            rate = n_ok / n_pred
            check(rate >= expected - 3 * se,
                  "loop: effect claims predicted to reach the target detected at rate %.3f, "
                  "predicted %.3f (tolerance 3 binomial SE = %.3f, one-sided)"
                  % (rate, expected, 3 * se))
        for name, (n, k, ps) in sorted(per_claim.items()):
            print("# %s: detected %d of %d, mean predicted power %.3f" % (name, k, n, ps / n))
        if reassessed > 0:
            print("# steered claims predicted to reach the target that the re-assessment also puts "
                  "at or above it: %d of %d" % (reassessed_ok, reassessed))
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
