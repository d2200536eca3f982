#!/bin/sh
# `shoal survey` through the command line: exit statuses, gnuplot missing, escaping of user names in
# every report format, atomic writing of the report, and the history rounds. See LICENSE.
#
# Reference parsers outside shoal check the output: Python's json (RFC 8259), csv (RFC 4180),
# html.parser (HTML5 tokenising), base64 (RFC 4648) and sqlite3 modules. The synthetic campaigns
# are generated here with a fixed seed; the demo is fixtures/demo (invented).
: "${SHOAL:=build/shoal}" "${PYTHON:=/usr/bin/python3}" "${BUILD:=build}"
fails=0
ok() { echo "PASS: $1"; }
bad() { echo "FAIL: $1"; fails=$((fails + 1)); }
check() { if [ "$1" = 0 ]; then ok "$2"; else bad "$2"; fi; }
tmp=$(mktemp -d) || exit 1
trap 'chmod -R u+w "$tmp" 2>/dev/null; rm -rf "$tmp"' EXIT
demo_graph=fixtures/demo/triage.graph
demo_csv=fixtures/demo/triage-runs.csv

# ---- exit 0: a campaign that is plainly enough ---------------------------------------------------
# Two independent inputs and y = x1 + x2 + N(0, 0.1^2): 400 runs give power ~1 at the declared
# effect 0.5, and ~40 runs per bin, so every claim is ample and every gate below is met.
cat >"$tmp/ample.graph" <<'EOF'
input x1 real [0, 1]
input x2 real [0, 1]
output y real
default effect 0.5
x1, x2 -> y
EOF
"$PYTHON" - "$tmp/ample.csv" <<'EOF'
import random, sys
r = random.Random(7)
with open(sys.argv[1], "w") as f:
    f.write("x1,x2,y\n")
    for _ in range(400):
        a, b = r.random(), r.random()
        f.write("%.5f,%.5f,%.5f\n" % (a, b, a + b + r.gauss(0, 0.1)))
EOF
"$SHOAL" import "$tmp/ample.csv" --archive "$tmp/ample.db" >/dev/null 2>&1
"$SHOAL" survey "$tmp/ample.graph" "$tmp/ample.db" -o "$tmp/r-ample" >"$tmp/out" 2>"$tmp/err"
rc=$?
check $([ "$rc" -eq 0 ]; echo $?) "survey of an ample synthetic campaign exits 0 (got $rc)"
check $(grep -q "^ADEQUATE" "$tmp/out"; echo $?) "the ample campaign's verdict line says ADEQUATE"
"$SHOAL" survey "$tmp/ample.graph" "$tmp/ample.db" -o "$tmp/r-ample" --need-pairwise 1.0 \
  --min-runs 1000 >"$tmp/out" 2>&1
rc=$?
check $([ "$rc" -eq 1 ]; echo $?) "an unmet --need-pairwise gate turns an ample campaign into exit 1 (got $rc)"
check $(grep -q "gate" "$tmp/out"; echo $?) "the terminal names the missed gate"

# ---- exit 1: the uneven demo ----------------------------------------------------------------------
"$SHOAL" import "$demo_csv" --archive "$tmp/demo.db" >/dev/null 2>&1
"$SHOAL" survey "$demo_graph" "$tmp/demo.db" -o "$tmp/r-demo" >"$tmp/out" 2>"$tmp/err"
rc=$?
check $([ "$rc" -eq 1 ]; echo $?) "survey of the uneven demo exits 1 (got $rc)"
check $(grep -q "^NOT ADEQUATE" "$tmp/out"; echo $?) "the demo's verdict line says NOT ADEQUATE"
check $(grep -q "report: $tmp/r-demo/index.html" "$tmp/out"; echo $?) "the terminal says where the report is"
for f in index.html report.md summary.json claims.csv; do
  check $([ -s "$tmp/r-demo/$f" ]; echo $?) "the report holds $f"
done
check $(grep -q "$(printf '\033')" "$tmp/out"; [ $? -ne 0 ]; echo $?) "no colour codes when stdout is not a terminal"
# The terminal counts agree with summary.json and claims.csv (read by Python's json and csv).
"$PYTHON" - "$tmp/r-demo" "$tmp/out" <<'EOF' >"$tmp/py" 2>&1
import csv, json, re, sys
d = json.load(open(sys.argv[1] + "/summary.json"))
rows = list(csv.DictReader(open(sys.argv[1] + "/claims.csv", newline="")))
term = open(sys.argv[2]).read()
c = d["counts"]
assert d["adequate"] is False and d["runs"] == 600
assert c["ample"] + c["thin"] + c["untestable"] == c["claims"] == len(d["claims"]) == len(rows)
m = re.search(r"(\d+) ample\s+(\d+) thin\s+(\d+) untestable", term)
assert m and tuple(map(int, m.groups())) == (c["ample"], c["thin"], c["untestable"]), term
assert c["thin"] > 0 and c["untestable"] > 0 and c["ample"] > 0
for row, cl in zip(rows, d["claims"]):
    assert row["verdict"] == cl["verdict"] and row["treatment"] == cl["treatment"]
