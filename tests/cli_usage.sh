#!/bin/sh
# The command line as a user meets it: every command's output on the demo fits 80 columns when
# stdout is not a terminal; per-command help; '-' for standard input; options that do not apply,
# or two output formats at once, are usage errors (exit 2); an empty NO_COLOR keeps colour.
# See LICENSE.
: "${SHOAL:=build/shoal}" "${PYTHON:=/usr/bin/python3}"
tmp=$(mktemp -d) || exit 1
trap 'rm -rf "$tmp"' EXIT
fails=0
ok() { echo "PASS: $1"; }
bad() { echo "FAIL: $1"; fails=$((fails + 1)); }
G=fixtures/demo/triage.graph
CSV=fixtures/demo/triage-runs.csv
"$SHOAL" import "$CSV" --archive "$tmp/a.db" >"$tmp/import.txt"

# fits NAME FILE: no line of FILE is wider than 80 characters (UTF-8 code points).
fits() {
  longest=$("$PYTHON" -c 'import sys; print(max((len(l.rstrip("\n")) for l in open(sys.argv[1], encoding="utf-8")), default=0))' "$2")
  lines=$(wc -l <"$2")
  if [ "$lines" -gt 0 ] && [ "$longest" -le 80 ]; then ok "$1: $lines lines, the longest $longest columns"
  else bad "$1: the longest of $lines lines is $longest columns (> 80)"; fi
}
fits "import" "$tmp/import.txt"
# COLUMNS is the terminal's business; with stdout a file, 80 columns whatever it says.
COLUMNS=250 "$SHOAL" claims "$G" >"$tmp/claims.txt"; fits "claims" "$tmp/claims.txt"
COLUMNS=250 "$SHOAL" check "$G" "$tmp/a.db" >"$tmp/check.txt"; fits "check" "$tmp/check.txt"
COLUMNS=250 "$SHOAL" power "$G" "$tmp/a.db" >"$tmp/power.txt"; fits "power" "$tmp/power.txt"
COLUMNS=250 "$SHOAL" coverage "$G" "$tmp/a.db" --need-pairwise 0.8 >"$tmp/coverage.txt"; fits "coverage" "$tmp/coverage.txt"
COLUMNS=250 "$SHOAL" survey "$G" "$tmp/a.db" -o "$tmp/rep" >"$tmp/survey.txt"; fits "survey" "$tmp/survey.txt"
COLUMNS=250 "$SHOAL" plan "$G" "$tmp/a.db" --budget auto -o "$tmp/plan.csv" >"$tmp/plan.txt"; fits "plan" "$tmp/plan.txt"
for c in claims import check power coverage survey plan; do
  "$SHOAL" help "$c" >"$tmp/help-$c.txt"; fits "help $c" "$tmp/help-$c.txt"
done
"$SHOAL" --help >"$tmp/help.txt"; fits "shoal --help" "$tmp/help.txt"
# Moving detail under a row loses nothing: every adjustment set and reason is still printed.
"$SHOAL" claims "$G" --json >"$tmp/claims.json"
if "$PYTHON" - "$tmp/claims.json" "$tmp/claims.txt" <<'PY'
import json, re, sys
claims = json.load(open(sys.argv[1]))["claims"]
text = re.sub(r"\s+", " ", open(sys.argv[2]).read())
lost = [c for c in claims if c["status"] == "testable" and "[" + ", ".join(c["adjustment_set"]) + "]" not in text]
lost += [c for c in claims if c["status"] != "testable" and re.sub(r"\s+", " ", c["reason"]) not in text]
sys.exit(1 if lost or not claims else 0)
PY
then ok "claims keeps every adjustment set and every reason within 80 columns"
else bad "claims lost an adjustment set or a reason"; fi
# Repeated noise notes are grouped: on the kiln fixture four claims of cracks share one note,
# printed once after their names.
"$SHOAL" import fixtures/cautions/kiln-runs.csv --archive "$tmp/kiln.db" -q
"$SHOAL" power fixtures/cautions/kiln.graph "$tmp/kiln.db" >"$tmp/kiln-power.txt"
fits "power (kiln)" "$tmp/kiln-power.txt"
n=$(tr -s ' \n' '  ' <"$tmp/kiln-power.txt" | grep -o "lack of fit: F = 17.5" | wc -l)
if [ "$n" = 1 ] && tr -s ' \n' '  ' <"$tmp/kiln-power.txt" | grep -q "for temp -> cracks; load -> cracks; glaze -> cracks; vent -> cracks:"
then ok "power prints a noise note shared by four claims once, after their names"
else bad "power prints the shared noise note $n times"; fi
# One representation of shares: percent, in coverage as in survey.
if grep -q "2-way coverage: 60.7% of the cells" "$tmp/coverage.txt" && grep -q "2-way 60.7%" "$tmp/survey.txt"
then ok "coverage and survey both give shares in percent"
else bad "shares differ: $(grep -h "2-way" "$tmp/coverage.txt" "$tmp/survey.txt" | head -3)"; fi
# coverage names the missed gate and the shortfall.
if tr -s ' \n' '  ' <"$tmp/coverage.txt" | grep -q "gate --need-pairwise 80.0%: missed: 2-way coverage 60.7%, 19.3 points short"
then ok "coverage names the missed gate and its shortfall"
else bad "coverage gate line: $(grep gate "$tmp/coverage.txt")"; fi
"$SHOAL" coverage "$G" "$tmp/a.db" --way 2 >"$tmp/way2.txt"
if grep -q "3-way coverage: not measured (--way 2 asks for pairs only)" "$tmp/way2.txt"; then ok "--way 2 explains the missing 3-way figure"
else bad "--way 2 reason: $(grep 3-way "$tmp/way2.txt")"; fi

