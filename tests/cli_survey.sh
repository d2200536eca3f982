#!/bin/sh
# `shoal survey` through the command line: exit statuses, gnuplot missing, escaping of user names in
# every report format, atomic writing of the report, and the history snapshots. See LICENSE.
#
# Reference parsers outside shoal check the output: Python's json (RFC 8259), csv (RFC 4180),
# html.parser (HTML5 tokenising), xml.etree (XML 1.0), base64 (RFC 4648) and sqlite3 modules. The synthetic campaigns
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
assert c["ample"] + c["underpowered"] + c["untestable"] == c["claims"] == len(d["claims"]) == len(rows)
m = re.search(r"(\d+) ample\s+(\d+) underpowered\s+(\d+) untestable", term)
assert m and tuple(map(int, m.groups())) == (c["ample"], c["underpowered"], c["untestable"]), term
assert c["underpowered"] > 0 and c["untestable"] > 0 and c["ample"] > 0
for row, cl in zip(rows, d["claims"]):
    assert row["verdict"] == cl["verdict"] and row["treatment"] == cl["treatment"]
assert all(cl["verdict"] != "underpowered" or cl["power"] < d["options"]["target_power"] for cl in d["claims"])
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
# With gnuplot, every plot is an inline <svg> in the page (python html.parser) that matches its SVG
# file element by element (python xml.etree), with each plot's ids and references renamed apart.
cat >"$tmp/svgpage.py" <<'EOF'
import base64, collections, glob, re, sys
import xml.etree.ElementTree as ET
from html.parser import HTMLParser
XLINK = "{http://www.w3.org/1999/xlink}"
def norm_value(name, v):
    v = re.sub(r"[\t\n\r]", " ", v)   # as XML 1.0 section 3.3.3 normalises attribute values
    if name == "id": return re.sub(r"^p\d+-", "", v)
    if name.endswith("href"): return re.sub(r"^#p\d+-", "#", v)
    return re.sub(r"url\(#p\d+-", "url(#", v)
def file_sig(path):
    """The plot file as the page should hold it: root attributes, then each element below it (but
    gnuplot's root <title>) with its attributes and text, names lower-cased as HTML parses them."""
    root = ET.parse(path).getroot()
    out = []
    def walk(el, depth):
        tag = el.tag.split("}")[-1].lower()
        if depth == 1 and tag == "title": return
        attrs = tuple(sorted(((k.replace(XLINK, "xlink:") if k.startswith(XLINK) else k).lower(), v)
                             for k, v in el.attrib.items()))
        if depth == 0: attrs = tuple(a for a in attrs if a[0] != "viewbox")
        out.append((tag, attrs, (el.text or "").strip()))
        for c in el: walk(c, depth + 1)
        if depth and (el.tail or "").strip(): out.append(("#text", (), el.tail.strip()))
    walk(root, 0)
    return out
class Page(HTMLParser):
    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.svgs = []; self.cur = None; self.depth = 0; self.ids = []; self.stack = []
        self.in_caption = False; self.captions = []; self.svg_scripts = 0; self.imgs = []
        self.comments = []
    def handle_starttag(self, tag, attrs):
        d = dict(attrs)
        if "id" in d: self.ids.append(d["id"])
        if tag == "img": self.imgs.append(d.get("src", ""))
        if tag == "figcaption": self.in_caption = True; self.captions.append("")
        if tag == "svg" and self.depth == 0 and self.stack and (self.stack[-1] == "figure" or (self.stack[-1] == "div" and "figure" in self.stack)):
            self.cur = {"root": d, "items": [], "ids": [], "refs": [], "title": None}
            self.svgs.append(self.cur)
        if self.cur is not None:
            if tag in ("script", "foreignobject") or any(k.startswith("on") for k in d):
                self.svg_scripts += 1
            if "id" in d: self.cur["ids"].append(d["id"])
            for k, v in attrs:
                if k.endswith("href"): self.cur["refs"].append(v)
                self.cur["refs"] += ["#" + m for m in re.findall(r"url\(#([^)]*)\)", v)]
            skip = {"role", "aria-label", "xmlns", "xmlns:xlink", "viewbox"} if self.depth == 0 else set()
            a = tuple(sorted((k, norm_value(k, v)) for k, v in attrs if k not in skip))
            # The first <title> of the root is the caption shoal puts in place of gnuplot's own.
            if not (self.depth == 1 and tag == "title" and self.cur["title"] is None):
                self.cur["items"].append([tag, a, ""])
            else: self.cur["title"] = ""
            self.depth += 1
        self.stack.append(tag)
    def handle_startendtag(self, tag, attrs):
        self.handle_starttag(tag, attrs); self.handle_endtag(tag)
    def handle_endtag(self, tag):
        if self.stack: self.stack.pop()
        if tag == "figcaption": self.in_caption = False
        if self.cur is not None:
            self.depth -= 1
            if self.depth == 0: self.cur = None
    def handle_data(self, data):
        if self.in_caption: self.captions[-1] += data
        if self.cur is not None and data.strip():
            items = self.cur["items"]
            if self.stack[-1] == "title" and self.depth == 2 and self.cur["title"] == "":
                self.cur["title"] = data
            elif self.stack[-1] == items[-1][0] and not items[-1][2]: items[-1][2] = data.strip()
            else: items.append(["#text", (), data.strip()])
    def handle_comment(self, data): self.comments.append(data)