assert all(cl["verdict"] != "thin" or cl["power"] < d["options"]["target_power"] for cl in d["claims"])
EOF
check $? "summary.json, claims.csv and the terminal agree on the demo's counts (python json/csv) $(cat "$tmp/py")"
"$SHOAL" survey "$demo_graph" "$tmp/demo.db" -o "$tmp/r-json" --json >"$tmp/json" 2>/dev/null
rc=$?
"$PYTHON" -c 'import json,sys; d=json.load(open(sys.argv[1])); e=json.load(open(sys.argv[2])); assert d["counts"]==e["counts"]' \
  "$tmp/json" "$tmp/r-json/summary.json" 2>/dev/null
check $([ $? -eq 0 ] && [ "$rc" -eq 1 ]; echo $?) "--json prints summary.json on stdout and keeps exit 1"
"$SHOAL" survey "$demo_graph" "$tmp/demo.db" -o "$tmp/r-csv" --csv >"$tmp/csv" 2>/dev/null
rc=$?
check $([ "$rc" -eq 1 ] && cmp -s "$tmp/csv" "$tmp/r-csv/claims.csv"; echo $?) "--csv prints claims.csv on stdout and keeps exit 1"
"$SHOAL" survey "$demo_graph" "$tmp/demo.db" -o "$tmp/r-quiet" --quiet >"$tmp/out" 2>"$tmp/err"
rc=$?
check $([ "$rc" -eq 1 ] && [ ! -s "$tmp/out" ] && [ ! -s "$tmp/err" ]; echo $?) "--quiet prints nothing and still exits 1"

# ---- exit 2: bad input ----------------------------------------------------------------------------
printf 'input a real [1, 0]\n' >"$tmp/bad.graph"
"$SHOAL" survey "$tmp/bad.graph" "$tmp/demo.db" -o "$tmp/r-bad" >/dev/null 2>"$tmp/err"
rc=$?
check $([ "$rc" -eq 2 ] && grep -q "bad.graph:1:" "$tmp/err"; echo $?) "an inverted domain exits 2 naming file:line (got $rc)"
check $([ ! -e "$tmp/r-bad" ]; echo $?) "a survey that failed on input writes no report"
"$SHOAL" survey "$demo_graph" "$tmp/no-such.db" -o "$tmp/r-bad" >/dev/null 2>&1
rc=$?
check $([ "$rc" -eq 2 ]; echo $?) "a missing archive exits 2 (got $rc)"
"$SHOAL" survey "$demo_graph" >/dev/null 2>&1
rc=$?
check $([ "$rc" -eq 2 ]; echo $?) "survey without an archive is a usage error, exit 2 (got $rc)"
mkdir "$tmp/mine" && echo "keep me" >"$tmp/mine/notes.txt"
"$SHOAL" survey "$demo_graph" "$tmp/demo.db" -o "$tmp/mine" >/dev/null 2>"$tmp/err"
rc=$?
check $([ "$rc" -eq 2 ] && [ "$(cat "$tmp/mine/notes.txt")" = "keep me" ]; echo $?) \
  "-o onto a directory that is not a report exits 2 and leaves it alone (got $rc)"

# ---- gnuplot missing: PATH without it -------------------------------------------------------------
mkdir "$tmp/emptybin"
PATH="$tmp/emptybin" "$SHOAL" survey "$demo_graph" "$tmp/demo.db" -o "$tmp/r-noplot" >"$tmp/out" 2>"$tmp/err"
rc=$?
check $([ "$rc" -eq 1 ]; echo $?) "without gnuplot on PATH the demo survey still exits 1 (got $rc)"
check $([ -s "$tmp/r-noplot/index.html" ] && [ -s "$tmp/r-noplot/summary.json" ]; echo $?) \
  "without gnuplot the report is still written"
check $(grep -qi "plots skipped" "$tmp/err" && grep -qi "gnuplot" "$tmp/err"; echo $?) \
  "without gnuplot stderr says plainly that plots were skipped and why"
check $(grep -q "Plots were skipped" "$tmp/r-noplot/index.html"; echo $?) "the page says plots were skipped"
check $(ls "$tmp/r-noplot" | grep -q '\.svg$\|\.png$'; [ $? -ne 0 ]; echo $?) "no plot files without gnuplot"
"$PYTHON" -c 'import json,sys; d=json.load(open(sys.argv[1])); assert d["plots"]["made"] is False and "gnuplot" in d["plots"]["note"]' \
  "$tmp/r-noplot/summary.json" 2>/dev/null
