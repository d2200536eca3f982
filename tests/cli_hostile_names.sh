#!/bin/sh
# Hostile names (ESC, BEL, CR, "]]>", a formula, a pipe) reach every destination made safe: no raw
# control character on the terminal (claims, check, power, coverage, plan, survey, error
# messages), SVG plots that parse as XML (Python's xml.dom.minidom), report.md table rows that a
# CR cannot split, and CSV cells a spreadsheet would run as a formula led by an apostrophe (the
# OWASP "CSV Injection" practice). Invented names and data. See LICENSE.
: "${SHOAL:=build/shoal}" "${PYTHON:=/usr/bin/python3}"
fails=0
ok() { echo "PASS: $1"; }
bad() { echo "FAIL: $1"; fails=$((fails + 1)); }
tmp=$(mktemp -d) || exit 1
trap 'rm -rf "$tmp"' EXIT

"$PYTHON" - "$tmp" <<'PY'
import random, sys
d = sys.argv[1]
rng = random.Random(17)
a, f, b, y = "a\x1b[2Jb", "=cmd|x", "bell\x07", "y]]>\rz"
def q(s):
    return '"' + s.replace("\\", "\\\\").replace('"', '\\"') + '"'
with open(d + "/h.graph", "w", newline="") as g:
    g.write("# Invented hostile names.\ndefault effect 0.5\ndefault margin 0.2\n")
    g.write("input %s real [0, 1]\ninput %s real [0, 1]\ninput %s bool\n" % (q(a), q(f), q(b)))
    g.write("output %s real noise 1\n" % q(y))
    g.write("%s -> %s\n%s -> %s\n" % (q(a), q(y), q(f), q(y)))
def c(s):
    return '"' + s.replace('"', '""') + '"'
with open(d + "/h.csv", "w", newline="") as out:
    out.write(",".join(c(s) for s in (a, f, b, y)) + "\n")
    for i in range(80):
        x1, x2, x3 = rng.random(), rng.random(), rng.randint(0, 1)
        out.write("%.4f,%.4f,%d,%.4f\n" % (x1, x2, x3, x1 + x2 + rng.gauss(0, 1)))
    out.write("0.5,0.5,2,1.0\n")
PY
# raw FILE DESC: the file has no raw control character but LF and tab (ESC, BEL, CR, ...).
raw() {
  if LC_ALL=C grep -q "$(printf '[\001-\010\013-\037\177]')" "$1"; then bad "$2: a raw control character reached the output"
  else ok "$2: no raw control character"; fi
}
"$SHOAL" import "$tmp/h.csv" --archive "$tmp/all.db" -q 2>"$tmp/e"
head -81 "$tmp/h.csv" >"$tmp/good.csv"
"$SHOAL" import "$tmp/good.csv" --archive "$tmp/h.db" -q || bad "import of the hostile-name CSV"
for cmd in claims check power coverage plan survey; do
  case $cmd in
  claims) args="$tmp/h.graph" ;;
  plan) args="$tmp/h.graph $tmp/h.db --budget 3 -o $tmp/plan.csv" ;;
  survey) args="$tmp/h.graph $tmp/h.db -o $tmp/rep" ;;
  *) args="$tmp/h.graph $tmp/h.db" ;;
  esac
  timeout 120 "$SHOAL" $cmd $args >"$tmp/$cmd.out" 2>"$tmp/$cmd.err"
  rc=$?
  [ "$rc" -le 1 ] && ok "$cmd with hostile names exits $rc" || bad "$cmd exits $rc: $(head -c 300 "$tmp/$cmd.err")"
  raw "$tmp/$cmd.out" "$cmd's table"
done
grep -qF '\x1B[2J' "$tmp/claims.out" && ok "claims shows ESC escaped" || bad "claims does not show ESC escaped"
# An error message naming a hostile cell: the bool 'bell' column holds 2 in the full CSV.
"$SHOAL" check "$tmp/h.graph" "$tmp/all.db" >/dev/null 2>"$tmp/check.err"
[ $? -eq 2 ] && ok "check of the bad bool cell exits 2" || bad "check of the bad bool cell"
raw "$tmp/check.err" "the error message"
grep -qF 'bell\a' "$tmp/check.err" && ok "the error message shows BEL escaped" || bad "error: $(cat "$tmp/check.err")"
"$SHOAL" claims --csv "$tmp/h.graph" >"$tmp/claims.csv"
"$SHOAL" power --csv "$tmp/h.graph" "$tmp/h.db" >"$tmp/power.csv"
# CSV outputs: every cell that starts with a formula character is led by an apostrophe.
"$PYTHON" - "$tmp/claims.csv" "$tmp/power.csv" "$tmp/plan.csv" "$tmp/rep/claims.csv" <<'PY'
import csv, sys
for path in sys.argv[1:]:
    cells = [c for row in csv.reader(open(path, newline="")) for c in row]
    risky = [c for c in cells if c[:1] in ("=", "+", "@") or (c[:1] == "-" and not c.lstrip("-").replace(".", "").replace("e", "").isdigit())]
    fixed = [c for c in cells if c.startswith("'=")]
    print(("PASS" if not risky and fixed else "FAIL") + ": %s: %d cells led by an apostrophe, %d that a spreadsheet would run" % (path.split("/")[-1], len(fixed), len(risky)))
PY
# The plan file round-trips: survey --plan reads the neutralised names back.
"$SHOAL" survey "$tmp/h.graph" "$tmp/h.db" -o "$tmp/rep2" --plan "$tmp/plan.csv" >/dev/null 2>"$tmp/e"
[ $? -le 1 ] && ok "survey --plan reads back a plan file with neutralised names" || bad "survey --plan: $(cat "$tmp/e")"
# SVG plots parse as XML.
n=0
for svg in "$tmp"/rep/*.svg; do
  [ -f "$svg" ] || continue
  n=$((n + 1))
  if "$PYTHON" -c "import sys, xml.dom.minidom as m; m.parse(sys.argv[1])" "$svg" 2>/dev/null; then :; else bad "$(basename "$svg") is not well-formed XML"; fi
done
[ "$n" -gt 0 ] && ok "$n SVG plots with ']]>' in a name checked as XML" || echo "SKIP: no SVG plots (gnuplot missing?)"
grep -q ']]&gt;' "$tmp"/rep/*.svg && ok "']]>' in a name is written ']]&gt;'" || echo "SKIP: no ']]>' text in the plots"
# report.md: no CR, and every table row has as many cells as its header.
raw "$tmp/rep/report.md" "report.md"
"$PYTHON" - "$tmp/rep/report.md" <<'PY'
import re, sys
lines = open(sys.argv[1], encoding="utf-8", newline="").read().split("\n")
bad, tables, width = 0, 0, None
for ln in lines:
    if ln.startswith("|"):
        cells = len(re.findall(r"(?<!\\)\|", ln))
        if width is None:
            width, tables = cells, tables + 1
        elif cells != width:
            bad += 1
    else:
        width = None
print(("PASS" if bad == 0 and tables > 0 else "FAIL") + ": report.md: %d tables, %d rows with a wrong cell count" % (tables, bad))
PY
[ "$fails" -eq 0 ]