def check(report, expect_inline):
    page = open(report + "/index.html").read()
    p = Page(); p.feed(page)
    files = {f: open(f, "rb").read() for f in sorted(glob.glob(report + "/*.svg"))}
    assert len(files) > 0
    # Ids are unique across the whole document, each plot's ids carry its own prefix pK-, and every
    # reference inside a plot names an id of that same plot.
    assert len(p.ids) == len(set(p.ids)), [i for i, n in collections.Counter(p.ids).items() if n > 1][:5]
    prefixes = []
    for svg in p.svgs:
        pre = {re.match(r"(p\d+-)", i).group(1) for i in svg["ids"]}
        assert len(pre) <= 1, pre
        prefixes += list(pre)
        assert all(r.startswith("#") and r[1:] in svg["ids"] for r in svg["refs"]), svg["refs"][:5]
        r = svg["root"]
        assert r.get("role") == "img" and r.get("aria-label") and r.get("viewbox"), r
        assert svg["title"] == r["aria-label"], (svg["title"], r["aria-label"])
    assert len(prefixes) == len(set(prefixes)), prefixes
    assert p.svg_scripts == 0, "a script, foreignObject or on... attribute inside an svg"
    # Every plot file is in the page exactly once: inline, element by element, or (when refused)
    # as an <img> data URI that decodes (python base64) to the file's bytes, with a comment.
    inline = sorted(repr([(t, a, x) for t, a, x in s["items"]]) for s in p.svgs)
    want = sorted(repr(file_sig(f)) for f, b in files.items() if expect_inline(f))
    assert inline == want, "inline plots differ from their files (%d inline, %d files)" % (len(inline), len(want))
    blobs = sorted(base64.b64decode(u.split(",", 1)[1], validate=True) for u in p.imgs
                   if u.startswith("data:image/svg+xml;base64,"))
    assert blobs == sorted(b for f, b in files.items() if not expect_inline(f)), "refused plots"
    assert len(p.imgs) == len(blobs)
    assert len([c for c in p.comments if "shown as an image" in c]) == len(blobs)
    assert sorted(s["root"]["aria-label"] for s in p.svgs) == sorted(
        c for c in p.captions if c in {s["root"]["aria-label"] for s in p.svgs})
    return p
if __name__ == "__main__":
    if sys.argv[2] == "all":
        p = check(sys.argv[1], lambda f: True)
        assert len(p.svgs) == len(glob.glob(sys.argv[1] + "/*.svg"))
    else:
        names = sys.argv[2].split(",")
        p = check(sys.argv[1], lambda f: f.rsplit("/", 1)[1][:-4] in names)
        mde = [s for s in p.svgs if s["root"].get("width") == "640"]
        assert len(mde) == 1 and mde[0]["root"]["viewbox"] == "0 0 640 400", "viewBox not added"
EOF
"$PYTHON" "$tmp/svgpage.py" "$tmp/r-demo" all >"$tmp/py" 2>&1
check $? "each plot is an inline svg matching its file (python html.parser, xml.etree), ids unique, no script $(cat "$tmp/py")"

