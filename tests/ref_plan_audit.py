# The plan's audit of its own predictions: `shoal plan` records them with the plan file's SHA-256;
# once the planned runs are imported, `shoal survey` shows predicted against achieved per claim
# (terminal and report) and freezes them in the archive or the side file. Runs are made by the
# invented demo simulator. See LICENSE.
import csv
import hashlib
import json
import os
import shutil
import sqlite3
import subprocess
import sys
import tempfile

SHOAL = os.environ.get("SHOAL", "build/shoal")
BUILD = os.environ.get("BUILD", "build")
TRIAGE = os.path.join(BUILD, "fixtures", "triage")
GRAPH = "fixtures/demo/triage.graph"
CSV = "fixtures/demo/triage-runs.csv"
failed = 0


def flat(text):
    """Terminal text is wrapped to 80 columns; compare it with the wrapping undone."""
    return " ".join(text.split())


def check(ok, desc):
    global failed
    print(("PASS: " if ok else "FAIL: ") + desc)
    if not ok:
        failed += 1


def run(args):
    return subprocess.run(args, capture_output=True, text=True)


def sha(path):
    with open(path, "rb") as fh:
        return hashlib.sha256(fh.read()).hexdigest()


def survey_powers(db, outdir, extra=()):
    r = run([SHOAL, "survey", GRAPH, db, "-o", outdir, "--csv"] + list(extra))
    rows = list(csv.DictReader(r.stdout.splitlines()))
    return {(x["kind"], x["treatment"], x["outcome"]): float(x["power"]) for x in rows if x["power"]}


