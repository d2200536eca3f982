#!/bin/sh
# The survey's audit trail (version, command line, options and defaults, seed, rows, digests, time
# in summary.json, index.html and report.md) and its history: a snapshot only when the runs change.
# See LICENSE.
: "${SHOAL:=build/shoal}" "${PYTHON:=/usr/bin/python3}"
tmp=$(mktemp -d) || exit 1
trap 'rm -rf "$tmp"' EXIT
fails=0
ok() { echo "PASS: $1"; }
bad() { echo "FAIL: $1"; fails=$((fails + 1)); }
G=fixtures/demo/triage.graph
CSV=fixtures/demo/triage-runs.csv
snapshots() { sqlite3 "$1" "SELECT count(*) FROM shoal_snapshots"; }

"$SHOAL" import "$CSV" --archive "$tmp/a.db" -q
# Seven surveys of the same runs, in the ways a pipeline runs them (quiet, JSON, CSV, other
# options): one snapshot.
"$SHOAL" survey "$G" "$tmp/a.db" -o "$tmp/r" >/dev/null
"$SHOAL" survey "$G" "$tmp/a.db" -o "$tmp/r" -q
"$SHOAL" survey "$G" "$tmp/a.db" -o "$tmp/r" --json >/dev/null
"$SHOAL" survey "$G" "$tmp/a.db" -o "$tmp/r" --csv >/dev/null
"$SHOAL" survey "$G" "$tmp/a.db" -o "$tmp/r" --alpha 0.1 -q
"$SHOAL" survey "$G" "$tmp/a.db" -o "$tmp/r" --seed 9 -q
"$SHOAL" survey "$G" "$tmp/a.db" -o "$tmp/r" >"$tmp/seventh.txt"
n=$(snapshots "$tmp/a.db")
if [ "$n" = 1 ]; then ok "seven surveys of unchanged runs leave one snapshot"
else bad "seven surveys of unchanged runs leave $n snapshots"; fi
if grep -q "the runs are those of snapshot 1" "$tmp/seventh.txt"; then ok "the terminal says no snapshot was recorded"
else bad "the terminal does not say the snapshot was not recorded: $(grep history "$tmp/seventh.txt")"; fi
n=$("$PYTHON" -c 'import json,sys; print(len(json.load(open(sys.argv[1]))["history"]["snapshots"]))' "$tmp/r/summary.json")
if [ "$n" = 1 ]; then ok "the report's snapshots are the real snapshots (1)"
else bad "the report shows $n snapshots for one real snapshot"; fi
# New runs make a new snapshot; --record-snapshot records one on demand.
# Forty new runs: the first forty configurations again under other seeds, their waits a minute
# longer (rows equal to recorded ones would be the same runs counted once).
"$PYTHON" - "$CSV" "$tmp/more.csv" <<'PY'
import csv, sys
rows = list(csv.DictReader(open(sys.argv[1])))[:40]
with open(sys.argv[2], "w", newline="") as f:
    w = csv.DictWriter(f, fieldnames=list(rows[0].keys()))
    w.writeheader()
    for r in rows:
        r["run_id"] = str(int(r["run_id"]) + 100000); r["seed"] = str(int(r["seed"]) + 7)
        r["wait"] = "%.2f" % (float(r["wait"]) + 1)
        w.writerow(r)
PY
"$SHOAL" import "$tmp/more.csv" --archive "$tmp/a.db" -q
"$SHOAL" survey "$G" "$tmp/a.db" -o "$tmp/r" -q
n=$(snapshots "$tmp/a.db")
if [ "$n" = 2 ]; then ok "a new batch makes snapshot 2"; else bad "a new batch left $n snapshots"; fi
"$SHOAL" survey "$G" "$tmp/a.db" -o "$tmp/r" -q --record-snapshot
n=$(snapshots "$tmp/a.db")
if [ "$n" = 3 ]; then ok "--record-snapshot records a snapshot of unchanged runs"; else bad "--record-snapshot left $n snapshots"; fi
# A history kept before snapshots had digests gains the column and records once more, then stops.
"$SHOAL" import "$CSV" --archive "$tmp/old.db" -q
sqlite3 "$tmp/old.db" "CREATE TABLE shoal_snapshots (id INTEGER PRIMARY KEY, surveyed_at TEXT NOT NULL, graph TEXT, archive TEXT, runs INTEGER NOT NULL, batches INTEGER NOT NULL, ample INTEGER NOT NULL, underpowered INTEGER NOT NULL, untestable INTEGER NOT NULL, marginal_share REAL, pairwise_share REAL, threeway_share REAL); INSERT INTO shoal_snapshots VALUES (1, '2026-01-01T00:00:00Z', 'g', 'a', 600, 1, 5, 5, 5, 1, 0.6, 0.2);"
"$SHOAL" survey "$G" "$tmp/old.db" -o "$tmp/r" -q; "$SHOAL" survey "$G" "$tmp/old.db" -o "$tmp/r" -q
n=$(snapshots "$tmp/old.db")
if [ "$n" = 2 ]; then ok "an older history gains the digest column: 1 + 1 snapshots"; else bad "older history: $n snapshots"; fi