# Negative controls: a stand-in gnuplot on PATH writes plots holding a <script>, an onload
# attribute, a <foreignObject>, an external href and an external url(); each must stay out of the
# DOM (an <img> data URI instead), while three clean plots are inlined (one without a viewBox, which
# gets one from its size) and their shared ids gpDot and textbox are renamed apart.
mkdir "$tmp/fakebin"
cat >"$tmp/fakebin/gnuplot" <<EOF
#!$PYTHON
EOF
cat >>"$tmp/fakebin/gnuplot" <<'EOF'
import re, sys
head = '<?xml version="1.0" encoding="utf-8" standalone="no"?>\n<!DOCTYPE svg PUBLIC "-//W3C//DTD SVG 1.1//EN" "http://www.w3.org/Graphics/SVG/1.1/DTD/svg11.dtd">\n<!-- a comment -->\n'
root = '<svg width="900" height="560" viewBox="0 0 900 560" xmlns="http://www.w3.org/2000/svg" xmlns:xlink="http://www.w3.org/1999/xlink">\n<title>Gnuplot</title>\n'
body = {
    "pairs": '<g><script>alert(1)</script></g>',
    "pair-1": '<rect width="9" height="9" onload="alert(1)"/>',
    "pair-2": '<foreignObject width="9" height="9"><p>x</p></foreignObject>',
    "pair-3": '<use xlink:href="http://example.invalid/a.svg#gpDot"/>',
    "power": '<rect width="9" height="9" fill="url(file:///etc/hostname)"/>',
}
clean = ("<defs><circle id='gpDot' r='0.5'/><filter id='textbox'><feFlood flood-color='#FFFFFF'/></filter></defs>"
         "<g id=\"gnuplot_plot_1\"><title>plot one</title><use xlink:href='#gpDot' x='10' y='20'/>"
         "<text x='5' y='5' style='filter:url(#textbox)'>a &lt; b &amp; c</text></g>")
for path in re.findall(r"set output '([^']*)'", sys.stdin.read()):
    name = path.rsplit("/", 1)[1]
    with open(path, "wb") as f:
        if name.endswith(".png"): f.write(b"\x89PNG stand-in"); continue
        base = name[:-4]
        if base == "mde":
            f.write((head + '<svg width="640" height="400" xmlns="http://www.w3.org/2000/svg" xmlns:xlink="http://www.w3.org/1999/xlink">\n' + clean + "</svg>\n").encode())
        else:
            f.write((head + root + body.get(base, clean) + "\n</svg>\n").encode())
EOF
chmod +x "$tmp/fakebin/gnuplot"
PATH="$tmp/fakebin:$PATH" "$SHOAL" survey "$demo_graph" "$tmp/demo.db" -o "$tmp/r-hostile" >/dev/null 2>"$tmp/err"
rc=$?
check $([ "$rc" -eq 1 ] && [ -s "$tmp/r-hostile/mde.svg" ]; echo $?) "the survey with a stand-in gnuplot ran (got $rc: $(head -2 "$tmp/err"))"
"$PYTHON" "$tmp/svgpage.py" "$tmp/r-hostile" mde,curves,graph >"$tmp/py" 2>&1
check $? "SVGs with a script, onload, foreignObject or external reference stay <img>; clean ones inline with ids apart $(cat "$tmp/py")"
check $(grep -c 'shown as an image, not inline' "$tmp/r-hostile/index.html" | grep -qx 5; echo $?) \
  "the page says in a comment why each of the 5 refused plots is an image"
# The checker itself must fail when a refused plot is taken for an inline one.
"$PYTHON" "$tmp/svgpage.py" "$tmp/r-hostile" all >/dev/null 2>&1
check $([ $? -ne 0 ]; echo $?) "negative control: the page checker rejects a page whose plots are not all inline"

