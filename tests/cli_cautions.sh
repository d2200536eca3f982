#!/bin/sh
# Every caution shoal computes reaches the terminal verdict, index.html and report.md, not only
# summary.json: on the demo and on the kiln fixture (design dependence, lack of fit, a constant and
# a nearly constant outcome, a level never run, claims resting on outputs). See LICENSE.
: "${SHOAL:=build/shoal}" "${PYTHON:=/usr/bin/python3}"
tmp=$(mktemp -d) || exit 1
trap 'rm -rf "$tmp"' EXIT
fails=0

# survey NAME GRAPH CSV: import CSV into a fresh archive and survey it; terminal text in NAME.txt.
survey() {
  "$SHOAL" import "$3" --archive "$tmp/$1.db" -q || { echo "FAIL: import $3"; fails=1; }
  "$SHOAL" survey "$2" "$tmp/$1.db" -o "$tmp/$1" >"$tmp/$1.txt" 2>"$tmp/$1.err"
  rc=$?
  if [ "$rc" -eq 1 ]; then echo "PASS: $1 survey exits 1 (not adequate)"
  else echo "FAIL: $1 survey exits $rc: $(head -c 300 "$tmp/$1.err")"; fails=1; fi
}
survey demo fixtures/demo/triage.graph fixtures/demo/triage-runs.csv
survey kiln fixtures/cautions/kiln.graph fixtures/cautions/kiln-runs.csv

# The checks read the three formats as a reader sees them: the terminal with its line breaks
# joined, index.html's visible text (Python's html.parser), report.md with Markdown's backslash
# escapes and code-span backticks removed. Each phrase must appear in all three.
"$PYTHON" - "$tmp" fixtures/demo/triage-runs.csv <<'PY' || fails=1
import csv, json, re, sys
from html.parser import HTMLParser
import numpy as np

tmp, demo_csv = sys.argv[1], sys.argv[2]

class Text(HTMLParser):
    def __init__(self):
        super().__init__()
        self.parts, self.skip = [], 0
    def handle_starttag(self, tag, attrs):
        if tag in ("script", "style", "svg"): self.skip += 1
    def handle_endtag(self, tag):
        if tag in ("script", "style", "svg"): self.skip -= 1
    def handle_data(self, d):
        if not self.skip: self.parts.append(d)

def flat(s): return re.sub(r"\s+", " ", s)

def formats(name):
    term = flat(open(f"{tmp}/{name}.txt", encoding="utf-8").read())
    p = Text(); p.feed(open(f"{tmp}/{name}/index.html", encoding="utf-8").read())
    html = flat("".join(p.parts))
    md = open(f"{tmp}/{name}/report.md", encoding="utf-8").read()
    md = flat(re.sub(r"\\([!-/:-@\[-`{-~])", r"\1", md).replace("`", ""))
    return {"terminal": term, "index.html": html, "report.md": md}

fails = 0
def expect(name, fmts, phrase, what):
    global fails
    for fmt, text in fmts.items():
        if phrase in text: print(f"PASS: {name}: {what} in {fmt}")
        else:
            print(f"FAIL: {name}: {what}: '{phrase}' missing from {fmt}"); fails += 1

for name in ("demo", "kiln"):
    fmts = formats(name)
    s = json.load(open(f"{tmp}/{name}/summary.json"))
    claims = s["claims"]
    m = sum(1 for c in claims if c["status"] == "testable")
    # The family: its size and the per-claim level alpha / m (Bonferroni, the default).
    expect(name, fmts, f"Bonferroni over {m} claims, each tested at {0.05 / m:.4g}", "family size and per-claim level")
    # Every claim whose noise summary.json flags is named with the noise caution, with its note.
    for c in claims:
        if c.get("noise_flag"):
            label = f"{c['treatment']} {'->' if c['kind'] == 'effect' else '-0->'} {c['outcome']}"
            expect(name, fmts, f"{label} ({c['verdict']})", f"noise-flagged claim {label} named")
            expect(name, fmts, c["noise_note"][:60], f"noise note of {label}")
        if c.get("lack_of_fit_p") is not None and c["lack_of_fit_p"] < 0.01:
            expect(name, fmts, f"lack of fit F = {c['lack_of_fit_f']:.3g}", f"lack of fit of {c['treatment']} -> {c['outcome']}")
    for kind in ("Power figure can be off", "Inputs moved together"):
        # The kiln is made to trip both; the demo trips the power caution only if a claim is
        # flagged there.
        if name == "kiln" or kind != "Power figure can be off" or any(c.get("noise_flag") for c in claims):
            expect(name, fmts, kind, f"heading '{kind}'")
        else:
            print(f"PASS: {name}: no claim's power figure is flagged, so no such heading is expected")
    # Claims testable only by adjusting for (or starting from) outputs rest on the graph's arrows
    # among outputs: named when summary.json has any (steerable false).
    resting = [c for c in claims if c["status"] == "testable" and not c["steerable"]]
    if resting:
        expect(name, fmts, "Claims resting on the graph's assumptions", "heading for claims resting on outputs")
        for c in resting:
            label = f"{c['treatment']} {'->' if c['kind'] == 'effect' else '-0->'} {c['outcome']}"
            expect(name, fmts, f"{label} ({c['verdict']})", f"claim resting on outputs {label} named")
    else:
        print(f"PASS: {name}: no testable claim rests on outputs, so no such caution is expected")
    # Design dependence names the pair, its strength and each claim's variance inflation, the
    # same figure summary.json gives the claim.
    for dep in s["coverage"]["dependence"]:
        if not dep["flagged"]: continue
        expect(name, fmts, f"moved {dep['a']} and {dep['b']} together", f"dependence {dep['a']} ~ {dep['b']}")
    # Named: each claim whose treatment is one input of a flagged pair and whose adjustment set
    # holds the other.
    pairs = [(dep["a"], dep["b"]) for dep in s["coverage"]["dependence"] if dep["flagged"]]
    for c in claims:
        if c["status"] != "testable" or c.get("vif") is None or c["vif"] < 1.5: continue
        held = set(c.get("adjustment_set") or [])
        if not any((c["treatment"] == a and b in held) or (c["treatment"] == b and a in held) for a, b in pairs): continue
        label = f"{c['treatment']} {'->' if c['kind'] == 'effect' else '-0->'} {c['outcome']}"
        expect(name, fmts, f"{label} (variance inflation {c['vif']:.3g})", f"variance inflation of {label}")
    if name == "demo":
        # |r| of the demo's design against numpy's Pearson correlation of the CSV columns
        # (tolerance: the 2 decimals shown).
        rows = list(csv.DictReader(open(demo_csv)))
        r = abs(np.corrcoef([float(x["arrivals"]) for x in rows], [float(x["staff"]) for x in rows])[0, 1])
        expect(name, fmts, f"moved arrivals and staff together (|r| {r:.2f})", "|r| of arrivals ~ staff as numpy gives it")
    else:
        expect(name, fmts, "shrink never varies: all 105 recorded runs give 0.12", "constant outcome")
        share = sum(1 for x in csv.DictReader(open("fixtures/cautions/kiln-runs.csv")) if x["rejects"] == "0") / 105
        expect(name, fmts, f"rejects is nearly constant: {100 * share:.0f}% of its 105 runs give 0", "nearly constant outcome")
        expect(name, fmts, "glaze = crackle never ran", "level never run")
        expect(name, fmts, "lack of fit", "lack of fit")
    # summary.json carries the same list.
    if s.get("caveats"): print(f"PASS: {name}: summary.json lists {len(s['caveats'])} cautions")
    else: print(f"FAIL: {name}: summary.json has no caveats"); fails += 1