check $? "summary.json records that the plots were skipped"
# With gnuplot, every plot in the page is a data URI that decodes (python base64) to its SVG file.
"$PYTHON" - "$tmp/r-demo" <<'EOF' >"$tmp/py" 2>&1
import base64, glob, os, re, sys
page = open(sys.argv[1] + "/index.html").read()
uris = re.findall(r'src="data:image/svg\+xml;base64,([A-Za-z0-9+/=]+)"', page)
files = sorted(glob.glob(sys.argv[1] + "/*.svg"))
assert len(files) > 0 and len(uris) == len(files), (len(uris), len(files))
blobs = sorted(base64.b64decode(u, validate=True) for u in uris)
assert blobs == sorted(open(f, "rb").read() for f in files)
EOF
check $? "each embedded plot decodes (python base64, RFC 4648) to its SVG file $(cat "$tmp/py")"

# ---- escaping: names '<script>' and it's; "odd" in every format ---------------------------------
cat >"$tmp/odd.graph" <<'EOF'
input "<script>" real [0, 1]
input "it's; \"odd\"" bool
output "a&b" real
default effect 0.5 sd
default margin 0.1 sd
"<script>" -> "a&b"
"it's; \"odd\"" -> "a&b"
EOF
"$PYTHON" - "$tmp/odd.csv" <<'EOF'
import random, sys
r = random.Random(11)
with open(sys.argv[1], "w") as f:
    f.write('"<script>","it\'s; ""odd""","a&b"\n')
    for _ in range(120):
        a, b = r.random(), r.randint(0, 1)
        f.write("%.4f,%d,%.4f\n" % (a, b, a + 0.5 * b + r.gauss(0, 0.3)))
EOF
"$SHOAL" import "$tmp/odd.csv" --archive "$tmp/odd.db" >/dev/null 2>"$tmp/err" || bad "import of odd names: $(cat "$tmp/err")"
"$SHOAL" survey "$tmp/odd.graph" "$tmp/odd.db" -o "$tmp/r-odd" >/dev/null 2>"$tmp/err"
rc=$?
check $([ "$rc" -le 1 ]; echo $?) "survey with names '<script>' and it's; \"odd\" runs (got $rc: $(cat "$tmp/err"))"
"$PYTHON" - "$tmp/r-odd" <<'EOF' >"$tmp/py" 2>&1
import csv, json, sys
from html.parser import HTMLParser
d = sys.argv[1]
page = open(d + "/index.html").read()
class Scan(HTMLParser):
    def __init__(self):
        super().__init__(); self.tags = []; self.text = []
    def handle_starttag(self, tag, attrs): self.tags.append(tag)
    def handle_data(self, data): self.text.append(data)
s = Scan(); s.feed(page)
assert s.tags.count("script") == 1, "a user name became a script element"
text = "".join(s.text)
assert "<script>" in text and "it's; \"odd\"" in text and "a&b" in text, "names not shown as text"
assert page.count("<script>") == 1
j = json.load(open(d + "/summary.json"))
names = {c["treatment"] for c in j["claims"]}
assert names == {"<script>", "it's; \"odd\""}, names
raw = open(d + "/summary.json").read()
assert "<script>" not in raw and "\\u003cscript>" in raw, "'<' must be escaped in JSON"
rows = list(csv.DictReader(open(d + "/claims.csv", newline="")))
assert {r["treatment"] for r in rows} == names and {r["outcome"] for r in rows} == {"a&b"}
md = open(d + "/report.md").read()
assert "`<script>`" in md and "`it's; \"odd\"`" in md and "`a&b`" in md
EOF
check $? "names are escaped in index.html (python html.parser), summary.json, claims.csv, report.md $(cat "$tmp/py")"

# ---- atomic writing ---------------------------------------------------------------------------------
cp "$tmp/r-demo/summary.json" "$tmp/before.json"
SHOAL_TEST_FAULT=report "$SHOAL" survey "$demo_graph" "$tmp/demo.db" -o "$tmp/r-demo" >/dev/null 2>"$tmp/err"
rc=$?
check $([ "$rc" -eq 2 ] && grep -q "injected" "$tmp/err"; echo $?) "an injected failure midway exits 2 (got $rc)"
check $(cmp -s "$tmp/before.json" "$tmp/r-demo/summary.json" && [ -s "$tmp/r-demo/index.html" ]; echo $?) \
  "after a failure midway the earlier report is intact"