with tempfile.TemporaryDirectory() as d:
    db = os.path.join(d, "own.db")
    run([SHOAL, "import", CSV, "--archive", db])
    plan_file = os.path.join(d, "next.csv")
    r = run([SHOAL, "plan", GRAPH, db, "--budget", "40", "-o", plan_file, "--json"])
    plan = json.loads(r.stdout)
    check(plan["plan_sha256"] == sha(plan_file) and plan["recorded"],
          "the plan records its predictions with the plan file's SHA-256 (hashlib)")
    con = sqlite3.connect(db)
    stored = con.execute("SELECT digest, runs_before FROM shoal_plans").fetchall()
    pred = {(k, t, o): (p, reach) for k, t, o, p, reach in con.execute(
        "SELECT kind, treatment, outcome, power_pred, reaches FROM shoal_plan_claims")}
    con.close()
    check(stored == [(sha(plan_file), 600)], "shoal_plans holds the digest and the 600 runs before")
    want = {(c["kind"], c["treatment"], c["outcome"]): c["power_after"] for c in plan["claims"]}
    check(len(pred) == len(want) and all(abs(pred[k][0] - want[k]) <= 1e-9 * max(want[k], 1e-12)
                                         for k in want if want[k] is not None),
          "each stored prediction equals the plan's predicted power (%d claims, 1e-9)" % len(want))

    # Before the runs arrive: the survey says nothing arrived and compares nothing.
    r = run([SHOAL, "survey", GRAPH, db, "-o", os.path.join(d, "rep0")])
    check("0 of 40 planned runs arrived; nothing to compare yet" in flat(r.stdout),
          "before the runs arrive the survey says 0 of 40 arrived")

    # Run the plan through the simulator (a seed column comes back), import, survey.
    got = os.path.join(d, "got.csv")
    with open(got, "w") as fh:
        subprocess.run([TRIAGE, "run", plan_file], stdout=fh, check=True)
    run([SHOAL, "import", got, "--archive", db])
    r = run([SHOAL, "survey", GRAPH, db, "-o", os.path.join(d, "rep1")])
    check("40 of 40 planned runs arrived" in flat(r.stdout) and
          "predicted to reach power 0.80" in flat(r.stdout),
          "after the import the terminal shows the plan's predictions against the runs")
    powers = survey_powers(db, os.path.join(d, "rep2"))
    con = sqlite3.connect(db)
    ach = {(k, t, o): a for k, t, o, a in con.execute(
        "SELECT kind, treatment, outcome, achieved FROM shoal_plan_claims")}
    frozen = con.execute("SELECT achieved_at FROM shoal_plans").fetchone()[0]
    con.close()
    check(frozen is not None and frozen != "", "the plan's figures are frozen once all runs arrived")
    check(all(abs(ach[k] - powers[k]) <= 1e-9 for k in ach if k in powers and ach[k] is not None)
          and sum(1 for k in ach if ach[k] is not None) == sum(1 for k in ach if k in powers) >= 3,
          "achieved power per claim equals the survey's assessed power (claims.csv, 1e-9)")
    with open(os.path.join(d, "rep1", "report.md")) as fh:
        md = fh.read()
    check("## The plan's predictions against what the runs achieved" in md and
          "`fast_track` -> `wait`" in md and "Track record" in md,
          "report.md has the predicted-versus-achieved section, per claim, and the track record")
    with open(os.path.join(d, "rep1", "index.html")) as fh:
        html = fh.read()
    check('id="plan-audit"' in html and sha(plan_file) in html, "index.html has the audit section")
    held = sum(1 for k in pred if pred[k][1] and ach.get(k) is not None and ach[k] >= 0.8)
    npred = sum(1 for k in pred if pred[k][1])
    check(npred > 0 and held == npred,
          "on the demo, the %d claims predicted to reach 0.80 after 40 runs reached it (%d)" % (npred, held))

    # A second round: another plan, its runs, the track record counts two rounds.
    plan2 = os.path.join(d, "next2.csv")
    run([SHOAL, "plan", GRAPH, db, "--budget", "30", "-o", plan2])
    got2 = os.path.join(d, "got2.csv")
    with open(got2, "w") as fh:
        subprocess.run([TRIAGE, "run", plan2], stdout=fh, check=True)
    run([SHOAL, "import", got2, "--archive", db])
    r = run([SHOAL, "survey", GRAPH, db, "-o", os.path.join(d, "rep3")])
    check("track record over 2 planned rounds" in r.stdout, "the terminal gives the track record over 2 rounds")

    # A read-only archive (not made by shoal import): the predictions go to a side file, and the
    # user's archive stays byte for byte as it was.
    plain = os.path.join(d, "plain.db")
    con = sqlite3.connect(plain)
    with open(CSV) as fh:
        rows = list(csv.reader(fh))
    con.execute("CREATE TABLE runs (%s)" % ", ".join('"%s"' % h for h in rows[0]))
    con.executemany("INSERT INTO runs VALUES (%s)" % ",".join("?" * len(rows[0])), rows[1:])
    con.commit()
    con.close()
    side = os.path.join(d, "side.db")
    before = sha(plain)
    r = run([SHOAL, "plan", GRAPH, plain, "--budget", "20", "-o", os.path.join(d, "p3.csv")])
    check("not recorded (the archive is not shoal's own" in r.stdout,
          "without --history a read-only archive gets no record, and the output says so")
    r = run([SHOAL, "plan", GRAPH, plain, "--budget", "20", "-o", os.path.join(d, "p3.csv"),
             "--history", side])
    check(sha(plain) == before and os.path.exists(side), "with --history the record goes to the side file; the archive is unchanged")
    r = run([SHOAL, "plan", GRAPH, plain, "--budget", "5", "-o", os.path.join(d, "p4.csv"),
             "--history", plain])
    check(r.returncode == 2 and sha(plain) == before,
          "plan --history naming the archive itself exits 2 and leaves it alone (%s)" % r.stderr.strip())
    got3 = os.path.join(d, "got3.csv")
    with open(got3, "w") as fh:
        subprocess.run([TRIAGE, "run", os.path.join(d, "p3.csv")], stdout=fh, check=True)
    con = sqlite3.connect(plain)
    with open(got3) as fh:
        new = list(csv.reader(fh))
    idx = [new[0].index(h) for h in rows[0]]
    con.executemany("INSERT INTO runs VALUES (%s)" % ",".join("?" * len(rows[0])),
                    [[x[i] for i in idx] for x in new[1:]])
    con.commit()
    con.close()
    before = sha(plain)
    r = run([SHOAL, "survey", GRAPH, plain, "-o", os.path.join(d, "rep4"), "--history", side])
    check("20 of 20 planned runs arrived" in flat(r.stdout) and sha(plain) == before,
          "the survey of the read-only archive shows the audit from the side file, archive unchanged")

sys.exit(1 if failed else 0)