# Per-command help: usage and only that command's options.
"$SHOAL" survey --help >"$tmp/h1.txt"; rc=$?
if [ $rc = 0 ] && grep -q "^usage: shoal survey" "$tmp/h1.txt" && grep -q -- "--need-pairwise" "$tmp/h1.txt" &&
   ! grep -q -- "--budget" "$tmp/h1.txt"; then ok "shoal survey --help lists survey's options only"
else bad "shoal survey --help (exit $rc): $(head -3 "$tmp/h1.txt")"; fi
if cmp -s "$tmp/h1.txt" "$tmp/help-survey.txt"; then ok "shoal help survey = shoal survey --help"
else bad "shoal help survey differs from shoal survey --help"; fi
if grep -q -- "--budget" "$tmp/help-plan.txt" && ! grep -q -- "--need-pairwise" "$tmp/help-plan.txt"; then ok "plan's help has --budget, not --need-pairwise"
else bad "plan's help options are wrong"; fi
"$SHOAL" help nosuch >/dev/null 2>&1; rc=$?
if [ $rc = 2 ]; then ok "help of an unknown command exits 2"; else bad "help nosuch exits $rc"; fi

# Options that do not apply, and conflicting formats: exit 2 with a message naming the option.
usage_error() {
  desc=$1; shift
  "$SHOAL" "$@" >"$tmp/out" 2>"$tmp/err"; rc=$?
  if [ $rc = 2 ] && grep -q "shoal: " "$tmp/err" && [ ! -s "$tmp/out" ]; then ok "$desc: exit 2, $(head -1 "$tmp/err")"
  else bad "$desc: exit $rc, stderr $(head -c 200 "$tmp/err")"; fi
}
usage_error "plan --csv" plan "$G" "$tmp/a.db" --budget 5 --csv -o "$tmp/p2.csv"
usage_error "claims --alpha" claims "$G" --alpha 0.1
usage_error "import --bins" import "$CSV" --archive "$tmp/x.db" --bins 4
usage_error "power --need-pairwise" power "$G" "$tmp/a.db" --need-pairwise 0.5
usage_error "survey --budget" survey "$G" "$tmp/a.db" --budget 3 -o "$tmp/r9"
usage_error "--csv --json" power "$G" "$tmp/a.db" --csv --json
usage_error "--json --csv" claims "$G" --json --csv
usage_error "the archive as -" power "$G" -
if [ ! -e "$tmp/x.db" ] && [ ! -e "$tmp/p2.csv" ] && [ ! -e "$tmp/r9" ]; then ok "usage errors write nothing"
else bad "a usage error left a file behind"; fi

# '-' reads the graph or the CSV from standard input, with the same results as the file.
"$SHOAL" claims - <"$G" >"$tmp/claims-stdin.txt"
if cmp -s "$tmp/claims.txt" "$tmp/claims-stdin.txt"; then ok "claims - reads the graph from standard input"
else bad "claims - differs from claims FILE"; fi
"$SHOAL" power - "$tmp/a.db" --json <"$G" >"$tmp/p-stdin.json"; "$SHOAL" power "$G" "$tmp/a.db" --json >"$tmp/p-file.json"
if "$PYTHON" -c 'import json,sys; a=json.load(open(sys.argv[1])); b=json.load(open(sys.argv[2])); sys.exit(a["claims"] != b["claims"])' "$tmp/p-stdin.json" "$tmp/p-file.json"
then ok "power - gives the claims of power FILE"; else bad "power - differs"; fi
"$SHOAL" import - --archive "$tmp/s.db" <"$CSV" >/dev/null
n=$(sqlite3 "$tmp/s.db" "SELECT count(*) FROM runs")
if [ "$n" = 600 ]; then ok "import - reads 600 runs from standard input"; else bad "import - read $n runs"; fi
printf 'input a real [0, 1]\noutput y real\na -> y effect x\n' | "$SHOAL" claims - >/dev/null 2>"$tmp/err"; rc=$?
if [ $rc = 2 ] && grep -q "^shoal: -:3:" "$tmp/err"; then ok "a bad graph on standard input names -:line:column"
else bad "bad graph on stdin: exit $rc, $(cat "$tmp/err")"; fi

# Colour: only on a terminal, and only a non-empty NO_COLOR turns it off (no-color.org).
if command -v script >/dev/null 2>&1; then
  a=$(env NO_COLOR= script -qec "$SHOAL survey $G $tmp/a.db -o $tmp/rc1" /dev/null | grep -c "$(printf '\033')\[")
  b=$(env NO_COLOR=1 script -qec "$SHOAL survey $G $tmp/a.db -o $tmp/rc2" /dev/null | grep -c "$(printf '\033')\[")
  if [ "$a" -gt 0 ] && [ "$b" = 0 ]; then ok "empty NO_COLOR keeps colour ($a coloured lines); NO_COLOR=1 removes it"
  else bad "colour with NO_COLOR empty: $a lines; with NO_COLOR=1: $b lines"; fi
else
  echo "SKIP: script(1) is not installed; colour on a terminal not checked"
fi
exit $((fails > 0))