check $(ls -a "$tmp" | grep -q '^\.r-demo\.'; [ $? -ne 0 ]; echo $?) "no temporary directory is left beside the report"
SHOAL_TEST_FAULT=report "$SHOAL" survey "$demo_graph" "$tmp/demo.db" -o "$tmp/r-fresh" >/dev/null 2>&1
check $([ ! -e "$tmp/r-fresh" ]; echo $?) "a failure midway with no earlier report leaves no report at all"
: >"$tmp/plainfile"
"$SHOAL" survey "$demo_graph" "$tmp/demo.db" -o "$tmp/plainfile/report" >/dev/null 2>"$tmp/err"
rc=$?
check $([ "$rc" -eq 2 ] && [ ! -s "$tmp/plainfile" ]; echo $?) "an out path whose parent cannot hold it exits 2 (got $rc)"

# ---- history rounds ---------------------------------------------------------------------------------
# Two imports and two surveys of shoal's own archive give two rounds, in the archive's own tables.
head -301 "$demo_csv" >"$tmp/half1.csv"
{ head -1 "$demo_csv"; tail -n +302 "$demo_csv"; } >"$tmp/half2.csv"
"$SHOAL" import "$tmp/half1.csv" --archive "$tmp/rounds.db" >/dev/null 2>&1
"$SHOAL" survey "$demo_graph" "$tmp/rounds.db" -o "$tmp/r-rounds" >/dev/null 2>&1
"$SHOAL" import "$tmp/half2.csv" --archive "$tmp/rounds.db" >/dev/null 2>&1
"$SHOAL" survey "$demo_graph" "$tmp/rounds.db" -o "$tmp/r-rounds" >"$tmp/out" 2>&1
"$PYTHON" - "$tmp/r-rounds" "$tmp/rounds.db" <<'EOF' >"$tmp/py" 2>&1
import json, sqlite3, sys
h = json.load(open(sys.argv[1] + "/summary.json"))["history"]
assert h["store"] == "archive", h["store"]
runs = [r["runs"] for r in h["rounds"]]
assert runs == [300, 600], runs
assert [r["batches"] for r in h["rounds"]] == [1, 2]
db = sqlite3.connect(sys.argv[2])
assert db.execute("select count(*) from shoal_rounds").fetchone()[0] == 2
assert db.execute("select count(distinct round) from shoal_round_claims").fetchone()[0] == 2
page = open(sys.argv[1] + "/index.html").read()
assert page.count("<circle") == 2, "the rounds chart should show two points"
EOF
check $? "two imports and two surveys give two rounds, in the archive (python sqlite3) $(cat "$tmp/py")"
check $(grep -q "history: round 2" "$tmp/out"; echo $?) "the terminal says this is round 2"
# An archive of the user's own: never written; history only in a --history side file.
"$PYTHON" - "$demo_csv" "$tmp/own.db" <<'EOF'
import csv, sqlite3, sys
rows = list(csv.reader(open(sys.argv[1], newline="")))
db = sqlite3.connect(sys.argv[2])
db.execute("create table runs (%s)" % ", ".join('"%s"' % h for h in rows[0]))
db.executemany("insert into runs values (%s)" % ",".join("?" * len(rows[0])), rows[1:])
db.commit()
EOF
sum_before=$(cksum <"$tmp/own.db")
"$SHOAL" survey "$demo_graph" "$tmp/own.db" -o "$tmp/r-own" >"$tmp/out" 2>&1
check $(grep -q "history: not kept" "$tmp/out" && grep -q "No history is kept" "$tmp/r-own/index.html"; echo $?) \
  "a user's archive without --history keeps no history, and the report says so"
"$SHOAL" survey "$demo_graph" "$tmp/own.db" -o "$tmp/r-own" --history "$tmp/side.db" >/dev/null 2>&1
"$SHOAL" survey "$demo_graph" "$tmp/own.db" -o "$tmp/r-own" --history "$tmp/side.db" >/dev/null 2>&1
check $([ "$sum_before" = "$(cksum <"$tmp/own.db")" ]; echo $?) "the user's archive is byte-for-byte unchanged"
"$PYTHON" - "$tmp/side.db" "$tmp/r-own" <<'EOF' >"$tmp/py" 2>&1
import json, sqlite3, sys
assert sqlite3.connect(sys.argv[1]).execute("select count(*) from shoal_rounds").fetchone()[0] == 2
h = json.load(open(sys.argv[2] + "/summary.json"))["history"]
assert h["store"] == "side file" and len(h["rounds"]) == 2
EOF
check $? "two surveys with --history give two rounds in the side file $(cat "$tmp/py")"
"$SHOAL" survey "$demo_graph" "$tmp/own.db" -o "$tmp/r-own" --history "$tmp/own.db" >/dev/null 2>&1
rc=$?
check $([ "$rc" -eq 2 ] && [ "$sum_before" = "$(cksum <"$tmp/own.db")" ]; echo $?) \
  "--history naming the archive itself is refused (exit 2) and the archive stays unchanged"

[ "$fails" -eq 0 ]