# ---- escaping: names '<script>' and it's; "odd" in every format ---------------------------------
. tests/browser/odd_names.sh
odd_names "$tmp"
"$SHOAL" import "$tmp/odd.csv" --archive "$tmp/odd.db" >/dev/null 2>"$tmp/err" || bad "import of odd names: $(cat "$tmp/err")"
"$SHOAL" survey "$tmp/odd.graph" "$tmp/odd.db" -o "$tmp/r-odd" >/dev/null 2>"$tmp/err"
rc=$?
check $([ "$rc" -le 1 ]; echo $?) "survey with names '<script>' and it's; \"odd\" runs (got $rc: $(cat "$tmp/err"))"
# With gnuplot on PATH the odd names reach every plot; one claim needing runs gives one label group
# (gnuplot 5.4.4 crashed on an empty labels plot here before plot_claims.c checked for it).
if command -v gnuplot >/dev/null 2>&1; then
  n_svg=$(ls "$tmp/r-odd"/*.svg 2>/dev/null | wc -l)
  check $([ "$n_svg" -ge 4 ] && ! grep -q "plots skipped" "$tmp/err"; echo $?) \
    "survey with odd names draws its plots ($n_svg SVG files; $(grep -c 'plots skipped' "$tmp/err") skip messages)"
fi
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
# tests/probe_survey.c runs the survey with the report writer made to fail halfway (the test seam
# cov_options.fault_at, which the shoal binary never sets).
"$BUILD/tests/probe_survey" "$demo_graph" "$tmp/demo.db" "$tmp/r-demo" >/dev/null 2>"$tmp/err"
rc=$?
check $([ "$rc" -eq 2 ] && grep -q "injected" "$tmp/err"; echo $?) "an injected failure midway exits 2 (got $rc)"
check $(cmp -s "$tmp/before.json" "$tmp/r-demo/summary.json" && [ -s "$tmp/r-demo/index.html" ]; echo $?) \
  "after a failure midway the earlier report is intact"
check $(ls -a "$tmp" | grep -q '^\.r-demo\.'; [ $? -ne 0 ]; echo $?) "no temporary directory is left beside the report"
"$BUILD/tests/probe_survey" "$demo_graph" "$tmp/demo.db" "$tmp/r-fresh" >/dev/null 2>&1
check $([ ! -e "$tmp/r-fresh" ]; echo $?) "a failure midway with no earlier report leaves no report at all"
: >"$tmp/plainfile"
"$SHOAL" survey "$demo_graph" "$tmp/demo.db" -o "$tmp/plainfile/report" >/dev/null 2>"$tmp/err"
rc=$?
check $([ "$rc" -eq 2 ] && [ ! -s "$tmp/plainfile" ]; echo $?) "an out path whose parent cannot hold it exits 2 (got $rc)"

# ---- history snapshots ---------------------------------------------------------------------------------
# Two imports and two surveys of shoal's own archive give two snapshots, in the archive's own tables.
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
runs = [r["runs"] for r in h["snapshots"]]
assert runs == [300, 600], runs
assert [r["batches"] for r in h["snapshots"]] == [1, 2]
db = sqlite3.connect(sys.argv[2])
assert db.execute("select count(*) from shoal_snapshots").fetchone()[0] == 2
assert db.execute("select count(distinct snapshot) from shoal_snapshot_claims").fetchone()[0] == 2
page = open(sys.argv[1] + "/index.html").read()
chart = page[page.index('<svg id="snapshots-chart"'):]
assert chart[:chart.index("</svg>")].count("<circle") == 2, "the snapshots chart should show two points"
EOF
check $? "two imports and two surveys give two snapshots, in the archive (python sqlite3) $(cat "$tmp/py")"
check $(grep -q "history: snapshot 2" "$tmp/out"; echo $?) "the terminal says this is snapshot 2"
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
# The same runs again add no snapshot unless asked (--record-snapshot).
"$SHOAL" survey "$demo_graph" "$tmp/own.db" -o "$tmp/r-own" --history "$tmp/side.db" >/dev/null 2>&1
"$SHOAL" survey "$demo_graph" "$tmp/own.db" -o "$tmp/r-own" --history "$tmp/side.db" --record-snapshot >/dev/null 2>&1
check $([ "$sum_before" = "$(cksum <"$tmp/own.db")" ]; echo $?) "the user's archive is byte-for-byte unchanged"
"$PYTHON" - "$tmp/side.db" "$tmp/r-own" <<'EOF' >"$tmp/py" 2>&1
import json, sqlite3, sys
assert sqlite3.connect(sys.argv[1]).execute("select count(*) from shoal_snapshots").fetchone()[0] == 2
h = json.load(open(sys.argv[2] + "/summary.json"))["history"]
assert h["store"] == "side file" and len(h["snapshots"]) == 2
EOF
check $? "three surveys of the same runs with --history, the last with --record-snapshot, give two snapshots in the side file $(cat "$tmp/py")"
"$SHOAL" survey "$demo_graph" "$tmp/own.db" -o "$tmp/r-own" --history "$tmp/own.db" >/dev/null 2>&1
rc=$?
check $([ "$rc" -eq 2 ] && [ "$sum_before" = "$(cksum <"$tmp/own.db")" ]; echo $?) \
  "--history naming the archive itself is refused (exit 2) and the archive stays unchanged"

[ "$fails" -eq 0 ]