# The audit trail, against outside computations: Python's hashlib for the graph file, and the
# runs digest recomputed from the CSV by the documented recipe (run count, then per recorded
# variable its name, NUL and each value as little-endian binary64; bools 0/1, levels by index).
"$SHOAL" import "$CSV" --archive "$tmp/b.db" -q
"$SHOAL" survey "$G" "$tmp/b.db" -o "$tmp/rb" --seed 11 --alpha 0.05 -q
version=$("$SHOAL" --version | cut -d' ' -f2)
"$PYTHON" - "$tmp/rb" "$G" "$CSV" "$version" "$SHOAL" <<'PY' || fails=$((fails + 1))
import csv, hashlib, json, re, struct, sys
from html.parser import HTMLParser
rep, graph, csv_path, version, shoal = sys.argv[1:]
s = json.load(open(f"{rep}/summary.json"))
a = s["audit"]
fails = 0
def check(cond, what):
    global fails
    print(("PASS: " if cond else "FAIL: ") + what)
    fails += not cond
check(a["version"] == version, f"audit version {a['version']} is shoal --version")
check(a["argv"][1:] == ["survey", graph, a["archive"], "-o", rep, "--seed", "11", "--alpha", "0.05", "-q"],
      f"audit argv is the command line: {a['argv']}")
check(a["command_line"].endswith(f"survey {graph} {a['archive']} -o {rep} --seed 11 --alpha 0.05 -q"),
      "audit command_line quotes nothing that needs no quoting")
opts = {o["name"]: o for o in a["options"]}
check(opts["seed"]["value"] == "11" and not opts["seed"]["default"], "--seed given: 11, not a default")
check(not opts["alpha"]["default"], "--alpha given (even at its default value) is marked given")
check(opts["power"]["default"] and opts["power"]["value"] == "0.8", "--power left at its default 0.8")
check(opts["bins"]["default"] and opts["bins"]["value"] == "10", "--bins left at its default 10")
check(a["seed"] == 11, "audit seed 11")
check(a["graph_digest"] == hashlib.sha256(open(graph, "rb").read()).hexdigest(), "graph digest is hashlib's SHA-256 of the file")
rows = list(csv.DictReader(open(csv_path)))
check(a["rows"] == len(rows) == 600, f"audit rows {a['rows']}")
levels = {"hill": 0, "river": 1, "port": 2}
h = hashlib.sha256(struct.pack("<Q", len(rows)))
for name in ("arrivals", "staff", "fast_track", "site", "occupancy", "wait", "left_early"):
    h.update(name.encode() + b"\0")
    for r in rows:
        x = float(levels[r[name]]) if name == "site" else float(r[name])
        h.update(struct.pack("<d", x + 0.0))
check(a["runs_digest"] == h.hexdigest(), "runs digest recomputed from the CSV by the documented recipe")
check(a["time"] == s["generated"], "audit time is the survey's time")
# The same trail in the two reports a reviewer reads.
md = open(f"{rep}/report.md").read()
class T(HTMLParser):
    def __init__(self): super().__init__(); self.t = []
    def handle_data(self, d): self.t.append(d)
p = T(); p.feed(open(f"{rep}/index.html").read()); html = "".join(p.t)
for fmt, text in (("report.md", md), ("index.html", html)):
    for what, needle in (("version", version), ("runs digest", a["runs_digest"]),
                         ("graph digest", a["graph_digest"]), ("seed option", "--seed"),
                         ("command line", f"--seed 11 --alpha 0.05 -q"), ("time", a["time"]),
                         ("a default marked", "default"), ("rows", "600 rows")):
        check(needle in text, f"{fmt} holds the audit {what}")
sys.exit(1 if fails else 0)
PY
exit $((fails > 0))
