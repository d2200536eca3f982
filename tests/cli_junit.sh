#!/bin/sh
# --junit FILE: the verdict as JUnit XML for CI servers. Parsed with Python's xml.etree; the
# attributes the JUnit XML schema CI servers accept requires (testsuite: name, tests, failures,
# errors; testcase: name, classname) are checked, with one test case per claim and per gate, and
# the exit status unchanged. See LICENSE.
: "${SHOAL:=build/shoal}" "${PYTHON:=/usr/bin/python3}"
tmp=$(mktemp -d) || exit 1
trap 'rm -rf "$tmp"' EXIT
fails=0
G=fixtures/demo/triage.graph
"$SHOAL" import fixtures/demo/triage-runs.csv --archive "$tmp/a.db" -q
"$SHOAL" survey "$G" "$tmp/a.db" -o "$tmp/r0" -q; rc0=$?
"$SHOAL" survey "$G" "$tmp/a.db" -o "$tmp/r" -q --junit "$tmp/j.xml" --need-pairwise 0.8 --need-marginal 0.5; rc=$?
"$SHOAL" survey "$G" "$tmp/a.db" -o "$tmp/r2" -q --junit "$tmp/j2.xml"; rc2=$?
if [ "$rc0" = 1 ] && [ "$rc" = 1 ] && [ "$rc2" = 1 ]; then echo "PASS: --junit leaves the exit status as it was (1)"
else echo "FAIL: exit statuses without/with --junit: $rc0 $rc $rc2"; fails=1; fi
"$PYTHON" - "$tmp/j.xml" "$tmp/r/summary.json" "$tmp/j2.xml" <<'PY' || fails=1
import json, sys
import xml.etree.ElementTree as ET
xml_path, summary, xml2 = sys.argv[1:]
fails = 0
def check(cond, what):
    global fails
    print(("PASS: " if cond else "FAIL: ") + what); fails += not cond
root = ET.parse(xml_path).getroot()
check(root.tag == "testsuites", "the root is <testsuites>")
suites = root.findall("testsuite")
check(len(suites) == 1, f"one test suite per survey ({len(suites)})")
s = suites[0]
for attr in ("name", "tests", "failures", "errors"):
    check(attr in s.attrib, f"testsuite has the required attribute {attr}")
cases = s.findall("testcase")
for c in cases:
    if not ("name" in c.attrib and "classname" in c.attrib):
        check(False, f"testcase without name or classname: {c.attrib}")
check(all("name" in c.attrib and "classname" in c.attrib for c in cases), "every testcase has name and classname")
sj = json.load(open(summary))
claims = sj["claims"]
claim_cases = [c for c in cases if c.get("classname").startswith("shoal.claims.")]
gate_cases = [c for c in cases if c.get("classname") == "shoal.coverage"]
check(len(claim_cases) == len(claims) > 0, f"one test case per claim ({len(claim_cases)} for {len(claims)})")
check(len(gate_cases) == 2, f"one test case per gate given ({len(gate_cases)})")
check(int(s.get("tests")) == len(cases), "tests= counts the cases")
failed = [c for c in cases if c.find("failure") is not None]
check(int(s.get("failures")) == len(failed), f"failures= counts the failed cases ({len(failed)})")
# A claim fails exactly when it is testable by the graph and not ample; untestable ones are skipped.
want_fail = sum(1 for c in claims if c["status"] == "testable" and c["verdict"] != "ample")
want_skip = sum(1 for c in claims if c["status"] != "testable")
got_fail = sum(1 for c in claim_cases if c.find("failure") is not None)
got_skip = sum(1 for c in claim_cases if c.find("skipped") is not None)
check(got_fail == want_fail > 0, f"underpowered claims fail ({got_fail}, summary.json says {want_fail})")
check(got_skip == want_skip, f"claims untestable by the graph are skipped ({got_skip}, summary.json says {want_skip})")
under = [c for c in claims if c["status"] == "testable" and c["verdict"] == "underpowered"][0]
arrow = "->" if under["kind"] == "effect" else "-0->"
case = [c for c in claim_cases if c.get("name").startswith(f"{under['treatment']} {arrow} {under['outcome']}")][0]
f = case.find("failure")
check(f is not None and f"power {under['power']:.2f}" in f.get("message") and under["verdict_reason"] and under["verdict_reason"][:40] in (f.text or ""),
      f"an underpowered claim's failure gives its power {under['power']:.2f} and the reason")
g = {c.get("name"): c for c in gate_cases}
pair = [c for n, c in g.items() if n.startswith("2-way")][0]
check(pair.find("failure") is not None and "19.3 points short" in pair.find("failure").get("message"),
      "the missed 2-way gate fails with its shortfall")
marg = [c for n, c in g.items() if n.startswith("marginal")][0]
check(marg.find("failure") is None, "the met marginal gate passes")
root2 = ET.parse(xml2).getroot()
check(len(root2.find("testsuite").findall("testcase")) == len(claims), f"without gates: only the {len(claims)} claim cases")
sys.exit(1 if fails else 0)
PY
# A name that XML must escape (< & and a quote) stays well-formed.
sed 's/staff/"st<a>ff\&x'"'"'"/g' "$G" >"$tmp/odd.graph"
sed "1s/staff/st<a>ff\\&x'/" fixtures/demo/triage-runs.csv >"$tmp/odd.csv"
"$SHOAL" import "$tmp/odd.csv" --archive "$tmp/odd.db" -q
"$SHOAL" survey "$tmp/odd.graph" "$tmp/odd.db" -o "$tmp/ro" -q --junit "$tmp/odd.xml"
if "$PYTHON" - "$tmp/odd.xml" <<'PY'
import sys, xml.etree.ElementTree as ET
r = ET.parse(sys.argv[1]).getroot()
sys.exit(not any("st<a>ff&x'" in c.get("name") for c in r.iter("testcase")))
PY
then echo "PASS: a name with < & and quotes is escaped and parses back"
else echo "FAIL: the JUnit file with odd names does not parse or lost the name"; fails=1; fi
exit $fails
