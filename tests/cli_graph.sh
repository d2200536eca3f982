#!/bin/sh
# `shoal claims` through the command line: each bad graph in fixtures/graphs exits 2 naming
# file:line:column, and good graphs list their claims as a table, CSV and JSON. See LICENSE.

# Each fixtures/graphs/bad_*.graph starts with "# expect: LINE:COL TEXT": the position and a piece
# of the message, written by hand from the format's rules (README.md, "The graph file"). The JSON
# is checked with Python's json module (the reference parser of RFC 8259 text here).
: "${SHOAL:=build/shoal}" "${PYTHON:=/usr/bin/python3}"
fails=0
ok() { echo "PASS: $1"; }
bad() { echo "FAIL: $1"; fails=$((fails + 1)); }
tmp=$(mktemp -d) || exit 1
trap 'rm -rf "$tmp"' EXIT

for f in fixtures/graphs/bad_*.graph; do
  want=$(sed -n '1s/^# expect: //p' "$f")
  pos=${want%% *}
  text=${want#* }
  "$SHOAL" claims "$f" >"$tmp/out" 2>"$tmp/err"
  rc=$?
  if [ "$rc" -eq 2 ]; then ok "claims $f exits 2"; else bad "claims $f exits $rc, expected 2"; fi
  if grep -qF "$f:$pos: " "$tmp/err"; then ok "claims $f names $f:$pos"
  else bad "claims $f should name $f:$pos, said: $(cat "$tmp/err")"; fi
  if grep -qF "$text" "$tmp/err" && grep -q "found" "$tmp/err" && grep -q "expected" "$tmp/err"
  then ok "claims $f says found/expected and '$text'"
  else bad "claims $f message lacks '$text' or found/expected: $(cat "$tmp/err")"; fi
  if [ ! -s "$tmp/out" ]; then ok "claims $f prints nothing on stdout"
  else bad "claims $f printed to stdout on error"; fi
done

# A graph file that cannot be read, and a usage error, are exit 2 too.
"$SHOAL" claims "$tmp/no-such.graph" >/dev/null 2>"$tmp/err"
rc=$?
if [ "$rc" -eq 2 ] && grep -q "no-such.graph" "$tmp/err"; then ok "claims on a missing file exits 2"
else bad "claims on a missing file: exit $rc, $(cat "$tmp/err")"; fi
"$SHOAL" claims >/dev/null 2>&1
rc=$?
if [ "$rc" -eq 2 ]; then ok "claims without a graph exits 2"
else bad "claims without a graph exits $rc"; fi

# A NUL byte is not text: exit 2 at its position.
printf 'input x real [0, 1]\noutput \000y real\n' >"$tmp/nul.graph"
"$SHOAL" claims "$tmp/nul.graph" >/dev/null 2>"$tmp/err"
rc=$?
if [ "$rc" -eq 2 ] && grep -qF "nul.graph:2:8: found a NUL byte" "$tmp/err"
then ok "claims on a file with a NUL byte exits 2 at 2:8"
else bad "claims on a NUL byte: exit $rc, $(cat "$tmp/err")"; fi

# Good graphs: the bundled clinic example and, when present, the demo graph.
for g in fixtures/graphs/clinic.graph fixtures/demo/triage.graph; do
  [ -f "$g" ] || { echo "SKIP: $g is not there yet"; continue; }
  "$SHOAL" claims "$g" >"$tmp/table" 2>"$tmp/err"
  rc=$?
  if [ "$rc" -eq 0 ]; then ok "claims $g exits 0"
  else bad "claims $g exits $rc: $(cat "$tmp/err")"; fi
  # Within 80 columns the separating set follows each row ("adjusted for: ...").
  hdr="^kind  *treatment  *outcome  *effect of interest  *status"
  if head -1 "$tmp/table" | grep -q "$hdr"; then ok "claims $g prints the table header"
  else bad "claims $g table header: $(head -1 "$tmp/table")"; fi
  "$SHOAL" claims --json "$g" >"$tmp/json" 2>"$tmp/err"
  rc=$?
  if [ "$rc" -eq 0 ] && "$PYTHON" -c 'import json,sys; json.load(sys.stdin)' <"$tmp/json"
  then ok "claims --json $g exits 0 and parses (python json)"
  else bad "claims --json $g: exit $rc or JSON that does not parse"; fi
  # Field names and types of the interface (README.md, "shoal claims --json").
  if "$PYTHON" - "$tmp/json" "$tmp/table" <<'EOF'
import json, sys
doc = json.load(open(sys.argv[1]))
rows = [l for l in open(sys.argv[2]).read().splitlines()[1:] if l.startswith(("effect", "absence"))]
assert doc["schema_version"] == 3 and isinstance(doc["graph"], str)
assert len(doc["claims"]) == len(rows) > 0, "table and JSON list different claims"
for c in doc["claims"]:
    assert c["kind"] in ("effect", "absence")
    assert isinstance(c["treatment"], str) and isinstance(c["outcome"], str)
    assert isinstance(c["adjustment_set"], list)
    assert all(isinstance(n, str) for n in c["adjustment_set"])
    assert isinstance(c["effect_of_interest"], (int, float)) and c["effect_of_interest"] > 0
    assert c["effect_unit"] in ("raw", "sd") and c["sign"] in (-1, 0, 1)
    assert c["status"] in ("testable", "untestable")
    assert (c["reason"] is None) == (c["status"] == "testable")
    assert isinstance(c["steerable"], bool)
EOF
  then ok "claims --json $g has every documented field with its type, one claim per table row"
  else bad "claims --json $g fields"; fi
  "$SHOAL" claims --csv "$g" >"$tmp/csv" 2>"$tmp/err"
  rc=$?
  if [ "$rc" -eq 0 ] && "$PYTHON" - "$tmp/csv" "$tmp/json" <<'EOF'
import csv, json, sys
rows = list(csv.DictReader(open(sys.argv[1], newline="")))
doc = json.load(open(sys.argv[2]))
assert len(rows) == len(doc["claims"])
for r, c in zip(rows, doc["claims"]):
    assert (r["kind"], r["treatment"], r["outcome"]) == (c["kind"], c["treatment"], c["outcome"])
    assert float(r["effect_of_interest"]) == c["effect_of_interest"]
    names = next(csv.reader([r["adjustment_set"]], delimiter=";")) if r["adjustment_set"] else []
    assert names == c["adjustment_set"], (names, c["adjustment_set"])
EOF
  then ok "claims --csv $g agrees with --json (python csv module)"
  else bad "claims --csv $g"; fi
  "$SHOAL" claims -q "$g" >"$tmp/quiet" 2>&1
  rc=$?
  if [ "$rc" -eq 0 ] && [ ! -s "$tmp/quiet" ]; then ok "claims -q $g prints nothing, exits 0"
  else bad "claims -q $g: exit $rc"; fi
done

# Names with quotes, semicolons and markup survive into JSON and CSV.
cat >"$tmp/odd.graph" <<'EOF'
# Invented names that need quoting.
input "it's; \"odd\"" real [0, 1]
input "<script>" bool
output "wait, min" real
default effect 1
default margin 0.5
"it's; \"odd\"", "<script>" -> "wait, min"
EOF
"$SHOAL" claims --json "$tmp/odd.graph" >"$tmp/json" 2>"$tmp/err"
if "$PYTHON" -c '
import json, sys
c = json.load(sys.stdin)["claims"]
assert [x["treatment"] for x in c] == ["it'"'"'s; \"odd\"", "<script>"], c
assert c[0]["adjustment_set"] == ["<script>"] and c[1]["adjustment_set"] == ["it'"'"'s; \"odd\""]
' <"$tmp/json" && ! grep -q "<script>" "$tmp/json"
then ok "claims --json keeps quoted names exactly and never writes a raw <script>"
else bad "claims --json with odd names: $(cat "$tmp/json" "$tmp/err")"; fi
"$SHOAL" claims --csv "$tmp/odd.graph" >"$tmp/csv" 2>"$tmp/err"
if "$PYTHON" -c '
import csv, sys
r = list(csv.DictReader(sys.stdin))
assert r[0]["treatment"] == "it'"'"'s; \"odd\"" and r[0]["outcome"] == "wait, min", r
assert next(csv.reader([r[1]["adjustment_set"]], delimiter=";")) == ["it'"'"'s; \"odd\""], r
' <"$tmp/csv"
then ok "claims --csv quotes names holding commas, quotes and semicolons (python csv module)"
else bad "claims --csv with odd names: $(cat "$tmp/csv" "$tmp/err")"; fi

[ "$fails" -eq 0 ]