sys.exit(1 if fails else 0)
PY

# ---- next steps, checked against shoal's own claims of the graph changed one way ------------------
# The demo with 'noise independent' (so case_mix is what blocks the rest) and --need-pairwise 0.8.
cp fixtures/demo/triage.graph "$tmp/ni.graph"
printf 'noise independent\n' >>"$tmp/ni.graph"
sed 's/^hidden case_mix/output case_mix/' "$tmp/ni.graph" >"$tmp/recorded.graph"
"$SHOAL" survey "$tmp/ni.graph" "$tmp/demo.db" -o "$tmp/ni" --need-pairwise 0.8 >"$tmp/ni.txt" 2>&1
"$SHOAL" claims "$tmp/ni.graph" --json >"$tmp/ni-claims.json"
"$SHOAL" claims "$tmp/recorded.graph" --json >"$tmp/rec-claims.json"
"$PYTHON" - "$tmp" <<'PY' || fails=1
import json, re, sys
from html.parser import HTMLParser
tmp = sys.argv[1]
fails = 0
def check(cond, what):
    global fails
    print(("PASS: " if cond else "FAIL: ") + what); fails += not cond
def flat(x): return re.sub(r"\s+", " ", x)
class T(HTMLParser):
    def __init__(self): super().__init__(); self.t = []
    def handle_data(self, d): self.t.append(d)
p = T(); p.feed(open(f"{tmp}/ni/index.html").read())
md = flat(re.sub(r"\\([!-/:-@\[-`{-~])", r"\1", open(f"{tmp}/ni/report.md").read()).replace("`", ""))
fmts = {"terminal": flat(open(f"{tmp}/ni.txt").read()), "index.html": flat("".join(p.t)), "report.md": md}
s = json.load(open(f"{tmp}/ni/summary.json"))
# The plan step: the most runs any underpowered claim needs beyond the current ones.
need = [c["runs_needed"] - c["n"] for c in s["claims"] if c["verdict"] == "underpowered" and c.get("runs_needed") is not None]
most = max(need) if need else None
# Recording case_mix: the claims untestable now that the graph with case_mix recorded makes testable.
now = {(c["kind"], c["treatment"], c["outcome"]) for c in json.load(open(f"{tmp}/ni-claims.json"))["claims"] if c["status"] != "testable"}
rec = {(c["kind"], c["treatment"], c["outcome"]) for c in json.load(open(f"{tmp}/rec-claims.json"))["claims"] if c["status"] == "testable"}
freed = len(now & rec)
cov = s["coverage"]["pairwise_share"]
for fmt, text in fmts.items():
    if most is not None:
        check(f"Plan the next runs: shoal plan {tmp}/ni.graph {tmp}/demo.db --budget auto -o plan.csv" in text
              and f"about {most:.0f} more runs" in text, f"next steps in {fmt}: the plan command and {most:.0f} more runs")
    check(freed > 0 and f"Record case_mix (hidden now): {freed} untestable claim" in text,
          f"next steps in {fmt}: recording case_mix frees {freed} claims (as shoal claims says of the graph with it recorded)")
    check(f"missed by {100 * (0.8 - cov):.1f} points" in text, f"next steps in {fmt}: the 2-way gate missed by {100 * (0.8 - cov):.1f} points")
check(len(s.get("next_steps", [])) >= 3, "summary.json lists the next steps")
sys.exit(1 if fails else 0)
PY
exit $fails
